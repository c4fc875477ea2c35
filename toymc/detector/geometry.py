"""Geometry of the parametric cylindrical detector, and the [selection] section.

A geometry is a set of frozen dataclasses, loaded once from TOML and
validated there; kernels never see these objects, only the flat arrays
returned by :meth:`Geometry.tracking_layers` and plain numbers.

Units: lengths in cm, field in tesla, energies in GeV, angles in rad,
material thickness as a fraction of a radiation length ``x/X0``.  Every
length, field, energy or angle in a TOML file may be a plain number (in the
internal unit) or a string such as ``"15 mm"``, ``"1.5 T"``, ``"20 deg"``
(parsed by :func:`toymc.units.parse_quantity`).

Calorimeter energy resolution
-----------------------------
``sigma_E / E = a / sqrt(E) (+) b / E (+) c`` with ``(+)`` addition in
quadrature and E in GeV: ``a`` is the stochastic term (GeV^1/2, key
``stochastic``), ``b`` the noise term (GeV, key ``noise``), ``c`` the
constant term (dimensionless, key ``constant``).  The three-term
quadrature form is the parametrisation of the PDG review "Calorimetry"
(section on electromagnetic calorimeters).  The letter assignment is from
memory and could not be checked against the review's text: texts differ in
which letter goes with the 1/E and the constant term (a/sqrt(E) (+) b/E (+) c
versus a/sqrt(E) (+) b (+) c/E).  The TOML keys are therefore named after the
terms, not the letters, so a geometry file means the same under either
convention.

TOML layout (see ``geometries/demo.toml``)::

    name = "toy-barrel-1"
    field = "1.5 T"
    [beampipe]       radius, thickness
    [[vertex_layers]] radius, z_min, z_max, resolution, thickness
    [chamber]        r_inner, r_outer, z_min, z_max, resolution,
                     layer_thickness, inner_wall, outer_wall, and either
                     radii = [...] or n_layers, r_first, r_last
    [calorimeter]    radius, z_min, z_max, stochastic, noise, constant,
                     position_resolution
    [calorimeter.forward] / [calorimeter.backward]   z, r_inner, r_outer
    [acceptance]     tracker_theta_min, tracker_theta_max,
                     calo_theta_min, calo_theta_max   (optional)

The [selection] section of a run config is read by :func:`parse_selection`.
"""

import difflib as _difflib
import math as _math
from dataclasses import dataclass
from dataclasses import field as _field
from pathlib import Path as _Path

import numpy as _np

try:  # Python >= 3.11
    import tomllib as _tomllib
except ModuleNotFoundError:  # pragma: no cover - Python 3.10 with the tomli backport
    import tomli as _tomllib

from toymc.errors import ConfigError as _ConfigError
from toymc.errors import InputFileError as _InputFileError
from toymc.units import parse_quantity as _parse_quantity

__all__ = (
    "PROFILE_KINDS",
    "Acceptance",
    "Calorimeter",
    "DriftChamber",
    "Endcap",
    "Geometry",
    "Selection",
    "VertexLayer",
    "VertexProfile",
    "geometry_from_dict",
    "load_geometry",
    "parse_selection",
)

PROFILE_KINDS = ("flat", "linear", "tabulated", "hits")


@dataclass(frozen=True)
class VertexLayer:
    """A thin cylindrical measuring layer close to the beam.

    Attributes
    ----------
    radius, z_min, z_max : float
        Radius and z extent in cm.
    resolution : float
        Point resolution in cm (same in r-phi and z).
    thickness : float
        Material as a fraction of a radiation length, x/X0, at normal incidence.
    """

    radius: float
    z_min: float
    z_max: float
    resolution: float
    thickness: float


@dataclass(frozen=True)
class DriftChamber:
    """Cylindrical gas tracker with concentric sense layers.

    Attributes
    ----------
    r_inner, r_outer, z_min, z_max : float
        Volume in cm; z need not be symmetric about 0.
    radii : tuple of float
        Sense-layer radii in cm, increasing, inside (r_inner, r_outer).
    resolution : float
        Hit resolution in cm.
    layer_thickness : float
        x/X0 of gas and wires per sense layer.
    inner_wall, outer_wall : float
        x/X0 of the inner and outer cylinder walls.
    """

    r_inner: float
    r_outer: float
    z_min: float
    z_max: float
    radii: tuple
    resolution: float
    layer_thickness: float
    inner_wall: float
    outer_wall: float


@dataclass(frozen=True)
class Endcap:
    """Flat calorimeter endcap: a disk at ``z`` (cm) from ``r_inner`` to ``r_outer`` (cm)."""

    z: float
    r_inner: float
    r_outer: float


@dataclass(frozen=True)
class Calorimeter:
    """Calorimeter front face: a barrel cylinder and two endcap disks.

    Attributes
    ----------
    radius, z_min, z_max : float
        Barrel face radius and z extent (cm).
    forward, backward : Endcap
        Disks at z > 0 and z < 0.
    stochastic : float
        a in sigma_E/E = a/sqrt(E) (+) b/E (+) c, GeV^1/2.
    noise : float
        b, GeV.
    constant : float
        c, dimensionless.
    position_resolution : float
        Cluster position resolution on the face, cm, per coordinate.
    """

    radius: float
    z_min: float
    z_max: float
    forward: Endcap
    backward: Endcap
    stochastic: float
    noise: float
    constant: float
    position_resolution: float


@dataclass(frozen=True)
class Acceptance:
    """Polar-angle acceptance (rad) of the tracker and of the calorimeter."""

    tracker_theta_min: float = 0.0
    tracker_theta_max: float = _math.pi
    calo_theta_min: float = 0.0
    calo_theta_max: float = _math.pi


@dataclass(frozen=True)
class Geometry:
    """A complete detector geometry (cm, T, GeV, rad, x/X0)."""

    name: str
    field: float
    beampipe_radius: float
    beampipe_thickness: float
    vertex_layers: tuple
    chamber: DriftChamber
    calorimeter: Calorimeter
    acceptance: Acceptance = _field(default_factory=Acceptance)

    def tracking_layers(self):
        """All cylinders a track may cross, sorted by radius, as flat arrays.

        Returns
        -------
        dict of numpy.ndarray
            ``radius, z_min, z_max`` (cm), ``resolution`` (cm, 0 for a
            passive cylinder), ``thickness`` (x/X0 at normal incidence) and
            ``measuring`` (int32, 1 for vertex layers and sense layers).
            Passive cylinders: the beam pipe and the two chamber walls (both
            with the chamber's z extent).
        """
        ch = self.chamber
        rows = [(self.beampipe_radius, ch.z_min, ch.z_max, 0.0, self.beampipe_thickness, 0)]
        for lay in self.vertex_layers:
            rows.append((lay.radius, lay.z_min, lay.z_max, lay.resolution, lay.thickness, 1))
        rows.append((ch.r_inner, ch.z_min, ch.z_max, 0.0, ch.inner_wall, 0))
        for r in ch.radii:
            rows.append((r, ch.z_min, ch.z_max, ch.resolution, ch.layer_thickness, 1))
        rows.append((ch.r_outer, ch.z_min, ch.z_max, 0.0, ch.outer_wall, 0))
        rows.sort(key=lambda t: t[0])
        arr = _np.array(rows, dtype=_np.float64)
        return {
            "radius": arr[:, 0].copy(),
            "z_min": arr[:, 1].copy(),
            "z_max": arr[:, 2].copy(),
            "resolution": arr[:, 3].copy(),
            "thickness": arr[:, 4].copy(),
            "measuring": arr[:, 5].astype(_np.int32),
        }

    @property
    def n_measuring_layers(self):
        """Number of measuring layers (vertex layers + sense layers)."""
        return len(self.vertex_layers) + len(self.chamber.radii)


# ----------------------------------------------------------------------------- reading helpers

_MISSING = object()


class _Reader:
    """Takes values out of TOML tables, naming file and dotted key on error."""

    def __init__(self, path):
        self.path = None if path is None else str(path)

    def keys(self, table, allowed, prefix):
        if not isinstance(table, dict):
            raise _ConfigError(self.path, prefix.rstrip("."), table, "a table")
        for key in table:
            if key not in allowed:
                close = _difflib.get_close_matches(key, allowed, n=1)
                hint = f"did you mean '{close[0]}'? " if close else ""
                raise _ConfigError(
                    self.path, prefix + key, table[key],
                    f"unknown key; {hint}allowed: {', '.join(allowed)}",
                )

    def table(self, table, key, prefix, default=_MISSING):
        if key not in table:
            if default is _MISSING:
                raise _ConfigError(self.path, prefix + key, None, "a table is required")
            return default
        val = table[key]
        if not isinstance(val, dict):
            raise _ConfigError(self.path, prefix + key, val, "a table")
        return val

    def quantity(self, table, key, dimension, prefix, default=_MISSING, minimum=None,
                 strict=False):
        if key not in table:
            if default is _MISSING:
                raise _ConfigError(self.path, prefix + key, None, f"a {dimension} is required")
            return default
        try:
            val = _parse_quantity(table[key], dimension)
        except ValueError as exc:
            raise _ConfigError(self.path, prefix + key, table[key], str(exc)) from None
        if not _math.isfinite(val):
            raise _ConfigError(self.path, prefix + key, table[key], "a finite number")
        if minimum is not None and (val < minimum or (strict and val == minimum)):
            rel = ">" if strict else ">="
            raise _ConfigError(self.path, prefix + key, table[key], f"a value {rel} {minimum}")
        return val

    def number(self, table, key, prefix, default=_MISSING, minimum=None, maximum=None,
               strict=False, integer=False):
        if key not in table:
            if default is _MISSING:
                raise _ConfigError(self.path, prefix + key, None, "a number is required")
            return default
        val = table[key]
        kind = "an integer" if integer else "a number"
        ok = isinstance(val, int) if integer else isinstance(val, (int, float))
        if isinstance(val, bool) or not ok or not _math.isfinite(val):
            raise _ConfigError(self.path, prefix + key, val, kind)
        if minimum is not None and (val < minimum or (strict and val == minimum)):
            rel = ">" if strict else ">="
            raise _ConfigError(self.path, prefix + key, val, f"{kind} {rel} {minimum}")
        if maximum is not None and val > maximum:
            raise _ConfigError(self.path, prefix + key, val, f"{kind} <= {maximum}")
        return int(val) if integer else float(val)

    def fail(self, key, value, allowed):
        raise _ConfigError(self.path, key, value, allowed)


# ----------------------------------------------------------------------------- geometry loading

_TOP_KEYS = ("name", "field", "beampipe", "vertex_layers", "chamber", "calorimeter", "acceptance")
_BP_KEYS = ("radius", "thickness")
_VTX_KEYS = ("radius", "z_min", "z_max", "resolution", "thickness")
_CH_KEYS = ("r_inner", "r_outer", "z_min", "z_max", "radii", "n_layers", "r_first", "r_last",
            "resolution", "layer_thickness", "inner_wall", "outer_wall")
_CAL_KEYS = ("radius", "z_min", "z_max", "forward", "backward", "stochastic", "noise",
             "constant", "position_resolution")
_EC_KEYS = ("z", "r_inner", "r_outer")
_ACC_KEYS = ("tracker_theta_min", "tracker_theta_max", "calo_theta_min", "calo_theta_max")


def load_geometry(path):
    """Read and validate a geometry TOML file.

    Parameters
    ----------
    path : str or pathlib.Path

    Returns
    -------
    Geometry

    Raises
    ------
    InputFileError
        The file is missing, unreadable or not valid TOML.
    ConfigError
        A value is missing, of the wrong unit, out of range, or a key is unknown
        (the message suggests the closest allowed name).
    """
    p = _Path(path)
    try:
        text = p.read_bytes()
    except FileNotFoundError:
        raise _InputFileError(f"{p}: geometry file not found") from None
    except OSError as exc:
        raise _InputFileError(f"{p}: cannot read geometry file ({exc.strerror})") from None
    try:
        table = _tomllib.loads(text.decode("utf-8"))
    except (UnicodeDecodeError, _tomllib.TOMLDecodeError) as exc:
        raise _InputFileError(f"{p}: not a valid TOML file ({exc})") from None
    return geometry_from_dict(table, str(p))


def geometry_from_dict(table, path=None):
    """Build a validated :class:`Geometry` from a parsed TOML table.

    Parameters
    ----------
    table : dict
        The parsed file (see the module docstring for the keys).
    path : str, optional
        File name used in error messages.
    """
    rd = _Reader(path)
    rd.keys(table, _TOP_KEYS, "")
    name = table.get("name")
    if not isinstance(name, str) or not name.strip():
        rd.fail("name", name, "a non-empty string")
    bfield = rd.quantity(table, "field", "field", "", minimum=0.0, strict=True)

    bp = rd.table(table, "beampipe", "")
    rd.keys(bp, _BP_KEYS, "beampipe.")
    bp_r = rd.quantity(bp, "radius", "length", "beampipe.", minimum=0.0, strict=True)
    bp_x = rd.number(bp, "thickness", "beampipe.", minimum=0.0)

    layers_in = table.get("vertex_layers", [])
    if not isinstance(layers_in, list):
        rd.fail("vertex_layers", layers_in, "an array of tables [[vertex_layers]]")
    layers = []
    prev_r = bp_r
    for i, lay in enumerate(layers_in):
        pre = f"vertex_layers[{i}]."
        rd.keys(lay, _VTX_KEYS, pre)
        r = rd.quantity(lay, "radius", "length", pre)
        if r <= prev_r:
            what = "the beam-pipe radius" if i == 0 else "the previous layer's radius"
            rd.fail(pre + "radius", lay["radius"], f"a radius above {what} ({prev_r:g} cm)")
        zmin = rd.quantity(lay, "z_min", "length", pre)
        zmax = rd.quantity(lay, "z_max", "length", pre)
        if not zmin < zmax:
            rd.fail(pre + "z_max", lay["z_max"], f"a value above z_min ({zmin:g} cm)")
        res = rd.quantity(lay, "resolution", "length", pre, minimum=0.0, strict=True)
        thick = rd.number(lay, "thickness", pre, minimum=0.0)
        layers.append(VertexLayer(r, zmin, zmax, res, thick))
        prev_r = r

    ch = rd.table(table, "chamber", "")
    rd.keys(ch, _CH_KEYS, "chamber.")
    pre = "chamber."
    r_in = rd.quantity(ch, "r_inner", "length", pre)
    if r_in <= prev_r:
        rd.fail(pre + "r_inner", ch["r_inner"],
                f"a radius above the last vertex layer / beam pipe ({prev_r:g} cm)")
    r_out = rd.quantity(ch, "r_outer", "length", pre)
    if r_out <= r_in:
        rd.fail(pre + "r_outer", ch["r_outer"], f"a radius above r_inner ({r_in:g} cm)")
    zmin = rd.quantity(ch, "z_min", "length", pre)
    zmax = rd.quantity(ch, "z_max", "length", pre)
    if not zmin < 0.0 < zmax:
        rd.fail(pre + "z_min", ch["z_min"], f"z_min < 0 < z_max (z_max = {zmax:g} cm)")
    if "radii" in ch:
        if any(k in ch for k in ("n_layers", "r_first", "r_last")):
            rd.fail(pre + "radii", ch["radii"],
                    "either radii = [...] or n_layers, r_first, r_last, not both")
        raw = ch["radii"]
        if not isinstance(raw, list) or not raw:
            rd.fail(pre + "radii", raw, "a non-empty list of radii")
        radii = []
        for j, v in enumerate(raw):
            try:
                radii.append(_parse_quantity(v, "length"))
            except ValueError as exc:
                rd.fail(f"{pre}radii[{j}]", v, str(exc))
    else:
        n = rd.number(ch, "n_layers", pre, minimum=1, integer=True)
        r1 = rd.quantity(ch, "r_first", "length", pre)
        r2 = rd.quantity(ch, "r_last", "length", pre)
        if n > 1 and not r2 > r1:
            rd.fail(pre + "r_last", ch["r_last"], f"a radius above r_first ({r1:g} cm)")
        for key, r in (("r_first", r1), ("r_last", r2)):
            if not r_in < r < r_out:
                rd.fail(pre + key, ch[key], f"a radius strictly between r_inner ({r_in:g}) "
                        f"and r_outer ({r_out:g}) cm")
        radii = list(_np.linspace(r1, r2, n)) if n > 1 else [r1]
    for j, r in enumerate(radii):
        if not r_in < r < r_out:
            rd.fail(f"{pre}radii[{j}]", r, f"a radius strictly between r_inner ({r_in:g}) and "
                    f"r_outer ({r_out:g}) cm")
        if j and r <= radii[j - 1]:
            rd.fail(f"{pre}radii[{j}]", r, "radii increasing (layers must not overlap)")
    chamber = DriftChamber(
        r_in, r_out, zmin, zmax, tuple(float(r) for r in radii),
        rd.quantity(ch, "resolution", "length", pre, minimum=0.0, strict=True),
        rd.number(ch, "layer_thickness", pre, minimum=0.0),
        rd.number(ch, "inner_wall", pre, minimum=0.0),
        rd.number(ch, "outer_wall", pre, minimum=0.0),
    )

    cal = rd.table(table, "calorimeter", "")
    rd.keys(cal, _CAL_KEYS, "calorimeter.")
    pre = "calorimeter."
    c_r = rd.quantity(cal, "radius", "length", pre)
    if c_r <= r_out:
        rd.fail(pre + "radius", cal["radius"], f"a radius above the chamber's r_outer ({r_out:g} cm)")
    c_zmin = rd.quantity(cal, "z_min", "length", pre)
    c_zmax = rd.quantity(cal, "z_max", "length", pre)
    if not c_zmin < 0.0 < c_zmax:
        rd.fail(pre + "z_min", cal["z_min"], f"z_min < 0 < z_max (z_max = {c_zmax:g} cm)")
    caps = {}
    for side, sign in (("forward", 1.0), ("backward", -1.0)):
        ec = rd.table(cal, side, pre)
        epre = f"{pre}{side}."
        rd.keys(ec, _EC_KEYS, epre)
        z = rd.quantity(ec, "z", "length", epre)
        if z * sign <= 0.0:
            rd.fail(epre + "z", ec["z"], f"a z {'> 0' if sign > 0 else '< 0'} cm")
        if abs(z) <= abs(zmax if sign > 0 else zmin):
            rd.fail(epre + "z", ec["z"], "a plane beyond the chamber's z end")
        ri = rd.quantity(ec, "r_inner", "length", epre, minimum=0.0)
        ro = rd.quantity(ec, "r_outer", "length", epre)
        if ro <= ri:
            rd.fail(epre + "r_outer", ec["r_outer"], f"a radius above r_inner ({ri:g} cm)")
        caps[side] = Endcap(z, ri, ro)
    calo = Calorimeter(
        c_r, c_zmin, c_zmax, caps["forward"], caps["backward"],
        rd.number(cal, "stochastic", pre, minimum=0.0),
        rd.quantity(cal, "noise", "energy", pre, minimum=0.0),
        rd.number(cal, "constant", pre, minimum=0.0),
        rd.quantity(cal, "position_resolution", "length", pre, minimum=0.0),
    )

    acc = rd.table(table, "acceptance", "", default={})
    rd.keys(acc, _ACC_KEYS, "acceptance.")
    vals = []
    for key, default in zip(_ACC_KEYS, (0.0, _math.pi, 0.0, _math.pi)):
        v = rd.quantity(acc, key, "angle", "acceptance.", default=default)
        if not 0.0 <= v <= _math.pi:
            rd.fail("acceptance." + key, acc.get(key), "an angle in [0, 180] deg")
        vals.append(v)
    for lo, hi in ((0, 1), (2, 3)):
        if not vals[lo] < vals[hi]:
            rd.fail("acceptance." + _ACC_KEYS[hi], acc.get(_ACC_KEYS[hi]),
                    f"an angle above {_ACC_KEYS[lo]}")

    return Geometry(name.strip(), bfield, bp_r, bp_x, tuple(layers), chamber, calo,
                    Acceptance(*vals))


# ----------------------------------------------------------------------------- selection


@dataclass(frozen=True)
class VertexProfile:
    """Vertex-finding efficiency as a function of the true decay radius.

    Attributes
    ----------
    kind : str
        ``"flat"``: eps(r) = eps0.
        ``"linear"``: eps(r) = eps0 (r_max - r)/(r_max - r_min), falling from
        eps0 at the window's r_min to 0 at r_max (stored as the two points
        (r_min, 1) and (r_max, 0); no points are given in the config).
        ``"tabulated"``: eps(r) = eps0 * piecewise-linear interpolation through
        (r[i], eps[i]), constant beyond the first and last points.
        ``"hits"``: per event, eps = eps0 * prod over the two vertex tracks of
        min(1, n_hits / full_hits): a track with fewer hits than
        ``Selection.full_hits`` is found less often (r, eps empty).
    eps0 : float
        Overall scale, in [0, 1].
    r : tuple of float
        Radii in cm (increasing).
    eps : tuple of float
        Efficiencies at those radii, in [0, 1].
    """

    kind: str
    eps0: float
    r: tuple = ()
    eps: tuple = ()


@dataclass(frozen=True)
class Selection:
    """Reconstruction and selection cuts of a run ([selection] section).

    Attributes
    ----------
    r_min, r_max, z_min, z_max : float
        Fiducial window for the reconstructed vertex, cm.
    profile : VertexProfile
        Vertex efficiency profile.
    min_hits : int
        Minimum number of measured hits for a found track (>= 3).
    min_pt : float
        Minimum transverse momentum of a found track, GeV.
    photon_min_e : float
        Minimum reconstructed cluster energy, GeV.
    mass_window : tuple of float or None
        (low, high) reconstructed-mass window in GeV, or None for no cut.
    full_hits : int
        Hit count at which a track counts as fully efficient ("hits" profile).
    """

    r_min: float
    r_max: float
    z_min: float
    z_max: float
    profile: VertexProfile
    min_hits: int = 6
    min_pt: float = 0.05
    photon_min_e: float = 0.03
    mass_window: tuple = None
    full_hits: int = 20


_SEL_KEYS = ("r_min", "r_max", "z_min", "z_max", "profile", "min_hits", "min_pt",
             "photon_min_e", "mass_window", "full_hits")
_PROF_KEYS = ("kind", "eps0", "points")


def parse_selection(table, path=None, geometry=None):
    """Validate the [selection] table of a run config.

    Parameters
    ----------
    table : dict
        Keys: ``r_min, r_max, z_min, z_max`` (lengths), ``min_hits``,
        ``min_pt``, ``photon_min_e`` (energies), ``mass_window = [lo, hi]``
        (optional), ``full_hits``, and a ``profile`` table with ``kind``,
        ``eps0`` and (linear, tabulated) ``points = [[r, eps], ...]``.
    path : str, optional
        File name used in error messages.
    geometry : Geometry, optional
        If given, the fiducial window must lie inside the tracker.

    Returns
    -------
    Selection

    Raises
    ------
    ConfigError
    """
    rd = _Reader(path)
    pre = "selection."
    rd.keys(table, _SEL_KEYS, pre)
    r_min = rd.quantity(table, "r_min", "length", pre, minimum=0.0)
    r_max = rd.quantity(table, "r_max", "length", pre)
    if r_max <= r_min:
        rd.fail(pre + "r_max", table["r_max"], f"a radius above r_min ({r_min:g} cm)")
    z_min = rd.quantity(table, "z_min", "length", pre)
    z_max = rd.quantity(table, "z_max", "length", pre)
    if z_max <= z_min:
        rd.fail(pre + "z_max", table["z_max"], f"a value above z_min ({z_min:g} cm)")
    if geometry is not None:
        ch = geometry.chamber
        if r_max > ch.r_outer:
            rd.fail(pre + "r_max", table["r_max"],
                    f"a radius inside the tracker (<= {ch.r_outer:g} cm)")
        if z_min < ch.z_min:
            rd.fail(pre + "z_min", table["z_min"], f"a z inside the tracker (>= {ch.z_min:g} cm)")
        if z_max > ch.z_max:
            rd.fail(pre + "z_max", table["z_max"], f"a z inside the tracker (<= {ch.z_max:g} cm)")

    prof = rd.table(table, "profile", pre, default={"kind": "flat", "eps0": 1.0})
    ppre = pre + "profile."
    rd.keys(prof, _PROF_KEYS, ppre)
    kind = prof.get("kind", "flat")
    if kind not in PROFILE_KINDS:
        close = _difflib.get_close_matches(str(kind), PROFILE_KINDS, n=1)
        hint = f"did you mean '{close[0]}'? " if close else ""
        rd.fail(ppre + "kind", kind, f"{hint}one of {', '.join(PROFILE_KINDS)}")
    eps0 = rd.number(prof, "eps0", ppre, default=1.0, minimum=0.0, maximum=1.0)
    rs, es = (), ()
    if kind == "tabulated":
        pts = prof.get("points")
        if not isinstance(pts, list) or len(pts) < 2:
            rd.fail(ppre + "points", pts, "a list of [r, eps] pairs (at least 2)")
        rl, el = [], []
        for j, pair in enumerate(pts):
            if not isinstance(pair, list) or len(pair) != 2:
                rd.fail(f"{ppre}points[{j}]", pair, "a pair [r, eps]")
            try:
                r = _parse_quantity(pair[0], "length")
            except ValueError as exc:
                rd.fail(f"{ppre}points[{j}][0]", pair[0], str(exc))
            e = pair[1]
            if isinstance(e, bool) or not isinstance(e, (int, float)) or not 0.0 <= e <= 1.0:
                rd.fail(f"{ppre}points[{j}][1]", e, "an efficiency in [0, 1]")
            if rl and r <= rl[-1]:
                rd.fail(f"{ppre}points[{j}][0]", pair[0], "radii strictly increasing")
            rl.append(float(r))
            el.append(float(e))
        rs, es = tuple(rl), tuple(el)
    elif "points" in prof:
        rd.fail(ppre + "points", prof["points"], f"no points for kind '{kind}'"
                + (" (linear falls from eps0 at r_min to 0 at r_max; use 'tabulated' for "
                   "other shapes)" if kind == "linear" else ""))
    if kind == "linear":
        # eps0 at r_min falling linearly to 0 at r_max
        rs, es = (r_min, r_max), (1.0, 0.0)

    min_hits = rd.number(table, "min_hits", pre, default=6, minimum=3, integer=True)
    mw = table.get("mass_window")
    if mw is not None:
        if not isinstance(mw, list) or len(mw) != 2:
            rd.fail(pre + "mass_window", mw, "a pair [low, high] of masses")
        try:
            lo, hi = (_parse_quantity(v, "energy") for v in mw)
        except ValueError as exc:
            rd.fail(pre + "mass_window", mw, str(exc))
        if not 0.0 <= lo < hi:
            rd.fail(pre + "mass_window", mw, "0 <= low < high")
        mw = (lo, hi)
    return Selection(
        r_min, r_max, z_min, z_max, VertexProfile(kind, eps0, rs, es),
        min_hits=min_hits,
        min_pt=rd.quantity(table, "min_pt", "energy", pre, default=0.05, minimum=0.0),
        photon_min_e=rd.quantity(table, "photon_min_e", "energy", pre, default=0.03,
                                 minimum=0.0),
        mass_window=mw,
        full_hits=rd.number(table, "full_hits", pre, default=20, minimum=1, integer=True),
    )
