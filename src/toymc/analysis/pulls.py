"""Pass criteria of the validation (:mod:`toymc.analysis.validate`): the pull of k passes in
n trials against a reference efficiency, and the chi-square and Bonferroni max-pull
criteria of a set of pulls (normal quantiles and chi-square tails from ``scipy.stats``;
pull and chi-square conventions as in the PDG review "Statistics")."""

import math as _math

import numpy as _np

__all__ = ("ALPHA", "assess", "binomial_pull")

#: significance of each pass criterion (chi-square p-value, family-wise max pull)
ALPHA = 0.001


def binomial_pull(k, n, f, f_err=0.0):
    """Pull of k passes in n trials against a reference efficiency f: Gaussian when
    ``n f >= 10`` and ``n (1 - f) >= 10``, else from the exact binomial tails
    (:mod:`toymc.analysis.validate`, "Pass criteria").

    Parameters
    ----------
    k, n : int
        Passing and total events of the measurement.
    f : float
        Reference efficiency.
    f_err : float
        Standard error of f (independent of k).

    Returns
    -------
    z : float
        Signed pull.
    gaussian : bool
        True if ``n f >= 10`` and ``n (1 - f) >= 10`` (Gaussian formula used).
    """
    from scipy import stats

    if n * f >= 10 and n * (1 - f) >= 10:
        var = f * (1 - f) / n + f_err ** 2
        return (k / n - f) / _math.sqrt(var), True
    f = min(max(f, 0.0), 1.0)
    lo = stats.binom.cdf(k, n, f)
    hi = stats.binom.sf(k - 1, n, f)
    p = min(1.0, 2.0 * min(lo, hi))
    z = float(stats.norm.isf(p / 2)) if p < 1.0 else 0.0
    return (z if k >= n * f else -z), False


def assess(z, gaussian, alpha=ALPHA):
    """Chi-square and Bonferroni max-pull criteria of a set of pulls.

    Parameters
    ----------
    z : array_like
        Pulls of all points.
    gaussian : array_like of bool
        Which points enter the chi-square.
    alpha : float

    Returns
    -------
    dict
        ``n``, ``chi2``, ``ndf``, ``p_chi2``, ``max_pull`` (signed, largest
        ``|z|``), ``z_limit``, ``passed``.
    """
    from scipy import stats

    z = _np.asarray(z, dtype=float)
    g = _np.asarray(gaussian, dtype=bool)
    n = int(z.size)
    if n == 0:
        return {"n": 0, "chi2": 0.0, "ndf": 0, "p_chi2": 1.0, "max_pull": 0.0, "z_limit": 0.0,
                "passed": False}
    chi2 = float(_np.sum(z[g] ** 2))
    ndf = int(g.sum())
    p = float(stats.chi2.sf(chi2, ndf)) if ndf else 1.0
    zl = float(stats.norm.isf(alpha / (2 * n)))
    imax = int(_np.argmax(_np.abs(z)))
    return {"n": n, "chi2": chi2, "ndf": ndf, "p_chi2": p, "max_pull": float(z[imax]),
            "z_limit": zl, "passed": bool(p >= alpha and abs(z[imax]) < zl)}
