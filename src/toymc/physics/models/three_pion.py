"""Phase-space functions of an ALP's three-pion decays (arXiv:1708.00443 definitions).

g_00(r) (a -> 3 pi0) and g_+-(r) (a -> pi+ pi- pi0) for three equal pion masses,
r = m_pi^2/m_a^2, and :func:`gpm_physical`, g_+- with the physical pi0 mass for the third
pion (what :mod:`toymc.physics.models.alp` uses).  Each is a one-dimensional integral over
the pair mass, computed by scipy.integrate.quad on a grid and interpolated by a cubic spline.
"""

import math as _math
from functools import cache as _cache

import numpy as _np
from scipy.integrate import quad as _quad
from scipy.interpolate import CubicSpline as _CubicSpline

from toymc.physics import constants as _const

__all__ = ("g00", "gpm", "gpm_physical")

_M_PI = _const.M_PI
_M_PI0 = _const.M_PI0
_R_MAX = 1.0 / 9.0  # r = m_pi^2/m_a^2 at the three-pion threshold
_M_THR = 2.0 * _M_PI + _M_PI0  # threshold of a -> pi+ pi- pi0


def _g_quad(r, charged, r0=None):
    """g_00(r) or g_+-(r) by adaptive quadrature (arXiv:1708.00443 definitions).

    g_00 = 2/(1-r)^2 Int_{4r}^{(1-sqrt r0)^2} dz sqrt(1-4r/z) lambda^{1/2}(1,z,r0),
    g_+- = 12/(1-r)^2 Int (same) dz sqrt(1-4r/z) (z-r)^2 lambda^{1/2}(1,z,r0),
    with r0 = r (three equal masses) unless the third pion's r0 = m_3^2/m_a^2 is given:
    the pair's two-body factor with its own mass, the third pion's momentum with its own
    (PDG review "Kinematics", Dalitz-plot limits).  With
    lambda(1,z,r0) = ((1-sqrt r0)^2 - z)((1+sqrt r0)^2 - z) and
    sqrt(1-4r/z) = sqrt(z-4r)/sqrt(z), the two square-root end-point factors
    are handed to QUADPACK as the algebraic weight (z-a)^(1/2) (b-z)^(1/2).
    """
    r0 = r if r0 is None else r0
    if r <= 0.0 and r0 <= 0.0:
        return 1.0
    lo, hi, top = 4.0 * r, (1.0 - _math.sqrt(r0)) ** 2, (1.0 + _math.sqrt(r0)) ** 2
    if hi <= lo:
        return 0.0
    if charged:

        def smooth(z):
            return 12.0 * (z - r) ** 2 * _math.sqrt(top - z) / _math.sqrt(z)

    else:

        def smooth(z):
            return 2.0 * _math.sqrt(top - z) / _math.sqrt(z)

    val, _ = _quad(smooth, lo, hi, weight="alg", wvar=(0.5, 0.5), epsabs=0.0, epsrel=1e-11)
    return val / (1.0 - r) ** 2


# The functions are tabulated in u = 1 - 3 sqrt(r) (u = 0 at threshold, 1 at r = 0)
# as h(u) = g/u^2, smooth and finite at threshold, and interpolated by a cubic spline.
_U_MIN = 1e-6


@_cache
def _spline(charged):
    u = _np.concatenate(([_U_MIN], _np.linspace(0.0, 1.0, 321)[1:]))
    r = ((1.0 - u) / 3.0) ** 2
    h = _np.array([_g_quad(ri, charged) for ri in r]) / u**2
    return _CubicSpline(u, h)


def _g_interp(r, charged):
    r = _np.asarray(r, dtype=_np.float64)
    u = 1.0 - 3.0 * _np.sqrt(_np.clip(r, 0.0, None))
    h = _spline(charged)(_np.clip(u, _U_MIN, 1.0))
    return _np.where(r >= _R_MAX, 0.0, _np.where(r <= 0.0, 1.0, h * _np.clip(u, 0.0, 1.0) ** 2))


@_cache
def _spline_masses():
    # tabulated in u = 1 - (2 m_pi+ + m_pi0)/m_a (0 at threshold), as h = G/u^2
    u = _np.concatenate(([_U_MIN], _np.linspace(0.0, 1.0, 321)[1:]))
    # u = 1 is m_a -> infinity, where G -> g_+-(0) = 1
    g = [1.0 if ui == 1.0 else _g_quad(((1.0 - ui) * _M_PI / _M_THR) ** 2, True,
                                       ((1.0 - ui) * _M_PI0 / _M_THR) ** 2) for ui in u]
    h = _np.array(g) / u**2
    return _CubicSpline(u, h)


def gpm_physical(m):
    """Phase-space function of a -> pi+ pi- pi0 with the physical pion masses.

    As :func:`gpm` (the matrix-element weight (s - m_pi+^2)^2 and the normalisation
    12/(1 - r)^2, r = m_pi+^2/m_a^2), but the third pion has the pi0 mass: the channel opens
    at 2 m_pi+ + m_pi0 and the phase space near threshold is the physical one.  Tabulated by
    scipy.integrate.quad in u = 1 - (2 m_pi+ + m_pi0)/m_a, cubic spline in G/u^2.

    Parameters
    ----------
    m : array_like
        ALP mass in GeV.

    Returns
    -------
    numpy.ndarray
    """
    m = _np.asarray(m, dtype=_np.float64)
    u = 1.0 - _M_THR / _np.where(m > 0, m, 1.0)
    h = _spline_masses()(_np.clip(u, _U_MIN, 1.0))
    return _np.where(u <= 0.0, 0.0, h * _np.clip(u, 0.0, 1.0) ** 2)


def g00(r):
    """Phase-space function g_00(r) of a -> 3 pi0 (arXiv:1708.00443), g_00(0) = 1.

    g_00(r) = 2/(1-r)^2 Int_{4r}^{(1-sqrt r)^2} dz sqrt(1-4r/z) lambda^{1/2}(1,z,r),
    r = m_pi^2/m_a^2; zero for r >= 1/9 (below threshold).  Evaluated by
    scipy.integrate.quad on a grid in u = 1 - 3 sqrt(r), interpolated by a
    cubic spline in g/u^2 (relative accuracy ~1e-6; ~1e-4 within
    u < 1e-6 of threshold, where g < 1e-20).

    Parameters
    ----------
    r : array_like
        m_pi^2/m_a^2 (dimensionless, >= 0).

    Returns
    -------
    numpy.ndarray
    """
    return _g_interp(r, charged=False)


def gpm(r):
    """Phase-space function g_+-(r) of a -> pi+ pi- pi0 (arXiv:1708.00443), g_+-(0) = 1.

    g_+-(r) = 12/(1-r)^2 Int_{4r}^{(1-sqrt r)^2} dz sqrt(1-4r/z) (z-r)^2 lambda^{1/2}(1,z,r);
    the (z - r)^2 is the matrix-element weight (s - m_pi^2)^2 in units of m_a^4.
    Same numerics as :func:`g00`.

    Parameters
    ----------
    r : array_like
        m_pi^2/m_a^2 (dimensionless, >= 0).

    Returns
    -------
    numpy.ndarray
    """
    return _g_interp(r, charged=True)
