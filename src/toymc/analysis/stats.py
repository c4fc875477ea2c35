"""Counting statistics: CLs upper limits, expected limits, the Punzi figure of merit.

CLs limits (the default for everything toymc computes)
--------------------------------------------------------
For a counting experiment with n observed events, expected background b and signal mean mu,
with the event count itself as the test statistic (fewer events = more background-like;
PDG review "Statistics", section on the CLs procedure; A. L. Read, J. Phys. G 28 (2002) 2693):

    CL_{s+b}(mu) = P(N <= n | mu + b),    CL_b = P(N <= n | b),    CLs = CL_{s+b} / CL_b,

and the upper limit mu_up solves CLs(mu_up) = 1 - CL.  P(N <= n | lambda) is the regularised
upper incomplete gamma function Q(n + 1, lambda) (scipy.special.gammaincc), which also defines
it for a real n >= 0.  At n = 0, CLs = exp(-mu) whatever b: mu_up = -ln(1 - CL) = 3.00 events
at 95 % CL.  Unlike the classical limit with the background subtracted, the CLs limit never
becomes zero or negative when the data fluctuate below b.

Background uncertainty: with a relative uncertainty r on b, P(N <= n | mu + b) is averaged over
a log-normal b' with mean b and standard deviation r b (the hybrid "prior-predictive" treatment,
PDG review "Statistics"; the log-normal for a positive nuisance parameter is common practice),
by Gauss-Hermite quadrature in ln b'.

Expected limits for a background-only experiment (:func:`expected_upper_limit`):

* ``"asimov"`` (default): the CLs limit for the continuous count n = b (the data set that
  equals its expectation).  Smooth and increasing in b: what ``reach`` and ``tune-cuts`` use.
* ``"mean"``: the Poisson-weighted mean sum_n P(n | b) mu_up(n, b) (smooth and increasing too;
  summed until the remaining tail probability is below 1e-12).
* ``"median"``: mu_up at the median n of Poisson(b), the usual quoted number; it stays stepped
  in b (within a step of the median count the limit falls as b grows), so do not optimise it.

:func:`poisson_upper_limit` keeps the classical (Neyman) limit with known background,
P(N <= n | mu_up + b) = 1 - CL, for comparison; it is 0 where the data fall below b.
"""

import numpy as _np
from scipy.optimize import brentq as _brentq
from scipy.special import gammaincc as _gammaincc
from scipy.special import roots_hermitenorm as _roots_hermitenorm
from scipy.stats import chi2 as _chi2
from scipy.stats import poisson as _poisson

from toymc.config.schema import LIMIT_METHODS  # the methods of expected_upper_limit; first: default
from toymc.errors import ConfigError as _ConfigError

__all__ = ("LIMIT_METHODS", "cls_upper_limit", "expected_upper_limit", "poisson_upper_limit",
           "punzi_fom")


#: Gauss-Hermite nodes (probabilists' weight exp(-z^2/2)) for the background average
_GH_Z, _GH_W = _roots_hermitenorm(48)
_GH_W = _GH_W / _GH_W.sum()


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


def _check_unc(rel_unc):
    r = float(rel_unc)
    if not (_np.isfinite(r) and 0.0 <= r <= 10.0):
        raise _ConfigError(None, "stats.background_uncertainty", rel_unc,
                           "a relative uncertainty in [0, 10]")
    return r


def _p_le(n, lam, b, r):
    """P(N <= n | lam + b'), averaged over the background b' (log-normal, mean b, sd r b);
    n, lam and b broadcast (n may be real)."""
    if r == 0.0:
        return _gammaincc(n + 1.0, lam + b)
    s = _np.sqrt(_np.log1p(r * r))
    bb = _np.multiply.outer(b, _np.exp(s * _GH_Z - 0.5 * s * s))
    q = _gammaincc(_np.expand_dims(n, -1) + 1.0, _np.expand_dims(lam, -1) + bb)
    return q @ _GH_W


def cls_upper_limit(n, b=0.0, cl=0.95, rel_unc=0.0):
    """CLs upper limit on the signal mean (PDG review "Statistics"; J. Phys. G 28 (2002) 2693).

    Solves P(N <= n | mu + b) / P(N <= n | b) = 1 - CL for mu (bisection, vectorised, to a
    relative 1e-12); P(N <= n | lambda) = Q(n + 1, lambda), so a real n >= 0 is allowed (the
    continuous count of an Asimov data set).

    Parameters
    ----------
    n : float or array_like
        Observed events (>= 0; whole numbers for real data).
    b : float or array_like
        Expected background (>= 0).
    cl : float
        Confidence level, e.g. 0.95.
    rel_unc : float
        Relative uncertainty of b (log-normal average; 0 = known background).

    Returns
    -------
    numpy.ndarray or float
        Upper limit on the signal mean (events); -ln(1 - CL) at n = 0 for any b.

    Examples
    --------
    >>> round(float(cls_upper_limit(0, b=2.0, cl=0.95)), 3)
    2.996
    """
    cl = _check_cl(cl)
    r = _check_unc(rel_unc)
    n = _np.asarray(n, dtype=_np.float64)
    if _np.any(~_np.isfinite(n) | (n < 0)):
        raise _ConfigError(None, "stats.n_observed", n[~_np.isfinite(n) | (n < 0)].flat[0].item(),
                           "a number of events >= 0")
    b = _check_b(b)
    n, b = _np.broadcast_arrays(n, b)
    alpha = 1.0 - cl
    clb = _p_le(n, _np.zeros_like(b), b, r)
    lo = _np.zeros_like(b)
    # the b = 0 classical limit bounds mu_up for r = 0; doubled until CLs < alpha
    hi = 0.5 * _chi2.ppf(cl, 2.0 * (n + 1.0)) + 1.0
    for _ in range(200):
        above = _p_le(n, hi, b, r) > alpha * clb
        if not _np.any(above):
            break
        hi = _np.where(above, 2.0 * hi, hi)
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        ok = _p_le(n, mid, b, r) > alpha * clb
        lo = _np.where(ok, mid, lo)
        hi = _np.where(ok, hi, mid)
        if _np.all(hi - lo <= 1e-12 * hi):
            break
    out = 0.5 * (lo + hi)
    return out[()] if out.ndim == 0 else out


def expected_upper_limit(b, cl=0.95, method="asimov", rel_unc=0.0):
    """Expected CLs upper limit on the signal mean for a background-only experiment.

    Parameters
    ----------
    b : float or array_like
        Expected background (>= 0).
    cl : float
        Confidence level.
    method : {"asimov", "mean", "median"}
        ``"asimov"``: the limit for the continuous count n = b (smooth, increasing in b);
        ``"mean"``: the Poisson-weighted mean of the limits (smooth, increasing);
        ``"median"``: the limit at the median count (stepped in b).
    rel_unc : float
        Relative uncertainty of the background.

    Returns
    -------
    numpy.ndarray or float
        N_up in events; -ln(1 - CL) (3.00 at 95 % CL) at b = 0 for every method.
    """
    cl = _check_cl(cl)
    r = _check_unc(rel_unc)
    b = _check_b(b)
    if method == "asimov":
        return cls_upper_limit(b, b, cl, r)
    if method == "median":
        return cls_upper_limit(_poisson.median(b), b, cl, r)
    if method == "mean":
        flat = b.ravel()
        out = _np.empty(flat.shape)
        for i, bb in enumerate(flat):
            n_max = int(_poisson.isf(1e-12, bb)) + 1 if bb > 0 else 0
            ns = _np.arange(n_max + 1)
            out[i] = _np.sum(_poisson.pmf(ns, bb) * cls_upper_limit(ns, bb, cl, r))
        out = out.reshape(b.shape)
        return out[()] if out.ndim == 0 else out
    raise _ConfigError(None, "stats.expected_method", method, "one of " + ", ".join(LIMIT_METHODS))


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
