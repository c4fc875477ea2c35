"""e+e- -> Upsilon(4S) -> B Bbar, one B -> K X or K*(892) X, K* -> K pi.

Model (all masses, widths and lifetimes from `particle` via toymc.constants):

* The Upsilon(4S) is formed at rest in the collision frame with mass
  sqrt(s) (beam-energy spread not modelled).  It decays to B+B- with
  probability ``charged_fraction`` and to B0 Bbar0 otherwise.
* For massless beams the Upsilon(4S) is produced with J_z = +-1 along the
  beam, so dN/dcos(theta) ~ sin^2(theta) for the B direction about the e-
  beam in the collision frame (spin-1 -> two spin-0, |d^1_{+-1,0}|^2);
  sampled by inverting the CDF (2 + 3c - c^3)/4 (trigonometric root of the
  cubic).  B momentum p* = sqrt(s/4 - m_B^2) (PDG "Kinematics", two-body).
* One of the two B mesons (B or anti-B, equal odds) decays to the signal;
  the other is not generated.  The signal B flies c*t ~ exp(c*tau_B) with
  (p/m) c*t, and at its decay point B -> K X (or K* X) isotropically
  (spin-0 B).
* K*(892): mass from a non-relativistic Breit-Wigner (Cauchy) with the PDG
  mass and width, truncated to [m_K + m_pi, m_B - m_X]; the mass
  dependence of the B -> K* X phase space is neglected.  K* -> K pi with
  isospin fractions 2/3 (charged pion for K*0 -> K+ pi-, K*+ -> K0 pi+)
  and 1/3 (neutral pion); neutral kaons are stored as K0 (311).
* With a spin-0 X the K* is longitudinal (angular-momentum conservation in
  0 -> 1 + 0): dN/dcos(theta_K) ~ cos^2(theta_K) in the K* helicity frame.
  With a spin-1 X from B -> K V the V has helicity 0 (pol code 1 in
  toymc.decays); for B -> K* V both are taken unpolarised (an approximation).
"""

import numpy as np
from numba import njit

from ..decays import circle_1, decay_llp_1, exp_1, iso_1, polarised_direction
from ..kinematics.lorentz import boost_1, rotate_to_1
from . import _layout as L

__all__ = ("generate", "sin2_cos_1", "cos2_cos_1", "b_momentum")


@njit(inline="always", cache=True)
def sin2_cos_1(u1, u2, u3):
    """cos(theta) for dN/dcos ~ 1 - cos^2 from three uniforms.

    The median of three uniforms on [0, 1] has density 6x(1 - x) (order
    statistics); mapped to c = 2x - 1 this is (3/4)(1 - c^2).
    """
    if u1 > u2:
        u1, u2 = u2, u1
    # now u1 <= u2; the median is u2 clipped into [u1, u3-or-u2]
    med = u2 if u3 > u2 else (u3 if u3 > u1 else u1)
    return 2.0 * med - 1.0


@njit(inline="always", cache=True)
def cos2_cos_1(u):
    """cos(theta) for dN/dcos ~ cos^2 from a uniform u (inverse CDF (c^3 + 1)/2)."""
    return np.cbrt(2.0 * u - 1.0)


def b_momentum(sqrt_s, m_b):
    """B momentum (GeV) in the Upsilon(4S) frame: sqrt(s/4 - m_B^2)."""
    return float(np.sqrt(max(sqrt_s * sqrt_s / 4.0 - m_b * m_b, 0.0)))


@njit(inline="always", cache=True)
def _bw_mass(u, m0, g, a, b):
    """Cauchy mass in [lo, hi] given a = arctan(2(lo - m0)/g), b = arctan(2(hi - m0)/g)."""
    return m0 + 0.5 * g * np.tan(a + u * (b - a))


@njit(cache=True)
def _events(rng, n, sqrt_s, bcm, ne, sig, f_charged, with_kst, m_x, ctaus, ch, x_spin,
            me_code, kc, bc, E, IE, D, k, R, IR, counter):
    # bc: mB+, mB0, ctauB+, ctauB0, mK+, mK0, mK*+, GK*+, mK*0, GK*0
    ref = np.zeros(8)
    mpi, mpi0 = kc[0], kc[1]
    lo = kc[4] + mpi  # lightest K pi
    # arctan limits of the truncated K* line shape: charged (B+) and neutral (B0) parents
    a_c, b_c = np.arctan(2.0 * (lo - bc[6]) / bc[7]), np.arctan(2.0 * (bc[0] - m_x - bc[6]) / bc[7])
    a_n, b_n = np.arctan(2.0 * (lo - bc[8]) / bc[9]), np.arctan(2.0 * (bc[1] - m_x - bc[8]) / bc[9])
    for i in range(n):
        L.primary_vertex(rng, counter, sig, E, i)
        charged = rng.random() < f_charged
        anti = rng.random() < 0.5
        c = sin2_cos_1(rng.random(), rng.random(), rng.random())
        counter[0] += 5
        cphi, sphi = circle_1(rng, counter)
        ctB = exp_1(rng, counter, 1.0)
        sgn = -1 if anti else 1
        if charged:
            mb, ctb = bc[0], bc[2]
            IE[L.PAR_PDG, i], IE[L.PAR_Q, i] = 521 * sgn, sgn
        else:
            mb, ctb = bc[1], bc[3]
            IE[L.PAR_PDG, i], IE[L.PAR_Q, i] = 511 * sgn, 0
        pb = np.sqrt(max(0.25 * sqrt_s * sqrt_s - mb * mb, 0.0))
        s = np.sqrt(max(0.0, 1.0 - c * c))
        q = rotate_to_1(pb * s * cphi, pb * s * sphi, pb * c, ne[0], ne[1], ne[2])
        B = boost_1(q[0], q[1], q[2], 0.5 * sqrt_s, bcm[0], bcm[1], bcm[2])
        E[L.PAR_PX, i], E[L.PAR_PY, i], E[L.PAR_PZ, i], E[L.PAR_E, i] = B[0], B[1], B[2], B[3]
        ctB *= ctb
        E[L.PAR_CT, i] = ctB
        vx = E[L.PV_X, i] + B[0] / mb * ctB
        vy = E[L.PV_Y, i] + B[1] / mb * ctB
        vz = E[L.PV_Z, i] + B[2] / mb * ctB
        # recoil hadron
        if with_kst:
            if charged:
                mh = _bw_mass(rng.random(), bc[6], bc[7], a_c, b_c)
            else:
                mh = _bw_mass(rng.random(), bc[8], bc[9], a_n, b_n)
            charged_pi = rng.random() < 2.0 / 3.0
            counter[0] += 2
            if charged:
                kpdg, kq, pipdg, piq = (311, 0, 211, 1) if charged_pi else (321, 1, 111, 0)
                IE[L.RCL_PDG, i], IE[L.RCL_Q, i] = 323 * sgn, sgn
            else:
                kpdg, kq, pipdg, piq = (321, 1, -211, -1) if charged_pi else (311, 0, 111, 0)
                IE[L.RCL_PDG, i], IE[L.RCL_Q, i] = 313 * sgn, 0
            mk = kc[4] if kq != 0 else kc[5]
            mp = mpi if piq != 0 else mpi0
            if mh < mk + mp:
                mh = mk + mp + 1e-9
        else:
            mh = kc[4] if charged else kc[5]
            IE[L.RCL_PDG, i] = (321 if charged else 311) * sgn
            IE[L.RCL_Q, i] = sgn if charged else 0
        # B -> h X in the B rest frame, X along n
        nx, ny, nz = iso_1(rng, counter)
        lam = (mb * mb - (mh + m_x) ** 2) * (mb * mb - (mh - m_x) ** 2)
        p = np.sqrt(max(lam, 0.0)) / (2.0 * mb)
        bbx, bby, bbz = B[0] / B[3], B[1] / B[3], B[2] / B[3]
        X = boost_1(p * nx, p * ny, p * nz, np.sqrt(p * p + m_x * m_x), bbx, bby, bbz)
        H = boost_1(-p * nx, -p * ny, -p * nz, np.sqrt(p * p + mh * mh), bbx, bby, bbz)
        E[L.RCL_PX, i], E[L.RCL_PY, i], E[L.RCL_PZ, i], E[L.RCL_E, i] = H[0], H[1], H[2], H[3]
        ref[0], ref[1], ref[2], ref[3] = B[0], B[1], B[2], B[3]
        if with_kst:
            hbx, hby, hbz = H[0] / H[3], H[1] / H[3], H[2] / H[3]
            mode = 1 if x_spin == 0 else 0
            ax, ay, az = polarised_direction(rng, counter, mode, True, 0.0, hbx, hby, hbz, ref)
            lam = (mh * mh - (mk + mp) ** 2) * (mh * mh - (mk - mp) ** 2)
            pk = np.sqrt(max(lam, 0.0)) / (2.0 * mh)
            K = boost_1(pk * ax, pk * ay, pk * az, np.sqrt(pk * pk + mk * mk), hbx, hby, hbz)
            P = boost_1(-pk * ax, -pk * ay, -pk * az, np.sqrt(pk * pk + mp * mp), hbx, hby, hbz)
            j = 2 * i
            R[0, j], R[1, j], R[2, j], R[3, j] = K[0], K[1], K[2], K[3]
            R[0, j + 1], R[1, j + 1], R[2, j + 1], R[3, j + 1] = P[0], P[1], P[2], P[3]
            IR[0, j], IR[1, j] = kpdg * sgn, kq * sgn
            IR[0, j + 1], IR[1, j + 1] = (pipdg * sgn if piq != 0 else pipdg), piq * sgn
        pol = 1 if (x_spin == 1 and not with_kst) else 0
        ctau = L.pick_ctau(rng, counter, ctaus)
        E[L.LLP_CTAU, i] = ctau
        res = decay_llp_1(rng, counter, ch, m_x, ctau, X[0], X[1], X[2], X[3], vx, vy, vz,
                          pol, ref, me_code, D, k * i, kc)
        L.store_llp(E, i, X, (vx, vy, vz), res)


@njit(cache=True)
def _kernel(rng, n, sqrt_s, bcm, ne, sig, f_charged, with_kst, m_x, ctaus, ch, x_spin, me_code, kc,
            bc, E, IE, D, k, R, IR, counter):
    """Run :func:`_events` in cache-sized sub-blocks, then copy out (same stream order)."""
    sub = L.SUB_BLOCK
    Es, IEs, Ds, Rs, IRs = L.scratch(E, IE, D, k, R, IR, n)
    kr = R.shape[1] // n if n > 0 else 0
    for a in range(0, n, sub):
        m = min(sub, n - a)
        _events(rng, m, sqrt_s, bcm, ne, sig, f_charged, with_kst, m_x, ctaus, ch, x_spin,
                me_code, kc, bc, Es, IEs, Ds, k, Rs, IRs, counter)
        L.copy_out(Es, IEs, Ds, Rs, IRs, E, IE, D, R, IR, a, m, k, kr)


def generate(rng, n, beams, with_kst, m_x, ctau, channel, me_code, f_charged, kc, bc):
    """Generate `n` B -> K(*) X events; returns the filled layout arrays and draw counts.

    Parameters
    ----------
    rng : numpy.random.Generator
    n : int
    beams : toymc.production.beams.Beams
    with_kst : bool
        True for B -> K*(892) X, False for B -> K X.
    m_x : float
        LLP mass (GeV).
    ctau : float or array of float
        Proper decay length (cm), or the c*tau values of an equal-weight mixture.
    channel : toymc.decays.Channel
    me_code : int
        Matrix-element code for three-body channels (toymc.kinematics.threebody).
    f_charged : float
        Fraction of Upsilon(4S) -> B+ B-.
    kc, bc : float64 arrays
        Light and B-sector constants (toymc.generator builds them).
    """
    k = channel.k
    k_r = 2 if with_kst else 0
    ctaus = np.atleast_1d(np.asarray(ctau, dtype=np.float64))
    E, IE, D, R, IR = L.allocate(n, k, k_r)
    counter = np.zeros(2, dtype=np.int64)
    _kernel(rng, n, beams.sqrt_s, beams.beta, beams.electron_direction_cm(), beams.sigmas,
            f_charged, with_kst, m_x, ctaus, channel.code, channel.spin, me_code, kc, bc,
            E, IE, D, k, R, IR, counter)
    return (E, IE, D, R, IR), counter
