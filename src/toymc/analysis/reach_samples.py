"""The samples behind the reach's efficiency: a truth sample per mass folded analytically
(``"fold"``), or detector samples at a ladder of reference c*tau values reweighted to every
grid c*tau (``"mc"``).  See :mod:`toymc.analysis.reach` for the method and its limits.

Each function returns one mass row of the grid: ``eps``, ``err`` and a status per c*tau
(``"fold"``, ``"reweight"``, ``"low_ess"``, ``"no_decay"``).
"""

import math as _math
import warnings as _warnings

import numpy as _np

from toymc.config import loader as _config
from toymc.errors import ConfigError as _ConfigError

__all__ = ("fold_row", "fold_window", "ladder", "mc_row", "sample_config", "selection_of")


def fold_window(selection, geometry=None):
    """Fiducial window (cm) and :class:`toymc.detector.profile.Profile` of a detector selection.

    The profile comes from :func:`toymc.detector.vertexing.fold_profile`: flat
    and linear one to one, tabulated points times eps0.  A ``"hits"`` profile
    depends on the tracks; it becomes a radius table for stiff radial tracks
    (an upper estimate of the efficiency) and a warning says so.

    Parameters
    ----------
    selection : toymc.detector.geometry.Selection
    geometry : toymc.detector.geometry.Geometry, optional
        Needed for a ``"hits"`` profile.

    Returns
    -------
    (r_min, r_max, z_min, z_max), toymc.detector.profile.Profile
    """
    from toymc.detector.vertexing import fold_profile

    if selection.profile.kind == "hits":
        if geometry is None:
            raise _ConfigError(None, "selection.profile.kind", "hits",
                               "flat, linear or tabulated without a geometry")
        _warnings.warn("reach: the 'hits' vertex profile is folded as a radius table for stiff "
                       "radial tracks, an upper estimate of the efficiency; use --efficiency mc "
                       "for the per-track profile", UserWarning, stacklevel=2)
    win = (selection.r_min, selection.r_max, selection.z_min, selection.z_max)
    return win, fold_profile(selection, geometry)


def selection_of(cfg):
    """The [selection] of a config, required by the fold source (ConfigError without it)."""
    if cfg.selection is None:
        raise _ConfigError(cfg.path, "selection", None,
                           "a [detector] geometry and a [selection] section (fiducial window "
                           "and vertex profile) for the fold source")
    return cfg.selection


def sample_config(data, path, mass, ctau, events, seed, geometry):
    """The run config of one reach sample: the config's tables without [model] and [scan]
    at (mass, c*tau), with `events`, `seed` and `geometry` ("" for a truth-only sample,
    which also drops [selection])."""
    d = {k: (dict(v) if isinstance(v, dict) else v) for k, v in data.items()}
    d.pop("model", None)
    d.pop("scan", None)
    if not geometry:
        d.pop("selection", None)  # a truth-only sample has no detector to select with
    d["llp"] = dict(d["llp"], mass=float(mass), ctau=float(ctau))
    d["detector"] = {"geometry": geometry}
    d["run"] = dict(d.get("run", {}), events=int(events), seed=int(seed))
    return _config.from_dict(d, path)


def _truth_kinematics(cfg):
    from toymc.engine.generator import iter_chunks

    cols = {k: [] for k in ("llp_vx", "llp_vy", "llp_vz", "llp_px", "llp_py", "llp_pz", "llp_m",
                            "w_gen")}
    for chunk in iter_chunks(cfg):
        for k, lst in cols.items():
            lst.append(chunk.event[k])
    c = {k: _np.concatenate(v) for k, v in cols.items()}
    p = _np.sqrt(c["llp_px"] ** 2 + c["llp_py"] ** 2 + c["llp_pz"] ** 2)
    return (c["llp_vx"], c["llp_vy"], c["llp_vz"], c["llp_px"], c["llp_py"], c["llp_pz"],
            p / c["llp_m"], c["w_gen"])


def fold_row(cfg, window, profile, ctaus, reco_factor):
    """eps, err, status for one mass row of c*tau values."""
    x0, y0, z0, ux, uy, uz, bg, w = _truth_kinematics(cfg)
    from toymc.detector.fold import fold_efficiency

    eps = _np.zeros(ctaus.size)
    err = _np.zeros(ctaus.size)
    ok = _np.isfinite(ctaus) & (ctaus > 0)
    if _np.any(ok):
        e, s = fold_efficiency(x0, y0, z0, ux, uy, uz, bg, ctaus[ok], *window, profile,
                               weights=w)
        eps[ok] = reco_factor * e
        err[ok] = reco_factor * s
    return eps, err, _np.where(ok, "fold", "no_decay")


def ladder(ctaus, lo, hi):
    """Reference c*tau values (cm): the decades 10^k covering `ctaus`, within [lo, hi]."""
    c = ctaus[_np.isfinite(ctaus) & (ctaus > 0)]
    if c.size == 0:
        return _np.array([])
    k_lo = _math.ceil(_math.log10(max(c.min(), lo)) - 1e-12)
    k_hi = _math.ceil(_math.log10(min(c.max(), hi)) - 1e-12)
    refs = 10.0 ** _np.arange(k_lo, max(k_hi, k_lo) + 1)
    refs = refs[(refs >= lo * (1 - 1e-12)) & (refs <= hi * (1 + 1e-12))]
    return refs if refs.size else _np.array([min(max(c.min(), lo), hi)])


def mc_row(data, cfg, mass, ctaus, grid, seed_of):
    """eps, err, status, ess for one mass row from detector samples and reweighting."""
    from toymc.analysis.reweight import effective_sample_size, reweighted_efficiency, weights
    from toymc.engine.api import detector_for
    from toymc.engine.generator import iter_chunks

    refs = ladder(ctaus, grid.mc_ctau_min, grid.mc_ctau_max)
    eps = _np.zeros(ctaus.size)
    err = _np.zeros(ctaus.size)
    ess = _np.zeros(ctaus.size)
    status = _np.full(ctaus.size, "no_decay", dtype=object)
    ok = _np.isfinite(ctaus) & (ctaus > 0)
    if not refs.size:
        return eps, err, status.astype(str), ess
    use = _np.searchsorted(refs, ctaus * (1 - 1e-12))  # smallest ref >= ctau
    use = _np.clip(use, 0, refs.size - 1)
    key = f"cut_{grid.efficiency_step}"
    for r_i, c0 in enumerate(refs):
        targets = _np.flatnonzero(ok & (use == r_i))
        if not targets.size:
            continue
        scfg = sample_config(data, cfg.path, mass, c0, grid.events_per_mass,
                              seed_of(mass, c0), cfg.geometry)
        det = detector_for(scfg)
        if det is None:
            raise _ConfigError(cfg.path, "detector.geometry", "", "a geometry: the mc efficiency "
                               "source needs the detector")
        ct, passed = [], []
        for chunk in iter_chunks(scfg, detector=det):
            if key not in chunk.event:
                raise _ConfigError(cfg.path, "reach.efficiency_step", grid.efficiency_step,
                                   "a cutflow step: one of " + ", ".join(
                                       k[4:] for k in chunk.event if k.startswith("cut_")))
            ct.append(chunk.event["llp_ct"])
            passed.append(chunk.event[key].astype(bool))
        ct = _np.concatenate(ct)
        passed = _np.concatenate(passed)
        n = ct.size
        for j in targets:
            w = weights(ct, c0, float(ctaus[j]))
            if not _np.all(_np.isfinite(w)) or not w.sum() > 0:
                status[j] = "low_ess"
                continue
            ess[j] = effective_sample_size(w)
            if ess[j] < grid.ess_min_fraction * n:
                status[j] = "low_ess"
                continue
            eps[j], err[j] = reweighted_efficiency(passed, w)
            status[j] = "reweight"
    return eps, err, status.astype(str), ess
