"""Reading a geometry file and the [selection] section into the detector's dataclasses.

The keys, units and ranges are in :data:`toymc.config.schema.GEOMETRY_SCHEMA` and
``SCHEMA["selection"]``; each table is validated by
:func:`toymc.config.tables.check_table`, then the relations between keys are checked here
(layers above the beam pipe and each other, sense layers between the chamber walls,
z_min < 0 < z_max, endcaps beyond the chamber, the fiducial window inside the tracker, ...).
The results are the frozen dataclasses of :mod:`toymc.detector.geometry`; the detector
itself never reads a file.  The file layout is described in that module's docstring.
"""

import numpy as np

from toymc.config import ranges as R
from toymc.config.schema import GEOMETRY_SCHEMA, SCHEMA
from toymc.config.tables import check_table
from toymc.config.toml import read_toml
from toymc.detector.geometry import (
    Acceptance,
    Calorimeter,
    DriftChamber,
    Endcap,
    Geometry,
    Selection,
    VertexLayer,
)
from toymc.detector.profile import Profile
from toymc.errors import ConfigError

__all__ = ("geometry_from_dict", "load_geometry", "parse_selection")

G = GEOMETRY_SCHEMA
_SUBTABLES = ("beampipe", "vertex_layers", "chamber", "calorimeter", "acceptance")


def _fail(path, key, value, allowed):
    raise ConfigError(path, key, value, allowed)


def load_geometry(path):
    """Read and validate a geometry TOML file.

    Parameters
    ----------
    path : str or pathlib.Path

    Returns
    -------
    toymc.detector.geometry.Geometry

    Raises
    ------
    InputFileError
        The file is missing, unreadable or not valid TOML.
    ConfigError
        A value is missing, of the wrong unit, out of range, or a key is unknown
        (the message suggests the closest allowed name).
    """
    return geometry_from_dict(read_toml(path, "geometry"), str(path))


def geometry_from_dict(table, path=None):
    """Build a validated :class:`~toymc.detector.geometry.Geometry` from a parsed TOML table.

    Parameters
    ----------
    table : dict
        The parsed file (see :mod:`toymc.detector.geometry` for the layout).
    path : str, optional
        File name used in error messages.
    """
    path = None if path is None else str(path)
    top = check_table(path, "", table, G[""], extra=_SUBTABLES + ("name",), what="a table")
    name = top["name"]
    if not isinstance(name, str) or not name.strip():
        _fail(path, "name", name, "a non-empty string")
    if "beampipe" not in table:
        _fail(path, "beampipe", None, "a table is required")
    bp = check_table(path, "beampipe", table["beampipe"], G["beampipe"], what="a table")

    layers_in = table.get("vertex_layers", [])
    if not isinstance(layers_in, list):
        _fail(path, "vertex_layers", layers_in, "an array of tables [[vertex_layers]]")
    if len(layers_in) > R.MAX_LAYERS:
        _fail(path, "vertex_layers", f"{len(layers_in)} layers", f"at most {R.MAX_LAYERS} layers")
    layers = []
    prev_r = bp["radius"]
    for i, raw in enumerate(layers_in):
        pre = f"vertex_layers[{i}]"
        lay = check_table(path, pre, raw, G["vertex_layers[]"], what="a table")
        if lay["radius"] <= prev_r:
            what = "the beam-pipe radius" if i == 0 else "the previous layer's radius"
            _fail(path, pre + ".radius", raw["radius"], f"a radius above {what} ({prev_r:g} cm)")
        if not lay["z_min"] < lay["z_max"]:
            _fail(path, pre + ".z_max", raw["z_max"], f"a value above z_min ({lay['z_min']:g} cm)")
        layers.append(VertexLayer(lay["radius"], lay["z_min"], lay["z_max"], lay["resolution"],
                                  lay["thickness"]))
        prev_r = lay["radius"]

    chamber = _chamber(path, table, prev_r, len(layers))
    calo = _calorimeter(path, table, chamber)
    acc = check_table(path, "acceptance", table.get("acceptance", {}), G["acceptance"],
                      what="a table")
    keys = tuple(G["acceptance"])
    vals = [acc[k] for k in keys]
    for lo, hi in ((0, 1), (2, 3)):
        if not vals[lo] < vals[hi]:
            _fail(path, "acceptance." + keys[hi], table["acceptance"].get(keys[hi]),
                  f"an angle above {keys[lo]}")
    return Geometry(name.strip(), top["field"], bp["radius"], bp["thickness"], tuple(layers),
                    chamber, calo, Acceptance(*vals))


def _chamber(path, table, prev_r, n_vertex):
    if "chamber" not in table:
        _fail(path, "chamber", None, "a table is required")
    raw = table["chamber"]
    ch = check_table(path, "chamber", raw, G["chamber"], what="a table")
    pre = "chamber."
    r_in, r_out = ch["r_inner"], ch["r_outer"]
    if r_in <= prev_r:
        _fail(path, pre + "r_inner", raw["r_inner"],
              f"a radius above the last vertex layer / beam pipe ({prev_r:g} cm)")
    if r_out <= r_in:
        _fail(path, pre + "r_outer", raw["r_outer"], f"a radius above r_inner ({r_in:g} cm)")
    if not ch["z_min"] < 0.0 < ch["z_max"]:
        _fail(path, pre + "z_min", raw["z_min"], f"z_min < 0 < z_max (z_max = {ch['z_max']:g} cm)")
    if "radii" in raw:
        if any(k in raw for k in ("n_layers", "r_first", "r_last")):
            _fail(path, pre + "radii", raw["radii"],
                  "either radii = [...] or n_layers, r_first, r_last, not both")
        radii = ch["radii"]
    else:
        for key in ("n_layers", "r_first", "r_last"):
            if key not in raw:
                _fail(path, pre + key, None, "required without chamber.radii; "
                      + R.allowed(G["chamber"][key]))
        n, r1, r2 = ch["n_layers"], ch["r_first"], ch["r_last"]
        if n > 1 and not r2 > r1:
            _fail(path, pre + "r_last", raw["r_last"], f"a radius above r_first ({r1:g} cm)")
        for key, r in (("r_first", r1), ("r_last", r2)):
            if not r_in < r < r_out:
                _fail(path, pre + key, raw[key], f"a radius strictly between r_inner ({r_in:g}) "
                      f"and r_outer ({r_out:g}) cm")
        radii = list(np.linspace(r1, r2, n)) if n > 1 else [r1]
    for j, r in enumerate(radii):
        if not r_in < r < r_out:
            _fail(path, f"{pre}radii[{j}]", r, f"a radius strictly between r_inner ({r_in:g}) and "
                  f"r_outer ({r_out:g}) cm")
        if j and r <= radii[j - 1]:
            _fail(path, f"{pre}radii[{j}]", r, "radii increasing (layers must not overlap)")
    if n_vertex + len(radii) > R.MAX_LAYERS:
        _fail(path, pre + "radii", f"{n_vertex} + {len(radii)} layers",
              f"at most {R.MAX_LAYERS} measuring layers (vertex layers and sense layers)")
    return DriftChamber(r_in, r_out, ch["z_min"], ch["z_max"], tuple(float(r) for r in radii),
                        ch["resolution"], ch["layer_thickness"], ch["inner_wall"],
                        ch["outer_wall"])


def _calorimeter(path, table, chamber):
    if "calorimeter" not in table:
        _fail(path, "calorimeter", None, "a table is required")
    raw = table["calorimeter"]
    cal = check_table(path, "calorimeter", raw, G["calorimeter"], extra=("forward", "backward"),
                      what="a table")
    pre = "calorimeter."
    if cal["radius"] <= chamber.r_outer:
        _fail(path, pre + "radius", raw["radius"],
              f"a radius above the chamber's r_outer ({chamber.r_outer:g} cm)")
    if not cal["z_min"] < 0.0 < cal["z_max"]:
        _fail(path, pre + "z_min", raw["z_min"], f"z_min < 0 < z_max (z_max = {cal['z_max']:g} cm)")
    caps = {}
    for side, sign in (("forward", 1.0), ("backward", -1.0)):
        epre = f"{pre}{side}"
        if side not in raw:
            _fail(path, epre, None, "a table is required")
        ec = check_table(path, epre, raw[side], G[epre], what="a table")
        z = ec["z"]
        if z * sign <= 0.0:
            _fail(path, epre + ".z", raw[side]["z"], f"a z {'> 0' if sign > 0 else '< 0'} cm")
        if abs(z) <= abs(chamber.z_max if sign > 0 else chamber.z_min):
            _fail(path, epre + ".z", raw[side]["z"], "a plane beyond the chamber's z end")
        if ec["r_outer"] <= ec["r_inner"]:
            _fail(path, epre + ".r_outer", raw[side]["r_outer"],
                  f"a radius above r_inner ({ec['r_inner']:g} cm)")
        caps[side] = Endcap(z, ec["r_inner"], ec["r_outer"])
    return Calorimeter(cal["radius"], cal["z_min"], cal["z_max"], caps["forward"],
                       caps["backward"], cal["stochastic"], cal["noise"], cal["constant"],
                       cal["position_resolution"])


# ----------------------------------------------------------------------------- selection


def parse_selection(table, path=None, geometry=None):
    """Validate the [selection] table of a run config.

    Parameters
    ----------
    table : dict
        Keys of ``SCHEMA["selection"]``: ``r_min, r_max, z_min, z_max`` (lengths),
        ``min_hits``, ``min_pt``, ``photon_min_e`` (energies), ``mass_window = [lo, hi]``
        (optional), ``full_hits``, and a ``profile`` table with ``kind``, ``eps0`` and
        (tabulated) ``points = [[r, eps], ...]``.
    path : str, optional
        File name used in error messages.
    geometry : Geometry, optional
        If given, the fiducial window must lie inside the tracker.

    Returns
    -------
    toymc.detector.geometry.Selection

    Raises
    ------
    ConfigError
    """
    path = None if path is None else str(path)
    pre = "selection."
    v = check_table(path, "selection", table, SCHEMA["selection"], what="a table")
    r_min, r_max, z_min, z_max = v["r_min"], v["r_max"], v["z_min"], v["z_max"]
    if r_max <= r_min:
        _fail(path, pre + "r_max", table["r_max"], f"a radius above r_min ({r_min:g} cm)")
    if z_max <= z_min:
        _fail(path, pre + "z_max", table["z_max"], f"a value above z_min ({z_min:g} cm)")
    if geometry is not None:
        ch = geometry.chamber
        if r_max > ch.r_outer:
            _fail(path, pre + "r_max", table["r_max"],
                  f"a radius inside the tracker (<= {ch.r_outer:g} cm)")
        if z_min < ch.z_min:
            _fail(path, pre + "z_min", table["z_min"], f"a z inside the tracker (>= {ch.z_min:g} cm)")
        if z_max > ch.z_max:
            _fail(path, pre + "z_max", table["z_max"], f"a z inside the tracker (<= {ch.z_max:g} cm)")

    profile = _profile(path, v["profile"], r_min, r_max)
    min_hits = v["min_hits"]
    if geometry is not None and min_hits > geometry.n_measuring_layers:
        _fail(path, pre + "min_hits", min_hits, f"at most the {geometry.n_measuring_layers} "
              f"measuring layers of geometry '{geometry.name}' (no track could be found)")
    if "full_hits" in table and profile.kind != "hits":
        _fail(path, pre + "full_hits", table["full_hits"], "used only by profile kind 'hits' "
              f"(this profile: '{profile.kind}'); remove it")
    mw = v["mass_window"]
    if mw is not None:
        if not mw[0] < mw[1]:
            _fail(path, pre + "mass_window", table["mass_window"], "0 <= low < high")
        mw = (mw[0], mw[1])
    return Selection(r_min, r_max, z_min, z_max, profile, min_hits=min_hits,
                     min_pt=v["min_pt"], photon_min_e=v["photon_min_e"], mass_window=mw,
                     full_hits=v["full_hits"])


def _profile(path, table, r_min, r_max):
    """The vertex-finding efficiency profile (selection.profile)."""
    ppre = "selection.profile."
    specs = SCHEMA["selection.profile"]
    prof = check_table(path, "selection.profile", table, specs, extra=("points",),
                       what="a table")
    kind = prof["kind"]
    rs, es = (), ()
    if kind == "tabulated":
        pts = prof["points"]
        n_max = specs["points"]["max_len"]
        if not isinstance(pts, list) or not 2 <= len(pts) <= n_max:
            _fail(path, ppre + "points", pts if not isinstance(pts, list) or len(pts) < 2
                  else f"{len(pts)} points", f"a list of 2 to {n_max} [r, eps] pairs")
        r_spec = dict(SCHEMA["selection"]["r_min"], kind="float")
        rl, el = [], []
        for j, pair in enumerate(pts):
            if not isinstance(pair, list) or len(pair) != 2:
                _fail(path, f"{ppre}points[{j}]", pair, "a pair [r, eps]")
            r = R.check(path, f"{ppre}points[{j}][0]", pair[0], r_spec)
            e = pair[1]
            if isinstance(e, bool) or not isinstance(e, (int, float)) or not 0.0 <= e <= 1.0:
                _fail(path, f"{ppre}points[{j}][1]", e, "an efficiency in [0, 1]")
            if rl and r <= rl[-1]:
                _fail(path, f"{ppre}points[{j}][0]", pair[0], "radii strictly increasing")
            rl.append(float(r))
            el.append(float(e))
        rs, es = tuple(rl), tuple(el)
    elif prof["points"] is not None:
        _fail(path, ppre + "points", prof["points"], f"no points for kind '{kind}'"
              + (" (linear falls from eps0 at r_min to 0 at r_max; use 'tabulated' for "
                 "other shapes)" if kind == "linear" else ""))
    if kind == "linear":
        # eps0 at r_min falling linearly to 0 at r_max
        rs, es = (r_min, r_max), (1.0, 0.0)
    return Profile(kind, prof["eps0"], rs, es)
