"""The one validator of config tables, and the run-config loader.

:func:`check_table` validates any table of a config or geometry file against its
section of :mod:`toymc.config.schema`: an unknown key is refused with the allowed keys and
the closest name, each present key is checked by :func:`toymc.config.ranges.check` (type,
unit, range), a missing required key is refused, absent keys get their defaults.  Every
section reader ([selection] and the geometry file in :mod:`toymc.config.geometry`,
[tuning], [backgrounds], [reach], [scan]) and :func:`from_dict` use it.

:func:`load` reads a run config (:func:`toymc.config.toml.read_toml`) and
:func:`from_dict` turns it into a :class:`RunConfig` of frozen dataclasses with every value
in internal units (GeV, cm, ns, T, rad, fb).  Every mistake raises a
:class:`toymc.errors.ConfigError` naming the file, the key, the value and what is allowed.
Nothing in a config is evaluated.
"""

from dataclasses import dataclass, field, replace
from pathlib import Path

from toymc.config import ranges as R
from toymc.config.schema import SCHEMA
from toymc.config.tables import check_table
from toymc.config.toml import parse_toml, read_toml, toml_value
from toymc.errors import ConfigError
from toymc.physics import processes
from toymc.physics.models.point import VECTOR_MODELS, model_spin
from toymc.physics.production.beams import Beams

__all__ = (
    "LLP", "RAW_SECTIONS", "Model", "Production", "RunConfig", "RunSettings", "from_dict",
    "load", "loads", "process_keys", "to_toml", "list_or_range",
)

#: top-level sections of a run config
SECTIONS = tuple(s for s in SCHEMA if "." not in s)
#: sections that other commands read (tune-cuts; the detector's [selection]): kept as raw
#: tables in RunConfig.raw and written back by to_toml
RAW_SECTIONS = ("selection", "tuning", "backgrounds")


# ----------------------------------------------------------------------------- RunConfig


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


# ----------------------------------------------------------------------------- cross-key rules

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
                              + ", ".join(FERMIONS) + R.suggest(name, FERMIONS))
        out[name] = R.check(path, f"model.charges.{name}", q, s)
    return out


#: grid keys used only without the explicit list: list key -> keys of the range form
_RANGE_KEYS = {"masses": ("mass", ("mass_points", "mass_spacing")),
               "couplings": ("coupling", ("coupling_points",))}


def list_or_range(path, section, table):
    """Refuse the points/spacing keys of a grid axis given as an explicit list."""
    if not isinstance(table, dict):
        return
    for lst, (axis, keys) in _RANGE_KEYS.items():
        for key in keys:
            if lst in table and key in table and key in SCHEMA[section]:
                raise ConfigError(path, f"{section}.{key}", table[key],
                                  f"used only with {section}.{axis}_min/{axis}_max ({section}."
                                  f"{lst} lists the values); remove it")


def _section(path, name, data, spec=None):
    return check_table(path, name, data.get(name, {}), SCHEMA[name] if spec is None else spec)


def from_dict(data, path=""):
    """Validate a parsed TOML document (dict) and return a :class:`RunConfig`."""
    from toymc.config.kinematics import check_kinematics, check_production_br, model_ctau

    for name in data:
        if name not in SECTIONS:
            raise ConfigError(path, name, "[section]", "unknown section; allowed: "
                              + ", ".join(SECTIONS) + R.suggest(name, SECTIONS))
    vals = {name: _section(path, name, data,
                           _production_spec() if name == "production" else None)
            for name in ("run", "beams", "production", "llp", "detector")}
    if "reach" in data:
        _section(path, "reach", data)  # validated here; toymc.config.reach reads it
    beams = Beams(**vals["beams"])
    own = processes.get(vals["production"]["process"]).keys
    prod = Production(**{k: v for k, v in vals["production"].items() if k in SCHEMA["production"]},
                      options={k: v for k, v in vals["production"].items()
                               if k not in SCHEMA["production"] and k in own})
    model = None
    if "model" in data:
        m = _section(path, "model", data)
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
        vals["llp"]["ctau"] = model_ctau(path, model, vals["llp"])
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
                              + R.allowed(SCHEMA["llp"]["ctau"]))
    llp = LLP(**vals["llp"])
    if prod.photon_cos_min >= prod.photon_cos_max:
        raise ConfigError(path, "production.photon_cos_min", prod.photon_cos_min,
                          f"must be below production.photon_cos_max = {prod.photon_cos_max}")
    geometry = vals["detector"]["geometry"]
    detector = selection = None
    if geometry:
        if path:
            geometry = str((Path(path).parent / geometry).resolve())
        from toymc.config.geometry import load_geometry, parse_selection

        detector = load_geometry(geometry)
        selection = parse_selection(data.get("selection", {}), path, detector)
    elif "selection" in data:
        raise ConfigError(path, "selection", "[selection]",
                          "needs detector.geometry: a selection applies to a detector")
    scan = _section(path, "scan", data) if "scan" in data else None
    for sec in ("scan", "reach"):
        list_or_range(path, sec, data.get(sec))
    cfg = RunConfig(run=RunSettings(**vals["run"]), beams=beams, production=prod, llp=llp,
                    geometry=geometry, detector=detector, selection=selection, model=model,
                    scan=scan, raw={k: data[k] for k in RAW_SECTIONS if k in data},
                    path=str(path))
    check_kinematics(cfg)
    if model is not None and prod.process == "b_meson" and model.g_bs is not None:
        check_production_br(path, model, llp.mass, prod.recoil)
    return cfg


def loads(text, path=""):
    """Parse TOML text and validate it."""
    return from_dict(parse_toml(text, path), path)


def load(path):
    """Read and validate the config file at `path`."""
    return from_dict(read_toml(path, "config"), str(Path(path)))


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
