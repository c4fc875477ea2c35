"""The [reach] section and the reader of a reach config.

Keys, units and ranges are in ``SCHEMA["reach"]`` (:mod:`toymc.config.schema`); the yields
and limits are computed by :mod:`toymc.analysis.reach`, whose docstring describes the
efficiency sources.
"""

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from toymc.config.loader import list_or_range
from toymc.config.ranges import MAX_GRID_CELLS
from toymc.config.schema import SCHEMA
from toymc.config.tables import check_table, missing_section_hint
from toymc.config.toml import read_toml
from toymc.errors import ConfigError

__all__ = ("REACH_SCHEMA", "SOURCE_KEYS", "ReachGrid", "load_reach", "parse_reach",
           "unused_source_keys")

#: key -> specification of the [reach] section
REACH_SCHEMA = SCHEMA["reach"]
#: [reach] keys that only some efficiency sources use
SOURCE_KEYS = {"events_per_mass": ("fold", "mc"), "reco_factor": ("fold",),
               "efficiency_step": ("mc",), "mc_ctau_min": ("mc",), "mc_ctau_max": ("mc",),
               "ess_min_fraction": ("mc",), "map": ("map",)}


@dataclass(frozen=True)
class ReachGrid:
    """The validated [reach] section.

    Attributes
    ----------
    masses : numpy.ndarray
        Grid masses, GeV, strictly increasing.
    couplings : numpy.ndarray
        Grid couplings (model's unit), strictly increasing, > 0.
    lumi : float
        Integrated luminosity, fb^-1.
    background, background_uncertainty, cl, limit
        Expected background (events), its relative uncertainty, confidence level,
        expected-limit method (toymc.analysis.stats).
    efficiency, map_path, events_per_mass, reco_factor, efficiency_step,
    mc_ctau_min, mc_ctau_max, ess_min_fraction
        Efficiency source and its settings (see :mod:`toymc.analysis.reach`); lengths in cm.
    """

    masses: np.ndarray
    couplings: np.ndarray
    lumi: float
    background: float
    cl: float
    limit: str
    background_uncertainty: float
    efficiency: str
    map_path: str
    events_per_mass: int
    reco_factor: float
    efficiency_step: str
    mc_ctau_min: float
    mc_ctau_max: float
    ess_min_fraction: float


def _increasing(path, key, vals, positive_allowed):
    arr = np.asarray(vals, dtype=float)
    if arr.size < 2:
        raise ConfigError(path, key, list(vals), "at least two grid points")
    if not np.all(np.isfinite(arr)) or np.any(arr <= 0):
        raise ConfigError(path, key, list(vals), positive_allowed)
    if np.any(np.diff(arr) <= 0):
        raise ConfigError(path, key, list(vals), "strictly increasing values (sorted, no "
                          "duplicates)")
    return arr


def parse_reach(table, path=""):
    """Validate a raw ``[reach]`` table (from tomllib) into a :class:`ReachGrid`.

    Parameters
    ----------
    table : dict
        The ``[reach]`` table; keys in :data:`REACH_SCHEMA`.
    path : str
        Config file, for messages and to resolve a relative ``map``.

    Raises
    ------
    toymc.errors.ConfigError
        Naming ``reach.<key>``: unknown key, wrong type or unit, value out of
        range, a grid with fewer than two points, unsorted or non-positive
        masses or couplings, both a list and min/max given, or neither.
    """
    if table is None:
        raise ConfigError(path, "reach", None, "a [reach] section (keys: "
                          + ", ".join(REACH_SCHEMA) + ")")
    v = check_table(path, "reach", table, REACH_SCHEMA)
    list_or_range(path, "reach", table)

    def axis(name, list_key, unit_hint, points_key, spacing):
        lst, lo, hi = v[list_key], v[name + "_min"], v[name + "_max"]
        if lst is not None:
            if lo is not None or hi is not None:
                raise ConfigError(path, f"reach.{list_key}", lst, f"give either "
                                  f"reach.{list_key} or reach.{name}_min/{name}_max, not both")
            return _increasing(path, f"reach.{list_key}", lst, f"finite {unit_hint} > 0")
        if lo is None or hi is None:
            key = f"reach.{name}_min" if lo is None else f"reach.{name}_max"
            raise ConfigError(path, key, None, f"required (or give reach.{list_key}): "
                              f"{unit_hint} > 0")
        if not hi > lo:
            raise ConfigError(path, f"reach.{name}_max", hi, f"above reach.{name}_min = {lo:g}")
        n = v[points_key]
        return np.geomspace(lo, hi, n) if spacing == "log" else np.linspace(lo, hi, n)

    masses = axis("mass", "masses", "masses (GeV)", "mass_points", v["mass_spacing"])
    couplings = axis("coupling", "couplings", "couplings", "coupling_points", "log")
    cells = masses.size * couplings.size
    if cells > MAX_GRID_CELLS:
        key = "reach.couplings" if v["couplings"] is not None else "reach.coupling_points"
        raise ConfigError(path, key, couplings.size if v["couplings"] is None else
                          f"{couplings.size} couplings", f"at most {MAX_GRID_CELLS:,} grid "
                          f"points in all: {masses.size} masses x {couplings.size} couplings = "
                          f"{cells:,}")
    if v["mc_ctau_min"] >= v["mc_ctau_max"]:
        raise ConfigError(path, "reach.mc_ctau_max", v["mc_ctau_max"],
                          f"above reach.mc_ctau_min = {v['mc_ctau_min']:g} cm")
    map_path = v["map"]
    if map_path and path and not Path(map_path).is_absolute():
        map_path = str((Path(path).parent / map_path).resolve())
    return ReachGrid(masses=masses, couplings=couplings, lumi=v["lumi"],
                     background=v["background"], cl=v["cl"], limit=v["limit"],
                     background_uncertainty=v["background_uncertainty"],
                     efficiency=v["efficiency"], map_path=map_path,
                     events_per_mass=v["events_per_mass"], reco_factor=v["reco_factor"],
                     efficiency_step=v["efficiency_step"], mc_ctau_min=v["mc_ctau_min"],
                     mc_ctau_max=v["mc_ctau_max"], ess_min_fraction=v["ess_min_fraction"])


def unused_source_keys(path, table, source):
    """Refuse [reach] keys the config's own efficiency source does not use (a source chosen
    on the command line may leave the other sources' keys in place)."""
    for key, sources in SOURCE_KEYS.items():
        if key in table and source not in sources:
            raise ConfigError(path, f"reach.{key}", table[key], "used only with reach."
                              f"efficiency = {' or '.join(repr(x) for x in sources)} (this "
                              f"config: {source!r}); remove it")


def load_reach(config):
    """Read a reach config: (the other sections as parsed TOML, the raw [reach] table or
    None, the file name)."""
    p = str(Path(config))
    data = read_toml(config, "config")
    reach = data.pop("reach", None)
    hint = missing_section_hint("reach", data) if reach is None else ""
    if hint:
        raise ConfigError(p, "reach", None, "a [reach] section" + hint)
    return data, reach, p
