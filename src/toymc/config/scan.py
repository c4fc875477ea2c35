"""The [scan] section: the mass x c*tau grid of ``toymc scan`` and its sampling settings.

Keys, units and ranges are in ``SCHEMA["scan"]`` (:mod:`toymc.config.schema`), validated
when the config is loaded; :func:`grid_from_config` checks the grid as a whole (a geometry,
a known cutflow step, masses or their range, the grid size, the mixture size, every mass
generable).  The scan itself is :mod:`toymc.analysis.scan`.
"""

import math

import numpy as np

from toymc.config.loader import from_dict, to_toml
from toymc.config.ranges import MAX_GRID_CELLS, MAX_MIXTURE
from toymc.config.toml import parse_toml
from toymc.errors import ConfigError

__all__ = ("Grid", "grid_from_config", "mixture_size", "point_data")


class Grid:
    """Masses (GeV) and c*tau values (cm) of a scan, with its sampling settings."""

    def __init__(self, masses, ctaus, events_per_mass, events_direct, mixture_ratio,
                 ess_min_fraction, efficiency_step):
        self.masses = [float(m) for m in masses]
        self.ctaus = [float(c) for c in ctaus]
        self.events_per_mass = int(events_per_mass)
        self.events_direct = int(events_direct) or int(events_per_mass)
        self.mixture_ratio = float(mixture_ratio)
        lo, hi = min(self.ctaus), max(self.ctaus)
        k = mixture_size(lo, hi, self.mixture_ratio)
        self.mixture = [float(v) for v in np.geomspace(lo, hi, k)] if k > 1 else [hi]
        self.ess_min_fraction = float(ess_min_fraction)
        self.efficiency_step = efficiency_step

    def as_dict(self):
        return dict(vars(self))


def mixture_size(lo, hi, ratio):
    """Components of the exponential mixture over c*tau [lo, hi] with neighbours <= ratio apart."""
    return max(1, int(math.ceil(math.log(hi / lo) / math.log(ratio) - 1e-9)) + 1)


def grid_from_config(cfg):
    """The :class:`Grid` of a config's [scan] section (ConfigError if absent or bad)."""
    s = cfg.scan
    if s is None:
        raise ConfigError(cfg.path, "scan", None, "a [scan] section (see the README)")
    if not cfg.geometry:
        raise ConfigError(cfg.path, "detector.geometry", "", "a geometry: a scan needs the detector")
    from toymc.detector.response import CUT_STEPS

    if s["efficiency_step"] not in CUT_STEPS:
        raise ConfigError(cfg.path, "scan.efficiency_step", s["efficiency_step"],
                          "a cutflow step: one of " + ", ".join(CUT_STEPS))
    if s["masses"] is not None:
        masses = s["masses"]
        if s["mass_min"] is not None or s["mass_max"] is not None:
            raise ConfigError(cfg.path, "scan.masses", masses,
                              "give either scan.masses or scan.mass_min/mass_max, not both")
    else:
        if s["mass_min"] is None or s["mass_max"] is None:
            raise ConfigError(cfg.path, "scan.mass_min", s["mass_min"],
                              "scan.mass_min and scan.mass_max (or scan.masses) are required")
        if s["mass_min"] >= s["mass_max"]:
            raise ConfigError(cfg.path, "scan.mass_min", s["mass_min"],
                              f"below scan.mass_max = {s['mass_max']}")
        masses = list(np.linspace(s["mass_min"], s["mass_max"], s["mass_points"]))
    if len(masses) < 2 or any(b <= a for a, b in zip(masses, masses[1:])):
        raise ConfigError(cfg.path, "scan.masses", masses,
                          "at least two masses, strictly increasing, without duplicates")
    if s["ctau_min"] >= s["ctau_max"]:
        raise ConfigError(cfg.path, "scan.ctau_min", s["ctau_min"],
                          f"below scan.ctau_max = {s['ctau_max']}")
    cells = len(masses) * s["ctau_points"]
    if cells > MAX_GRID_CELLS:
        raise ConfigError(cfg.path, "scan.ctau_points", s["ctau_points"],
                          f"at most {MAX_GRID_CELLS:,} grid points in all: {len(masses)} masses x "
                          f"{s['ctau_points']} c*tau values = {cells:,}")
    ctaus = list(np.geomspace(s["ctau_min"], s["ctau_max"], s["ctau_points"]))
    k = mixture_size(s["ctau_min"], s["ctau_max"], s["mixture_ratio"])
    if k > MAX_MIXTURE:
        raise ConfigError(cfg.path, "scan.mixture_ratio", s["mixture_ratio"],
                          f"gives {k} mixture components over c*tau {s['ctau_min']:g} to "
                          f"{s['ctau_max']:g} cm: at most {MAX_MIXTURE} (a larger ratio or a "
                          "narrower c*tau range)")
    for m in masses:  # every mass must be generable: reuse the generator's checks
        from_dict(point_data(cfg, mass=m, ctau=ctaus[0]), cfg.path)
    return Grid(masses, ctaus, s["events_per_mass"], s["events_direct"], s["mixture_ratio"],
                s["ess_min_fraction"], s["efficiency_step"])


def point_data(cfg, mass, ctau):
    """The parsed TOML of `cfg` for one grid point: truth mass `mass` and c*tau `ctau` (or a
    list: a mixture), without [model] and [scan]."""
    data = parse_toml(to_toml(cfg), cfg.path)
    data["llp"]["mass"] = mass
    data.pop("model", None)
    data["llp"].pop("ctau_mixture", None)
    if isinstance(ctau, (list, tuple)):
        data["llp"].pop("ctau", None)
        data["llp"]["ctau_mixture"] = list(ctau)
    else:
        data["llp"]["ctau"] = ctau
    data.pop("scan", None)
    data["detector"]["geometry"] = cfg.geometry
    return data
