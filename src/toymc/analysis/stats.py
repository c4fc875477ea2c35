"""Poisson counting statistics: classical upper limits and the Punzi figure of merit.

Classical (Neyman) upper limit on a Poisson signal mean mu with known background b
and n observed events (PDG review "Statistics", section on Poisson upper limits):
mu_up solves

    P(N <= n | mu_up + b) = 1 - CL,

for b = 0 in closed form mu_up = (1/2) F^-1_chi2(CL; 2(n + 1)).  When b is large
and n small the solution would be negative ("the data fluctuated below the
background"); such limits are returned as 0 (the interval is empty for mu >= 0).

Expected limit for a background-only experiment (:func:`expected_upper_limit`):

* ``"median"`` (default): the limit at the median n of Poisson(b); since mu_up(n)
  increases with n, this is the median of the limit distribution.
* ``"mean"``: the Poisson-weighted mean sum_n P(n | b) mu_up(n, b), summed until the
  remaining tail probability is below 1e-12.
"""

import numpy as _np
from scipy.optimize import brentq as _brentq
from scipy.stats import chi2 as _chi2
from scipy.stats import poisson as _poisson

from toymc.errors import ConfigError as _ConfigError

__all__ = ("expected_upper_limit", "poisson_upper_limit", "punzi_fom")


def _check_cl(cl):
    cl = float(cl)
    if not 0.0 < cl < 1.0:
        raise _ConfigError(None, "stats.cl", cl, "a confidence level with 0 < CL < 1")
    return cl


def _check_b(b):
    b = _np.asarray(b, dtype=_np.float64)
    bad = ~_np.isfinite(b) | (b < 0)
    if _np.any(bad):
        raise _ConfigError(None, "stats.background", b[bad].flat[0].item(), "a finite number >= 0")
    return b


def _limit_scalar(n, b, cl):
    target = 1.0 - cl
    if b == 0.0:
        return 0.5 * _chi2.ppf(cl, 2 * (n + 1))
    if _poisson.cdf(n, b) <= target:
        return 0.0
    hi = 0.5 * _chi2.ppf(cl, 2 * (n + 1))  # the b = 0 limit bounds mu_up from above
    return _brentq(lambda mu: _poisson.cdf(n, mu + b) - target, 0.0, hi, xtol=1e-12, rtol=1e-12)


def poisson_upper_limit(n, b=0.0, cl=0.9):
    """Classical Poisson upper limit on the signal mean (PDG review "Statistics").

    Solves P(N <= n | mu + b) = 1 - CL for mu with scipy.optimize.brentq
    (closed form (1/2) chi2.ppf(CL, 2(n + 1)) for b = 0).  Returns 0 where
    P(N <= n | b) <= 1 - CL already (no mu >= 0 solves it).

    Parameters
    ----------
    n : int or array_like of int
        Observed number of events (>= 0).
    b : float or array_like
        Known expected background (>= 0).
    cl : float
        Confidence level, e.g. 0.9 or 0.95.

    Returns
    -------
    numpy.ndarray or float
        Upper limit on the signal mean (events).

    Examples
    --------
    >>> round(float(poisson_upper_limit(0, cl=0.9)), 3)
    2.303
    """
    cl = _check_cl(cl)
    n_arr = _np.asarray(n)
    if n_arr.dtype.kind not in "iu" and not _np.all(_np.mod(n_arr, 1) == 0):
        raise _ConfigError(None, "stats.n_observed", n, "a whole number of events >= 0")
    n_arr = n_arr.astype(_np.int64)
    if _np.any(n_arr < 0):
        raise _ConfigError(None, "stats.n_observed", int(n_arr.min()), "a whole number >= 0")
    b_arr = _check_b(b)
    out = _np.vectorize(lambda k, bb: _limit_scalar(int(k), float(bb), cl), otypes=[float])(
        n_arr, b_arr
    )
    return out[()] if out.ndim == 0 else out


def expected_upper_limit(b, cl=0.9, method="median"):
    """Expected classical upper limit for a background-only experiment.

    Parameters
    ----------
    b : float
        Expected background (>= 0).
    cl : float
        Confidence level.
    method : {"median", "mean"}
        ``"median"``: the limit at the median of Poisson(b) (the median limit);
        ``"mean"``: the Poisson-weighted average of the limits.

    Returns
    -------
    float
    """
    cl = _check_cl(cl)
    b = float(_check_b(b))
    if method == "median":
        return float(poisson_upper_limit(int(_poisson.median(b)), b, cl))
    if method == "mean":
        n_max = int(_poisson.isf(1e-12, b)) + 1 if b > 0 else 0
        ns = _np.arange(n_max + 1)
        return float(_np.sum(_poisson.pmf(ns, b) * poisson_upper_limit(ns, b, cl)))
    raise _ConfigError(None, "stats.expected_method", method, "one of median, mean")


def punzi_fom(eff, b, a=3.0):
    """Punzi figure of merit eff/(a/2 + sqrt(B)) (physics/0308063, eq. 7 from memory).

    Independent of the unknown signal cross-section; maximise it over cuts to get
    a discovery at a sigmas (one-sided Gaussian) for the smallest signal.

    Parameters
    ----------
    eff : array_like
        Signal efficiency (0..1).
    b : array_like
        Expected background events after the cuts (>= 0).
    a : float
        Target significance in Gaussian sigmas.

    Returns
    -------
    numpy.ndarray
    """
    b = _check_b(b)
    a = float(a)
    if not a > 0:
        raise _ConfigError(None, "stats.punzi_a", a, "a significance > 0 (Gaussian sigmas)")
    eff = _np.asarray(eff, dtype=_np.float64)
    if _np.any(~_np.isfinite(eff) | (eff < 0) | (eff > 1)):
        raise _ConfigError(None, "stats.efficiency", eff.tolist(), "efficiencies in [0, 1]")
    return eff / (a / 2.0 + _np.sqrt(b))
