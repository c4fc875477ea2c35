"""Analytic fold of the decay-length distribution with a vertex-efficiency profile.

Used for per-event decay weights (:func:`decay_weight`, the ``w_fold`` column of a
run with decay weights) and for fold-efficiency curves (:func:`fold_efficiency`).

For a long-lived particle produced at ``(x0, y0, z0)`` and flying along the unit
direction ``u`` with boost ``beta*gamma``, the lab decay length ``L`` is
exponential with mean ``lambda = beta*gamma*c*tau``: the survival probability
``P(L > x0) = exp(-M x0 Gamma/|p|) = exp(-x0/lambda)`` (PDG review "Kinematics",
sec. 40.4.1, eq. 40.14 in the 2012 booklet numbering), hence
``P(L1 < L < L2) = exp(-L1/lambda) - exp(-L2/lambda)``.
The probability that it decays inside the fiducial volume and that its vertex
is then found is

    P = Int_window (1/lambda) exp(-L/lambda) eps(r(L)) dL,

with ``r(L) = sqrt((x0 + L ux)^2 + (y0 + L uy)^2)`` the transverse radius of the
decay point and ``eps(r)`` the vertex-efficiency profile.  All lengths in cm.

Profiles
--------
The profile is a :class:`toymc.detector.profile.Profile` of a kind that depends
on the radius alone.  ``eps(r)`` is piecewise linear in ``r`` for all three
(flat, linear, tabulated), so the kernels see a table of nodes spanning
``[r_min, r_max]`` (:func:`profile_nodes`).  How the line meets the window and how
the integral is evaluated (closed forms, Gauss-Legendre panels) is described in
:mod:`toymc.detector.fold_kernels`, with the checks against ``scipy``.

Tabulated profiles are **constant-extended** between the ends of the table
and the window edges (the first/last tabulated value holds there, as in
``numpy.interp``), and zero outside the window.
"""

import math as _math
import numbers as _numbers

import numpy as _np

from toymc.detector.fold_kernels import GL_W as _GL_W
from toymc.detector.fold_kernels import GL_X as _GL_X
from toymc.detector.fold_kernels import fold_kernel as _fold_kernel
from toymc.detector.fold_kernels import window_kernel as _window_kernel
from toymc.detector.profile import RADIAL_KINDS as _RADIAL_KINDS
from toymc.detector.profile import Profile as _Profile
from toymc.detector.vertexing import fold_profile as _fold_profile
from toymc.errors import ConfigError as _ConfigError

__all__ = (
    "check_window",
    "decay_weight",
    "fold_efficiency",
    "fold_inputs",
    "fold_probability",
    "line_window",
    "profile_nodes",
)


def _cfg_error(key, value, allowed):
    return _ConfigError(None, key, value, allowed)


def check_window(r_min, r_max, z_min, z_max):
    """Validate a fiducial window and return it as four floats (cm).

    Raises
    ------
    toymc.errors.ConfigError
        Unless ``0 <= r_min < r_max`` and ``z_min < z_max``, all finite.
    """
    vals = {}
    for key, v in (("r_min", r_min), ("r_max", r_max), ("z_min", z_min), ("z_max", z_max)):
        if isinstance(v, bool) or not isinstance(v, _numbers.Real):
            raise _cfg_error(f"window.{key}", v, "a finite number (cm)")
        if not _math.isfinite(v):
            raise _cfg_error(f"window.{key}", v, "a finite number (cm)")
        vals[key] = float(v)
    if vals["r_min"] < 0.0:
        raise _cfg_error("window.r_min", r_min, "a radius >= 0 cm")
    if vals["r_min"] >= vals["r_max"]:
        raise _cfg_error("window.r_max", r_max, f"a radius > r_min = {vals['r_min']} cm")
    if vals["z_min"] >= vals["z_max"]:
        raise _cfg_error("window.z_max", z_max, f"a value > z_min = {vals['z_min']} cm")
    return vals["r_min"], vals["r_max"], vals["z_min"], vals["z_max"]


def profile_nodes(profile, r_min, r_max):
    """Nodes of the piecewise-linear eps(r) on the window, for the kernels.

    Parameters
    ----------
    profile : toymc.detector.profile.Profile
        Of a kind that depends on the radius alone (flat, linear, tabulated;
        turn a "hits" profile into a table with
        :func:`toymc.detector.vertexing.radial_profile` first).
    r_min, r_max : float
        Transverse window in cm.

    Returns
    -------
    node_r, node_eps : ndarray of float64
        Radii (cm) from ``r_min`` to ``r_max``, strictly increasing, and the
        efficiency at each; eps is linear between consecutive nodes.
    """
    if not isinstance(profile, _Profile) or profile.kind not in _RADIAL_KINDS:
        raise _cfg_error("profile", profile, "a toymc.detector.profile.Profile of kind "
                         f"{', '.join(_RADIAL_KINDS)}")
    r_min, r_max, _, _ = check_window(r_min, r_max, 0.0, 1.0)
    if profile.kind == "flat":
        return _np.array([r_min, r_max]), _np.array([profile.eps0, profile.eps0])
    if not profile.r:  # linear over the window
        return _np.array([r_min, r_max]), _np.array([profile.eps0, 0.0])
    tr = _np.asarray(profile.r)
    inner = tr[(tr > r_min) & (tr < r_max)]
    node_r = _np.concatenate(([r_min], inner, [r_max]))
    node_eps = _np.interp(node_r, tr, profile.eps0 * _np.asarray(profile.eps))
    return node_r, node_eps


def _as_events(x0, y0, z0, ux, uy, uz, betagamma=None):
    names = ("x0", "y0", "z0", "ux", "uy", "uz")
    arrs = [_np.atleast_1d(_np.asarray(v, dtype=_np.float64)) for v in (x0, y0, z0, ux, uy, uz)]
    if betagamma is not None:
        names = names + ("betagamma",)
        arrs.append(_np.atleast_1d(_np.asarray(betagamma, dtype=_np.float64)))
    try:
        arrs = [_np.ascontiguousarray(v) for v in _np.broadcast_arrays(*arrs)]
    except ValueError:
        shapes = {k: v.shape for k, v in zip(names, arrs)}
        raise _cfg_error("events", shapes, "arrays of one common length") from None
    if arrs[0].ndim != 1:
        raise _cfg_error("events", arrs[0].shape, "one-dimensional arrays")
    for k, v in zip(names, arrs):
        if not _np.all(_np.isfinite(v)):
            raise _cfg_error(k, "non-finite entries", "finite numbers")
    big = _np.maximum(_np.maximum(_np.abs(arrs[3]), _np.abs(arrs[4])), _np.abs(arrs[5]))
    if _np.any(big == 0.0):
        raise _cfg_error("u", "zero vector", "a non-zero direction (ux, uy, uz)")
    scaled = [arrs[k] / big for k in (3, 4, 5)]  # no underflow in the norm
    norm = _np.sqrt(scaled[0] ** 2 + scaled[1] ** 2 + scaled[2] ** 2)
    for k in (3, 4, 5):
        arrs[k] = scaled[k - 3] / norm
    if betagamma is not None and _np.any(arrs[6] <= 0.0):
        raise _cfg_error("betagamma", float(arrs[6].min()), "beta*gamma > 0")
    return arrs


def _check_ctau(ctau):
    c = _np.atleast_1d(_np.asarray(ctau, dtype=_np.float64))
    if c.ndim != 1 or c.size == 0 or not _np.all(_np.isfinite(c)) or _np.any(c <= 0.0):
        raise _cfg_error("ctau", ctau, "finite proper decay lengths > 0 cm")
    return c


def line_window(x0, y0, z0, ux, uy, uz, r_min, r_max, z_min, z_max):
    """Intervals of lab decay length L > 0 inside the fiducial volume.

    The line ``(x0, y0, z0) + L u`` is cut by the cylindrical shell
    ``r_min < r < r_max`` and the slab ``z_min < z < z_max``; the cases are
    listed in the docstring of :mod:`toymc.detector.fold_kernels`.

    Parameters
    ----------
    x0, y0, z0 : array_like
        Production point, cm.
    ux, uy, uz : array_like
        Flight direction (normalised here; need not be unit).
    r_min, r_max, z_min, z_max : float
        Fiducial window, cm.

    Returns
    -------
    L_in, L_out : ndarray, shape (n, 2)
        Start and end (cm) of up to two intervals per event, in increasing
        order; an unused slot holds ``L_in = L_out = 0``.

    Examples
    --------
    From inside the shell, passing 0.3 cm from the axis: two intervals.

    >>> lin, lout = line_window(3.0, 0, 0, -1, 0.1, 0.2, 1.0, 30.0, -20.0, 35.0)
    >>> lin.round(3), lout.round(3)
    (array([[0.   , 4.017]]), array([[ 2.071, 33.63 ]]))
    """
    r_min, r_max, z_min, z_max = check_window(r_min, r_max, z_min, z_max)
    x0, y0, z0, ux, uy, uz = _as_events(x0, y0, z0, ux, uy, uz)
    return _window_kernel(x0, y0, z0, ux, uy, uz, r_min, r_max, z_min, z_max)


def fold_probability(x0, y0, z0, ux, uy, uz, betagamma, ctau, r_min, r_max, z_min, z_max,
                     profile):
    """Per-event probability to decay in the window with the vertex found.

    ``P = Int (1/lambda) exp(-L/lambda) eps(r(L)) dL`` over the window
    intervals, ``lambda = betagamma * ctau`` (PDG review "Kinematics",
    exponential decay law); methods in :mod:`toymc.detector.fold_kernels`.

    Parameters
    ----------
    x0, y0, z0 : array_like
        Production point, cm.
    ux, uy, uz : array_like
        Flight direction (normalised here).
    betagamma : array_like
        beta*gamma = p/m of each particle, > 0.
    ctau : float
        Proper decay length, cm, > 0.
    r_min, r_max, z_min, z_max : float
        Fiducial window, cm.
    profile : toymc.detector.profile.Profile
        Vertex-efficiency profile eps(r) (flat, linear or tabulated).

    Returns
    -------
    ndarray of float64
        One probability in [0, 1] per event.

    Examples
    --------
    Transverse flight from the axis, flat eps = 1: ``exp(-0.1) - exp(-3)``.

    >>> from toymc.detector.profile import Profile
    >>> fold_probability(0, 0, 0, 1, 0, 0, 1.0, 10.0, 1.0, 30.0, -20.0, 35.0, Profile("flat"))
    array([0.85505035])
    """
    c = _check_ctau(ctau)
    if c.size != 1:
        raise _cfg_error("ctau", ctau, "one number (use fold_efficiency for a grid)")
    node_r, node_eps = profile_nodes(profile, r_min, r_max)
    r_min, r_max, z_min, z_max = check_window(r_min, r_max, z_min, z_max)
    x0, y0, z0, ux, uy, uz, bg = _as_events(x0, y0, z0, ux, uy, uz, betagamma)
    lin, lout = _window_kernel(x0, y0, z0, ux, uy, uz, r_min, r_max, z_min, z_max)
    return _fold_kernel(x0, y0, ux, uy, bg * c[0], lin, lout, node_r, node_eps, _GL_X, _GL_W)


def fold_efficiency(x0, y0, z0, ux, uy, uz, betagamma, ctau_grid, r_min, r_max, z_min, z_max,
                    profile, weights=None):
    """Fold probability averaged over a sample's truth kinematics, per ctau.

    Parameters
    ----------
    x0, y0, z0, ux, uy, uz, betagamma : array_like
        Truth kinematics per event, as in :func:`fold_probability`.
    ctau_grid : array_like
        Proper decay lengths, cm, > 0.
    r_min, r_max, z_min, z_max : float
        Fiducial window, cm.
    profile : toymc.detector.profile.Profile
    weights : array_like, optional
        Event weights (e.g. generator weights); default all 1.

    Returns
    -------
    eff, err : ndarray, shape (len(ctau_grid),)
        ``eff = sum(w P)/sum(w)`` and its standard error from the event spread,
        ``err^2 = n/(n-1) sum(w^2 (P - eff)^2)/sum(w)^2`` (delta-method
        variance of a ratio estimator; for unit weights the standard error of
        the mean, ``std(P, ddof=1)/sqrt(n)``).  ``err = 0`` for one event.
    """
    grid = _check_ctau(ctau_grid)
    node_r, node_eps = profile_nodes(profile, r_min, r_max)
    r_min, r_max, z_min, z_max = check_window(r_min, r_max, z_min, z_max)
    x0, y0, z0, ux, uy, uz, bg = _as_events(x0, y0, z0, ux, uy, uz, betagamma)
    n = x0.shape[0]
    if weights is None:
        w = _np.ones(n)
    else:
        w = _np.asarray(weights, dtype=_np.float64)
        if w.shape != (n,) or not _np.all(_np.isfinite(w)) or not w.sum() > 0.0:
            raise _cfg_error("weights", f"shape {w.shape}", f"{n} finite weights, sum > 0")
    lin, lout = _window_kernel(x0, y0, z0, ux, uy, uz, r_min, r_max, z_min, z_max)
    sw = w.sum()
    eff = _np.empty(grid.size)
    err = _np.empty(grid.size)
    for k, ct in enumerate(grid):  # loop over the ctau grid, not over events
        p = _fold_kernel(x0, y0, ux, uy, bg * ct, lin, lout, node_r, node_eps, _GL_X, _GL_W)
        m = float(_np.dot(w, p) / sw)
        eff[k] = m
        err[k] = (_math.sqrt(n / (n - 1) * float(_np.sum((w * (p - m)) ** 2))) / sw
                  if n > 1 else 0.0)
    return eff, err


def fold_inputs(events):
    """Production point, unit direction and beta*gamma of each event's LLP.

    Parameters
    ----------
    events : mapping or awkward array
        With ``llp_vx, llp_vy, llp_vz`` (cm), ``llp_px, llp_py, llp_pz`` (GeV)
        and ``llp_m`` (GeV).

    Returns
    -------
    tuple of ndarray
        ``x0, y0, z0, ux, uy, uz, betagamma`` with ``betagamma = |p|/m``.
    """
    try:
        col = {k: _np.asarray(events[k], dtype=_np.float64)
               for k in ("llp_vx", "llp_vy", "llp_vz", "llp_px", "llp_py", "llp_pz", "llp_m")}
    except (KeyError, ValueError) as exc:
        raise _ConfigError(None, "events", f"missing column {exc}",
                           "truth columns llp_vx/vy/vz, llp_px/py/pz, llp_m") from None
    p = _np.sqrt(col["llp_px"] ** 2 + col["llp_py"] ** 2 + col["llp_pz"] ** 2)
    if _np.any(p <= 0.0) or _np.any(col["llp_m"] <= 0.0):
        raise _ConfigError(None, "events", "LLP at rest or massless", "|p| > 0 and m > 0")
    return (col["llp_vx"], col["llp_vy"], col["llp_vz"], col["llp_px"] / p, col["llp_py"] / p,
            col["llp_pz"] / p, p / col["llp_m"])


def decay_weight(events, selection, geometry, ctau):
    """Per-event decay weight: probability that THIS event's LLP decays in the window
    and its vertex is accepted by the profile.

    Parameters
    ----------
    events : mapping or awkward array
        Truth columns (see :func:`fold_inputs`).
    selection : toymc.detector.geometry.Selection
        Fiducial window (cm) and vertex-efficiency profile.
    geometry : toymc.detector.geometry.Geometry
        Needed to turn a "hits" profile into a radius table
        (:func:`toymc.detector.vertexing.fold_profile`, an upper estimate).
    ctau : float
        Proper decay length c*tau, cm.

    Returns
    -------
    ndarray of float64
        ``P_i`` in [0, 1]; its mean over a sample is the fold efficiency
        (:func:`fold_efficiency`).  :mod:`toymc.analysis.fold_sample` says when
        weights replace sampled decay points.
    """
    return fold_probability(*fold_inputs(events), ctau, selection.r_min, selection.r_max,
                            selection.z_min, selection.z_max, _fold_profile(selection, geometry))
