"""The [tuning] section and the reader of a tune-cuts config.

Keys, units and ranges are in ``SCHEMA["tuning"]`` (and ``SCHEMA["tuning.r_min"]`` for the
``{start, stop, points}`` form of r_min and r_max) in :mod:`toymc.config.schema`; what the
tuner does with them is in :mod:`toymc.analysis.tuning`.
"""

import itertools
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from toymc.config import ranges as R
from toymc.config.loader import from_dict
from toymc.config.schema import SCHEMA
from toymc.config.tables import check_table, require_section
from toymc.config.toml import read_toml
from toymc.errors import ConfigError

__all__ = ("TUNING_CHANNELS", "TUNING_RANGE_SCHEMA", "TUNING_SCHEMA", "TuningConfig",
           "load_tuning", "parse_tuning")

#: [tuning]: key -> specification.  r_min and r_max may also be {start, stop, points}
#: tables (TUNING_RANGE_SCHEMA); r_min x r_max x windows <= 10^6.
TUNING_SCHEMA = SCHEMA["tuning"]
#: the {start, stop, points} form of r_min and r_max
TUNING_RANGE_SCHEMA = SCHEMA["tuning.r_min"]
#: decay channels with a two-track vertex whose candidate mass the tuner forms
TUNING_CHANNELS = ("pi_pi_pi0", "pi_pi", "e_e", "mu_mu")


@dataclass(frozen=True)
class TuningConfig:
    """The [tuning] section in internal units (GeV, cm, fb, fb^-1)."""

    masses: tuple
    r_min: tuple
    r_max: tuple
    windows: tuple
    fom: str = "punzi"
    punzi_a: float = 3.0
    cl: float = 0.9
    background_uncertainty: float = 0.0
    signal_sigma: float = 0.0
    lumi: float = 1.0
    signal_events: int = 100_000
    background_events: dict = None
    min_mc_events: int = 10
    seed: int = 1
    ks_veto: float = 0.010
    lambda_veto: float = 0.004
    #: output file stem given in the config; None: the command's default (tune_<config stem>)
    output: str = None


def _fail(path, key, value, allowed):
    raise ConfigError(path, key, value, allowed)


def _grid(path, key, v):
    """A list of values, or a table {start, stop, points} (linear, both ends included)."""
    if isinstance(v, dict):
        for k in v:
            if k not in TUNING_RANGE_SCHEMA:
                _fail(path, f"{key}.{k}", v[k], "one of start, stop, points")
        for k in TUNING_RANGE_SCHEMA:
            if k not in v:
                _fail(path, f"{key}.{k}", None, "required in a {start, stop, points} range")
        a, b, n = (R.check(path, f"{key}.{k}", v[k], s) for k, s in TUNING_RANGE_SCHEMA.items())
        if n > 1 and not b > a:
            _fail(path, key + ".stop", v["stop"], f"above start ({a:g}): an empty scan range")
        vals = np.linspace(a, b, n) if n > 1 else np.array([a])
        return tuple(float(x) for x in vals)
    if not isinstance(v, list) or not v:
        _fail(path, key, v, "a non-empty list of values or a table {start, stop, points}")
    vals = tuple(R.check(path, key, v, TUNING_SCHEMA[key.split(".")[-1]]))
    if any(b <= a for a, b in itertools.pairwise(vals)):
        _fail(path, key, v, "strictly increasing values")
    return vals


def parse_tuning(raw, path=None, run_seed=1, species=()):
    """Validate the raw [tuning] table.

    Parameters
    ----------
    raw : dict
        Keys of :data:`TUNING_SCHEMA` (see the README): ``masses`` (list
        of energies), ``r_min``, ``r_max`` (lists of lengths or {start, stop,
        points}), ``windows`` (half-widths in units of sigma_m), ``fom``,
        ``punzi_a``, ``cl``, ``signal_sigma`` (area), ``lumi`` (inverse
        area, e.g. "1 ab-1"), ``signal_events``, ``background_events`` (an
        integer for every species or a table species -> integer),
        ``min_mc_events``, ``seed``, ``ks_veto``, ``lambda_veto``
        (energies), ``output`` (file stem; None when absent: the command chooses
        ``tune_<config stem>``).
    path : str, optional
    run_seed : int
        Default seed ([run] seed).
    species : sequence of str
        Species present in [backgrounds] (for ``background_events``).

    Returns
    -------
    TuningConfig

    Raises
    ------
    ConfigError
    """
    pre = "tuning."
    S = TUNING_SCHEMA
    v = check_table(path, "tuning", raw, S, extra=("r_min", "r_max", "background_events"))
    r_min = _grid(path, pre + "r_min", raw["r_min"])
    r_max = _grid(path, pre + "r_max", raw["r_max"])
    if min(r_min) >= max(r_max):
        _fail(path, pre + "r_min", raw["r_min"],
              f"values below the largest r_max ({max(r_max):g} cm): no r_min < r_max pair")
    w = v["windows"]
    cells = len(r_min) * len(r_max) * len(w)
    if cells > R.MAX_GRID_CELLS:
        _fail(path, pre + "r_min", f"{len(r_min)} cuts", f"at most {R.MAX_GRID_CELLS:,} "
              f"grid points in all: {len(r_min)} r_min x {len(r_max)} r_max x {len(w)} windows "
              f"= {cells:,}")
    fom = v["fom"]
    if "signal_sigma" in raw:
        sig = v["signal_sigma"]
        if fom != "s_over_sqrt_b":
            _fail(path, pre + "signal_sigma", raw["signal_sigma"],
                  f"used only with fom = 's_over_sqrt_b' (this config: '{fom}'); remove it")
    elif fom == "s_over_sqrt_b":
        _fail(path, pre + "signal_sigma", None,
              "required for fom = 's_over_sqrt_b': the signal cross-section times BR (area)")
    else:
        sig = 0.0
    for key, f in (("punzi_a", "punzi"), ("cl", "upper_limit"), ("background_uncertainty", "upper_limit")):
        if key in raw and fom != f:
            _fail(path, pre + key, raw[key], f"used only with fom = '{f}' (this config: "
                  f"'{fom}'); remove it")
    be = v["background_events"]
    if isinstance(be, dict):
        for k in be:
            if k not in species:
                _fail(path, f"{pre}background_events.{k}", be[k],
                      "a species of [backgrounds]: " + ", ".join(species))
        bev = {s: R.check(path, f"{pre}background_events.{s}",
                          be.get(s, S["background_events"]["default"]),
                          S["background_events"]) for s in species}
    else:
        n = R.check(path, pre + "background_events", be, S["background_events"])
        bev = {s: n for s in species}
    seed = v["seed"]
    return TuningConfig(
        masses=tuple(v["masses"]), r_min=r_min, r_max=r_max, windows=tuple(float(x) for x in w),
        fom=fom, punzi_a=float(v["punzi_a"]), cl=float(v["cl"]),
        background_uncertainty=float(v["background_uncertainty"]), signal_sigma=sig,
        lumi=v["lumi"], signal_events=v["signal_events"], background_events=bev,
        min_mc_events=v["min_mc_events"], seed=run_seed if seed is None else seed,
        ks_veto=v["ks_veto"], lambda_veto=v["lambda_veto"],
        output=v["output"] if "output" in raw else None,
    )


def load_tuning(path):
    """Read a tuning config file: (RunConfig, TuningConfig, BackgroundConfig).

    The [tuning] and [backgrounds] tables are validated here; the rest goes
    to :func:`toymc.config.loader.from_dict`.
    """
    from toymc.config.backgrounds import parse_backgrounds
    from toymc.config.kinematics import check_kinematics

    data = read_toml(path, "config")
    p = str(Path(path))
    for name in ("tuning", "backgrounds"):
        require_section(p, data, name, f"a [{name}] section is required")
    raw_t = data.pop("tuning")
    raw_b = data.pop("backgrounds")
    cfg = from_dict(data, p)
    if cfg.llp.channel not in TUNING_CHANNELS:
        raise ConfigError(p, "llp.channel", cfg.llp.channel,
                          "a channel with a two-track vertex for tuning: "
                          + ", ".join(TUNING_CHANNELS))
    bcfg = parse_backgrounds(raw_b, p)
    tcfg = parse_tuning(raw_t, p, cfg.run.seed, tuple(bcfg.species))
    for i, m in enumerate(tcfg.masses):
        try:
            check_kinematics(cfg.with_llp(mass=m))
        except ConfigError as exc:
            raise ConfigError(p, f"tuning.masses[{i}]", m, exc.allowed) from None
    return cfg, tcfg, bcfg
