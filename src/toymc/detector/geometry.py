"""Geometry of the parametric cylindrical detector, and the [selection] section.

A geometry is a set of frozen dataclasses, loaded once from TOML and
validated there; kernels never see these objects, only the flat arrays
returned by :meth:`Geometry.tracking_layers` and plain numbers.

Units: lengths in cm, field in tesla, energies in GeV, angles in rad,
material thickness as a fraction of a radiation length ``x/X0``.  Every
length, field, energy or angle in a TOML file may be a plain number (in the
internal unit) or a string such as ``"15 mm"``, ``"1.5 T"``, ``"20 deg"``
(parsed by :func:`toymc.config.units.parse_quantity`).

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

from toymc.config import ranges as _R
from toymc.detector.profile import PROFILE_KINDS
from toymc.detector.profile import Profile as VertexProfile  # the one profile type
from toymc.errors import ConfigError as _ConfigError
from toymc.errors import InputFileError as _InputFileError

__all__ = (
    "GEOMETRY_SCHEMA",
    "PROFILE_KINDS",
    "SELECTION_SCHEMA",
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

    def get(self, table, key, prefix, spec):
        """The value of `key` by its schema entry (toymc.config.ranges): type, unit and range."""
        if key not in table:
            if spec["required"]:
                raise _ConfigError(self.path, prefix + key, None, "required; "
                                   + _R.allowed(spec))
            return spec["default"]
        return _R.check(self.path, prefix + key, table[key], spec)

    def fail(self, key, value, allowed):
        raise _ConfigError(self.path, key, value, allowed)


# ----------------------------------------------------------------------------- geometry loading

def _spec(kind, doc, default=None, required=True, **kw):
    return _R.spec(kind, default, doc, required=required, **kw)


_RADIUS = dict(dim="length", lo=0.0, lo_open=True, hi=_R.MAX_LENGTH)
_Z = dict(dim="length", lo=-_R.MAX_LENGTH, hi=_R.MAX_LENGTH)
_X0 = dict(lo=0.0, hi=_R.MAX_X0, unit="x/X0")
_RES = dict(dim="length", lo=0.0, lo_open=True, hi=_R.MAX_RESOLUTION)
_THETA = dict(dim="angle", lo=0.0, hi=_math.pi)

#: geometry file: "section.key" -> specification (toymc.config.ranges.spec); "vertex_layers[]" is
#: each [[vertex_layers]] table.  Relations (radii increasing, z_min < z_max, ...) are
#: checked in geometry_from_dict.
GEOMETRY_SCHEMA = {
    "name": _spec("str", "detector name (non-empty)"),
    "field": _spec("float", "solenoid field along z", dim="field", lo=0.0, lo_open=True,
                   hi=_R.MAX_FIELD),
    "beampipe.radius": _spec("float", "beam-pipe radius", **_RADIUS),
    "beampipe.thickness": _spec("float", "beam-pipe material", **_X0),
    "vertex_layers[].radius": _spec("float", "layer radius, above the beam pipe and the "
                                    "previous layer", **_RADIUS),
    "vertex_layers[].z_min": _spec("float", "layer z start", **_Z),
    "vertex_layers[].z_max": _spec("float", "layer z end (> z_min)", **_Z),
    "vertex_layers[].resolution": _spec("float", "point resolution (r-phi and z)", **_RES),
    "vertex_layers[].thickness": _spec("float", "layer material", **_X0),
    "chamber.r_inner": _spec("float", "inner wall radius, above the last vertex layer",
                             **_RADIUS),
    "chamber.r_outer": _spec("float", "outer wall radius", **_RADIUS),
    "chamber.z_min": _spec("float", "z start (< 0)", **_Z),
    "chamber.z_max": _spec("float", "z end (> 0)", **_Z),
    "chamber.radii": _spec("list", "sense-layer radii, increasing, between the walls; or "
                           "n_layers, r_first, r_last", required=False, max_len=_R.MAX_LAYERS,
                           **_RADIUS),
    "chamber.n_layers": _spec("int", "number of equally spaced sense layers", required=False,
                              lo=1, hi=_R.MAX_LAYERS),
    "chamber.r_first": _spec("float", "first sense-layer radius (with n_layers)",
                             required=False, **_RADIUS),
    "chamber.r_last": _spec("float", "last sense-layer radius (with n_layers)", required=False,
                            **_RADIUS),
    "chamber.resolution": _spec("float", "hit resolution", **_RES),
    "chamber.layer_thickness": _spec("float", "material per sense layer", **_X0),
    "chamber.inner_wall": _spec("float", "inner wall material", **_X0),
    "chamber.outer_wall": _spec("float", "outer wall material", **_X0),
    "calorimeter.radius": _spec("float", "barrel face radius, above the chamber", **_RADIUS),
    "calorimeter.z_min": _spec("float", "barrel z start (< 0)", **_Z),
    "calorimeter.z_max": _spec("float", "barrel z end (> 0)", **_Z),
    "calorimeter.stochastic": _spec("float", "a of sigma_E/E = a/sqrt(E) (+) b/E (+) c",
                                    lo=0.0, hi=1.0, unit="GeV^1/2"),
    "calorimeter.noise": _spec("float", "b (noise term)", dim="energy", lo=0.0, hi=1.0),
    "calorimeter.constant": _spec("float", "c (constant term)", lo=0.0, hi=1.0),
    "calorimeter.position_resolution": _spec("float", "cluster position resolution per "
                                             "coordinate", dim="length", lo=0.0, hi=10.0),
    "calorimeter.forward.z": _spec("float", "forward endcap plane (> chamber z_max)", **_Z),
    "calorimeter.forward.r_inner": _spec("float", "forward endcap inner radius",
                                         dim="length", lo=0.0, hi=_R.MAX_LENGTH),
    "calorimeter.forward.r_outer": _spec("float", "forward endcap outer radius", **_RADIUS),
    "calorimeter.backward.z": _spec("float", "backward endcap plane (< chamber z_min)", **_Z),
    "calorimeter.backward.r_inner": _spec("float", "backward endcap inner radius",
                                          dim="length", lo=0.0, hi=_R.MAX_LENGTH),
    "calorimeter.backward.r_outer": _spec("float", "backward endcap outer radius", **_RADIUS),
    "acceptance.tracker_theta_min": _spec("float", "tracker polar-angle acceptance start",
                                          default=0.0, required=False, **_THETA),
    "acceptance.tracker_theta_max": _spec("float", "tracker acceptance end",
                                          default=_math.pi, required=False, **_THETA),
    "acceptance.calo_theta_min": _spec("float", "calorimeter acceptance start", default=0.0,
                                       required=False, **_THETA),
    "acceptance.calo_theta_max": _spec("float", "calorimeter acceptance end",
                                       default=_math.pi, required=False, **_THETA),
}


def _keys_of(section):
    pre = section + "."
    return tuple(k[len(pre):] for k in GEOMETRY_SCHEMA if k.startswith(pre)
                 and "." not in k[len(pre):])


_TOP_KEYS = ("name", "field", "beampipe", "vertex_layers", "chamber", "calorimeter", "acceptance")
_BP_KEYS = _keys_of("beampipe")
_VTX_KEYS = _keys_of("vertex_layers[]")
_CH_KEYS = _keys_of("chamber")
_CAL_KEYS = _keys_of("calorimeter") + ("forward", "backward")
_EC_KEYS = _keys_of("calorimeter.forward")
_ACC_KEYS = _keys_of("acceptance")


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
        text = text.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise _InputFileError(f"{p}: not a valid TOML file ({exc})") from None
    _R.check_depth(text, str(p))
    try:
        table = _tomllib.loads(text)
    except _tomllib.TOMLDecodeError as exc:
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
    S = GEOMETRY_SCHEMA

    def get(t, key, pre, section=None):
        return rd.get(t, key, pre, S[(section or pre) + key])

    name = table.get("name")
    if not isinstance(name, str) or not name.strip():
        rd.fail("name", name, "a non-empty string")
    bfield = get(table, "field", "")

    bp = rd.table(table, "beampipe", "")
    rd.keys(bp, _BP_KEYS, "beampipe.")
    bp_r = get(bp, "radius", "beampipe.")
    bp_x = get(bp, "thickness", "beampipe.")

    layers_in = table.get("vertex_layers", [])
    if not isinstance(layers_in, list):
        rd.fail("vertex_layers", layers_in, "an array of tables [[vertex_layers]]")
    if len(layers_in) > _R.MAX_LAYERS:
        rd.fail("vertex_layers", f"{len(layers_in)} layers", f"at most {_R.MAX_LAYERS} layers")
    layers = []
    prev_r = bp_r
    for i, lay in enumerate(layers_in):
        pre = f"vertex_layers[{i}]."
        rd.keys(lay, _VTX_KEYS, pre)
        r = get(lay, "radius", pre, "vertex_layers[].")
        if r <= prev_r:
            what = "the beam-pipe radius" if i == 0 else "the previous layer's radius"
            rd.fail(pre + "radius", lay["radius"], f"a radius above {what} ({prev_r:g} cm)")
        zmin = get(lay, "z_min", pre, "vertex_layers[].")
        zmax = get(lay, "z_max", pre, "vertex_layers[].")
        if not zmin < zmax:
            rd.fail(pre + "z_max", lay["z_max"], f"a value above z_min ({zmin:g} cm)")
        res = get(lay, "resolution", pre, "vertex_layers[].")
        thick = get(lay, "thickness", pre, "vertex_layers[].")
        layers.append(VertexLayer(r, zmin, zmax, res, thick))
        prev_r = r

    ch = rd.table(table, "chamber", "")
    rd.keys(ch, _CH_KEYS, "chamber.")
    pre = "chamber."
    r_in = get(ch, "r_inner", pre)
    if r_in <= prev_r:
        rd.fail(pre + "r_inner", ch["r_inner"],
                f"a radius above the last vertex layer / beam pipe ({prev_r:g} cm)")
    r_out = get(ch, "r_outer", pre)
    if r_out <= r_in:
        rd.fail(pre + "r_outer", ch["r_outer"], f"a radius above r_inner ({r_in:g} cm)")
    zmin = get(ch, "z_min", pre)
    zmax = get(ch, "z_max", pre)
    if not zmin < 0.0 < zmax:
        rd.fail(pre + "z_min", ch["z_min"], f"z_min < 0 < z_max (z_max = {zmax:g} cm)")
    if "radii" in ch:
        if any(k in ch for k in ("n_layers", "r_first", "r_last")):
            rd.fail(pre + "radii", ch["radii"],
                    "either radii = [...] or n_layers, r_first, r_last, not both")
        raw = ch["radii"]
        if not isinstance(raw, list) or not raw:
            rd.fail(pre + "radii", raw, "a non-empty list of radii")
        if len(raw) > _R.MAX_LAYERS:
            rd.fail(pre + "radii", f"{len(raw)} radii", f"at most {_R.MAX_LAYERS} sense layers")
        el = dict(S["chamber.radii"], kind="float")
        radii = [_R.check(rd.path, f"{pre}radii[{j}]", v, el) for j, v in enumerate(raw)]
    else:
        for key in ("n_layers", "r_first", "r_last"):
            if key not in ch:
                rd.fail(pre + key, None, "required without chamber.radii; "
                        + _R.allowed(S[pre + key]))
        n = get(ch, "n_layers", pre)
        r1 = get(ch, "r_first", pre)
        r2 = get(ch, "r_last", pre)
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
    if len(layers) + len(radii) > _R.MAX_LAYERS:
        rd.fail(pre + "radii", f"{len(layers)} + {len(radii)} layers",
                f"at most {_R.MAX_LAYERS} measuring layers (vertex layers and sense layers)")
    chamber = DriftChamber(
        r_in, r_out, zmin, zmax, tuple(float(r) for r in radii),
        get(ch, "resolution", pre), get(ch, "layer_thickness", pre),
        get(ch, "inner_wall", pre), get(ch, "outer_wall", pre),
    )

    cal = rd.table(table, "calorimeter", "")
    rd.keys(cal, _CAL_KEYS, "calorimeter.")
    pre = "calorimeter."
    c_r = get(cal, "radius", pre)
    if c_r <= r_out:
        rd.fail(pre + "radius", cal["radius"], f"a radius above the chamber's r_outer ({r_out:g} cm)")
    c_zmin = get(cal, "z_min", pre)
    c_zmax = get(cal, "z_max", pre)
    if not c_zmin < 0.0 < c_zmax:
        rd.fail(pre + "z_min", cal["z_min"], f"z_min < 0 < z_max (z_max = {c_zmax:g} cm)")
    caps = {}
    for side, sign in (("forward", 1.0), ("backward", -1.0)):
        ec = rd.table(cal, side, pre)
        epre = f"{pre}{side}."
        rd.keys(ec, _EC_KEYS, epre)
        z = get(ec, "z", epre)
        if z * sign <= 0.0:
            rd.fail(epre + "z", ec["z"], f"a z {'> 0' if sign > 0 else '< 0'} cm")
        if abs(z) <= abs(zmax if sign > 0 else zmin):
            rd.fail(epre + "z", ec["z"], "a plane beyond the chamber's z end")
        ri = get(ec, "r_inner", epre)
        ro = get(ec, "r_outer", epre)
        if ro <= ri:
            rd.fail(epre + "r_outer", ec["r_outer"], f"a radius above r_inner ({ri:g} cm)")
        caps[side] = Endcap(z, ri, ro)
    calo = Calorimeter(
        c_r, c_zmin, c_zmax, caps["forward"], caps["backward"],
        get(cal, "stochastic", pre), get(cal, "noise", pre), get(cal, "constant", pre),
        get(cal, "position_resolution", pre),
    )

    acc = rd.table(table, "acceptance", "", default={})
    rd.keys(acc, _ACC_KEYS, "acceptance.")
    vals = [get(acc, key, "acceptance.") for key in _ACC_KEYS]
    for lo, hi in ((0, 1), (2, 3)):
        if not vals[lo] < vals[hi]:
            rd.fail("acceptance." + _ACC_KEYS[hi], acc.get(_ACC_KEYS[hi]),
                    f"an angle above {_ACC_KEYS[lo]}")

    return Geometry(name.strip(), bfield, bp_r, bp_x, tuple(layers), chamber, calo,
                    Acceptance(*vals))


# ----------------------------------------------------------------------------- selection


@dataclass(frozen=True)
class Selection:
    """Reconstruction and selection cuts of a run ([selection] section).

    Attributes
    ----------
    r_min, r_max, z_min, z_max : float
        Fiducial window for the reconstructed vertex, cm.
    profile : toymc.detector.profile.Profile
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


_SEL = "selection."
#: [selection] of a run config: "selection.key" -> specification (toymc.config.ranges.spec)
SELECTION_SCHEMA = {
    "selection.r_min": _spec("float", "fiducial window of the reconstructed vertex: lowest "
                             "radius", dim="length", lo=0.0, hi=_R.MAX_LENGTH),
    "selection.r_max": _spec("float", "highest radius (> r_min, inside the tracker)",
                             dim="length", lo=0.0, lo_open=True, hi=_R.MAX_LENGTH),
    "selection.z_min": _spec("float", "lowest z (inside the tracker)", **_Z),
    "selection.z_max": _spec("float", "highest z (> z_min, inside the tracker)", **_Z),
    "selection.profile": _spec("table", "vertex-finding efficiency: {kind, eps0, points}",
                               default={"kind": "flat", "eps0": 1.0}, required=False),
    "selection.profile.kind": _spec("str", "flat; linear (eps0 at r_min to 0 at r_max); "
                                    "tabulated (points); hits (from the tracks' hit counts)",
                                    default="flat", required=False, choices=PROFILE_KINDS),
    "selection.profile.eps0": _spec("float", "overall scale of the profile", default=1.0,
                                    required=False, lo=0.0, hi=1.0),
    "selection.profile.points": _spec("list", "tabulated only: [[r, eps], ...], r increasing "
                                      "(cm), eps in [0, 1]", required=False, min_len=2,
                                      max_len=_R.MAX_GRID_AXIS),
    "selection.min_hits": _spec("int", "measured hits of a found track (at most the geometry's "
                                "measuring layers)", default=6, required=False, lo=3,
                                hi=_R.MAX_LAYERS),
    "selection.min_pt": _spec("float", "transverse-momentum threshold of a found track",
                              default=0.05, required=False, dim="energy", lo=0.0,
                              hi=_R.MAX_MASS),
    "selection.photon_min_e": _spec("float", "cluster energy threshold", default=0.03,
                                    required=False, dim="energy", lo=0.0, hi=_R.MAX_MASS),
    "selection.mass_window": _spec("list", "optional [low, high] window on rec_m",
                                   required=False, dim="energy", lo=0.0, hi=_R.MAX_MASS,
                                   min_len=2, max_len=2),
    "selection.full_hits": _spec("int", "hits profile only: hits at which a track is fully "
                                 "efficient", default=20, required=False, lo=1,
                                 hi=_R.MAX_LAYERS),
}
_SEL_KEYS = tuple(k[len(_SEL):] for k in SELECTION_SCHEMA if k.count(".") == 1)
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
    pre = _SEL
    S = SELECTION_SCHEMA
    rd.keys(table, _SEL_KEYS, pre)
    r_min = rd.get(table, "r_min", pre, S[pre + "r_min"])
    r_max = rd.get(table, "r_max", pre, S[pre + "r_max"])
    if r_max <= r_min:
        rd.fail(pre + "r_max", table["r_max"], f"a radius above r_min ({r_min:g} cm)")
    z_min = rd.get(table, "z_min", pre, S[pre + "z_min"])
    z_max = rd.get(table, "z_max", pre, S[pre + "z_max"])
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
    kind = rd.get(prof, "kind", ppre, S[ppre + "kind"])
    eps0 = rd.get(prof, "eps0", ppre, S[ppre + "eps0"])
    rs, es = (), ()
    if kind == "tabulated":
        pts = prof.get("points")
        spec = S[ppre + "points"]
        if not isinstance(pts, list) or not 2 <= len(pts) <= spec["max_len"]:
            rd.fail(ppre + "points", pts if not isinstance(pts, list) or len(pts) < 2
                    else f"{len(pts)} points", f"a list of 2 to {spec['max_len']} [r, eps] pairs")
        r_spec = dict(S[pre + "r_min"], kind="float")
        rl, el = [], []
        for j, pair in enumerate(pts):
            if not isinstance(pair, list) or len(pair) != 2:
                rd.fail(f"{ppre}points[{j}]", pair, "a pair [r, eps]")
            r = _R.check(rd.path, f"{ppre}points[{j}][0]", pair[0], r_spec)
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

    min_hits = rd.get(table, "min_hits", pre, S[pre + "min_hits"])
    if geometry is not None and min_hits > geometry.n_measuring_layers:
        rd.fail(pre + "min_hits", min_hits, f"at most the {geometry.n_measuring_layers} "
                f"measuring layers of geometry '{geometry.name}' (no track could be found)")
    if "full_hits" in table and kind != "hits":
        rd.fail(pre + "full_hits", table["full_hits"], "used only by profile kind 'hits' (this "
                f"profile: '{kind}'); remove it")
    mw = table.get("mass_window")
    if mw is not None:
        if not isinstance(mw, list) or len(mw) != 2:
            rd.fail(pre + "mass_window", mw, "a pair [low, high] of masses")
        lo, hi = rd.get(table, "mass_window", pre, S[pre + "mass_window"])
        if not lo < hi:
            rd.fail(pre + "mass_window", mw, "0 <= low < high")
        mw = (lo, hi)
    return Selection(
        r_min, r_max, z_min, z_max, VertexProfile(kind, eps0, rs, es),
        min_hits=min_hits,
        min_pt=rd.get(table, "min_pt", pre, S[pre + "min_pt"]),
        photon_min_e=rd.get(table, "photon_min_e", pre, S[pre + "photon_min_e"]),
        mass_window=mw,
        full_hits=rd.get(table, "full_hits", pre, S[pre + "full_hits"]),
    )
