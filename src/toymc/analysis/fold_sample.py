"""Analytic fold of a config's truth sample: efficiency curves and per-event decay weights.

Two ways to get the probability that a long-lived particle decays inside the
fiducial window and that its vertex is accepted by the efficiency profile:

*Sampling* (what ``toymc generate`` does): each event gets one decay point
drawn from the exponential decay law, the window is applied to the
reconstructed vertex (true point for photon-only decays) and the profile
accepts it at random (``vtx_found``) or weights it (``vtx_w``).

*Per-event decay weights* (:func:`decay_weight`, :func:`fold_curve`): each
event keeps its production point and direction and gets the fold probability
``P = Int_window (1/lambda) exp(-L/lambda) eps(r(L)) dL``,
``lambda = beta*gamma*c*tau`` (exponential decay law, PDG review "Kinematics",
sec. 40.4.1; integral evaluated by :func:`toymc.detector.fold.fold_probability`).

When to use which
-----------------
* Weights have far lower variance where few sampled decays land in the window:
  at very short c*tau (most decay before ``r_min``) and at very long c*tau (most
  decay outside ``r_max``).  There a sampled sample of n events holds ~ n*eff
  accepted events, while every weighted event contributes.  One truth sample
  gives the whole c*tau curve.
* Weights assume that the efficiency factorises into ``profile(true radius) x
  window(true decay point)`` along the straight flight line.  They ignore every
  effect that depends on where exactly the particle decayed: the hits a track
  gets (and so whether it is found), vertex smearing at the window edges,
  daughters leaving the acceptance, photon impact points and the di-photon mass
  shift.  Multiply the weight by a reco-level efficiency only where those are
  small, otherwise use sampled decays with the full detector response.
"""

import math as _math
import re as _re

import numpy as _np

from toymc.config import ranges as _R
from toymc.detector.fold import decay_weight, fold_inputs  # per-event weights: below the engine
from toymc.errors import ConfigError as _ConfigError

__all__ = (
    "decay_weight",
    "fold_config",
    "fold_curve",
    "fold_inputs",
    "fold_setup",
    "parse_ctau_grid",
    "truth_sample",
)

_GRID_RE = _re.compile(r"^\s*([^:]+):([^:]+):([^:]+)\s*$")


def parse_ctau_grid(text):
    """Parse ``MIN:MAX:N`` into N log-spaced c*tau values in cm, or one value ``CTAU``.

    Parameters
    ----------
    text : str
        ``MIN:MAX:N`` with ``0 < MIN < MAX`` (cm) and integer ``N >= 2``, or a
        single c*tau > 0 in cm.

    Returns
    -------
    ndarray of float64
        ``numpy.geomspace(MIN, MAX, N)``, or the single value, cm.

    Raises
    ------
    toymc.errors.ConfigError
        Bad syntax, non-positive or non-finite values, ``MIN >= MAX``, ``N < 2``.

    Examples
    --------
    >>> parse_ctau_grid("1:100:3")
    array([  1.,  10., 100.])
    >>> parse_ctau_grid("20")
    array([20.])
    """
    allowed = (f"a c*tau > 0 in cm, or MIN:MAX:N with 0 < MIN < MAX <= {_R.MAX_CTAU:g} in cm "
               f"and an integer 2 <= N <= {_R.MAX_GRID_AXIS}")
    if ":" not in str(text):
        try:
            one = float(text)
        except ValueError:
            raise _ConfigError(None, "--ctau", text, allowed) from None
        if not (_math.isfinite(one) and 0.0 < one <= _R.MAX_CTAU):
            raise _ConfigError(None, "--ctau", text,
                               f"a positive finite c*tau (cm), at most {_R.MAX_CTAU:g}")
        return _np.array([one])
    m = _GRID_RE.match(str(text))
    if not m:
        raise _ConfigError(None, "--ctau", text, allowed)
    try:
        lo, hi = float(m.group(1)), float(m.group(2))
        n = int(m.group(3))
    except ValueError:
        raise _ConfigError(None, "--ctau", text, allowed) from None
    if not (_math.isfinite(lo) and _math.isfinite(hi)) or lo <= 0.0 or hi <= 0.0 or (
            hi > _R.MAX_CTAU):
        raise _ConfigError(None, "--ctau", text,
                           f"positive finite MIN and MAX <= {_R.MAX_CTAU:g} (cm)")
    if not lo < hi:
        raise _ConfigError(None, "--ctau", text, "MIN < MAX (an increasing grid)")
    if not 2 <= n <= _R.MAX_GRID_AXIS:
        raise _ConfigError(None, "--ctau", text,
                           f"an integer N >= 2 and <= {_R.MAX_GRID_AXIS} points")
    return _np.geomspace(lo, hi, n)


def truth_sample(cfg, events, seed):
    """Truth-only event columns of a config (no detector response).

    Parameters
    ----------
    cfg : toymc.config.loader.RunConfig
    events, seed : int

    Returns
    -------
    dict of ndarray
        The per-event truth columns of :data:`toymc.io.columns.TRUTH_COLUMNS`.
    """
    from toymc.engine.generator import iter_chunks

    c = cfg.with_run(events=int(events), seed=int(seed))
    cols = {}
    for chunk in iter_chunks(c, detector=None):  # only the per-event columns are kept
        for k, v in chunk.event.items():
            cols.setdefault(k, []).append(v)
    return {k: _np.concatenate(v) for k, v in cols.items()}


def _window_profile(selection, geometry):
    from toymc.detector.vertexing import fold_profile

    return (selection.r_min, selection.r_max, selection.z_min, selection.z_max,
            fold_profile(selection, geometry))


def fold_curve(events, selection, geometry, ctau_grid):
    """Fold efficiency and its error at each c*tau of a grid.

    Returns
    -------
    eff, err : ndarray
        As :func:`toymc.detector.fold.fold_efficiency` (standard error of the mean of
        the per-event probabilities).
    """
    from toymc.detector.fold import fold_efficiency

    r_min, r_max, z_min, z_max, prof = _window_profile(selection, geometry)
    return fold_efficiency(*fold_inputs(events), ctau_grid, r_min, r_max, z_min, z_max, prof)


def fold_setup(config, ctau_grid):
    """The run config and the checked c*tau grid of a fold.

    Parameters
    ----------
    config : str, Path or RunConfig
        Must name a detector geometry with a ``[selection]``.
    ctau_grid : array_like
        One or more increasing proper decay lengths, cm (e.g. from
        :func:`parse_ctau_grid`).

    Returns
    -------
    cfg : toymc.config.loader.RunConfig
    grid : ndarray of float64
        c*tau values, cm.
    """
    from toymc.engine.api import resolve

    cfg = resolve(config)
    if cfg.selection is None or cfg.detector is None:
        raise _ConfigError(cfg.path, "detector.geometry", None,
                           "a geometry and a [selection] (the fold needs the window and profile)")
    grid = _np.asarray(ctau_grid, dtype=_np.float64)
    if grid.ndim != 1 or grid.size < 1 or not _np.all(_np.isfinite(grid)) or _np.any(grid <= 0):
        raise _ConfigError(None, "ctau", ctau_grid, "finite c*tau values > 0 cm")
    if _np.any(_np.diff(grid) <= 0):
        raise _ConfigError(None, "ctau", ctau_grid, "strictly increasing c*tau values")
    return cfg, grid


def fold_config(cfg, grid, events=None, seed=None):
    """Fold a truth sample of `cfg` on the c*tau grid (nothing is written).

    Parameters
    ----------
    cfg, grid
        From :func:`fold_setup`.
    events : int, optional
        Truth events to fold (default: ``[run] events``).
    seed : int, optional
        Overrides ``[run] seed``.

    Returns
    -------
    dict
        ``ctau``, ``eff``, ``err`` arrays and ``events``.
    """
    n = int(events if events is not None else cfg.run.events)
    if n > _R.MAX_SAMPLE_EVENTS:
        raise _ConfigError(cfg.path if events is None else None,
                           "run.events" if events is None else "--events", n,
                           f"at most {_R.fmt(_R.MAX_SAMPLE_EVENTS)} truth events for the fold "
                           "(a sample held in memory); give fewer with --events")
    ev = truth_sample(cfg, n, cfg.run.seed if seed is None else seed)
    eff, err = fold_curve(ev, cfg.selection, cfg.detector, grid)
    return {"ctau": grid, "eff": eff, "err": err, "events": n}
