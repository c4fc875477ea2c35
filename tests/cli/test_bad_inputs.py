"""Bad inputs to every command: exit status 2, one line naming the key, nothing written.

:data:`CASES` is the table: (command, input, expected phrase, builder).  Each
builder writes its inputs into a fresh folder and returns the command line;
the test then checks that

* ``toymc`` returns exit status 2,
* stderr holds exactly one line (``toymc: error: ...``, command-line errors
  too), without a traceback, containing the expected phrase (a key, a value
  or what is wrong),
* the folder is byte for byte what it was before the command (no output, no
  temporary file, an existing output untouched).

Config sections covered: [run], [beams], [production], [llp], [model],
[detector], [selection], [scan]; geometry files: layers, chamber,
calorimeter, acceptance.  Files to cutflow/info/merge/export: empty,
truncated, foreign ROOT, text, missing, mixed schema versions.
"""

import copy
import math
import os
import shutil
import time
import tomllib
from pathlib import Path

import pytest
import uproot
from _demo import ROOT
from _inputs import DEMO_GEOMETRY, SCAN, base_config, base_geometry, dumps, small_tune_data
from _outputs import run_cli, snapshot

from toymc.config.kinematics import production_limit
from toymc.physics.decays import threshold

IS_ROOT = hasattr(os, "geteuid") and os.geteuid() == 0


class Ctx:
    """Per-case folder plus the session's good files."""

    def __init__(self, tmp, files):
        self.tmp, self.files = tmp, files

    def copy(self, key, name=None):
        dst = self.tmp / (name or Path(self.files[key]).name)
        shutil.copyfile(self.files[key], dst)
        return dst

    def write(self, name, content):
        p = self.tmp / name
        if isinstance(content, bytes):
            p.write_bytes(content)
        else:
            p.write_text(content)
        return p

    def config(self, data, name="run.toml"):
        return self.write(name, dumps(data))


# ------------------------------------------------------------------ builders
def gen(edit, base="darkphoton_mumu", extra=()):
    """generate with the base config changed by edit(data, ctx) (a dict edit)."""
    def build(ctx):
        data = base_config(base)
        edit(data, ctx)
        cfg = ctx.config(data)
        return ["generate", cfg, "-o", ctx.tmp / "out.root", "-q", *extra]
    return build


def set_(section, key, value):
    def edit(data, ctx):
        data.setdefault(section, {})[key] = value
    return edit


def drop(section, key=None):
    def edit(data, ctx):
        if key is None:
            data.pop(section)
        else:
            data[section].pop(key)
    return edit


def rename(section, new):
    def edit(data, ctx):
        data[new] = data.pop(section)
    return edit


def both(*edits):
    def edit(data, ctx):
        for e in edits:
            e(data, ctx)
    return edit


def geo(edit_geo):
    """generate with a geometry file changed by edit_geo(dict)."""
    def edit(data, ctx):
        g = base_geometry()
        edit_geo(g)
        data["detector"]["geometry"] = str(ctx.write("geo.toml", dumps(g)))
    return gen(edit)


def geo_set(path, value):
    def edit_geo(g):
        node = g
        for k in path[:-1]:
            node = node[k]
        node[path[-1]] = value
    return geo(edit_geo)


def raw_config(content):
    def build(ctx):
        return ["generate", ctx.write("run.toml", content), "-o", ctx.tmp / "out.root", "-q"]
    return build


def mass_at_threshold_minus(channel, base, delta):
    def edit(data, ctx):
        data["llp"]["channel"] = channel
        data["llp"]["mass"] = threshold(channel) + delta
    return gen(edit, base)


def mass_above_limit(base, delta):
    def edit(data, ctx):
        from toymc.config.loader import from_dict

        good = copy.deepcopy(data)
        data["llp"]["mass"] = production_limit(from_dict(good)) + delta
    return gen(edit, base)


def existing_output(build_argv, name):
    """The command with its output already present (must stay byte for byte)."""
    def build(ctx):
        ctx.write(name, b"precious bytes\x00\x01")
        return build_argv(ctx)
    return build


def under_regular_file(ctx):
    ctx.write("plainfile", "I am a file, not a folder\n")
    return ctx.tmp / "plainfile" / "sub"


def _config_and_outdir(ctx, data, edit, prepare, outdir):
    """Apply edit(data, ctx), write the config, run prepare(ctx); the output folder
    (outdir=None: a path under a regular file)."""
    if edit is not None:
        edit(data, ctx)
    cfg = ctx.config(data)
    if prepare is not None:
        prepare(ctx)
    return cfg, (under_regular_file(ctx) if outdir is None else ctx.tmp / outdir)


def scan(edit=None, extra=(), outdir="scan", prepare=None):
    def build(ctx):
        data = base_config()
        data["scan"] = dict(SCAN)
        cfg, out = _config_and_outdir(ctx, data, edit, prepare, outdir)
        return ["scan", cfg, "-o", out, "-q", "-j", "1", *extra]
    return build


def reach(edit=None, extra=(), outdir="reach", prepare=None):
    """reach with the dark-photon reach demo changed by edit(data, ctx)."""
    def build(ctx):
        data = tomllib.loads((ROOT / "configs" / "reach_dark_photon.toml").read_text())
        data["detector"]["geometry"] = str(DEMO_GEOMETRY)
        data["reach"]["mass_points"] = 2
        data["reach"]["coupling_points"] = 2
        data["reach"]["events_per_mass"] = 200
        cfg, out = _config_and_outdir(ctx, data, edit, prepare, outdir)
        return ["reach", cfg, "-o", out, "-q", "--no-plot", *extra]
    return build


def tune(edit=None, extra=(), stem=lambda ctx: ctx.tmp / "tuned", prepare=None):
    """tune-cuts with the dark-photon tuning demo (small) changed by edit(data, ctx)."""
    def build(ctx):
        data = small_tune_data()
        if edit is not None:
            edit(data, ctx)
        cfg = ctx.config(data)
        if prepare is not None:
            prepare(ctx)
        return ["tune-cuts", cfg, "-o", stem(ctx), "-q", *extra]
    return build


def empty_output(build):
    """The same command with an empty output path after -o (an empty path would mean the
    current folder)."""
    def built(ctx):
        argv = [str(a) for a in build(ctx)]
        argv[argv.index("-o") + 1] = ""
        return argv
    return built


def map_file(content):
    def edit(data, ctx):
        data["reach"]["efficiency"] = "map"
        for key in ("events_per_mass", "reco_factor"):  # keys of the fold source
            data["reach"].pop(key)
        data["reach"]["map"] = str(ctx.write("efficiency_map.csv", content))
    return edit


def with_done_scan(ctx):
    shutil.copytree(ctx.files["scan_dir"], ctx.tmp / "scan")


def on_file(command, maker, extra=()):
    """command on a file made by maker(ctx)."""
    def build(ctx):
        return [command, maker(ctx), *extra]
    return build


def empty_file(ctx):
    return ctx.write("empty.root", b"")


def truncated(ctx):
    good = Path(ctx.files["reco"]).read_bytes()
    return ctx.write("truncated.root", good[: len(good) // 2])


def header_only(ctx):
    good = Path(ctx.files["reco"]).read_bytes()
    return ctx.write("header.root", good[:200])


def foreign(ctx):
    return ctx.copy("foreign")


def text_file(ctx):
    return ctx.write("notes.root", "just some text\n")


def missing(ctx):
    return ctx.tmp / "nothing_here.root"


def merge(makers, out="merged.root", extra=()):
    def build(ctx):
        return ["merge", ctx.tmp / out, *[m(ctx) for m in makers], *extra]
    return build


def good(key, name=None):
    def maker(ctx):
        return ctx.copy(key, name)
    return maker


def export(maker, out=None, extra=()):
    def build(ctx):
        src = maker(ctx)
        o = out(ctx) if out is not None else ctx.tmp / "out.parquet"
        return ["export", src, "-o", o, *extra]
    return build


def draw(maker, out=None):
    def build(ctx):
        g = maker(ctx)
        o = out(ctx) if out is not None else ctx.tmp / "geo.png"
        return ["draw-geometry", g, "-o", o]
    return build


def geo_file(edit_geo=None, content=None):
    def maker(ctx):
        if content is not None:
            return ctx.write("g.toml", content)
        g = base_geometry()
        if edit_geo is not None:
            edit_geo(g)
        return ctx.write("g.toml", dumps(g))
    return maker


def _del(path):
    def edit_geo(g):
        node = g
        for k in path[:-1]:
            node = node[k]
        del node[path[-1]]
    return edit_geo


GARBAGE = bytes(range(256)) * 4
CODE = "__import__('os').system('touch PWNED')"

# ------------------------------------------------------------------ the table
#: (command, input, expected phrase in the one-line message, builder)
CASES = [
    # [run]
    ("generate", "run.evnets = 10 (unknown key)", "did you mean 'events'", gen(set_("run", "evnets", 10))),
    ("generate", "run.events = 'many' (wrong type)", "run.events", gen(set_("run", "events", "many"))),
    ("generate", "run.events = 0 (out of range)", "run.events", gen(set_("run", "events", 0))),
    ("generate", "run.seed = -1", "run.seed", gen(set_("run", "seed", -1))),
    ("generate", "run.events = 1.5 (float for an integer)", "run.events", gen(set_("run", "events", 1.5))),
    ("generate", "run.compression = 'gzip'", "run.compression", gen(set_("run", "compression", "gzip"))),
    ("generate", "[rnu] (unknown section)", "did you mean 'run'", gen(set_("rnu", "events", 1))),
    # [beams]
    ("generate", "beams.e_minus = 0", "beams.e_minus", gen(set_("beams", "e_minus", 0))),
    ("generate", "beams.e_plus missing", "beams.e_plus", gen(drop("beams", "e_plus"))),
    ("generate", "beams.sigma_z = '3 GeV' (energy for a length)", "beams.sigma_z",
     gen(set_("beams", "sigma_z", "3 GeV"))),
    ("generate", "beams.crossing_angle = '1 rad' (> 0.5)", "beams.crossing_angle",
     gen(set_("beams", "crossing_angle", "1 rad"))),
    ("generate", "beams.e_minus = 'inf GeV'", "beams.e_minus", gen(set_("beams", "e_minus", "inf GeV"))),
    # [production]
    ("generate", "production.process = code string", "production.process",
     gen(set_("production", "process", CODE))),
    ("generate", "production.photon_cos_min = 1.0 (open bound)", "production.photon_cos_min",
     gen(set_("production", "photon_cos_min", 1.0))),
    ("generate", "photon_cos_min > photon_cos_max", "photon_cos_max",
     gen(set_("production", "photon_cos_min", 0.95))),
    ("generate", "production.recoil = 'K**'", "production.recoil",
     gen(set_("production", "recoil", "K**"), base="alp_3pi_bka")),
    ("generate", "production.charged_fraction = 1.5", "production.charged_fraction",
     gen(set_("production", "charged_fraction", 1.5), base="alp_3pi_bka")),
    # [llp]
    ("generate", "llp.ctau = 'nan' (string)", "llp.ctau", gen(set_("llp", "ctau", "nan"))),
    ("generate", "llp.ctau = 'inf'", "llp.ctau", gen(set_("llp", "ctau", "inf"))),
    ("generate", "llp.ctau = nan (TOML float)", "llp.ctau", gen(set_("llp", "ctau", math.nan))),
    ("generate", "llp.ctau = inf (TOML float)", "llp.ctau", gen(set_("llp", "ctau", math.inf))),
    ("generate", "llp.ctau = '15 GeV' (energy for a length)", "llp.ctau",
     gen(set_("llp", "ctau", "15 GeV"))),
    ("generate", "llp.ctau = -1 (negative c*tau)", "llp.ctau", gen(set_("llp", "ctau", -1.0))),
    ("generate", "llp.ctau = '-5 cm'", "llp.ctau", gen(set_("llp", "ctau", "-5 cm"))),
    ("generate", "llp.ctau = code string", "llp.ctau", gen(set_("llp", "ctau", CODE))),
    ("generate", "llp.mass = 'nan GeV'", "llp.mass", gen(set_("llp", "mass", "nan GeV"))),
    ("generate", "llp.mass = '0.8 cm' (length for an energy)", "llp.mass", gen(set_("llp", "mass", "0.8 cm"))),
    ("generate", "llp.mass = mu_mu threshold - 1 MeV", "threshold", mass_at_threshold_minus("mu_mu", "darkphoton_mumu", -1e-3)),
    ("generate", "llp.mass = pi_pi_pi0 threshold - 1 MeV", "threshold",
     mass_at_threshold_minus("pi_pi_pi0", "alp_3pi_bka", -1e-3)),
    ("generate", "llp.mass = radiative limit + 1 MeV", "production limit", mass_above_limit("darkphoton_mumu", 1e-3)),
    ("generate", "llp.mass = m_B - m_K + 1 MeV", "production limit", mass_above_limit("alp_3pi_bka", 1e-3)),
    ("generate", "llp.mass = m_B - m_K* limit + 1 MeV", "production limit", mass_above_limit("alp_gg_bksta", 1e-3)),
    ("generate", "llp.channel = 'mu_mmu'", "did you mean 'mu_mu'", gen(set_("llp", "channel", "mu_mmu"))),
    ("generate", "radiative with a spin-0 channel", "llp.channel",
     gen(both(set_("llp", "channel", "gamma_gamma"), set_("llp", "mass", 0.5)))),
    ("generate", "llp.matrix_element = 'chiral' with mu_mu", "llp.matrix_element",
     gen(set_("llp", "matrix_element", "chiral"))),
    ("generate", "llp.ctau missing, no [model]", "llp.ctau", gen(drop("llp", "ctau"))),
    # [model]
    ("generate", "model.name unknown", "model.name",
     gen(both(drop("llp", "ctau"), set_("model", "name", "dark_photn"), set_("model", "coupling", 1e-4)))),
    ("generate", "model.coupling = -1e-4", "model.coupling",
     gen(both(drop("llp", "ctau"), set_("model", "name", "dark_photon"), set_("model", "coupling", -1e-4)))),
    ("generate", "[model] together with llp.ctau", "llp.ctau",
     gen(both(set_("model", "name", "dark_photon"), set_("model", "coupling", 1e-4)))),
    ("generate", "model.charges = {e = 'one'}", "model.charges",
     gen(both(drop("llp", "ctau"), set_("model", "name", "custom_vector"), set_("model", "coupling", 1e-4),
              set_("model", "charges", {"e": "one"})))),
    # [detector]
    ("generate", "detector.geometry = missing file", "geometry file not found",
     gen(set_("detector", "geometry", "no_such_geometry.toml"))),
    ("generate", "detector.geometry = 5 (wrong type)", "detector.geometry", gen(set_("detector", "geometry", 5))),
    ("generate", "detector.geometry = binary garbage", "not a valid TOML",
     gen(lambda d, c: d["detector"].update(geometry=str(c.write("geo.toml", GARBAGE))))),
    # [selection]
    ("generate", "selection.r_mni (unknown key)", "did you mean 'r_min'", gen(set_("selection", "r_mni", 1.0))),
    ("generate", "selection.min_hits = 'six'", "selection.min_hits", gen(set_("selection", "min_hits", "six"))),
    ("generate", "selection.r_min = '1 GeV'", "selection.r_min", gen(set_("selection", "r_min", "1 GeV"))),
    ("generate", "selection.profile.kind = 'cubic'", "selection.profile.kind",
     gen(set_("selection", "profile", {"kind": "cubic", "eps0": 0.9}))),
    ("generate", "[selection] without a geometry", "selection",
     gen(set_("detector", "geometry", ""))),
    # geometry files
    ("generate", "geometry vertex_layers[0].radius = '-1 cm'", "vertex_layers",
     geo(lambda g: g["vertex_layers"][0].update(radius="-1 cm"))),
    ("generate", "geometry beampipe.thickness = 1.5 (more than one X0)", "beampipe.thickness",
     geo_set(("beampipe", "thickness"), 1.5)),
    ("generate", "geometry chamber.n_layers = 0", "chamber.n_layers", geo_set(("chamber", "n_layers"), 0)),
    ("generate", "geometry chamber.r_iner (unknown key)", "did you mean 'r_inner'",
     geo(lambda g: g["chamber"].update(r_iner=g["chamber"].pop("r_inner")))),
    ("generate", "geometry calorimeter.stochastic = 'nan'", "calorimeter.stochastic",
     geo_set(("calorimeter", "stochastic"), "nan")),
    ("generate", "geometry calorimeter.radius = '125 GeV'", "calorimeter.radius",
     geo_set(("calorimeter", "radius"), "125 GeV")),
    ("generate", "geometry acceptance.tracker_theta_min = '17 cm'", "acceptance.tracker_theta_min",
     geo_set(("acceptance", "tracker_theta_min"), "17 cm")),
    ("generate", "geometry field = code string", "field", geo_set(("field",), CODE)),
    ("draw-geometry", "geometry without [chamber]", "chamber", draw(geo_file(_del(("chamber",))))),
    ("draw-geometry", "binary garbage geometry", "not a valid TOML", draw(geo_file(content=GARBAGE))),
    ("draw-geometry", "empty geometry file", "", draw(geo_file(content=""))),
    ("draw-geometry", "output under a regular file", "plainfile",
     draw(geo_file(), out=lambda ctx: under_regular_file(ctx) / "g.png")),
    ("draw-geometry", "output with an unknown picture suffix", "unknown picture format",
     draw(geo_file(), out=lambda ctx: ctx.tmp / "g.xyz")),
    # whole config files
    ("generate", "empty config file", "beams.e_minus", raw_config("")),
    ("generate", "binary garbage config", "run.toml", raw_config(GARBAGE)),
    ("generate", "python code as config", "not a valid TOML file", raw_config("import os\nos.system('touch PWNED')\n")),
    ("generate", "config file not found", "not found",
     lambda ctx: ["generate", ctx.tmp / "absent.toml", "-o", ctx.tmp / "out.root"]),
    ("generate", "config is a folder", "not found",
     lambda ctx: ["generate", ctx.tmp, "-o", ctx.tmp / "out.root"]),
    # outputs of generate
    ("generate", "--output in a non-existent folder", "does not exist",
     lambda ctx: gen(lambda d, c: None)(ctx)[:3] + [ctx.tmp / "no" / "such" / "out.root", "-q"]),
    ("generate", "--output under a regular file", "out.root",
     lambda ctx: gen(lambda d, c: None)(ctx)[:3] + [under_regular_file(ctx) / "out.root", "-q"]),
    ("generate", "--output exists, no --force", "--force", existing_output(gen(lambda d, c: None), "out.root")),
    ("generate", "--output is an existing folder", "folder",
     lambda ctx: gen(lambda d, c: None)(ctx)[:3] + [ctx.tmp, "-q"]),
    ("generate", "--output ''", "empty path",
     lambda ctx: gen(lambda d, c: None)(ctx)[:3] + ["", "-q"]),
    ("generate", "--seed -1 (argparse)", "-1", lambda ctx: gen(lambda d, c: None)(ctx) + ["--seed", "-1"]),
    ("bench", "--events 0 (argparse)", "'0'", lambda ctx: ["bench", "--events", "0"]),
    # [scan]
    ("scan", "no [scan] section", "scan", scan(drop("scan"))),
    ("scan", "scan.ctau_min >= scan.ctau_max", "scan.ctau_min", scan(set_("scan", "ctau_min", "1 km"))),
    ("scan", "scan.masses decreasing", "scan.masses", scan(set_("scan", "masses", [0.8, 0.4]))),
    ("scan", "scan.masses above the production limit", "production limit",
     scan(set_("scan", "masses", [0.4, 11.0]))),
    ("scan", "scan.masses = 'a lot'", "scan.masses", scan(set_("scan", "masses", "a lot"))),
    ("scan", "scan.ctau_points = 1", "scan.ctau_points", scan(set_("scan", "ctau_points", 1))),
    ("scan", "scan.mass_step (unknown key)", "scan.mass_step", scan(set_("scan", "mass_step", 0.1))),
    ("scan", "scan.efficiency_step = 'bogus'", "scan.efficiency_step",
     scan(set_("scan", "efficiency_step", "bogus"))),
    ("scan", "scan without a geometry", "detector.geometry",
     scan(both(set_("detector", "geometry", ""), drop("selection")))),
    ("scan", "--output-dir under a regular file", "not writable", scan(outdir=None)),
    ("scan", "--resume with another config", "llp.channel",
     scan(set_("llp", "channel", "e_e"), extra=("--resume",), prepare=with_done_scan)),
    ("scan", "scan folder exists without --resume", "--resume", scan(prepare=with_done_scan)),
    ("scan", "-o ''", "empty path", empty_output(scan())),
    # [reach]
    ("reach", "no [reach] section", "reach", reach(drop("reach"))),
    ("reach", "[raech] for [reach] (misspelt section)", "found [raech]", reach(rename("reach", "raech"))),
    ("reach", "[modle] for [model] (misspelt section)", "found [modle]", reach(rename("model", "modle"))),
    ("reach", "reach.lumi = '50 GeV' (energy for a luminosity)", "reach.lumi",
     reach(set_("reach", "lumi", "50 GeV"))),
    ("reach", "reach.cl = 1 (open bound)", "reach.cl", reach(set_("reach", "cl", 1.0))),
    ("reach", "reach.background = 'nan'", "reach.background", reach(set_("reach", "background", "nan"))),
    ("reach", "reach.background = inf", "reach.background", reach(set_("reach", "background", math.inf))),
    ("reach", "reach.coupling_min > coupling_max", "coupling", reach(set_("reach", "coupling_min", 1.0))),
    ("reach", "reach.efficiencyy (unknown key)", "did you mean 'efficiency'",
     reach(set_("reach", "efficiencyy", "fold"))),
    ("reach", "reach.efficiency = 'map' without a map", "reach.map",
     reach(both(set_("reach", "efficiency", "map"), drop("reach", "events_per_mass"),
                drop("reach", "reco_factor")))),
    ("reach", "efficiency map: empty file", "efficiency_map.csv", reach(map_file(""))),
    ("reach", "efficiency map: binary garbage", "efficiency_map.csv", reach(map_file(GARBAGE))),
    ("reach", "efficiency map: a ROOT file", "efficiency_map.csv",
     reach(lambda d, c: map_file(Path(c.files["reco"]).read_bytes())(d, c))),
    ("reach", "efficiency map: NaN efficiency", "efficiency_map.csv",
     reach(map_file("mass_gev,ctau_cm,efficiency,error,method,events\n0.4,1.0,nan,0.0,direct,10\n"
                    "0.4,10.0,0.5,0.1,direct,10\n0.8,1.0,0.5,0.1,direct,10\n0.8,10.0,0.5,0.1,direct,10\n"))),
    ("reach", "--output-dir under a regular file", "plainfile", reach(outdir=None)),
    ("reach", "-o ''", "empty path", empty_output(reach())),
    # [tuning] / [backgrounds] (tune-cuts)
    ("tune-cuts", "tuning.fom = 'punz'", "did you mean 'punzi'", tune(set_("tuning", "fom", "punz"))),
    ("tune-cuts", "tuning.lumi = '1 GeV'", "tuning.lumi", tune(set_("tuning", "lumi", "1 GeV"))),
    ("tune-cuts", "tuning.signal_events = 0", "tuning.signal_events", tune(set_("tuning", "signal_events", 0))),
    ("tune-cuts", "tuning.windows = ['nan']", "tuning.windows", tune(set_("tuning", "windows", ["nan"]))),
    ("tune-cuts", "tuning.r_min.bogus (unknown key)", "tuning.r_min.bogus",
     tune(lambda d, c: d["tuning"]["r_min"].update(bogus=1))),
    ("tune-cuts", "tuning.masses below the e_e threshold", "threshold",
     tune(set_("tuning", "masses", ["0.0001 GeV"]))),
    ("tune-cuts", "no [tuning] section", "tuning", tune(drop("tuning"))),
    ("tune-cuts", "[tunning] for [tuning] (misspelt section)", "found [tunning]",
     tune(rename("tuning", "tunning"))),
    ("tune-cuts", "[background] for [backgrounds] (misspelt section)", "found [background]",
     tune(rename("backgrounds", "background"))),
    ("tune-cuts", "backgrounds.ks.yield = -1", "backgrounds.ks", tune(lambda d, c: d["backgrounds"]["ks"].update({"yield": -1.0}))),
    ("tune-cuts", "output stem under a regular file", "plainfile",
     tune(stem=lambda ctx: under_regular_file(ctx) / "tuned")),
    ("tune-cuts", "outputs exist, no --force", "--force",
     tune(prepare=lambda ctx: ctx.write("tuned.csv", "precious\n"))),
    ("tune-cuts", "--seed -1 (argparse)", "-1", tune(extra=("--seed", "-1"))),
    ("tune-cuts", "-o ''", "empty path", empty_output(tune())),
    # fold / validate / report
    ("fold", "--ctau 1:0:5 (MAX < MIN)", "--ctau", lambda ctx: ["fold", gen(lambda d, c: None)(ctx)[1], "--ctau", "1:0:5",
                                                                 "-n", "300", "-o", ctx.tmp / "f"]),
    ("fold", "--ctau nan:10:5", "nan:10:5", lambda ctx: ["fold", gen(lambda d, c: None)(ctx)[1], "--ctau", "nan:10:5",
                                                          "-n", "300", "-o", ctx.tmp / "f"]),
    ("fold", "--ctau 1:10:1 (one point)", "N >= 2", lambda ctx: ["fold", gen(lambda d, c: None)(ctx)[1], "--ctau",
                                                                  "1:10:1", "-n", "300", "-o", ctx.tmp / "f"]),
    ("fold", "--ctau abc", "'abc'", lambda ctx: ["fold", gen(lambda d, c: None)(ctx)[1], "--ctau", "abc",
                                                  "-n", "300", "-o", ctx.tmp / "f"]),
    ("fold", "config with an unknown key", "did you mean 'events'",
     lambda ctx: ["fold", gen(set_("run", "evnets", 5))(ctx)[1], "--ctau", "1:10:3", "-o", ctx.tmp / "f"]),
    ("fold", "--output-dir under a regular file", "plainfile",
     lambda ctx: ["fold", gen(lambda d, c: None)(ctx)[1], "--ctau", "1:10:3", "-n", "300", "-o",
                  under_regular_file(ctx)]),
    ("validate", "--seed -1 (argparse)", "-1", lambda ctx: ["validate", "--seed", "-1", "-o", ctx.tmp / "v"]),
    ("validate", "--events 0 (argparse)", "'0'", lambda ctx: ["validate", "--events", "0", "-o", ctx.tmp / "v"]),
    ("validate", "--output-dir under a regular file", "plainfile",
     lambda ctx: ["validate", "--quick", "-n", "100", "-q", "-o", under_regular_file(ctx)]),
    ("report", "empty file", "not a readable ROOT file", lambda ctx: ["report", empty_file(ctx), "-o", ctx.tmp / "r"]),
    ("report", "truncated ROOT file", "truncated.root", lambda ctx: ["report", truncated(ctx), "-o", ctx.tmp / "r"]),
    ("report", "foreign ROOT file", "not a toymc file", lambda ctx: ["report", foreign(ctx), "-o", ctx.tmp / "r"]),
    ("report", "missing file", "not found", lambda ctx: ["report", missing(ctx), "-o", ctx.tmp / "r"]),
    ("report", "truth-only file", "truth.root", lambda ctx: ["report", ctx.copy("truth"), "-o", ctx.tmp / "r"]),
    ("report", "--output-dir under a regular file", "plainfile",
     lambda ctx: ["report", ctx.copy("reco"), "-o", under_regular_file(ctx)]),
    # cutflow / info / merge / export on bad files
    ("cutflow", "empty file", "not a readable ROOT file", on_file("cutflow", empty_file)),
    ("cutflow", "truncated ROOT file", "truncated.root", on_file("cutflow", truncated)),
    ("cutflow", "ROOT header only", "header.root", on_file("cutflow", header_only)),
    ("cutflow", "foreign ROOT file", "not a toymc file", on_file("cutflow", foreign)),
    ("cutflow", "truth-only file (no cut_*)", "no cutflow columns", on_file("cutflow", good("truth"))),
    ("cutflow", "missing file", "not found", on_file("cutflow", missing)),
    ("info", "empty file", "not a readable ROOT file", on_file("info", empty_file)),
    ("info", "truncated ROOT file", "truncated.root", on_file("info", truncated)),
    ("info", "foreign ROOT file", "not a toymc file", on_file("info", foreign)),
    ("info", "text file", "not a readable ROOT file", on_file("info", text_file)),
    ("info", "--lumi nan", "lumi", on_file("info", good("reco"), extra=("--lumi", "nan", "--sigma-times-br", "1"))),
    ("info", "--lumi -5", "lumi", on_file("info", good("reco"), extra=("--lumi", "-5", "--sigma-times-br", "1"))),
    ("info", "--lumi '1 GeV'", "1 GeV", on_file("info", good("reco"), extra=("--lumi", "1 GeV", "--sigma-times-br", "1.0"))),
    ("merge", "truncated input", "truncated.root", merge([good("reco"), truncated])),
    ("merge", "foreign input", "not a toymc file", merge([good("reco"), foreign])),
    ("merge", "empty input", "empty.root", merge([good("reco"), empty_file])),
    ("merge", "mixed schema versions", "schema version", merge([good("reco"), good("schema2")])),
    ("merge", "reco with truth-only columns", "columns differ", merge([good("reco"), good("truth")])),
    ("merge", "two physics points without --allow-mixed", "physics point differs",
     merge([good("reco"), good("other_point")])),
    ("merge", "the same random blocks twice", "block", merge([good("reco"), good("reco", "copy.root")])),
    ("merge", "output exists, no --force", "--force",
     existing_output(merge([good("reco"), good("seed2")]), "merged.root")),
    ("merge", "output is one of the inputs", "input", lambda ctx: ["merge", ctx.copy("reco"), ctx.copy("seed2"),
                                                                   ctx.tmp / "reco.root"]),
    ("merge", "output '' (empty name)", "empty path",
     lambda ctx: ["merge", "", ctx.copy("reco"), ctx.copy("seed2")]),
    ("merge", "output is an existing folder, --force", "not a file name",
     lambda ctx: ["merge", ctx.tmp, ctx.copy("reco"), ctx.copy("seed2"), "--force"]),
    ("export", "output '' (empty name)", "empty path", export(good("reco"), out=lambda ctx: "")),
    ("export", "output '' with --force", "empty path",
     export(good("reco"), out=lambda ctx: "", extra=("--force",))),
    ("export", "output is an existing folder, --force", "not a file name",
     export(good("reco"), out=lambda ctx: ctx.tmp, extra=("--force",))),
    ("export", "truncated input", "truncated.root", export(truncated)),
    ("export", "foreign input", "not a toymc file", export(foreign)),
    ("export", "output exists, no --force", "--force", existing_output(export(good("reco")), "out.parquet")),
    ("export", "output in a non-existent folder", "does not exist",
     export(good("reco"), out=lambda ctx: ctx.tmp / "nope" / "o.parquet")),
    ("export", "output under a regular file", "plainfile",
     export(good("reco"), out=lambda ctx: under_regular_file(ctx) / "o.parquet")),
]

# ------------------------------------------------------------------ fixtures
def _write_foreign(path):
    import numpy as np

    with uproot.recreate(path) as f:
        f["other"] = {"x": np.arange(10.0)}


def _with_meta(src, dst, **changes):
    """Copy a toymc file, its metadata changed (a new, consistent metadata record)."""
    import json

    from toymc.io.verify import meta_text

    shutil.copyfile(src, dst)
    with uproot.open(dst) as f:
        meta = json.loads(str(f["toymc_meta"]))
    meta.update(changes)
    with uproot.update(dst) as f:
        f["toymc_meta"] = meta_text(meta)


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    """Good toymc files (reco, truth-only, another seed, another point), a foreign ROOT
    file, one with another schema version, and a finished tiny scan."""
    from toymc.config.loader import from_dict
    from toymc.io.run import run

    d = tmp_path_factory.mktemp("good")
    out = {}
    data = base_config()
    for key, edit in (("reco", None), ("seed2", ("run", "seed", 2)),
                      ("other_point", ("llp", "ctau", 20.0))):
        dd = copy.deepcopy(data)
        if edit:
            dd[edit[0]][edit[1]] = edit[2]
        run(from_dict(dd, str(d / "cfg.toml")), output=d / f"{key}.root", events=500)
        out[key] = d / f"{key}.root"
    truth = copy.deepcopy(data)
    truth.pop("selection")
    truth["detector"]["geometry"] = ""
    run(from_dict(truth), output=d / "truth.root", events=500)
    out["truth"] = d / "truth.root"
    out["foreign"] = d / "foreign.root"
    _write_foreign(out["foreign"])
    out["schema2"] = d / "schema2.root"
    _with_meta(out["reco"], out["schema2"], schema_version=2)
    scan_cfg = copy.deepcopy(data)
    scan_cfg["scan"] = dict(SCAN)
    (d / "scan.toml").write_text(dumps(scan_cfg))
    assert run_cli(["scan", d / "scan.toml", "-o", d / "scan", "-q", "-j", "1"]) == 0
    out["scan_dir"] = d / "scan"
    return out


@pytest.mark.parametrize("command,label,phrase,build", CASES, ids=[f"{c[0]}: {c[1]}" for c in CASES])
def test_bad_input(command, label, phrase, build, files, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)  # a PWNED file would land here
    ctx = Ctx(tmp_path, files)
    argv = build(ctx)
    assert argv[0] == command
    capsys.readouterr()
    before = snapshot(tmp_path)
    code = run_cli(argv)
    cap = capsys.readouterr()
    assert code == 2, (code, cap.err)
    assert "Traceback" not in cap.err
    lines = cap.err.strip().splitlines()
    assert len(lines) == 1, cap.err
    assert lines[0].startswith("toymc: error: ")
    assert phrase.lower() in lines[-1].lower(), lines[-1]
    assert snapshot(tmp_path) == before
    assert not (tmp_path / "PWNED").exists()


def test_every_command_and_section_has_bad_inputs():
    """The table covers what the program offers: every subcommand of the real parser
    (toymc.cli.main.build_parser) has a case, and every top-level section of a run config and
    every top-level table of a geometry file (toymc.config.schema) is named by a case."""
    import argparse

    from toymc.cli.main import build_parser
    from toymc.config.schema import GEOMETRY_SCHEMA, SCHEMA

    sub = next(a for a in build_parser()._actions if isinstance(a, argparse._SubParsersAction))
    commands = {c[0] for c in CASES}
    assert set(sub.choices) <= commands, sorted(set(sub.choices) - commands)
    text = " ".join(c[1] for c in CASES)
    sections = {k.split(".")[0] for k in SCHEMA}
    tables = {k.split(".")[0].removesuffix("[]") for k in GEOMETRY_SCHEMA if k}
    missing = sorted(n for n in sections | tables if n not in text)
    assert not missing, f"no bad-input case names {missing}"


@pytest.mark.skipif(IS_ROOT, reason="running as root: chmod 000 does not block reading")
def test_unreadable_config(tmp_path, capsys):
    cfg = tmp_path / "run.toml"
    cfg.write_text(dumps(base_config()))
    cfg.chmod(0)
    try:
        code = run_cli(["generate", cfg, "-o", tmp_path / "out.root"])
    finally:
        cfg.chmod(0o600)
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and len(err) == 1 and "run.toml" in err[0]
    assert not (tmp_path / "out.root").exists()


def test_unreachable_scheduler_fails_fast(tmp_path, capsys):
    """A scheduler address nobody listens on: a one-line error within a few seconds,
    and no scan folder left behind."""
    data = base_config()
    data["scan"] = dict(SCAN)
    cfg = tmp_path / "scan.toml"
    cfg.write_text(dumps(data))
    capsys.readouterr()
    t0 = time.perf_counter()
    code = run_cli(["scan", cfg, "-o", tmp_path / "scan", "-q", "--scheduler", "tcp://127.0.0.1:1"])
    dt = time.perf_counter() - t0
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2
    assert len(err) == 1 and "tcp://127.0.0.1:1" in err[0], err
    assert dt < 15.0, dt
    assert not (tmp_path / "scan" / "index.json").exists()
