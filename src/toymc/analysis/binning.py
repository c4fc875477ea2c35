"""Histogram bins of round widths (1, 2, 2.5 or 5 x 10^k), so that axis labels such as
"events per 5 cm" stay short."""

import math

import numpy as np

__all__ = ("ROUND_STEPS", "round_edges", "round_width")

#: mantissas of round bin widths
ROUND_STEPS = (1.0, 2.0, 2.5, 5.0)


def round_width(span, bins):
    """The round width (1, 2, 2.5 or 5 x 10^k) nearest to ``span / bins`` (in ratio).

    Neighbouring round widths differ by at most a factor 2, so the width lies within a
    factor sqrt(2) of ``span / bins``.

    >>> round_width(279.6, 60)   # 4.66 per bin -> 5
    5.0
    >>> round_width(0.09, 80)    # 1.125e-3 -> 1e-3
    0.001
    """
    if not (span > 0 and math.isfinite(span)) or bins < 1:
        raise ValueError(f"round_width: span {span} and bins {bins} must be positive")
    raw = span / bins
    k = math.floor(math.log10(raw))
    # decimal text (2.5e-3), not 2.5 * 10**-3 with its binary rounding
    widths = [float(f"{m}e{e}") for e in (k, k + 1) for m in ROUND_STEPS]
    return min(widths, key=lambda w: abs(math.log(w / raw)))


def round_edges(lo, hi, bins):
    """Bin edges of a round width (:func:`round_width`) on multiples of the width,
    covering [lo, hi] with about `bins` bins.

    >>> round_edges(0.0, 279.6, 60)[:3]
    array([ 0.,  5., 10.])
    """
    if not hi > lo:
        hi = lo + 1.0
    w = round_width(hi - lo, bins)
    a = math.floor(lo / w + 1e-9)
    b = math.ceil(hi / w - 1e-9)
    # integer multiples times the width: no accumulated rounding between edges
    return np.arange(a, b + 1) * w
