"""Three-body decays: Dalitz-plot sampling and momenta in the parent rest frame.

PDG review "Kinematics", sec. 49.4.3.1: for constant |M|^2 the density is
uniform in (m12^2, m23^2) inside the kinematic boundary,
    dGamma = |M|^2 / ((2 pi)^3 32 M^3) dm12^2 dm23^2 .
At fixed m12^2 the m23^2 limits are
    (E2* + E3*)^2 - (sqrt(E2*^2 - m2^2) +- sqrt(E3*^2 - m3^2))^2,
    E2* = (m12^2 - m1^2 + m2^2)/(2 m12),  E3* = (M^2 - m12^2 - m3^2)/(2 m12)
(energies in the m12 rest frame).  Points are drawn uniformly in the
bounding rectangle and kept when inside the boundary and, when a matrix
element is asked for, with probability |M|^2 / max|M|^2 (unweighted events);
a weight that depends on m12^2 alone as a power (code 1) is drawn directly
in m12^2 instead (:func:`_dalitz_chiral_1`).

Matrix-element codes (``me_code``; add a new one in :func:`me_weight_1`):
    0  flat (pure phase space)
    1  |M|^2 proportional to (m12^2 - m_pi^2)^2 (:func:`pipipi0_msq`), the
       leading-order chiral amplitude of a -> pi+ pi- pi0 with particles
       1, 2 = pi+ pi- (see toymc.physics.models.alp); maximum at
       m12^2 = (M - m3)^2.
    2  K_L -> pi+ pi- pi0 with the measured Dalitz slopes (:func:`kl_msq_1`);
       me_par is its maximum (:func:`kl_msq_max`).
"""

import numpy as np
from numba import njit
from numba.extending import register_jitable

__all__ = ("KL_SLOPES", "dalitz_1", "kl_msq_1", "kl_msq_max", "m23_limits", "m23_limits_1",
           "me_weight_1", "momenta3_1", "pipipi0_msq")


@register_jitable(inline="always")
def pipipi0_msq(s, mpi2):
    """|M|^2 of a -> pi+ pi- pi0 up to a constant: (s - m_pi^2)^2 in GeV^4.

    s = m^2(pi+ pi-) and mpi2 = m_pi^2 in GeV^2.  Leading-order chiral amplitude
    A = K (s - m_pi^2)/(m_a^2 - m_pi^2) (arXiv:1708.00443 conventions; see
    :mod:`toymc.physics.models.alp`).  The one definition: callable from Python
    (floats or arrays) and from numba-compiled code.
    """
    d = s - mpi2
    return d * d


@njit(inline="always", cache=True)
def m23_limits_1(m12sq, M, m1, m2, m3):
    """(low, high) m23^2 limits at fixed m12^2 (GeV^2)."""
    m12 = np.sqrt(m12sq)
    e2 = (m12sq - m1 * m1 + m2 * m2) / (2.0 * m12)
    e3 = (M * M - m12sq - m3 * m3) / (2.0 * m12)
    p2 = np.sqrt(max(e2 * e2 - m2 * m2, 0.0))
    p3 = np.sqrt(max(e3 * e3 - m3 * m3, 0.0))
    s = (e2 + e3) * (e2 + e3)
    return s - (p2 + p3) * (p2 + p3), s - (p2 - p3) * (p2 - p3)


def m23_limits(m12sq, M, m1, m2, m3):
    """Array version of :func:`m23_limits_1`."""
    m12sq = np.asarray(m12sq, dtype=np.float64)
    lo = np.empty_like(m12sq)
    hi = np.empty_like(m12sq)
    for i, v in np.ndenumerate(m12sq):
        lo[i], hi[i] = m23_limits_1(v, M, m1, m2, m3)
    return lo, hi


@njit(inline="always", cache=True)
def me_weight_1(me_code, m12sq, m23sq, M, m1, m2, m3, par):
    """Matrix-element weight in [0, 1] (|M|^2 divided by its maximum)."""
    if me_code == 1:
        # par = m_pi^2 of the charged pion; divided by the value at s = (M - m3)^2
        return pipipi0_msq(m12sq, par) / pipipi0_msq((M - m3) * (M - m3), par)
    if me_code == 2:
        # par = the maximum of kl_msq_1 over the Dalitz plot (kl_msq_max)
        return kl_msq_1(m12sq, m23sq, M, m1, m3) / par
    return 1.0


#: Dalitz-plot slopes (g, h, k) of K_L -> pi+ pi- pi0 (PDG listing, from memory)
KL_SLOPES = (0.678, 0.076, 0.0099)


@njit(inline="always", cache=True)
def kl_msq_1(m12sq, m23sq, M, m1, m3):
    """|M|^2 of K_L -> pi+(1) pi-(2) pi0(3) up to a constant, the PDG parametrisation
    1 + g u + h u^2 + k v^2 with u = (s3 - s0)/m_pi+^2, v = (s1 - s2)/m_pi+^2,
    s_i = (P_K - p_i)^2 (s3 = m12^2, s1 = m23^2, s2 = m13^2), s0 = (s1 + s2 + s3)/3;
    slopes :data:`KL_SLOPES` (written here as literals: numba freezes globals)."""
    tot = M * M + 2.0 * m1 * m1 + m3 * m3
    m13sq = tot - m12sq - m23sq
    u = (m12sq - tot / 3.0) / (m1 * m1)
    v = (m23sq - m13sq) / (m1 * m1)
    return 1.0 + 0.678 * u + 0.076 * u * u + 0.0099 * v * v


@njit(cache=True)
def kl_msq_max(M, m1, m3):
    """An upper bound of :func:`kl_msq_1` over the Dalitz plot: the function is convex
    (h, k > 0) and the plot convex, so its maximum lies on the boundary; evaluated at 4001
    values of m12^2 at both ends of the m23^2 range and raised by 1e-6 relative."""
    lo = 4.0 * m1 * m1
    hi = (M - m3) * (M - m3)
    best = 0.0
    for i in range(4001):
        m12sq = lo + (hi - lo) * i / 4000.0
        a, b = m23_limits_1(m12sq, M, m1, m1, m3)
        best = max(best, kl_msq_1(m12sq, a, M, m1, m3), kl_msq_1(m12sq, b, M, m1, m3))
    return best * (1.0 + 1e-6)


@njit(inline="always", cache=True)
def _dalitz_chiral_1(rng, M, m1, m2, m3, par, counter):
    """(m12^2, m23^2) for me_code 1, density (m12^2 - par)^2 over the Dalitz region.

    The weight depends on m12^2 alone, so x = (m12^2 - par)/((M - m3)^2 - par)
    is drawn from its density 3 x^2 as the largest of three uniforms (order
    statistics) instead of by rejection; points with m12^2 < (m1 + m2)^2 are
    drawn again, m23^2 is uniform on the rectangle's side and kept inside the
    boundary.  Accepted points have density ~ (m12^2 - par)^2 on the region,
    as the rectangle-and-weight rejection gives, with fewer draws.
    """
    smax = (M - m3) * (M - m3)
    lo12 = (m1 + m2) * (m1 + m2)
    lo23 = (m2 + m3) * (m2 + m3)
    hi23 = (M - m1) * (M - m1)
    while True:
        x = max(rng.random(), rng.random(), rng.random())
        m23sq = lo23 + (hi23 - lo23) * rng.random()
        counter[0] += 4
        m12sq = par + x * (smax - par)
        if m12sq < lo12:
            continue
        a, b = m23_limits_1(m12sq, M, m1, m2, m3)
        if a <= m23sq <= b:
            return m12sq, m23sq


@njit(inline="always", cache=True)
def dalitz_1(rng, M, m1, m2, m3, me_code, me_par, counter):
    """Draw (m12^2, m23^2) for M -> 1 2 3; `counter[0]` counts uniform draws."""
    lo12 = (m1 + m2) * (m1 + m2)
    hi12 = (M - m3) * (M - m3)
    lo23 = (m2 + m3) * (m2 + m3)
    hi23 = (M - m1) * (M - m1)
    if me_code == 1:
        return _dalitz_chiral_1(rng, M, m1, m2, m3, me_par, counter)
    while True:
        m12sq = lo12 + (hi12 - lo12) * rng.random()
        m23sq = lo23 + (hi23 - lo23) * rng.random()
        counter[0] += 2
        a, b = m23_limits_1(m12sq, M, m1, m2, m3)
        if m23sq < a or m23sq > b:
            continue
        if me_code != 0:
            counter[0] += 1
            if rng.random() > me_weight_1(me_code, m12sq, m23sq, M, m1, m2, m3, me_par):
                continue
        return m12sq, m23sq


@njit(inline="always", cache=True)
def momenta3_1(M, m1, m2, m3, m12sq, m23sq):
    """Rest-frame momenta for a Dalitz point, with particle 3 along +z and 1 in the xz plane.

    Returns (p1x, p1z, e1, p2x, p2z, e2, p3z, e3); the y components vanish.
    """
    e1 = (M * M + m1 * m1 - m23sq) / (2.0 * M)
    e3 = (M * M + m3 * m3 - m12sq) / (2.0 * M)
    e2 = M - e1 - e3
    p1 = np.sqrt(max(e1 * e1 - m1 * m1, 0.0))
    p3 = np.sqrt(max(e3 * e3 - m3 * m3, 0.0))
    m13sq = M * M + m1 * m1 + m2 * m2 + m3 * m3 - m12sq - m23sq
    den = 2.0 * p1 * p3
    c13 = (m1 * m1 + m3 * m3 + 2.0 * e1 * e3 - m13sq) / den if den > 0.0 else 1.0
    c13 = min(1.0, max(-1.0, c13))
    s13 = np.sqrt(1.0 - c13 * c13)
    p1x, p1z = p1 * s13, p1 * c13
    return p1x, p1z, e1, -p1x, -p1z - p3, e2, p3, e3
