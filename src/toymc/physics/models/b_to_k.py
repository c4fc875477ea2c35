"""B -> K a and B -> K* a rates from an effective flavour-violating coupling.

Conventions
-----------
The light spin-0 particle a (ALP, or any pseudoscalar/scalar with the same
derivative coupling) couples to the b -> s current through

    L = g_V (d_mu a) sbar gamma^mu b + g_A (d_mu a) sbar gamma^mu gamma_5 b + h.c.,

with g_V and g_A in GeV^-1 (a dimension-5 operator; e.g. g_V = C_V/Lambda).
Only the vector current contributes to B -> K a and only the axial current to
B -> K* a (parity).  With q = p_B - p_K, q_mu <K|sbar gamma^mu b|B> =
(m_B^2 - m_K^2) f_0(q^2) and q_mu <K*|sbar gamma^mu gamma_5 b|B> =
2 m_K* (eta* . q) A_0(q^2), summed over the K* polarisations
(sum |eta.q|^2 = lambda/(4 m_K*^2)):

    Gamma(B -> K a)  = |g_V|^2 (m_B^2 - m_K^2)^2 f_0^2(m_a^2) lambda^{1/2}/(16 pi m_B^3)
    Gamma(B -> K* a) = |g_A|^2 A_0^2(m_a^2) lambda^{3/2}/(16 pi m_B^3)

with lambda = lambda(m_B^2, m_K(*)^2, m_a^2) (two-body width |M|^2 p*/(8 pi m_B^2),
PDG review "Kinematics"; derived in the tests).

Form factors: light-cone sum-rule fits, parameter values from memory (not
re-verified against the papers' tables):

* f_0^{B->K}(q^2) = 0.330/(1 - q^2/37.46 GeV^2) (hep-ph/0406232, fit of the
  form r_2/(1 - q^2/m_fit^2)); f_0(0) = 0.330.
* A_0^{B->K*}(q^2) = 1.364/(1 - q^2/5.28^2 GeV^2) - 0.990/(1 - q^2/36.78 GeV^2)
  (hep-ph/0412079, pole at m_B(0^-) = 5.28 GeV plus an effective pole);
  A_0(0) = 0.374.

Branching fractions are Gamma * tau_B, with Gamma_B = hbar c/(c tau_B) from
:mod:`toymc.physics.constants` (CTAU_B for B+, CTAU_B0 for B0).  A user who prefers
to give the branching fraction directly needs none of this module: the
production code takes the branching fraction as a number.
"""

import math as _math

import numpy as _np

from toymc.errors import ConfigError as _ConfigError
from toymc.physics import constants as _const
from toymc.physics.kinematics.twobody import kallen as _kallen
from toymc.physics.models._common import as_coupling as _as_coupling
from toymc.physics.models._common import as_mass as _as_mass

__all__ = (
    "A0_BKSTAR_FIT",
    "F0_BK_FIT",
    "PARENTS",
    "a0_b_to_kstar",
    "br_b_to_k",
    "br_b_to_kstar",
    "f0_b_to_k",
    "width_b_to_k",
    "width_b_to_kstar",
)

#: f_0^{B->K} fit r2/(1 - q^2/m_fit^2): (r2, m_fit^2 [GeV^2]), hep-ph/0406232 (from memory)
F0_BK_FIT = (0.330, 37.46)
#: A_0^{B->K*} fit r1/(1 - q^2/m_R^2) + r2/(1 - q^2/m_fit^2):
#: (r1, m_R^2 [GeV^2], r2, m_fit^2 [GeV^2]), hep-ph/0412079 (from memory)
A0_BKSTAR_FIT = (1.364, 5.28**2, -0.990, 36.78)

#: parent B meson -> (m_B, c tau_B [cm], m_K, m_K*) in GeV and cm, from toymc.physics.constants
PARENTS = {
    "B+": (_const.M_B, _const.CTAU_B, _const.M_K, _const.M_KSTP),
    "B0": (_const.M_B0, _const.CTAU_B0, _const.M_K0, _const.M_KST0),
}


def _parent(parent):
    if parent not in PARENTS:
        raise _ConfigError(None, "production.parent", parent, f"one of {', '.join(PARENTS)}")
    return PARENTS[parent]


def f0_b_to_k(q2):
    """Scalar form factor f_0^{B->K}(q^2), light-cone sum-rule fit of hep-ph/0406232.

    f_0(q^2) = r_2/(1 - q^2/m_fit^2), r_2 = 0.330, m_fit^2 = 37.46 GeV^2
    (fit parameters from memory).

    Parameters
    ----------
    q2 : array_like
        Momentum transfer squared q^2 = m_a^2 in GeV^2.

    Returns
    -------
    numpy.ndarray
    """
    r2, mfit2 = F0_BK_FIT
    q2 = _np.asarray(q2, dtype=_np.float64)
    return r2 / (1.0 - q2 / mfit2)


def a0_b_to_kstar(q2):
    """Form factor A_0^{B->K*}(q^2), light-cone sum-rule fit of hep-ph/0412079.

    A_0(q^2) = r_1/(1 - q^2/m_R^2) + r_2/(1 - q^2/m_fit^2), r_1 = 1.364,
    m_R = 5.28 GeV, r_2 = -0.990, m_fit^2 = 36.78 GeV^2 (from memory).

    Parameters
    ----------
    q2 : array_like
        q^2 = m_a^2 in GeV^2.

    Returns
    -------
    numpy.ndarray
    """
    r1, mr2, r2, mfit2 = A0_BKSTAR_FIT
    q2 = _np.asarray(q2, dtype=_np.float64)
    return r1 / (1.0 - q2 / mr2) + r2 / (1.0 - q2 / mfit2)


def width_b_to_k(m, g_v, parent="B+"):
    """Gamma(B -> K a) in GeV for the vector coupling g_V (GeV^-1).

    Gamma = |g_V|^2 (m_B^2 - m_K^2)^2 f_0^2(m_a^2) lambda^{1/2}(m_B^2, m_K^2, m_a^2)/(16 pi m_B^3);
    zero above the kinematic limit m_a >= m_B - m_K.

    Parameters
    ----------
    m : array_like
        Mass of a in GeV.
    g_v : array_like
        |g_V| in GeV^-1 of L = g_V (d_mu a) sbar gamma^mu b + h.c.
    parent : {"B+", "B0"}
        B+ -> K+ a or B0 -> K0 a.

    Returns
    -------
    numpy.ndarray
    """
    m = _as_mass(m, "llp.mass")
    g = _as_coupling(g_v, "production.g_v", unit="GeV^-1")
    mb, _, mk, _ = _parent(parent)
    lam = _kallen(mb * mb, mk * mk, m * m)
    root = _np.sqrt(_np.clip(lam, 0.0, None))
    w = g * g * (mb * mb - mk * mk) ** 2 * f0_b_to_k(m * m) ** 2 * root / (16 * _math.pi * mb**3)
    return _np.where(m < mb - mk, w, 0.0)


def width_b_to_kstar(m, g_a, parent="B+"):
    """Gamma(B -> K* a) in GeV for the axial coupling g_A (GeV^-1).

    Gamma = |g_A|^2 A_0^2(m_a^2) lambda^{3/2}(m_B^2, m_K*^2, m_a^2)/(16 pi m_B^3),
    K* treated as narrow at its PDG mass; zero for m_a >= m_B - m_K*.

    Parameters
    ----------
    m : array_like
        Mass of a in GeV.
    g_a : array_like
        |g_A| in GeV^-1 of L = g_A (d_mu a) sbar gamma^mu gamma_5 b + h.c.
    parent : {"B+", "B0"}
        B+ -> K*+ a or B0 -> K*0 a.

    Returns
    -------
    numpy.ndarray
    """
    m = _as_mass(m, "llp.mass")
    g = _as_coupling(g_a, "production.g_a", unit="GeV^-1")
    mb, _, _, mks = _parent(parent)
    lam = _np.clip(_kallen(mb * mb, mks * mks, m * m), 0.0, None)
    w = g * g * a0_b_to_kstar(m * m) ** 2 * lam**1.5 / (16 * _math.pi * mb**3)
    return _np.where(m < mb - mks, w, 0.0)


def br_b_to_k(m, g_v, parent="B+"):
    """BR(B -> K a) = Gamma(B -> K a) tau_B (dimensionless).

    tau_B from the PDG c tau of the parent (:mod:`toymc.physics.constants`):
    Gamma_B = hbar c/(c tau_B).

    Parameters
    ----------
    m, g_v, parent
        As in :func:`width_b_to_k`.

    Returns
    -------
    numpy.ndarray
    """
    _, ctau_b, _, _ = _parent(parent)
    return width_b_to_k(m, g_v, parent) * ctau_b / _const.HBARC_GEV_CM


def br_b_to_kstar(m, g_a, parent="B+"):
    """BR(B -> K* a) = Gamma(B -> K* a) tau_B (dimensionless).

    Parameters
    ----------
    m, g_a, parent
        As in :func:`width_b_to_kstar`.

    Returns
    -------
    numpy.ndarray
    """
    _, ctau_b, _, _ = _parent(parent)
    return width_b_to_kstar(m, g_a, parent) * ctau_b / _const.HBARC_GEV_CM
