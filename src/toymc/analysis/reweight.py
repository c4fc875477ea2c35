"""Lifetime reweighting: use a sample generated at one c*tau for another.

Each event's proper decay length ``ct`` (cm) is exponential with density
``f(ct; ctau) = (1/ctau) exp(-ct/ctau)``, minus the derivative of the survival
probability ``exp(-ct/ctau)`` (PDG review "Kinematics", sec. 40.4.1, eq. 40.13
in the 2012 booklet numbering, written for the proper time).  An event generated at ``ctau0`` gets the
weight ``w = f(ct; ctau1)/f(ct; ctau0) = (ctau0/ctau1) exp(-ct/ctau1 + ct/ctau0)``,
so that weighted sums estimate expectations at ``ctau1``.  Nothing else about
the event depends on the lifetime, so every other column is reused as is.

The weights have finite variance only for ``ctau1 < 2 ctau0``:
``E0[w^2] = ctau0^2/(ctau1 (2 ctau0 - ctau1))`` (integrate ``f1^2/f0``).  For
longer target lifetimes a few events from the far tail carry the estimate and
the error below is not to be trusted; :func:`check_ess` warns when the
effective sample size ``(sum w)^2/sum w^2`` falls below a threshold.
"""

import warnings as _warnings

import numpy as _np

from toymc.errors import ConfigError as _ConfigError

__all__ = (
    "LowEffectiveSampleWarning",
    "check_ess",
    "effective_sample_size",
    "reweighted_efficiency",
    "weights",
)


class LowEffectiveSampleWarning(UserWarning):
    """The effective number of events behind a weighted estimate is small."""


def _positive(key, v):
    if isinstance(v, bool) or not isinstance(v, (int, float, _np.integer, _np.floating)):
        raise _ConfigError(None, key, v, "a finite proper decay length > 0 cm")
    if not (_np.isfinite(v) and v > 0.0):
        raise _ConfigError(None, key, v, "a finite proper decay length > 0 cm")
    return float(v)


def weights(ct, ctau0, ctau1):
    """Per-event weights taking a sample from ``ctau0`` to ``ctau1``.

    Parameters
    ----------
    ct : array_like
        Proper decay length c*t of each event, cm, finite and >= 0.
    ctau0 : float
        c*tau the sample was generated with, cm.
    ctau1 : float
        Target c*tau, cm.

    Returns
    -------
    ndarray of float64
        ``w = (ctau0/ctau1) exp(-ct/ctau1 + ct/ctau0)``, the ratio of the two
        exponential densities (see the module docstring).  Computed as
        ``exp(log(ctau0/ctau1) + ct (1/ctau0 - 1/ctau1))``; a weight beyond
        the float range (``ct/ctau0`` above about 700) is ``inf``.

    Raises
    ------
    toymc.errors.ConfigError
        ``ctau0`` or ``ctau1`` not finite and > 0, or ``ct`` with negative or
        non-finite entries.

    Examples
    --------
    >>> weights([0.0, 1.0], 1.0, 2.0)  # 0.5 and 0.5 exp(0.5)
    array([0.5       , 0.82436064])
    """
    ctau0 = _positive("ctau0", ctau0)
    ctau1 = _positive("ctau1", ctau1)
    ct = _np.asarray(ct, dtype=_np.float64)
    if not _np.all(_np.isfinite(ct)) or _np.any(ct < 0.0):
        raise _ConfigError(None, "ct", "negative or non-finite entries", "finite c*t >= 0 cm")
    from toymc.physics.kinematics.elementary import exp_array, log_1

    # exp_array, log_1: the same bits on every CPU (numpy's vectorised exp is CPU-dependent)
    logw = log_1(ctau0 / ctau1) + ct * (1.0 / ctau0 - 1.0 / ctau1)
    with _np.errstate(over="ignore"):
        return exp_array(logw)


def _as_weights(w):
    w = _np.asarray(w, dtype=_np.float64)
    if w.ndim != 1 or not _np.all(_np.isfinite(w)):
        raise _ConfigError(None, "w", f"shape {w.shape}", "a 1-d array of finite weights")
    return w


def effective_sample_size(w):
    """Effective sample size ``(sum w)^2 / sum w^2`` of weighted events.

    Parameters
    ----------
    w : array_like
        Event weights (1-d, finite).

    Returns
    -------
    float
        Equal to ``len(w)`` for equal weights; 0 for an empty or all-zero array.
        The number of unweighted events that would give the same variance of
        a weighted mean of independent, identically distributed values
        (design effect of unequal weighting in survey sampling, textbook
        "Survey Sampling", 1965; from memory).
    """
    w = _as_weights(w)
    s2 = float(_np.dot(w, w))
    if s2 == 0.0:
        return 0.0
    return float(w.sum()) ** 2 / s2


def reweighted_efficiency(passed_mask, w):
    """Weighted efficiency and its error.

    Parameters
    ----------
    passed_mask : array_like of bool
        Whether each event passes.
    w : array_like
        Event weights, same length, with a positive sum.

    Returns
    -------
    eff, err : float
        ``eff = sum_pass w / sum w`` and
        ``err^2 = sum_i w_i^2 (k_i - eff)^2 / (sum w)^2``
        ``= [(1 - eff)^2 sum_pass w^2 + eff^2 sum_fail w^2] / (sum w)^2``,
        with ``k_i`` = 1 for a passing event and 0 otherwise: the first-order
        (delta-method) variance of the ratio estimator ``A/B``, ``A = sum w k``,
        ``B = sum w``, which keeps the correlation between numerator and
        denominator.  Derivation: ``A/B - R ~ (A - R B)/B`` near ``R = A/B``,
        and ``A - R B = sum w_i (k_i - R)`` is a sum over independent events,
        whose variance is estimated by ``sum w_i^2 (k_i - R)^2``.  This is the
        standard ratio-estimator variance of survey sampling (textbook
        "Sampling Techniques", 3rd ed. 1977, ch. 6; from memory), checked in
        the tests against the spread of independent replicas.
        For unit weights it reduces to the binomial ``sqrt(eff (1 - eff)/n)``.
        Like the binomial formula it gives 0 when all or no events pass.

    Raises
    ------
    toymc.errors.ConfigError
        Lengths differ, weights not finite, or ``sum w <= 0``.
    """
    k = _np.asarray(passed_mask)
    if k.dtype != _np.bool_:
        raise _ConfigError(None, "passed_mask", f"dtype {k.dtype}", "a boolean array")
    w = _as_weights(w)
    if k.shape != w.shape:
        raise _ConfigError(None, "passed_mask", f"shape {k.shape}", f"shape {w.shape} like w")
    sw = float(w.sum())
    if not sw > 0.0:
        raise _ConfigError(None, "w", f"sum {sw}", "weights with a positive sum")
    eff = float(w[k].sum()) / sw
    w2p = float(_np.dot(w[k], w[k]))
    w2f = float(_np.dot(w[~k], w[~k]))
    err = _np.sqrt((1.0 - eff) ** 2 * w2p + eff**2 * w2f) / sw
    return eff, float(err)


def check_ess(w, threshold):
    """Warn if the effective sample size of `w` is below `threshold`.

    Parameters
    ----------
    w : array_like
        Event weights.
    threshold : float
        Smallest acceptable effective number of events (absolute, not a fraction).

    Returns
    -------
    float
        The effective sample size.

    Warns
    -----
    LowEffectiveSampleWarning
        Naming the effective sample size, the threshold and the number of events.
    """
    if isinstance(threshold, bool) or not isinstance(threshold, (int, float)) or not (
        _np.isfinite(threshold) and threshold >= 0
    ):
        raise _ConfigError(None, "threshold", threshold, "a finite number of events >= 0")
    w = _as_weights(w)
    ess = effective_sample_size(w)
    if ess < threshold:
        _warnings.warn(
            f"effective sample size {ess:.1f} of {w.size} weighted events is below "
            f"the threshold {threshold:g}",
            LowEffectiveSampleWarning,
            stacklevel=2,
        )
    return ess
