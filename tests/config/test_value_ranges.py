"""Every value a user gives has a range: one line, exit status 2, nothing written.

Three classes of mistakes, each case run through the command line (``toymc.cli.main.main``
in this process; a handful in a subprocess of ``python -m toymc``):

* numbers: every numeric key of every schema (config ``SCHEMA``, geometry,
  [selection], [tuning], [backgrounds]) is tried below and above its bounds, at an
  open bound, with NaN, +-infinity, huge and wrong-typed values.  The cases are
  generated from the schemas, so a new key is tested as soon as it has a range.  The
  error line must name the key and state the key's allowed range (toymc.config.ranges).
  Values at the closed bounds are accepted, and hand-picked edge runs give finite
  events;
* structure: TOML nested 3000 and 100000 levels deep (arrays, inline tables,
  dotted keys, table headers) in configs, geometries, reach and tuning configs;
  tables where arrays belong and the reverse; keys the chosen production, model,
  profile or efficiency source does not use; grids and samples beyond their
  documented sizes;
* command-line numbers: every bounded option with zero, negative, too large, NaN,
  infinite, fractional and non-numeric values.

Each refused case: exactly one line on stderr starting ``toymc: error:``, exit status
2, no traceback, and the case's folder byte for byte as before.
"""

import importlib.util
import math
import os
import subprocess
import sys
import tomllib
from pathlib import Path

import numpy as np
import pytest
from _demo import ROOT
from _inputs import (
    DEMO_GEOMETRY,
    SCAN,
    base_config,
    base_geometry,
    dumps,
    small_tune_data,
)
from _outputs import run_cli, snapshot

from toymc.config import ranges as R
from toymc.config.geometry import load_geometry
from toymc.config.loader import from_dict, loads
from toymc.config.schema import GEOMETRY_SCHEMA, SCHEMA, rows
from toymc.config.toml import check_depth


# ------------------------------------------------------------------ running a case
def expect_one_line(tmp_path, capsys, argv, *phrases):
    """Run argv in this process: exit 2, one 'toymc: error:' line holding every phrase,
    the folder unchanged.  Returns the line."""
    capsys.readouterr()
    before = snapshot(tmp_path)
    code = run_cli(argv)
    err = capsys.readouterr().err
    lines = err.strip().splitlines()
    assert code == 2, (code, err)
    assert len(lines) == 1, err
    assert lines[0].startswith("toymc: error: "), err
    assert "Traceback" not in err
    for p in phrases:
        assert p in lines[0], (p, lines[0])
    assert snapshot(tmp_path) == before
    return lines[0]


def _write(path, text):
    Path(path).write_text(text)
    return path


def _reach_data():
    data = tomllib.loads((ROOT / "configs" / "reach_dark_photon.toml").read_text())
    data["detector"]["geometry"] = str(DEMO_GEOMETRY)
    data["reach"].update(mass_points=2, coupling_points=2, events_per_mass=200)
    return data


def _with_model(data, model):
    data["llp"].pop("ctau", None)
    data["model"] = model
    return data


# ------------------------------------------------------------------ the targets
# A target is a (command, base data, where the key lives) combination; each builds the
# command line for a config whose value at the key is replaced.

def _generate(tmp, data):
    cfg = _write(tmp / "run.toml", dumps(data))
    return ["generate", cfg, "-o", tmp / "out.root", "-q"]


def _config_case(section, key, value, tmp):
    """argv for config key section.key = value (value None: leave the key out)."""
    if section == "scan":
        data = base_config()
        data["scan"] = dict(SCAN)
        if key in ("mass_min", "mass_max", "mass_points"):
            data["scan"].pop("masses")
            data["scan"].update(mass_min=0.4, mass_max=0.8)
        data["scan"][key] = value
        return ["scan", _write(tmp / "run.toml", dumps(data)), "-o", tmp / "scan", "-q", "-j", "1"]
    if section == "reach":
        data = _reach_data()
        if key in ("masses",):
            for k in ("mass_min", "mass_max", "mass_points"):
                data["reach"].pop(k)
        if key in ("couplings",):
            for k in ("coupling_min", "coupling_max", "coupling_points"):
                data["reach"].pop(k)
        data["reach"][key] = value
        return ["reach", _write(tmp / "run.toml", dumps(data)), "-o", tmp / "reach", "-q",
                "--no-plot"]
    b_meson = (section == "production" and key in ("recoil", "charged_fraction", "sigma_bb")) or (
        section == "model" and key in ("g_bs", "br_production"))
    data = base_config("alp_3pi_bka" if b_meson else "darkphoton_mumu")
    if section == "model":
        if b_meson:
            _with_model(data, {"name": "alp_gluon", "coupling": 1e-3})
        else:
            _with_model(data, {"name": "custom_vector" if key == "charges" else "dark_photon",
                               "coupling": 1e-4})
    if section == "llp" and key == "ctau_mixture":
        data["llp"].pop("ctau")
    data.setdefault(section, {})[key] = value
    return _generate(tmp, data)


def _selection_case(dotted, value, tmp):
    data = base_config()
    sel = data["selection"]
    key = dotted[len("selection."):]
    if key.startswith("profile."):
        sub = key[len("profile."):]
        prof = {"kind": "tabulated", "eps0": 0.9, "points": [[1, 1.0], [30, 0.5]]}
        prof[sub] = value
        sel["profile"] = prof
    else:
        if key == "full_hits":
            sel["profile"] = {"kind": "hits", "eps0": 0.9}
        sel[key] = value
    return _generate(tmp, data)


def _geometry_case(dotted, value, tmp):
    g = base_geometry()
    parts = dotted.replace("vertex_layers[]", "vertex_layers").split(".")
    node = g["vertex_layers"][0] if parts[0] == "vertex_layers" else g
    if parts[0] == "vertex_layers":
        parts = parts[1:]
    if parts[-1] == "radii":
        for k in ("n_layers", "r_first", "r_last"):
            g["chamber"].pop(k)
    for p in parts[:-1]:
        node = node.setdefault(p, {})
    node[parts[-1]] = value
    data = base_config()
    data["detector"]["geometry"] = str(_write(tmp / "geo.toml", dumps(g)))
    return _generate(tmp, data)


def _tuning_case(key, value, tmp):
    data = small_tune_data()
    t = data["tuning"]
    if key == "cl":
        t["fom"] = "upper_limit"
    if key == "signal_sigma":
        t["fom"] = "s_over_sqrt_b"
    if "." in key:  # the {start, stop, points} form of r_min or r_max
        axis, k = key.split(".")
        if not isinstance(t[axis], dict):
            t[axis] = {"start": "30 cm", "stop": "60 cm", "points": 2}
        t[axis][k] = value
    else:
        t[key] = value
    return ["tune-cuts", _write(tmp / "run.toml", dumps(data)), "-o", tmp / "tuned", "-q"]


def _background_case(key, value, tmp):
    data = small_tune_data()
    b = data["backgrounds"]
    if key == "sigma_ref":
        b["sigma_ref"] = value
    else:
        k = key.split(".", 1)[1]
        species = {"anti_fraction": "lambda", "vertex": "combo", "pi0_p_mean": "combo",
                   "pi0_p_shape": "combo"}.get(k, "ks")
        if species == "combo":
            b["combo"] = {"yield": 0.1, "p_mean": "0.5 GeV"}
        if k == "sigma":
            b[species].pop("yield")
        b[species][k] = value
    return ["tune-cuts", _write(tmp / "run.toml", dumps(data)), "-o", tmp / "tuned", "-q"]


def _named(dotted, target):
    """The key as the error line names it."""
    if target == "geometry":
        return dotted.replace("vertex_layers[]", "vertex_layers[0]")
    if target == "backgrounds":
        if dotted.startswith("<species>."):
            k = dotted.split(".", 1)[1]
            sp = {"anti_fraction": "lambda", "vertex": "combo", "pi0_p_mean": "combo",
                  "pi0_p_shape": "combo"}.get(k, "ks")
            return f"backgrounds.{sp}.{k}"
        return "backgrounds." + dotted
    if target == "tuning":
        return "tuning." + dotted
    return dotted


def all_keys():
    """(target, key, spec, argv builder(value, tmp)) for every key of every schema section:
    the run config's sections (SCHEMA; [selection], [tuning] and [backgrounds] through the
    commands that read them) and the geometry file (GEOMETRY_SCHEMA)."""
    out = []
    for sec, keys in SCHEMA.items():
        top, _, sub = sec.partition(".")
        for key, s in keys.items():
            if top == "selection":
                if sec == "selection" and key == "profile":
                    continue  # the table itself: see the structure cases
                d = f"{sec}.{key}"
                out.append(("selection", d, s, lambda v, tmp, d=d: _selection_case(d, v, tmp)))
            elif top == "tuning":
                k = f"{sub}.{key}" if sub else key
                out.append(("tuning", k, s, lambda v, tmp, k=k: _tuning_case(k, v, tmp)))
            elif top == "backgrounds":
                k = f"{sub}.{key}" if sub else key
                out.append(("backgrounds", k, s, lambda v, tmp, k=k: _background_case(k, v, tmp)))
            else:
                out.append(("config", f"{sec}.{key}", s,
                            lambda v, tmp, sec=sec, key=key: _config_case(sec, key, v, tmp)))
    for dotted, s in rows(GEOMETRY_SCHEMA):
        out.append(("geometry", dotted, s, lambda v, tmp, d=dotted: _geometry_case(d, v, tmp)))
    return out


KEYS = all_keys()


# ------------------------------------------------------------------ bad values of a spec
_WRONG_UNIT = {"energy": "3 cm", "length": "3 GeV", "angle": "3 cm", "area": "3 GeV",
               "inverse_area": "3 cm", "field": "3 cm"}


def _beyond(x, sign):
    return x + sign * max(abs(x), 1.0) * 1e-3


def bad_values(s):
    """(label, value, range_error) for a numeric spec: range_error means the line must
    state the key's allowed range."""
    out = []
    isint = s["kind"] == "int"
    lo, hi = s["lo"], s["hi"]
    assert lo is not None and hi is not None, "every number has two bounds"
    if s["lo_open"]:
        out.append(("at the open lower bound", lo, True))
    out.append(("below the lower bound", lo - 1 if isint else _beyond(lo, -1), True))
    if s["hi_open"]:
        out.append(("at the open upper bound", hi, True))
    out.append(("above the upper bound", hi + 1 if isint else _beyond(hi, 1), True))
    if isint:
        out += [("a float", float(lo) + 0.5, True), ("far above", hi * 10**6 + 1, True),
                ("far below", lo - 10**20, True), ("10^400", 10**400, True)]
    else:
        out += [("nan", math.nan, True), ("inf", math.inf, True), ("-inf", -math.inf, True),
                ("1e300", 1e300, True), ("-1e300", -1e300, True), ("10^400", 10**400, True),
                ("'nan' with unit", "nan GeV", False)]
    out += [("a string", "many", True), ("true", True, True), ("a list", [1], True),
            ("a table", {"a": 1}, True)]
    if s["dim"]:
        out.append(("a wrong unit", _WRONG_UNIT[s["dim"]], False))
    return out


def bad_list_values(s):
    el = dict(s, kind="float")
    n = max(s["min_len"], 2)
    good = sorted({_beyond(s["lo"], 1) if s["lo_open"] else s["lo"], s["hi"]})
    good = (good * n)[:n]
    out = [("an element below", [_beyond(s["lo"], -1)] + good[1:], False),
           ("an element above", good[:-1] + [_beyond(s["hi"], 1)], False),
           ("a NaN element", [math.nan] + good[1:], False),
           ("an infinite element", [math.inf] + good[1:], False),
           ("a string element", ["abc"] + good[1:], False),
           ("a nested list", [[1.0]] + good[1:], False),
           ("not a list", "1, 2", False),
           ("too many", [good[0]] * ((s["max_len"] or 10) + 1), False)]
    if s["min_len"] > 1:
        out.append(("too few", good[:s["min_len"] - 1], False))
    assert el["lo"] is not None
    return out


NUMBER_CASES = []
for target, dotted, s, build in KEYS:
    if s["kind"] in ("int", "float"):
        vals = bad_values(s)
    elif s["kind"] == "list" and dotted != "selection.profile.points":
        vals = bad_list_values(s)
    elif s["kind"] == "bool":
        vals = [("a number", 1, True), ("a string", "yes", True)]
    elif s["choices"]:
        vals = [("not a choice", "no_such_choice", True), ("a number", 3, True)]
    else:
        continue
    for label, value, range_error in vals:
        if dotted == "background_events" and isinstance(value, dict):
            range_error = False  # a table species -> events is the other allowed form
        NUMBER_CASES.append(pytest.param(target, dotted, s, build, value, range_error,
                                         id=f"{target}:{dotted}: {label}"))


@pytest.mark.parametrize("target,dotted,s,build,value,range_error", NUMBER_CASES)
def test_number_out_of_range(target, dotted, s, build, value, range_error, tmp_path, capsys,
                             monkeypatch):
    monkeypatch.chdir(tmp_path)
    argv = build(value, tmp_path)
    line = expect_one_line(tmp_path, capsys, argv, _named(dotted, target))
    if range_error:
        assert R.bounds_text(s) in line, line


def test_every_number_has_two_bounds_and_is_tested():
    """No numeric key without a range: a new key without one fails here."""
    n = 0
    for target, dotted, s, _ in KEYS:
        if s["kind"] in ("int", "float", "list"):
            if dotted != "selection.profile.points":
                assert s["lo"] is not None and s["hi"] is not None, dotted
            n += 1
    assert n >= 120
    assert len(NUMBER_CASES) > 10 * n


@pytest.mark.parametrize("target,dotted,s", [(t, d, s) for t, d, s, _ in KEYS
                                              if s["kind"] in ("int", "float")],
                         ids=[f"{t}:{d}" for t, d, s, _ in KEYS if s["kind"] in ("int", "float")])
def test_closed_bounds_are_accepted(target, dotted, s):
    """A closed bound is an allowed value (with its unit, if any)."""
    for edge, closed in ((s["lo"], not s["lo_open"]), (s["hi"], not s["hi_open"])):
        if closed:
            assert R.check("f.toml", dotted, edge, s) == edge
            if s["dim"]:
                text = f"{edge!r} {R.UNIT[s['dim']].replace('^-1', '-1')}"
                assert R.check("f.toml", dotted, text, s) == pytest.approx(edge, rel=1e-12)


# ------------------------------------------------------------------ edges that must run
def _check_columns():
    path = ROOT / "tests" / "properties" / "test_prop_edges.py"
    spec = importlib.util.spec_from_file_location("_prop_edges_for_ranges", path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod.check_columns


def _geo_at_edges(g):
    for key in ("thickness",):
        g["beampipe"][key] = R.MAX_X0
    for lay in g["vertex_layers"]:
        lay.update(thickness=R.MAX_X0, resolution=R.MAX_RESOLUTION)
    g["chamber"].update(layer_thickness=R.MAX_X0, inner_wall=R.MAX_X0, outer_wall=R.MAX_X0,
                        resolution=R.MAX_RESOLUTION)
    g["calorimeter"].update(stochastic=1.0, noise=1.0, constant=1.0, position_resolution=10.0)
    g["field"] = R.MAX_FIELD


EDGE_RUNS = {
    "beams 1000 GeV x 10 MeV": ("darkphoton_mumu", lambda d, t: d["beams"].update(
        e_minus=R.MAX_BEAM_ENERGY, e_plus=R.MIN_BEAM_ENERGY)),
    "beams 1000 GeV x 1000 GeV, b_meson": ("alp_3pi_bka", lambda d, t: d["beams"].update(
        e_minus=R.MAX_BEAM_ENERGY, e_plus=R.MAX_BEAM_ENERGY)),
    "beams 10 MeV x 10 MeV, e_e at 10 MeV": ("darkphoton_mumu", lambda d, t: (
        d["beams"].update(e_minus=R.MIN_BEAM_ENERGY, e_plus=R.MIN_BEAM_ENERGY),
        d["llp"].update(channel="e_e", mass=0.01))),
    "luminous region 100 cm, crossing angle 0.5": ("darkphoton_mumu", lambda d, t: d[
        "beams"].update(sigma_x=R.MAX_SPREAD, sigma_y=R.MAX_SPREAD, sigma_z=R.MAX_SPREAD,
                        crossing_angle=0.5)),
    "c*tau 1e15 cm": ("alp_3pi_bka", lambda d, t: d["llp"].update(ctau=R.MAX_CTAU)),
    "c*tau 1e-30 cm": ("alp_gg_bksta", lambda d, t: d["llp"].update(ctau=1e-30)),
    "pdg +-9999999": ("darkphoton_mumu", lambda d, t: d["llp"].update(pdg=-R.MAX_PDG)),
    "mixture of 32 c*tau values": ("darkphoton_mumu", lambda d, t: (
        d["llp"].pop("ctau"), d["llp"].update(ctau_mixture=[float(c) for c in np.geomspace(1e-3, 1e12, 32)]))),
    "coupling 10, dark photon": ("darkphoton_mumu", lambda d, t: _with_model(
        d, {"name": "dark_photon", "coupling": R.MAX_COUPLING})),
    "coupling 10, ALP from B -> K* a": ("alp_gg_bksta", lambda d, t: _with_model(
        d, {"name": "alp_photon", "coupling": R.MAX_COUPLING, "g_bs": 1e-7})),
    "geometry at its bounds (10 T, 1 X0, 1 cm)": ("alp_3pi_bka", "geometry"),
    "thresholds at 2000 GeV, min_hits = all layers, chunk of 16 blocks": (
        "darkphoton_mumu", lambda d, t: (d["selection"].update(
            min_pt=R.MAX_MASS, photon_min_e=R.MAX_MASS, min_hits=53),
            d["run"].update(chunk_blocks=R.MAX_CHUNK_BLOCKS))),
}


@pytest.mark.parametrize("name", list(EDGE_RUNS))
def test_edge_values_run_with_finite_events(name, tmp_path):
    import toymc

    base, edit = EDGE_RUNS[name]
    data = base_config(base)
    if edit == "geometry":
        g = base_geometry()
        _geo_at_edges(g)
        data["detector"]["geometry"] = str(_write(tmp_path / "g.toml", dumps(g)))
    else:
        edit(data, tmp_path)
    cfg = from_dict(data, str(tmp_path / "run.toml"))
    ev = toymc.generate(cfg, events=1500)
    _check_columns()(ev, cfg.llp.channel)
    if name == "pdg +-9999999":
        assert set(np.asarray(ev.llp_pdg)) == {-R.MAX_PDG}


def test_background_spectra_at_their_bounds():
    """Background species at the bounds of their spectrum keys: finite events."""
    from toymc.engine.backgrounds import generate_species_block, parse_backgrounds

    geo = load_geometry(DEMO_GEOMETRY)
    beams = from_dict(base_config()).beams
    for extra in ({"p_mean": R.MAX_MASS, "p_shape": 100.0, "cos2": 100.0},
                  {"p_mean": 1e-6, "p_shape": 1e-3, "cos2": -1.0, "force_decay": R.MAX_LENGTH}):
        bcfg = parse_backgrounds({"ks": dict({"sigma": "1 nb"}, **extra),
                                  "lambda": dict({"sigma": "1 nb", "anti_fraction": 1.0},
                                                 **extra)})
        for sp in bcfg.species.values():
            blk = generate_species_block(sp, beams, geo.tracking_layers(), 1, 0, 2000)
            for k, v in blk.event.items():
                assert np.all(np.isfinite(np.asarray(v, dtype=float))), (sp.name, k)


def test_largest_allowed_counts_are_accepted():
    """events 10^12, seed 2^128 - 1 and 10^6 scan cells load (nothing is run)."""
    from toymc.analysis.scan import grid_from_config

    data = base_config()
    data["run"].update(events=R.MAX_EVENTS, seed=R.MAX_SEED)
    data["scan"] = {"masses": [0.4, 0.5], "ctau_points": R.MAX_GRID_AXIS,
                    "mixture_ratio": 10 ** (15 / 31) * 1.001, "ctau_min": 1.0,
                    "ctau_max": 1e15}
    cfg = loads(dumps(data))
    assert cfg.run.events == R.MAX_EVENTS and cfg.run.seed == R.MAX_SEED
    grid = grid_from_config(cfg)
    assert len(grid.mixture) == R.MAX_MIXTURE and len(grid.ctaus) == R.MAX_GRID_AXIS


def test_limits_at_the_largest_background_are_finite():
    """The expected CLs limit at the largest background, CL = 0.999, every method: close to
    its Gaussian form and computed in bounded time.  Gaussian form (PDG review "Statistics",
    CLs for a Gaussian measurement of unit width, in units of sqrt(b)): a count x sigma
    above b gives the limit x + z(1 - alpha Phi(x)); at x = 0 (asimov, median) z(1 - alpha/2),
    the mean averages it over x ~ N(0, 1) (scipy.stats.norm, scipy.integrate.quad).
    Poisson corrections are of order 1/sqrt(b) = 1 %."""
    from scipy.integrate import quad
    from scipy.stats import norm

    from toymc.analysis.reach import signal_limit
    from toymc.analysis.stats import LIMIT_METHODS

    alpha, root_b = 0.001, math.sqrt(R.MAX_BACKGROUND)
    gauss = {"asimov": norm.isf(alpha / 2), "median": norm.isf(alpha / 2),
             "mean": quad(lambda x: norm.pdf(x) * (x + norm.isf(alpha * norm.cdf(x))), -12, 12)[0]}
    for method in LIMIT_METHODS:
        n_up = signal_limit(R.MAX_BACKGROUND, 1 - alpha, method)
        assert n_up == pytest.approx(gauss[method] * root_b, rel=0.03), (method, n_up)


# ------------------------------------------------------------------ structure: nesting
def _nested(kind, depth):
    if kind == "arrays":
        return "[run]\nevents = " + "[" * depth + "1" + "]" * depth + "\n"
    if kind == "inline tables":
        return "[run]\nevents = " + "{a = " * depth + "1" + "}" * depth + "\n"
    if kind == "dotted keys":
        return ".".join(["a"] * depth) + " = 1\n"
    return "[" + ".".join(["a"] * depth) + "]\nx = 1\n"


NEST_KINDS = ("arrays", "inline tables", "dotted keys", "table headers")


@pytest.mark.parametrize("depth", [3000, 100000])
@pytest.mark.parametrize("kind", NEST_KINDS)
@pytest.mark.parametrize("command", ["generate", "geometry", "draw-geometry", "reach",
                                     "tune-cuts", "scan", "fold"])
def test_deep_nesting_is_one_line(command, kind, depth, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    text = _nested(kind, depth)
    f = _write(tmp_path / "deep.toml", text)
    if command == "geometry":
        data = base_config()
        data["detector"]["geometry"] = str(f)
        argv = _generate(tmp_path, data)
    elif command == "draw-geometry":
        argv = ["draw-geometry", f, "-o", tmp_path / "g.png"]
    elif command == "fold":
        argv = ["fold", f, "--ctau", "1:10:3", "-o", tmp_path / "fold"]
    else:
        argv = [command, f, "-o", tmp_path / "out", "-q"] + (
            ["--no-plot"] if command == "reach" else [])
        if command == "generate":
            argv[3] = tmp_path / "out.root"
    line = expect_one_line(tmp_path, capsys, argv, "deep.toml", "nesting depth")
    assert f"at most {R.MAX_TOML_DEPTH}" in line


def test_nesting_just_under_the_limit_parses(tmp_path, capsys):
    """[run] (level 1), events (2), then k arrays: levels 2 + k.  k = limit - 2 is read
    (and refused as a value of run.events); one more level is refused as nesting."""
    k = R.MAX_TOML_DEPTH - 2
    ok = _write(tmp_path / "ok.toml", "[run]\nevents = " + "[" * k + "1" + "]" * k + "\n")
    line = expect_one_line(tmp_path, capsys, ["generate", ok, "-o", tmp_path / "o.root"],
                           "run.events")
    assert "nesting depth" not in line
    deep = _write(tmp_path / "deep.toml", "[run]\nevents = " + "[" * (k + 1) + "1"
                  + "]" * (k + 1) + "\n")
    expect_one_line(tmp_path, capsys, ["generate", deep, "-o", tmp_path / "o.root"],
                    "nesting depth")
    # dotted keys: MAX parts are read (an unknown section), one more is refused
    ok = _write(tmp_path / "ok2.toml", ".".join(["a"] * R.MAX_TOML_DEPTH) + " = 1\n")
    expect_one_line(tmp_path, capsys, ["generate", ok, "-o", tmp_path / "o.root"],
                    "unknown section")
    deep = _write(tmp_path / "deep2.toml", ".".join(["a"] * (R.MAX_TOML_DEPTH + 1)) + " = 1\n")
    expect_one_line(tmp_path, capsys, ["generate", deep, "-o", tmp_path / "o.root"],
                    "nesting depth")


def test_nesting_scan_skips_strings_and_comments():
    """Brackets inside strings and comments are not nesting; every shipped file passes."""
    deep = "[" * 1000
    text = (f'a = "{deep}"\nb = \'{deep}\'\nc = """\n{deep}\n"""\nd = \'\'\'{deep}\'\'\'\n'
            f'# {deep}\ne = "\\"{deep}"\n"f.{deep}" = 1\n')
    check_depth(text, "f.toml")
    assert tomllib.loads(text)["e"] == '"' + deep
    for f in list((ROOT / "configs").glob("*.toml")) + list((ROOT / "geometries").glob("*.toml")):
        check_depth(f.read_text(), str(f))


# ------------------------------------------------------------------ structure: types, unused keys
def _gen(edit, base="darkphoton_mumu"):
    def build(tmp):
        data = base_config(base)
        edit(data)
        return _generate(tmp, data)
    return build


def _geo(edit):
    def build(tmp):
        g = base_geometry()
        edit(g)
        data = base_config()
        data["detector"]["geometry"] = str(_write(tmp / "geo.toml", dumps(g)))
        return _generate(tmp, data)
    return build


def _raw(text):
    return lambda tmp: ["generate", _write(tmp / "run.toml", text), "-o", tmp / "out.root"]


def _raw_geo(text):
    def build(tmp):
        data = base_config()
        data["detector"]["geometry"] = str(_write(tmp / "geo.toml", text))
        return _generate(tmp, data)
    return build


def _scan(edit):
    def build(tmp):
        data = base_config()
        data["scan"] = dict(SCAN)
        edit(data["scan"])
        return ["scan", _write(tmp / "run.toml", dumps(data)), "-o", tmp / "scan", "-q", "-j", "1"]
    return build


def _reach(edit):
    def build(tmp):
        data = _reach_data()
        edit(data["reach"])
        return ["reach", _write(tmp / "run.toml", dumps(data)), "-o", tmp / "reach", "-q",
                "--no-plot"]
    return build


def _tune(edit):
    def build(tmp):
        data = small_tune_data()
        edit(data)
        return ["tune-cuts", _write(tmp / "run.toml", dumps(data)), "-o", tmp / "tuned", "-q"]
    return build


def _model(model, base="darkphoton_mumu"):
    return _gen(lambda d: _with_model(d, model), base)


GEO_TEXT = (DEMO_GEOMETRY).read_text()
CFG_TEXT = dumps(base_config())


def _pop(d, *keys):
    for k in keys:
        d.pop(k)
    return d


STRUCTURE = [
    # tables where arrays belong and the reverse, values of the wrong shape
    ("[[beams]] (an array of tables)", "beams", _raw(CFG_TEXT.replace("[beams]", "[[beams]]"))),
    ("beams = 5", "beams", _gen(lambda d: d.update(beams=5))),
    ("llp = [1, 2]", "llp", _gen(lambda d: d.update(llp=[1, 2]))),
    ("llp.ctau = [1.0]", "llp.ctau", _gen(lambda d: d["llp"].update(ctau=[1.0]))),
    ("llp.ctau = {value = 1}", "llp.ctau", _gen(lambda d: d["llp"].update(ctau={"value": 1}))),
    ("llp.ctau_mixture = {a = 1}", "llp.ctau_mixture",
     _gen(lambda d: (d["llp"].pop("ctau"), d["llp"].update(ctau_mixture={"a": 1})))),
    ("model.charges = [1, 2]", "model.charges",
     _model({"name": "custom_vector", "coupling": 1e-4, "charges": [1, 2]})),
    ("model.charges = {electron = 1}", "model.charges.electron",
     _model({"name": "custom_vector", "coupling": 1e-4, "charges": {"electron": 1}})),
    ("model.charges = {e = nan}", "model.charges.e",
     _model({"name": "custom_vector", "coupling": 1e-4, "charges": {"e": math.nan}})),
    ("model.charges = {e = 1e300}", "model.charges.e",
     _model({"name": "custom_vector", "coupling": 1e-4, "charges": {"e": 1e300}})),
    ("selection.profile = 'flat'", "selection.profile",
     _gen(lambda d: d["selection"].update(profile="flat"))),
    ("selection.profile.points = [[1, 2, 3]]", "selection.profile.points[0]",
     _gen(lambda d: d["selection"].update(profile={"kind": "tabulated", "points": [[1, 2, 3],
                                                                                  [2, 1]]}))),
    ("selection.profile.points: 5001 pairs", "selection.profile.points",
     _gen(lambda d: d["selection"].update(profile={"kind": "tabulated", "points": [
         [1 + i * 1e-3, 0.5] for i in range(R.MAX_GRID_AXIS + 1)]}))),
    ("selection.mass_window = [0.1, 0.2, 0.3]", "selection.mass_window",
     _gen(lambda d: d["selection"].update(mass_window=[0.1, 0.2, 0.3]))),
    ("selection.mass_window = [0.1, inf]", "selection.mass_window",
     _gen(lambda d: d["selection"].update(mass_window=[0.1, math.inf]))),
    ("geometry vertex_layers = {radius = 2}", "vertex_layers",
     _geo(lambda g: g.update(vertex_layers={"radius": 2}))),
    ("geometry vertex_layers = [1, 2]", "vertex_layers[0]",
     _geo(lambda g: g.update(vertex_layers=[1, 2]))),
    ("geometry [[chamber]]", "chamber", _raw_geo(GEO_TEXT.replace("[chamber]", "[[chamber]]"))),
    ("geometry calorimeter.forward = [1]", "calorimeter.forward",
     _geo(lambda g: g["calorimeter"].update(forward=[1]))),
    ("geometry chamber.radii = 'many'", "chamber.radii",
     _geo(lambda g: (_pop(g["chamber"], "n_layers", "r_first", "r_last"),
                     g["chamber"].update(radii="many")))),
    ("geometry chamber.radii: 501 layers", "chamber.radii",
     _geo(lambda g: (_pop(g["chamber"], "n_layers", "r_first", "r_last"),
                     g["chamber"].update(radii=[float(r) for r in np.linspace(17, 100, 501)])))),
    ("geometry chamber.n_layers = 10^9", "chamber.n_layers",
     _geo(lambda g: g["chamber"].update(n_layers=10**9))),
    ("geometry 501 vertex layers", "vertex_layers",
     _geo(lambda g: g.update(vertex_layers=[dict(g["vertex_layers"][0], radius=1.1 + i * 1e-3)
                                            for i in range(501)]))),
    ("geometry field = 1e9 T", "field", _geo(lambda g: g.update(field=1e9))),
    ("geometry field = '1e9 T'", "field", _geo(lambda g: g.update(field="1e9 T"))),
    ("scan.masses = {a = 1}", "scan.masses", _scan(lambda s: s.update(masses={"a": 1}))),
    ("tuning.r_min = 'wide'", "tuning.r_min", _tune(lambda d: d["tuning"].update(r_min="wide"))),
    ("tuning.r_min without points", "tuning.r_min.points",
     _tune(lambda d: d["tuning"]["r_min"].pop("points"))),
    ("tuning.background_events = [1]", "tuning.background_events",
     _tune(lambda d: d["tuning"].update(background_events=[1]))),
    ("tuning.background_events.ks = 10^9", "tuning.background_events.ks",
     _tune(lambda d: d["tuning"]["background_events"].update(ks=10**9))),
    ("backgrounds.ks = 5", "backgrounds.ks", _tune(lambda d: d["backgrounds"].update(ks=5))),
    ("[tuning] = [1]", "tuning", _tune(lambda d: d.update(tuning=[1]))),
    ("reach.couplings = 'small'", "reach.couplings",
     _reach(lambda r: (_pop(r, "coupling_min", "coupling_max", "coupling_points"),
                       r.update(couplings="small")))),
    # keys the chosen production, model, profile or source does not use
    ("model.g_bs with radiative production", "used only by production.process = 'b_meson'",
     _model({"name": "dark_photon", "coupling": 1e-4, "g_bs": 1e-9})),
    ("model.br_production with radiative production", "model.br_production",
     _model({"name": "dark_photon", "coupling": 1e-4, "br_production": 1e-6})),
    ("production.photon_cos_min with b_meson", "used only by production.process = 'radiative'",
     _gen(lambda d: d["production"].update(photon_cos_min=-0.5), "alp_3pi_bka")),
    ("production.recoil with radiative", "production.recoil",
     _gen(lambda d: d["production"].update(recoil="K"))),
    ("production.sigma_bb with radiative", "production.sigma_bb",
     _gen(lambda d: d["production"].update(sigma_bb="1 nb"))),
    ("production.charged_fraction with radiative", "production.charged_fraction",
     _gen(lambda d: d["production"].update(charged_fraction=0.5))),
    ("model.kinetic_mixing for an ALP", "used only by the vector models",
     _model({"name": "alp_gluon", "coupling": 1e-3, "g_bs": 1e-9, "kinetic_mixing": 1e-3},
            "alp_3pi_bka")),
    ("model.charges for an ALP", "model.charges",
     _model({"name": "alp_gluon", "coupling": 1e-3, "g_bs": 1e-9, "charges": {"e": 1}},
            "alp_3pi_bka")),
    ("b_meson [model] without g_bs or br_production", "model.g_bs missing",
     _model({"name": "alp_gluon", "coupling": 1e-3}, "alp_3pi_bka")),
    ("b_meson [model] with g_bs giving BR > 1", "> 1",
     _model({"name": "alp_gluon", "coupling": 1e-3, "g_bs": 1e-4}, "alp_3pi_bka")),
    ("[model] coupling giving c*tau > 1e15 cm", "model.coupling",
     _model({"name": "dark_photon", "coupling": 1e-14})),
    ("selection.full_hits with a flat profile", "used only by profile kind 'hits'",
     _gen(lambda d: d["selection"].update(full_hits=20))),
    ("selection.min_hits = 10^9", "selection.min_hits",
     _gen(lambda d: d["selection"].update(min_hits=10**9))),
    ("selection.min_hits above the geometry's layers", "measuring layers",
     _gen(lambda d: d["selection"].update(min_hits=54))),
    ("scan.mass_points next to scan.masses", "scan.mass_points",
     _scan(lambda s: s.update(mass_points=5))),
    ("reach.mass_spacing next to reach.masses", "reach.mass_spacing",
     _reach(lambda r: (_pop(r, "mass_min", "mass_max", "mass_points"),
                       r.update(masses=[0.3, 0.5], mass_spacing="linear")))),
    ("reach.coupling_points next to reach.couplings", "reach.coupling_points",
     _reach(lambda r: (_pop(r, "coupling_min", "coupling_max"),
                       r.update(couplings=[1e-5, 1e-4])))),
    ("reach.mc_ctau_min with the fold source", "used only with reach.efficiency = 'mc'",
     _reach(lambda r: r.update(mc_ctau_min=1.0))),
    ("reach.reco_factor with the mc source", "reach.reco_factor",
     _reach(lambda r: r.update(efficiency="mc"))),
    ("reach.map with the fold source", "reach.map", _reach(lambda r: r.update(map="m.csv"))),
    ("tuning.signal_sigma with fom punzi", "used only with fom = 's_over_sqrt_b'",
     _tune(lambda d: d["tuning"].update(signal_sigma="1 fb"))),
    ("tuning.cl with fom punzi", "tuning.cl", _tune(lambda d: d["tuning"].update(cl=0.9))),
    # grids and samples beyond their documented sizes
    ("scan.mass_points = 10^9", "scan.mass_points",
     _scan(lambda s: (s.pop("masses"), s.update(mass_min=0.4, mass_max=0.8,
                                                mass_points=10**9)))),
    ("scan.mass_points = 1e9 (a float)", "scan.mass_points",
     _scan(lambda s: (s.pop("masses"), s.update(mass_min=0.4, mass_max=0.8, mass_points=1e9)))),
    ("scan.ctau_points = 10^9", "scan.ctau_points", _scan(lambda s: s.update(ctau_points=10**9))),
    ("scan 5000 x 5000 cells", "1,000,000",
     _scan(lambda s: (s.pop("masses"), s.update(mass_min=0.4, mass_max=0.8, mass_points=5000,
                                                ctau_points=5000)))),
    ("scan.ctau_max = inf", "scan.ctau_max", _scan(lambda s: s.update(ctau_max=math.inf))),
    ("scan.mixture_ratio = 1.0001 (46056 components)", "scan.mixture_ratio",
     _scan(lambda s: s.update(mixture_ratio=1.0001))),
    ("llp.ctau_mixture of 33 values", "llp.ctau_mixture",
     _gen(lambda d: (d["llp"].pop("ctau"), d["llp"].update(ctau_mixture=[
         float(c) for c in np.geomspace(1, 100, R.MAX_MIXTURE + 1)])))),
    ("reach.mass_points = 10^9", "reach.mass_points",
     _reach(lambda r: r.update(mass_points=10**9))),
    ("reach 5000 x 5000 cells", "1,000,000",
     _reach(lambda r: r.update(mass_points=5000, coupling_points=5000))),
    ("reach.background = 1e300 with the mean limit", "reach.background",
     _reach(lambda r: r.update(background=1e300, limit="mean"))),
    ("tuning 5000 x 5000 radial cuts", "1,000,000",
     _tune(lambda d: d["tuning"].update(r_min={"start": 0.1, "stop": 10, "points": 5000},
                                        r_max={"start": 11, "stop": 60, "points": 5000}))),
    ("tuning.signal_events = 10^9", "tuning.signal_events",
     _tune(lambda d: d["tuning"].update(signal_events=10**9))),
    ("beams.e_minus = 1e300", "beams.e_minus", _gen(lambda d: d["beams"].update(e_minus=1e300))),
    ("llp.pdg = 2^62", "llp.pdg", _gen(lambda d: d["llp"].update(pdg=2**62))),
    ("[model] coupling = 1e300", "model.coupling",
     _model({"name": "dark_photon", "coupling": 1e300})),
    ("run.events = 10^30", "run.events", _gen(lambda d: d["run"].update(events=10**30))),
]


@pytest.mark.parametrize("label,phrase,build", STRUCTURE, ids=[c[0] for c in STRUCTURE])
def test_structure_mistakes(label, phrase, build, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    expect_one_line(tmp_path, capsys, build(tmp_path), phrase)


# ------------------------------------------------------------------ command-line numbers
def _cfg(tmp, name="darkphoton_mumu"):
    return _write(tmp / "run.toml", dumps(base_config(name)))


def _scan_cfg(tmp):
    data = base_config()
    data["scan"] = dict(SCAN)
    return _write(tmp / "run.toml", dumps(data))


def _reach_cfg(tmp):
    return _write(tmp / "run.toml", dumps(_reach_data()))


def _tune_cfg(tmp):
    return _write(tmp / "run.toml", dumps(small_tune_data()))


_GEN = lambda t: ["generate", _cfg(t), "-o", t / "o.root", "-q"]  # noqa: E731
_FOLD = lambda t: ["fold", _cfg(t), "--ctau", "1:10:3", "-o", t / "f"]  # noqa: E731
_SCAN = lambda t: ["scan", _scan_cfg(t), "-o", t / "scan", "-q"]  # noqa: E731
_VAL = lambda t: ["validate", "-o", t / "v", "-q"]  # noqa: E731
_INFO = lambda t: ["info", t / "absent.root"]  # noqa: E731

#: (command line before the option, option, lowest and highest allowed integer); floats
#: have lo = hi = None
OPTIONS = [
    (_GEN, "--events", 1, R.MAX_EVENTS), (_GEN, "-n", 1, R.MAX_EVENTS),
    (_GEN, "--seed", 0, R.MAX_SEED), (_GEN, "--chunk-blocks", 1, R.MAX_CHUNK_BLOCKS),
    (lambda t: ["bench"], "--events", 1, R.MAX_EVENTS),
    (lambda t: ["bench"], "--repeat", 1, 100),
    (_SCAN, "-j", 1, R.MAX_WORKERS), (_SCAN, "--events-per-mass", 1, R.MAX_EVENTS),
    (lambda t: ["reach", _reach_cfg(t), "-o", t / "r", "-q"], "--events-per-mass", 2,
     R.MAX_SAMPLE_EVENTS),
    (lambda t: ["tune-cuts", _tune_cfg(t), "-o", t / "tuned", "-q"], "--seed", 0, R.MAX_SEED),
    (_FOLD, "--events", 1, R.MAX_SAMPLE_EVENTS), (_FOLD, "--seed", 0, R.MAX_SEED),
    (_VAL, "--events", 1, R.MAX_SAMPLE_EVENTS), (_VAL, "--seed", 0, R.MAX_SEED),
    (_INFO, "--br-production", None, None), (_INFO, "--br-decay", None, None),
    (_INFO, "--eps", None, None), (_INFO, "--sigma-times-br", None, None),
]

OPTION_CASES = []
for build, opt, lo, hi in OPTIONS:
    if opt in ("--br-production", "--br-decay", "--eps"):
        values = ["-0.1", "1.5", "nan", "inf", "-inf", "abc", "", "1e400"]
        if opt == "--eps":
            values.append("0")
    elif opt == "--sigma-times-br":
        values = ["-1", "2e12", "nan", "inf", "abc", "1 GeV", "nan fb", ""]
    else:
        values = [str(lo - 1), str(hi + 1), str(hi * 10**6), "1.5", "nan", "inf", "abc", "",
                  "1e6", "0x10"]
    for v in values:
        OPTION_CASES.append(pytest.param(build, opt, v, id=f"{opt} {v!r}"))


@pytest.mark.parametrize("build,opt,value", OPTION_CASES)
def test_command_line_number(build, opt, value, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    argv = [str(a) for a in build(tmp_path)]
    argv += [f"{opt}={value}"] if opt.startswith("--") else [opt, value]
    long = {"-n": "--events", "-j": "--workers"}.get(opt, opt)
    expect_one_line(tmp_path, capsys, argv, f"toymc: error: {long} = {value!r}: ")


@pytest.mark.parametrize("opt,text,want", [
    ("EVENTS", str(R.MAX_EVENTS), R.MAX_EVENTS), ("EVENTS", "1", 1),
    ("SEED", str(R.MAX_SEED), R.MAX_SEED), ("SEED", "0", 0),
    ("CHUNK_BLOCKS", str(R.MAX_CHUNK_BLOCKS), R.MAX_CHUNK_BLOCKS),
    ("WORKERS", str(R.MAX_WORKERS), R.MAX_WORKERS), ("FRACTION", "0", 0.0),
    ("FRACTION", "1", 1.0), ("EPS", "1", 1.0), ("CROSS_SECTION", "2.5 ab", 2.5e-3),
    ("SAMPLE_EVENTS", str(R.MAX_SAMPLE_EVENTS), R.MAX_SAMPLE_EVENTS),
])
def test_command_line_bounds_are_accepted(opt, text, want):
    from toymc.cli import args as cliargs

    assert getattr(cliargs, opt)(text) == pytest.approx(want, rel=1e-12)


@pytest.mark.parametrize("text,phrase", [
    ("1:1e16:3", "1e+15"), ("1:10:5001", "5000"), ("1:10:100000000000", "5000"),
    ("0:10:3", "positive"), ("1:inf:3", "positive"), ("1:10:2.5", "MIN:MAX:N"),
])
def test_fold_ctau_grid_bounds(text, phrase, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    argv = ["fold", _cfg(tmp_path), "--ctau", text, "-o", tmp_path / "f"]
    expect_one_line(tmp_path, capsys, argv, "--ctau", phrase)


def test_fold_sample_from_run_events_is_bounded(tmp_path, capsys, monkeypatch):
    """Without --events the fold takes [run] events; above the in-memory bound: one line."""
    monkeypatch.chdir(tmp_path)
    data = base_config()
    data["run"]["events"] = R.MAX_SAMPLE_EVENTS + 1
    cfg = _write(tmp_path / "run.toml", dumps(data))
    expect_one_line(tmp_path, capsys, ["fold", cfg, "--ctau", "1:10:3", "-o", tmp_path / "f"],
                    "run.events", "--events")


def test_bad_scheduler_address(tmp_path, capsys, monkeypatch):
    pytest.importorskip("distributed")
    monkeypatch.chdir(tmp_path)
    for address in ("not a url", "tcp://host:notaport", "foo://bar:1"):
        expect_one_line(tmp_path, capsys, ["scan", _scan_cfg(tmp_path), "-o", tmp_path / "scan",
                                           "-q", "--scheduler", address],
                        f"--scheduler = {address!r}")


def test_argparse_mistakes_are_one_line(tmp_path, capsys):
    expect_one_line(tmp_path, capsys, ["generate"], "required", "toymc generate --help")
    expect_one_line(tmp_path, capsys, ["generate", "x.toml", "--bogus"], "--bogus")
    expect_one_line(tmp_path, capsys, ["reach", "x.toml", "--efficiency", "guess"],
                    "--efficiency", "invalid choice")


# ------------------------------------------------------------------ the same in a real process
SUBPROCESS = [
    ("beams.e_minus = 1e300", lambda t: _generate(t, _edit(base_config(), "beams", "e_minus",
                                                           1e300)), "beams.e_minus"),
    ("llp.pdg = 2^62", lambda t: _generate(t, _edit(base_config(), "llp", "pdg", 2**62)),
     "llp.pdg"),
    ("nested 100000 deep", lambda t: ["generate", _write(t / "deep.toml", _nested(
        "arrays", 100000)), "-o", t / "o.root"], "nesting depth"),
    ("generate -n 10^30", lambda t: _generate(t, base_config()) + ["-n", str(10**30)],
     "--events"),
    ("scan.mass_points = 10^9", lambda t: _scan(lambda s: (s.pop("masses"), s.update(
        mass_min=0.4, mass_max=0.8, mass_points=10**9)))(t), "scan.mass_points"),
]


def _edit(data, sec, key, value):
    data[sec][key] = value
    return data


@pytest.mark.parametrize("label,build,phrase", SUBPROCESS, ids=[c[0] for c in SUBPROCESS])
def test_in_a_subprocess(label, build, phrase, tmp_path):
    argv = [str(a) for a in build(tmp_path)]
    before = snapshot(tmp_path)
    env = dict(os.environ, PYTHONPATH=str(ROOT / "src"))
    r = subprocess.run([sys.executable, "-m", "toymc", *argv], capture_output=True, text=True,
                       cwd=tmp_path, env=env, timeout=300)
    lines = r.stderr.strip().splitlines()
    assert r.returncode == 2, r.stderr
    assert len(lines) == 1 and lines[0].startswith("toymc: error: "), r.stderr
    assert phrase in lines[0]
    assert snapshot(tmp_path) == before


def test_cases_cover_the_listed_classes():
    """The generated cases reach every schema."""
    targets = {c.values[0] for c in NUMBER_CASES}
    assert targets == {"config", "selection", "geometry", "tuning", "backgrounds"}
    sections = {c.values[1].split(".")[0] for c in NUMBER_CASES if c.values[0] == "config"}
    assert sections >= {"run", "beams", "production", "llp", "model", "scan", "reach"}
