"""Load and validate a run config (TOML) into frozen dataclasses.

Every key is declared once in :data:`SCHEMA` with its type, unit, default,
allowed range and meaning; the README's config reference is generated from
it (``python -m toymc.config.schema``).  Values with a unit may be plain numbers in
the internal unit (GeV, cm, ns, T, rad, fb) or strings such as ``"15 cm"``.
An unknown key is rejected with the closest valid name; a wrong type or a
value out of range raises :class:`toymc.errors.ConfigError` naming the file,
the key, the value and what is allowed.  Nothing in a config is evaluated.
"""

import difflib
import math
from dataclasses import dataclass, field, replace
from pathlib import Path

from toymc.config import ranges as R
from toymc.errors import ConfigError, InputFileError
from toymc.physics import channels, processes
from toymc.physics.decays import CHANNELS
from toymc.physics.models.point import MODELS, VECTOR_MODELS, model_spin
from toymc.physics.production.beams import Beams

__all__ = ("SCHEMA", "RunConfig", "load", "loads", "from_dict", "schema_markdown", "to_toml",
           "dumps", "toml_value")

_INF = math.inf
_AXIS, _EV, _SAMPLE = R.MAX_GRID_AXIS, R.MAX_EVENTS, R.MAX_SAMPLE_EVENTS
_k = R.spec


#: section -> key -> specification (toymc.config.ranges.spec: kind, default, meaning, unit, range)
SCHEMA = {
    "run": {
        "events": _k("int", 100_000, "number of events to generate", lo=1, hi=_EV),
        "seed": _k("int", 1, "master seed; block i uses SeedSequence(seed, spawn_key=(i, 0))", lo=0,
                   hi=R.MAX_SEED),
        "chunk_blocks": _k("int", 1, "blocks (of 65536 events) per write chunk, held in memory "
                           "together; does not change the events", lo=1, hi=R.MAX_CHUNK_BLOCKS),
        "output": _k("str", "toymc.root", "output ROOT file"),
        "decay_weights": _k("bool", False, "with a geometry: also write w_fold, each event's fold "
                            "probability (decay inside the window x profile; slower)"),
        "compression": _k("str", "lz4", "ROOT basket compression: lz4 (fast, ROOT 6), zlib (every "
                          "ROOT version, slow), zstd (small, ROOT >= 6.20) or none",
                          choices=("lz4", "zlib", "zstd", "none")),
    },
    "beams": {
        "e_minus": _k("float", None, "e- beam energy (travels towards +z)", dim="energy",
                      lo=R.MIN_BEAM_ENERGY, hi=R.MAX_BEAM_ENERGY, required=True),
        "e_plus": _k("float", None, "e+ beam energy (travels towards -z)", dim="energy",
                     lo=R.MIN_BEAM_ENERGY, hi=R.MAX_BEAM_ENERGY, required=True),
        "crossing_angle": _k("float", 0.0, "full crossing angle in the xz plane", dim="angle",
                             lo=0, hi=0.5),
        "sigma_x": _k("float", 0.0, "luminous-region width in x", dim="length", lo=0,
                      hi=R.MAX_SPREAD),
        "sigma_y": _k("float", 0.0, "luminous-region width in y", dim="length", lo=0,
                      hi=R.MAX_SPREAD),
        "sigma_z": _k("float", 0.0, "luminous-region length in z", dim="length", lo=0,
                      hi=R.MAX_SPREAD),
    },
    "production": {
        "process": _k("str", None, "production process", choices=processes.CHOICES,
                      required=True),
        "recoil": _k("str", "K", "b_meson: B -> K X or B -> K*(892) X", choices=("K", "K*")),
        "charged_fraction": _k("float", 0.514, "b_meson: fraction of Upsilon(4S) -> B+ B- "
                               "(PDG listing, from memory)", lo=0, hi=1),
        "sigma_bb": _k("float", 1.1e6, "b_meson: sigma(e+e- -> Upsilon(4S) -> B Bbar) "
                       "(about 1.1 nb, common practice, from memory)", dim="area", lo=0,
                       hi=R.MAX_CROSS_SECTION),
        "photon_cos_min": _k("float", -0.95, "radiative: lowest cos(theta) of the photon in "
                             "the collision frame", lo=-1, hi=1, lo_open=True, hi_open=True),
        "photon_cos_max": _k("float", 0.95, "radiative: highest cos(theta) of the photon",
                             lo=-1, hi=1, lo_open=True, hi_open=True),
    },
    "llp": {
        "mass": _k("float", None, "LLP mass", dim="energy", lo=0, lo_open=True, hi=R.MAX_MASS,
                   required=True),
        "ctau": _k("float", None, "proper decay length c*tau (required unless [model] gives it)",
                   dim="length", lo=0, lo_open=True, hi=R.MAX_CTAU),
        "ctau_mixture": _k("list", None, "c*tau values of an equal-weight mixture of exponential "
                           "decay-time laws (replaces ctau; for reweighting across a range)",
                           dim="length", lo=0, lo_open=True, hi=R.MAX_CTAU,
                           max_len=R.MAX_MIXTURE),
        "channel": _k("str", None, "decay channel", choices=channels.CHOICES, required=True),
        "matrix_element": _k("str", "flat", "three-body channels: flat phase space or the "
                             "leading-order chiral weight (s - m_pi^2)^2 of a -> pi+ pi- pi0",
                             choices=("flat", "chiral")),
        "pdg": _k("int", 0, "PDG id written for the LLP; 0 picks 54 (spin 0) or 55 (spin 1), "
                  "the hidden-sector mediator codes of the PDG numbering scheme (from memory)",
                  lo=-R.MAX_PDG, hi=R.MAX_PDG),
    },
    "model": {
        "name": _k("str", None, "physics model giving c*tau, branching fractions and the "
                   "production rate (toymc.physics.models.point)", choices=MODELS, required=True),
        "coupling": _k("float", None, "main coupling: g_agg [GeV^-1] (alp_photon), 1/f [GeV^-1] "
                       "(alp_gluon), eps (dark_photon), g (gauge models)", lo=0, lo_open=True,
                       hi=R.MAX_COUPLING, required=True),
        "kinetic_mixing": _k("float", None, "vector models: kinetic mixing eps added to the "
                             "gauge couplings (default 0; one-loop value for lmu_minus_ltau)",
                             lo=-1, hi=1),
        "g_bs": _k("float", None, "b_meson: flavour-violating b -> s coupling (toymc.physics.models."
                   "b_to_k); or give br_production; BR(B -> K(*) X) must come out <= 1",
                   lo=0, lo_open=True, hi=1e-3, unit="GeV^-1"),
        "br_production": _k("float", None, "b_meson: BR(B -> K(*) X) given directly", lo=0, hi=1),
        "charges": _k("table", None, "vector models: fermion -> charge (e, mu, tau, nu_e, nu_mu, "
                      "nu_tau, u, d, s, c, b; each from -%g to %g), replacing the model's "
                      "(custom_vector: all)" % (R.MAX_CHARGE, R.MAX_CHARGE)),
    },
    "detector": {
        "geometry": _k("str", "", "geometry file (relative to the config file); empty: truth only"),
    },
    "scan": {
        "masses": _k("list", None, "explicit LLP masses of the grid, increasing; or "
                     "mass_min/max/points", dim="energy", lo=0, lo_open=True, hi=R.MAX_MASS,
                     min_len=2, max_len=_AXIS),
        "mass_min": _k("float", None, "lowest grid mass", dim="energy", lo=0, lo_open=True,
                       hi=R.MAX_MASS),
        "mass_max": _k("float", None, "highest grid mass", dim="energy", lo=0, lo_open=True,
                       hi=R.MAX_MASS),
        "mass_points": _k("int", 10, "number of grid masses (linear spacing; with mass_min/max)",
                          lo=2, hi=_AXIS),
        "ctau_min": _k("float", 0.1, "smallest grid c*tau (log spacing)", dim="length", lo=0,
                       lo_open=True, hi=R.MAX_CTAU),
        "ctau_max": _k("float", 1e4, "largest grid c*tau", dim="length", lo=0, lo_open=True,
                       hi=R.MAX_CTAU),
        "ctau_points": _k("int", 20, "number of grid c*tau values (masses x c*tau values <= "
                          "10^6)", lo=2, hi=_AXIS),
        "events_per_mass": _k("int", 100_000, "events of the reference sample of each mass",
                              lo=1, hi=_EV),
        "events_direct": _k("int", 0, "events of a directly generated point (0: events_per_mass)",
                            lo=0, hi=_EV),
        "mixture_ratio": _k("float", 10.0, "largest ratio of neighbouring c*tau values in the "
                            "exponential mixture of each mass's sample (at most %d components)"
                            % R.MAX_MIXTURE, lo=1, lo_open=True, hi=1e6),
        "ess_min_fraction": _k("float", 0.05, "reweight when ESS/N >= this, else generate "
                               "directly", lo=0, hi=1),
        "efficiency_step": _k("str", "mass", "cutflow step whose pass flag defines the "
                              "efficiency (column cut_<step>)"),
    },
    "reach": {
        "masses": _k("list", None, "explicit LLP masses of the reach grid (increasing); or "
                     "mass_min/mass_max/mass_points", dim="energy", lo=0, lo_open=True,
                     hi=R.MAX_MASS, min_len=2, max_len=_AXIS),
        "mass_min": _k("float", None, "lowest grid mass", dim="energy", lo=0, lo_open=True,
                       hi=R.MAX_MASS),
        "mass_max": _k("float", None, "highest grid mass", dim="energy", lo=0, lo_open=True,
                       hi=R.MAX_MASS),
        "mass_points": _k("int", 20, "number of grid masses (with mass_min/mass_max)", lo=2,
                          hi=_AXIS),
        "mass_spacing": _k("str", "log", "spacing of the grid masses (with mass_min/mass_max)",
                           choices=("log", "linear")),
        "couplings": _k("list", None, "explicit grid couplings (model's unit, increasing); or "
                        "coupling_min/coupling_max/coupling_points", lo=0, lo_open=True,
                        hi=R.MAX_COUPLING, min_len=2, max_len=_AXIS),
        "coupling_min": _k("float", None, "smallest grid coupling (model's unit: GeV^-1 for ALPs, "
                           "eps for dark_photon)", lo=0, lo_open=True, hi=R.MAX_COUPLING),
        "coupling_max": _k("float", None, "largest grid coupling", lo=0, lo_open=True,
                           hi=R.MAX_COUPLING),
        "coupling_points": _k("int", 40, "number of grid couplings (log spacing; masses x "
                              "couplings <= 10^6)", lo=2, hi=_AXIS),
        "lumi": _k("float", None, "integrated luminosity (or a string such as '1 ab-1')",
                   dim="inverse_area", lo=0, lo_open=True, hi=R.MAX_LUMI, required=True),
        "background": _k("float", 0.0, "expected background events after the selection", lo=0,
                         hi=R.MAX_BACKGROUND),
        "cl": _k("float", 0.95, "confidence level of the upper limit", lo=0, hi=1, lo_open=True,
                 hi_open=True),
        "limit": _k("str", "median", "expected limit for b > 0: at the median background count, "
                    "or the Poisson-weighted mean", choices=("median", "mean")),
        "efficiency": _k("str", "fold", "source of the signal efficiency",
                         choices=("fold", "mc", "map")),
        "map": _k("str", "", "efficiency_map.csv of a scan (relative to the config file); "
                  "efficiency = 'map' only"),
        "events_per_mass": _k("int", 20_000, "events per sample of each mass (fold, mc; held in "
                              "memory)", lo=2, hi=_SAMPLE),
        "reco_factor": _k("float", 1.0, "fold: constant reconstruction efficiency multiplying the "
                          "folded efficiency", lo=0, hi=1, lo_open=True),
        "efficiency_step": _k("str", "mass", "mc: cutflow step whose pass flag defines the "
                              "efficiency (column cut_<step>)"),
        "mc_ctau_min": _k("float", 1e-3, "mc: smallest reference c*tau of the ladder",
                          dim="length", lo=0, lo_open=True, hi=R.MAX_CTAU),
        "mc_ctau_max": _k("float", 1e6, "mc: largest reference c*tau of the ladder", dim="length",
                          lo=0, lo_open=True, hi=R.MAX_CTAU),
        "ess_min_fraction": _k("float", 0.05, "mc: eps = 0 (status low_ess) where ESS/N is below "
                               "this", lo=0, hi=1),
    },
}

#: sections handled by other modules, passed through as raw tables
RAW_SECTIONS = ("selection", "tuning", "backgrounds")


@dataclass(frozen=True)
class RunSettings:
    events: int
    seed: int
    chunk_blocks: int
    output: str
    decay_weights: bool
    compression: str


@dataclass(frozen=True)
class Production:
    process: str
    recoil: str
    charged_fraction: float
    sigma_bb: float
    photon_cos_min: float
    photon_cos_max: float
    #: values of the keys a registered process declares (toymc.physics.processes)
    options: dict = field(default_factory=dict, hash=False)


@dataclass(frozen=True)
class LLP:
    mass: float
    ctau: float
    ctau_mixture: list
    channel: str
    matrix_element: str
    pdg: int


@dataclass(frozen=True)
class Model:
    name: str
    coupling: float
    kinetic_mixing: float = None
    g_bs: float = None
    br_production: float = None
    charges: dict = None


@dataclass(frozen=True)
class RunConfig:
    """A validated run: every value in internal units."""

    run: RunSettings
    beams: Beams
    production: Production
    llp: LLP
    geometry: str = ""
    detector: object = field(default=None, compare=False, repr=False)
    selection: object = field(default=None, compare=False, repr=False)
    model: Model = None
    scan: dict = field(default=None, compare=False)
    raw: dict = field(default_factory=dict, compare=False)
    path: str = ""

    def with_run(self, **kw):
        """Copy with some run settings replaced (command-line overrides)."""
        kw = {k: v for k, v in kw.items() if v is not None}
        return replace(self, run=replace(self.run, **kw))

    def with_llp(self, **kw):
        return replace(self, llp=replace(self.llp, **kw))


def missing_section_hint(name, data):
    """Hint for a required top-level section `name` that `data` (parsed TOML) lacks.

    ``" (found [x]: misspelt?)"`` when a top-level table with a close name is present
    (difflib's similarity ratio >= 0.6), else ``""``.
    """
    tables = [k for k, v in data.items() if isinstance(v, dict)]
    m = difflib.get_close_matches(name, tables, n=1)
    return f" (found [{m[0]}]: misspelt?)" if m else ""


def _closest(name, options):
    m = difflib.get_close_matches(name, list(options), n=1)
    return f" (did you mean '{m[0]}'?)" if m else ""


def _allowed(spec):
    return R.allowed(spec)


def _value(path, key, raw, spec):
    return R.check(path, key, raw, spec)


def _section(path, name, table, spec=None):
    spec = SCHEMA[name] if spec is None else spec
    if not isinstance(table, dict):
        raise ConfigError(path, name, table, "a table [" + name + "]")
    out = {}
    for key in table:
        if key not in spec:
            raise ConfigError(path, f"{name}.{key}", table[key],
                              "unknown key; allowed: " + ", ".join(spec) + _closest(key, spec))
    for key, s in spec.items():
        if key in table:
            out[key] = _value(path, f"{name}.{key}", table[key], s)
        elif s["required"]:
            raise ConfigError(path, f"{name}.{key}", None, "required; " + _allowed(s))
        else:
            out[key] = s["default"]
    return out


#: [model] keys that only one production process uses: dotted key -> process
_MODEL_PROCESS_KEYS = {"model.g_bs": "b_meson", "model.br_production": "b_meson"}


def process_keys():
    """Keys that only one production process uses: dotted key -> process (the processes'
    own keys from toymc.physics.processes, and the [model] keys of b_meson)."""
    out = {f"production.{k}": p.name for p in processes.PROCESSES.values() for k in p.keys}
    out.update(_MODEL_PROCESS_KEYS)
    return out


def _production_spec():
    """SCHEMA["production"] with the keys that registered processes declare."""
    spec = dict(SCHEMA["production"])
    for p in processes.PROCESSES.values():
        for k, kw in p.keys.items():
            if kw is not None:
                spec[k] = R.spec(**kw)
    return spec


#: [model] keys that only the vector models use
VECTOR_KEYS = ("kinetic_mixing", "charges")


def _unused_keys(path, data, process, model_name):
    """Refuse keys the chosen production process or model does not use."""
    for dotted, proc in process_keys().items():
        sec, key = dotted.split(".")
        table = data.get(sec)
        if isinstance(table, dict) and key in table and proc != process:
            raise ConfigError(path, dotted, table[key], f"used only by production.process = "
                              f"'{proc}' (this config: '{process}'); remove it")
    if model_name is not None and model_spin(model_name) == 0:
        for key in VECTOR_KEYS:
            if key in data["model"]:
                raise ConfigError(path, f"model.{key}", data["model"][key],
                                  f"used only by the vector models ({', '.join(VECTOR_MODELS)}),"
                                  f" not by {model_name}; remove it")


def _charges(path, charges):
    """model.charges: known fermion names, finite charges within +-MAX_CHARGE."""
    from toymc.physics.models.vector_boson import FERMIONS

    s = R.spec("float", lo=-R.MAX_CHARGE, hi=R.MAX_CHARGE)
    out = {}
    for name, q in charges.items():
        if name not in FERMIONS:
            raise ConfigError(path, f"model.charges.{name}", q, "a fermion: one of "
                              + ", ".join(FERMIONS) + _closest(name, FERMIONS))
        out[name] = R.check(path, f"model.charges.{name}", q, s)
    return out


#: grid keys used only without the explicit list: list key -> keys of the range form
_RANGE_KEYS = {"masses": ("mass", ("mass_points", "mass_spacing")),
               "couplings": ("coupling", ("coupling_points",))}


def _list_or_range(path, section, table):
    """Refuse the points/spacing keys of a grid axis given as an explicit list."""
    if not isinstance(table, dict):
        return
    for lst, (axis, keys) in _RANGE_KEYS.items():
        for key in keys:
            if lst in table and key in table and key in SCHEMA[section]:
                raise ConfigError(path, f"{section}.{key}", table[key],
                                  f"used only with {section}.{axis}_min/{axis}_max ({section}."
                                  f"{lst} lists the values); remove it")


def from_dict(data, path=""):
    """Validate a parsed TOML document (dict) and return a :class:`RunConfig`."""
    for name in data:
        if name not in SCHEMA and name not in RAW_SECTIONS:
            raise ConfigError(path, name, "[section]", "unknown section; allowed: "
                              + ", ".join(list(SCHEMA) + list(RAW_SECTIONS))
                              + _closest(name, list(SCHEMA) + list(RAW_SECTIONS)))
    vals = {name: _section(path, name, data.get(name, {}),
                           _production_spec() if name == "production" else None)
            for name in SCHEMA if name not in ("model", "scan", "reach")}
    if "reach" in data:
        _section(path, "reach", data["reach"])  # validated here; toymc.analysis.reach reads it
    beams = Beams(**vals["beams"])
    own = processes.get(vals["production"]["process"]).keys
    prod = Production(**{k: v for k, v in vals["production"].items() if k in SCHEMA["production"]},
                      options={k: v for k, v in vals["production"].items()
                               if k not in SCHEMA["production"] and k in own})
    model = None
    if "model" in data:
        m = _section(path, "model", data["model"])
        _unused_keys(path, data, prod.process, m["name"])
        if m["charges"] is not None:
            m["charges"] = _charges(path, m["charges"])
        model = Model(**m)
        if "ctau" in data.get("llp", {}):
            raise ConfigError(path, "llp.ctau", data["llp"]["ctau"],
                              "not allowed with [model]: c*tau follows from the coupling")
        if prod.process == "b_meson" and model.g_bs is not None and model.br_production is not None:
            raise ConfigError(path, "model.br_production", model.br_production,
                              "give either model.g_bs or model.br_production, not both")
        if prod.process == "b_meson" and model.g_bs is None and model.br_production is None:
            raise ConfigError(path, "model.g_bs", None, "required with production.process = "
                              "'b_meson': the b -> s coupling g_bs [GeV^-1] or model.br_production "
                              "(BR(B -> K(*) X)); without either the sample has no cross-section")
        vals["llp"]["ctau"] = _model_ctau(path, model, vals["llp"], prod, beams)
    else:
        _unused_keys(path, data, prod.process, None)
        if vals["llp"]["ctau_mixture"] is not None:
            mix = vals["llp"]["ctau_mixture"]
            if vals["llp"]["ctau"] is not None:
                raise ConfigError(path, "llp.ctau_mixture", mix, "give llp.ctau or "
                                  "llp.ctau_mixture, not both")
            vals["llp"]["ctau"] = float(max(mix))
        elif vals["llp"]["ctau"] is None:
            raise ConfigError(path, "llp.ctau", None, "required (or give a [model] section); "
                              + _allowed(SCHEMA["llp"]["ctau"]))
    llp = LLP(**vals["llp"])
    if prod.photon_cos_min >= prod.photon_cos_max:
        raise ConfigError(path, "production.photon_cos_min", prod.photon_cos_min,
                          f"must be below production.photon_cos_max = {prod.photon_cos_max}")
    geometry = vals["detector"]["geometry"]
    detector = selection = None
    if geometry:
        if path:
            geometry = str((Path(path).parent / geometry).resolve())
        from toymc.detector.geometry import load_geometry, parse_selection

        detector = load_geometry(geometry)
        selection = parse_selection(data.get("selection", {}), path, detector)
    elif "selection" in data:
        raise ConfigError(path, "selection", "[selection]",
                          "needs detector.geometry: a selection applies to a detector")
    scan = _section(path, "scan", data["scan"]) if "scan" in data else None
    for sec in ("scan", "reach"):
        _list_or_range(path, sec, data.get(sec))
    cfg = RunConfig(run=RunSettings(**vals["run"]), beams=beams, production=prod, llp=llp,
                    geometry=geometry, detector=detector, selection=selection, model=model,
                    scan=scan, raw={k: data[k] for k in RAW_SECTIONS if k in data},
                    path=str(path))
    from toymc.engine.generator import check_kinematics

    check_kinematics(cfg)
    if model is not None and prod.process == "b_meson" and model.g_bs is not None:
        _check_production_br(path, model, llp.mass, prod.recoil)
    return cfg


def _check_production_br(path, model, mass, recoil):
    """BR(B -> K(*) X) from g_bs must be a branching fraction (<= 1)."""
    from toymc.physics.models.point import production_brs

    brs = [float(b) for b in production_brs(mass, recoil, model.g_bs, None)]
    if not max(brs) <= 1.0:
        raise ConfigError(path, "model.g_bs", model.g_bs,
                          f"gives BR(B -> {recoil} X) = {max(brs):.3g} > 1 at m = {mass:g} GeV: "
                          "a smaller coupling (BR is proportional to g_bs^2)")


def _model_ctau(path, model, llp, prod, beams):
    from toymc.physics.models.point import decay_properties

    ch = CHANNELS[llp["channel"]]
    if model_spin(model.name) != ch.spin:
        raise ConfigError(path, "llp.channel", llp["channel"],
                          f"a spin-{model_spin(model.name)} decay for model {model.name}: one of "
                          + ", ".join(n for n, c in CHANNELS.items()
                                      if c.spin == model_spin(model.name)))
    try:
        ctau, br, _ = decay_properties(model.name, llp["mass"], model.coupling, llp["channel"],
                                       model.kinetic_mixing, model.charges)
    except ConfigError as exc:
        raise ConfigError(path, exc.key, exc.value, exc.allowed) from None
    ctau = float(ctau)
    if not (0 < ctau < _INF) or br <= 0:
        raise ConfigError(path, "model.coupling", model.coupling,
                          f"gives c*tau = {ctau} cm and BR({llp['channel']}) = {float(br):.3g} at "
                          f"m = {llp['mass']} GeV: the channel must be open and c*tau finite")
    if ctau > R.MAX_CTAU:
        raise ConfigError(path, "model.coupling", model.coupling,
                          f"gives c*tau = {ctau:.3g} cm at m = {llp['mass']} GeV: at most "
                          f"{R.MAX_CTAU:g} cm (a larger coupling)")
    return ctau


def loads(text, path=""):
    """Parse TOML text and validate it."""
    return from_dict(R.parse_toml(text, path), path)


def load(path):
    """Read and validate the config file at `path`."""
    p = Path(path)
    if not p.is_file():
        raise InputFileError(f"{path}: config file not found")
    try:
        text = p.read_text()
    except (OSError, UnicodeDecodeError) as exc:
        raise InputFileError(f"{path}: cannot read config: {exc}") from None
    return loads(text, str(p))


def toml_value(v):
    """One TOML value (numbers incl. inf and nan, strings, booleans, lists, inline tables)."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (int, float)):
        if isinstance(v, float) and math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, Path):
        v = str(v)
    if isinstance(v, str):
        return '"' + v.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{k} = {toml_value(x)}" for k, x in v.items()) + "}"
    raise TypeError(type(v))


def dumps(data):
    """TOML text of {section: {key: value}}; nested tables become inline tables.

    None values are left out.  The inverse of tomllib.loads for such documents.
    """
    lines = []
    for name, table in data.items():
        lines.append(f"[{name}]")
        lines.extend(f"{k} = {toml_value(v)}" for k, v in table.items() if v is not None)
        lines.append("")
    return "\n".join(lines)


def to_toml(cfg):
    """The fully resolved config as TOML text (internal units, every key explicit).

    Keys that the production process does not use (:func:`process_keys`) are left out, so
    the text loads again.
    """
    sections = {
        "run": vars(cfg.run),
        "beams": {k: getattr(cfg.beams, k) for k in SCHEMA["beams"]},
        "production": {k: v for k, v in {**vars(cfg.production), **cfg.production.options}.items()
                       if k != "options" and process_keys().get(f"production.{k}",
                                                                 cfg.production.process)
                       == cfg.production.process},
        "llp": vars(cfg.llp),
        "detector": {"geometry": cfg.geometry},
    }
    if cfg.model is not None:
        sections["model"] = {k: v for k, v in vars(cfg.model).items() if v is not None}
    if cfg.scan is not None:
        sections["scan"] = {k: v for k, v in cfg.scan.items() if v is not None}
    sections.update(cfg.raw)
    lines = []
    for name, table in sections.items():
        lines.append(f"[{name}]")
        for k, v in table.items():
            if v is None:
                continue
            if name == "llp" and k == "ctau" and (cfg.model is not None or cfg.llp.ctau_mixture):
                lines.append(f"# ctau = {toml_value(v)}  (cm, from [model])")
                continue
            lines.append(f"{k} = {toml_value(v)}")
        lines.append("")
    return "\n".join(lines)


def schema_markdown():
    """The config reference table (Markdown) for the README."""
    return R.markdown((f"{sec}.{key}", s) for sec, keys in SCHEMA.items()
                      for key, s in keys.items())


if __name__ == "__main__":
    print(schema_markdown())
