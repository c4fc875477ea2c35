"""Elementary functions that give the same bits on every x86-64 CPU.

The C library picks, when a program starts, one of several implementations of exp,
log, sin, cos, atan2, acos, ... by the instruction sets of the CPU (with or without
FMA, AVX2, AVX-512), and numpy's vectorised math does the same; the results agree
to about one unit in the last place but not bit for bit (measured: about 1 value in
1000 differs between the FMA and the plain variants of glibc's exp, sin and cos).
Once a last bit differs, a sampled event differs, and an accept-reject decision
downstream can change every event after it.  The kernels therefore use the
functions below: plain IEEE-754 additions, multiplications, divisions and square
roots (each correctly rounded, and numba does not contract them into FMAs), so that
the same inputs give the same bits on any CPU.

Each function is within a few units in the last place of the exact value (the tests
measure it against an extended-precision reference).  Methods, textbook forms:

* exp: x = k ln2 + r with ln2 split in a 32-bit head and a tail (Cody-Waite
  reduction), |r| <= ln2/2, exp(r) from its Taylor series to r^13, times 2^k.
* log: x = 2^e m with 1 <= m < 2, m = c (1 + u) with c = 1 + j/128 the nearest table
  centre (m - c exact, |u| <= 1/256), log x = e ln2 + log c + log1p(u) from its series.
* sin, cos: x = k pi/2 + r with pi/2 in three parts, |r| <= pi/4, Taylor series of
  sin r and cos r, quadrant from k mod 4 (accurate for |x| up to ~1e5; the kernels
  use angles of a few radians).
* atan2: atan of t = |y|/|x| (or of 1/t beyond 1) reduced about the nearest c = k/8,
  u = (t - c)/(1 + c t) with |u| <= 1/16, atan c from a table and the series of atan u.
* tanh, atanh: from exp and log (tanh x = e/(e + 2), e = expm1(2x); atanh x =
  log1p(2x/(1 - x))/2), with the Taylor series of expm1 near 0.
* acos: half-angle identities and a polynomial for asin fitted to its series
  (validation/fit_acos_poly.py).

The series are standard (e.g. Handbook of Mathematical Functions, NBS Applied
Mathematics Series 55 (1964), ch. 4, cited from memory); constants that need more
than double precision (ln 2, pi/2) are split with decimal arithmetic below.
"""

import math as _math
from decimal import Decimal as _Decimal
from decimal import localcontext as _localcontext

import numpy as np
from numba import njit

__all__ = ("exp_1", "expm1_1", "log_1", "log1p_1", "sin_1", "cos_1", "sincos_1", "atan_1",
           "atan2_1", "tanh_1", "atanh_1", "acos_1", "exp_array")

_PI_DIGITS = "3.14159265358979323846264338327950288419716939937510582097494459230781640629"


def _head(value, bits):
    """`value` (a Decimal) rounded down to a double of `bits` significant bits, so that
    small integers times it are exact (Cody-Waite reduction)."""
    m, e = _math.frexp(float(value))
    return _math.ldexp(_math.floor(m * 2.0 ** bits), e - bits)


def _hi_lo(value):
    """(nearest double, nearest double of the rest) of a Decimal."""
    hi = float(value)
    return hi, float(value - _Decimal(hi))


def _atan_series(x):
    """atan x = sum (-1)^n x^(2n+1)/(2n+1) of a Decimal |x| < 1, to 85 digits."""
    total, term, n = _Decimal(0), x, 0
    while abs(term) > _Decimal(10) ** -85:
        total += term / (2 * n + 1)
        term *= -x * x
        n += 1
    return total


#: tables of log(1 + j/128) (j = 0..128) and atan(k/8) (k = 0..8) as head + tail
_LOG_N = 128
with _localcontext() as _ctx:
    _ctx.prec = 80
    _LN2_D = _Decimal(2).ln()
    _PIO2_D = _Decimal(_PI_DIGITS) / 2
    _LN2_HI = _head(_LN2_D, 32)
    _LN2_LO = float(_LN2_D - _Decimal(_LN2_HI))
    _INV_LN2 = float(1 / _LN2_D)
    # pi/2 in three parts of 33, 33 and 53 bits
    _PIO2_1 = _head(_PIO2_D, 33)
    _PIO2_2 = _head(_PIO2_D - _Decimal(_PIO2_1), 33)
    _PIO2_3 = float(_PIO2_D - _Decimal(_PIO2_1) - _Decimal(_PIO2_2))
    _TWO_OVER_PI = float(1 / _PIO2_D)
    _PIO2_HI, _PIO2_LO = _hi_lo(_PIO2_D)
    _PIO4_HI, _PIO4_LO = _hi_lo(_PIO2_D / 2)
    _PI_HI, _PI_LO = _hi_lo(_PIO2_D * 2)
    _LOG_INV = np.array([float(1 / (1 + _Decimal(j) / _LOG_N)) for j in range(_LOG_N + 1)])
    _LOG_HI, _LOG_LO = (np.array(v) for v in zip(*[_hi_lo((1 + _Decimal(j) / _LOG_N).ln())
                                                   for j in range(_LOG_N + 1)]))
    # (atan 1 = pi/4: the series converges too slowly there)
    _ATAN_HI, _ATAN_LO = (np.array(v) for v in zip(*[_hi_lo(_atan_series(_Decimal(k) / 8)
                                                             if k < 8 else _PIO2_D / 2)
                                                     for k in range(9)]))

_NAN = float("nan")
_INF = float("inf")


@njit(inline="always", cache=True)
def _exp_poly(r):
    """exp(r) - 1 - r for |r| <= ln2/2 (Taylor series to r^13)."""
    p = 1.0 / 6227020800.0
    p = 1.0 / 479001600.0 + r * p
    p = 1.0 / 39916800.0 + r * p
    p = 1.0 / 3628800.0 + r * p
    p = 1.0 / 362880.0 + r * p
    p = 1.0 / 40320.0 + r * p
    p = 1.0 / 5040.0 + r * p
    p = 1.0 / 720.0 + r * p
    p = 1.0 / 120.0 + r * p
    p = 1.0 / 24.0 + r * p
    p = 1.0 / 6.0 + r * p
    p = 0.5 + r * p
    return r * r * p


@njit(cache=True, error_model="numpy")
def exp_1(x):
    """e^x (same bits on every CPU)."""
    if x != x:
        return x
    if x > 709.782712893384:
        return _INF
    if x < -745.2:
        return 0.0
    k = _math.floor(x * _INV_LN2 + 0.5)
    hi = x - k * _LN2_HI
    lo = k * _LN2_LO
    r = hi - lo
    y = 1.0 + (r + _exp_poly(r))
    ki = int(k)
    if ki < -1020:  # subnormal result: scale in two exact steps
        return _math.ldexp(_math.ldexp(y, ki + 60), -60)
    return _math.ldexp(y, ki)


@njit(cache=True, error_model="numpy")
def expm1_1(x):
    """e^x - 1, accurate near 0 (same bits on every CPU)."""
    if abs(x) < 0.34657359027997264:  # ln2/2: the series directly
        return x + _exp_poly(x)
    return exp_1(x) - 1.0


@njit(cache=True, error_model="numpy")
def log_1(x):
    """Natural logarithm (same bits on every CPU); -inf at 0, nan below.

    x = 2^e m with 1 <= m < 2; c = 1 + j/128 the nearest table centre, f = m - c (exact),
    u = f (1/c) with |u| <= 1/256, log x = e ln2 + log c + log1p(u), log1p(u) from its
    series to u^8 (the next term is below 1e-19 of u).
    """
    if x != x or x < 0.0:
        return _NAN
    if x == 0.0:
        return -_INF
    if x == _INF:
        return x
    m, e = _math.frexp(x)  # x = m 2^e, 1/2 <= m < 1 (exact)
    m = 2.0 * m
    e -= 1
    j = int((m - 1.0) * _LOG_N + 0.5)
    f = m - (1.0 + j * (1.0 / _LOG_N))
    u = f * _LOG_INV[j]
    p = -1.0 / 8.0
    p = 1.0 / 7.0 + u * p
    p = -1.0 / 6.0 + u * p
    p = 1.0 / 5.0 + u * p
    p = -1.0 / 4.0 + u * p
    p = 1.0 / 3.0 + u * p
    p = -0.5 + u * p
    return (e * _LN2_HI + _LOG_HI[j]) + (u + (u * u * p + (e * _LN2_LO + _LOG_LO[j])))


@njit(cache=True, error_model="numpy")
def log1p_1(x):
    """log(1 + x), accurate near 0 (same bits on every CPU)."""
    u = 1.0 + x
    if u == 1.0:
        return x
    if u == _INF:
        return u
    # log(u) corrected by the rounding of 1 + x (first-order: (x - (u - 1))/u)
    return log_1(u) + (x - (u - 1.0)) / u


@njit(inline="always", cache=True)
def _sin_poly(r):
    z = r * r
    p = -1.0 / 121645100408832000.0
    p = 1.0 / 355687428096000.0 + z * p
    p = -1.0 / 1307674368000.0 + z * p
    p = 1.0 / 6227020800.0 + z * p
    p = -1.0 / 39916800.0 + z * p
    p = 1.0 / 362880.0 + z * p
    p = -1.0 / 5040.0 + z * p
    p = 1.0 / 120.0 + z * p
    p = -1.0 / 6.0 + z * p
    return r + r * z * p


@njit(inline="always", cache=True)
def _cos_poly(r):
    z = r * r
    p = -1.0 / 6402373705728000.0
    p = 1.0 / 20922789888000.0 + z * p
    p = -1.0 / 87178291200.0 + z * p
    p = 1.0 / 479001600.0 + z * p
    p = -1.0 / 3628800.0 + z * p
    p = 1.0 / 40320.0 + z * p
    p = -1.0 / 720.0 + z * p
    p = 1.0 / 24.0 + z * p
    hz = 0.5 * z
    w = 1.0 - hz
    # 1 - z/2 with its rounding rest, then the higher terms
    return w + (((1.0 - w) - hz) + z * z * p)


@njit(cache=True, error_model="numpy")
def sincos_1(x):
    """(sin x, cos x) for |x| up to ~1e5 (same bits on every CPU)."""
    if x != x or abs(x) == _INF:
        return _NAN, _NAN
    if abs(x) <= 0.7853981633974483:
        return _sin_poly(x), _cos_poly(x)
    k = _math.floor(x * _TWO_OVER_PI + 0.5)
    r = ((x - k * _PIO2_1) - k * _PIO2_2) - k * _PIO2_3
    s, c = _sin_poly(r), _cos_poly(r)
    q = int(k) & 3
    if q == 0:
        return s, c
    if q == 1:
        return c, -s
    if q == 2:
        return -s, -c
    return -c, s


@njit(cache=True, error_model="numpy")
def sin_1(x):
    """sin x (same bits on every CPU)."""
    return sincos_1(x)[0]


@njit(cache=True, error_model="numpy")
def cos_1(x):
    """cos x (same bits on every CPU)."""
    return sincos_1(x)[1]


@njit(inline="always", cache=True)
def _atan_poly(u):
    """atan u - u for |u| <= 1/16 (Taylor series to u^17; next term below 1e-22 of u)."""
    z = u * u
    p = 1.0 / 17.0
    p = -1.0 / 15.0 + z * p
    p = 1.0 / 13.0 + z * p
    p = -1.0 / 11.0 + z * p
    p = 1.0 / 9.0 + z * p
    p = -1.0 / 7.0 + z * p
    p = 1.0 / 5.0 + z * p
    p = -1.0 / 3.0 + z * p
    return u * z * p


@njit(cache=True, error_model="numpy")
def atan_1(x):
    """arctan x (same bits on every CPU).

    For t = |x| <= 1: the nearest centre c = k/8, u = (t - c)/(1 + c t) (|u| <= 1/16),
    atan t = atan c + atan u; beyond, atan t = pi/2 - atan(1/t).
    """
    if x != x:
        return x
    t = abs(x)
    inv = t > 1.0
    if inv:
        t = 1.0 / t
    k = int(t * 8.0 + 0.5)
    c = k * 0.125
    u = (t - c) / (1.0 + c * t)
    r = _ATAN_HI[k] + ((u + _atan_poly(u)) + _ATAN_LO[k])
    if inv:
        r = _PIO2_HI - (r - _PIO2_LO)
    return r if x >= 0.0 else -r


@njit(cache=True, error_model="numpy")
def atan2_1(y, x):
    """atan2(y, x) in (-pi, pi] (same bits on every CPU; signed zeros as the C library)."""
    if x != x or y != y:
        return x + y
    if y == 0.0:
        if x > 0.0 or (x == 0.0 and _math.copysign(1.0, x) > 0.0):
            return y  # +-0
        return _math.copysign(_PI_HI, y)
    if x == 0.0:
        return _math.copysign(_PIO2_HI, y)
    ax, ay = abs(x), abs(y)
    if ax == _INF and ay == _INF:
        a = _PIO4_HI if x > 0.0 else 3.0 * _PIO4_HI
        return _math.copysign(a, y)
    if ax == _INF:
        return _math.copysign(0.0 if x > 0.0 else _PI_HI, y)
    if ay == _INF:
        return _math.copysign(_PIO2_HI, y)
    a = atan_1(ay / ax)
    if x < 0.0:
        a = _PI_HI - (a - _PI_LO)
    return a if y > 0.0 else -a


@njit(cache=True, error_model="numpy")
def tanh_1(x):
    """tanh x (same bits on every CPU)."""
    if x != x:
        return x
    ax = abs(x)
    if ax > 22.0:
        r = 1.0
    else:
        e = expm1_1(2.0 * ax)
        r = e / (e + 2.0)
    return r if x >= 0.0 else -r


@njit(cache=True, error_model="numpy")
def atanh_1(x):
    """atanh x for |x| < 1, +-inf at +-1, nan beyond (same bits on every CPU)."""
    ax = abs(x)
    if ax > 1.0 or x != x:
        return _NAN
    if ax == 1.0:
        return _math.copysign(_INF, x)
    r = 0.5 * log1p_1(2.0 * ax / (1.0 - ax))
    return r if x >= 0.0 else -r


@njit(cache=True, error_model="numpy")
def _exp_flat(x):
    out = np.empty(x.size)
    for i in range(x.size):
        out[i] = exp_1(x[i])
    return out


def exp_array(x):
    """exp_1 of every element of an array (or a scalar): float64 of the same shape."""
    a = np.asarray(x, dtype=np.float64)
    out = _exp_flat(np.ascontiguousarray(a).ravel()).reshape(a.shape)
    return out[()] if out.ndim == 0 else out


#: asin(s) = s + s z P(z), z = s^2 <= 1/4: monomial coefficients of P, lowest first
#: (least-squares fit to the arcsin series; regenerated by validation/fit_acos_poly.py)
_ASIN_P = (0.16666666666666655, 0.07500000000021018, 0.04464285710236919,
           0.030381947454553297, 0.022372044362935897, 0.01735532773312024,
           0.01392879917218769, 0.011882294619406424, 0.007768503956514341,
           0.016143094346012344, -0.010937950125547227, 0.028311892606102007)
_P0, _P1, _P2, _P3, _P4, _P5, _P6, _P7, _P8, _P9, _P10, _P11 = _ASIN_P
#: pi/2 and pi as the nearest double plus the rest
_AC_PIO2_HI = 1.5707963267948966
_AC_PIO2_LO = 6.123233995736766e-17
_AC_PI_HI = 3.141592653589793
_AC_PI_LO = 1.2246467991473532e-16


@njit(cache=True, error_model="numpy")
def acos_1(x):
    """arccos(x) for -1 <= x <= 1, within 1.5 units in the last place of the exact value
    (1.49 at worst over 43000 points against an extended-precision reference, tested).

    A polynomial instead of libm's acos, which costs about twice as much in the
    detector's smearing loop, and whose last bit depends on the CPU.  With P from ``_ASIN_P`` (asin(s) = s + s z P(z), z = s^2):
    for |x| <= 1/2, ``acos x = pi/2 - asin x``; beyond, with z = (1 - |x|)/2
    (exact) and s = sqrt(z), ``acos x = 2 asin s`` (x > 0) or ``pi - 2 asin s``
    (the half-angle identities, Handbook of Mathematical Functions, NBS Applied
    Mathematics Series 55 (1964), ch. 4, cited from memory).  pi/2 and pi
    carry their rounding rest, so that the subtractions lose nothing.  The
    polynomial is evaluated in Estrin's scheme (shorter dependency chain).
    """
    ax = abs(x)
    if ax <= 0.5:
        z = x * x
        s = x
    else:
        z = 0.5 * (1.0 - ax)
        s = _math.sqrt(z)
    z2 = z * z
    z4 = z2 * z2
    p03 = (_P0 + _P1 * z) + (_P2 + _P3 * z) * z2
    p47 = (_P4 + _P5 * z) + (_P6 + _P7 * z) * z2
    p8b = (_P8 + _P9 * z) + (_P10 + _P11 * z) * z2
    r = s * z * (p03 + z4 * (p47 + z4 * p8b))     # asin(s) - s
    if ax <= 0.5:
        return _AC_PIO2_HI - (x - (_AC_PIO2_LO - r))
    a = s + r
    if x > 0.0:
        return 2.0 * a
    return _AC_PI_HI - (2.0 * a - _AC_PI_LO)
