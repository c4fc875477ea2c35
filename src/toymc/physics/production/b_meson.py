"""e+e- -> Upsilon(4S) -> B Bbar, one B -> K X or K*(892) X, K* -> K pi.

Model (all masses, widths and lifetimes from `particle` via toymc.physics.constants):

* The Upsilon(4S) is formed at rest in the collision frame with mass
  sqrt(s) (beam-energy spread not modelled).  It decays to B+B- with
  probability ``charged_fraction`` and to B0 Bbar0 otherwise.
* For massless beams the Upsilon(4S) is produced with J_z = +-1 along the
  beam, so dN/dcos(theta) ~ sin^2(theta) for the B direction about the e-
  beam in the collision frame (spin-1 -> two spin-0, |d^1_{+-1,0}|^2);
  sampled as the median of three uniforms (CDF (2 + 3c - c^3)/4, see
  :func:`sin2_cos_1`).  B momentum p* = sqrt(s/4 - m_B^2) (PDG "Kinematics", two-body).
* One of the two B mesons (B or anti-B, equal odds) decays to the signal;
  the other is not generated.  The signal B flies c*t ~ exp(c*tau_B) with
  (p/m) c*t, and at its decay point B -> K X (or K* X) isotropically
  (spin-0 B).
* K*(892): mass from a non-relativistic Breit-Wigner (Cauchy) with the PDG
  mass and width, truncated to [m_K+ + m_pi+, m_B - m_X] (a mass below the
  threshold of the drawn K pi pair, possible only for K0 pi+ within 4 MeV
  of the lower bound, is set to that threshold); the mass
  dependence of the B -> K* X phase space is neglected.  K* -> K pi with
  isospin fractions 2/3 (charged pion for K*0 -> K+ pi-, K*+ -> K0 pi+)
  and 1/3 (neutral pion); neutral kaons are stored as K0 (311).
* With a spin-0 X the K* is longitudinal (angular-momentum conservation in
  0 -> 1 + 0): dN/dcos(theta_K) ~ cos^2(theta_K) in the K* helicity frame.
  With a spin-1 X from B -> K V the V has helicity 0 (pol code 1 in
  toymc.physics.decays); for B -> K* V both are taken unpolarised (an approximation).

Kernel structure: per sub-block of events, stage 1 (:func:`_draws`) draws every
random number into a scratch table, one quantity for all events at a time
(uniforms, normals for the luminous region, standard exponentials for the B
and LLP decay times).  Accept-reject samplers run row-wise: a first try for
every event, then the rejected ones again; azimuths and isotropic directions
are stored as points uniform in the unit disk, the K* mass as a point in the
upper half-disk whose coordinate ratio is the Cauchy variate (no tangent).
Stage 2 (:func:`_math`) maps those points to angles and masses and computes
the kinematics, with no random numbers and no library calls.  Boosts by a
particle of known mass use gamma = E/M (toymc.physics.kinematics.lorentz.boost_rest_1),
two-body energies (M^2 + m1^2 - m2^2)/(2M), so that few square roots remain.
The events depend only on the block's stream, not on the sub-block size.
"""

import numpy as np
from numba import literally, njit, types
from numba import typeof as _typeof
from numba.extending import overload

from toymc.errors import ConfigError
from toymc.physics import constants as C
from toymc.physics import layout as L
from toymc.physics.channels import MATRIX_ELEMENTS
from toymc.physics.decays import (
    DECAY_ROWS,
    KCONST,
    PI0PI0PI0,
    PIPIPI0,
    circle_from_disk,
    cos2_1,
    decay_draws,
    decay_point_1,
    decay_prepare,
    disk_rows,
    family,
    iso_from_disk,
    pair_constants,
    pair_math_1,
    three_math_1,
)
from toymc.physics.kinematics.lorentz import boost_gamma_1, boost_rest_1, frame_rotate_1
from toymc.physics.layout import S
from toymc.physics.production.spec import Process, ctau_values

__all__ = ("generate", "sin2_cos_1", "b_momentum", "PROCESS", "B_CONST")


@njit(inline="always", cache=True)
def sin2_cos_1(u1, u2, u3):
    """cos(theta) for dN/dcos ~ 1 - cos^2 from three uniforms.

    The median of three uniforms on [0, 1] has density 6x(1 - x) (order
    statistics); mapped to c = 2x - 1 this is (3/4)(1 - c^2).
    """
    # median = max(min(u1, u2), min(max(u1, u2), u3)), without branches
    med = max(min(u1, u2), min(max(u1, u2), u3))
    return 2.0 * med - 1.0


def b_momentum(sqrt_s, m_b):
    """B momentum (GeV) in the Upsilon(4S) frame: sqrt(s/4 - m_B^2)."""
    return float(np.sqrt(max(sqrt_s * sqrt_s / 4.0 - m_b * m_b, 0.0)))


@njit(inline="always", cache=True)
def _cauchy_rows(rng, counter, m, W, t, idx):
    """Points (u, v) uniform in the upper unit half-disk with t_lo v <= u <= t_hi v, m events.

    u/v is then a standard Cauchy variate truncated to [t_lo, t_hi]
    (ratio of uniforms for the density 1/(1 + x^2): the region
    0 < v <= sqrt(f(u/v)) is the half-disk; ACM Trans.
    Math. Softw. 3 (1977) 257, from memory).  The bounds are
    t[0:2] for a charged B (W row _R_CHG) and t[2:4] for a neutral one.  First
    tries for all events, then the rejected ones again (as decays.disk_rows).
    """
    c_lo, c_hi, n_lo, n_hi = t[0], t[1], t[2], t[3]
    nrej = 0
    for i in range(m):
        charged = W[_R_CHG * S + i] > 0.5
        lo = c_lo if charged else n_lo
        hi = c_hi if charged else n_hi
        u = 2.0 * rng.random() - 1.0
        v = rng.random()
        W[_R_MH * S + i] = u
        W[_R_MHV * S + i] = v
        ok = (u * u + v * v <= 1.0) & (v > 0.0) & (u >= lo * v) & (u <= hi * v)
        idx[nrej] = i
        nrej += not ok
    counter[0] += 2 * m
    for j in range(nrej):
        i = idx[j]
        charged = W[_R_CHG * S + i] > 0.5
        lo = c_lo if charged else n_lo
        hi = c_hi if charged else n_hi
        while True:
            u = 2.0 * rng.random() - 1.0
            v = rng.random()
            counter[0] += 2
            if u * u + v * v <= 1.0 and v > 0.0 and lo * v <= u <= hi * v:
                break
        W[_R_MH * S + i] = u
        W[_R_MHV * S + i] = v


# rows of the per-event draw scratch W (decay draws start at _R_DECAY)
_R_PV, _R_CHG, _R_ANTI, _R_COS, _R_PHI, _R_FLIGHT = 0, 3, 4, 5, 6, 8
_R_MH, _R_MHV, _R_CPI, _R_N, _R_HDIR, _R_CTAU, _R_DECAY = 9, 10, 11, 12, 15, 18, 19
_W_ROWS = _R_DECAY + DECAY_ROWS


@njit(cache=True, error_model="numpy")
def _draws(rng, m, f_charged, with_kst, x_spin, m_x, ctaus, ch, pol, betaf2, me_code, kc, bw,
           ref, W, idx, counter):
    """Stage 1: every random number of m events into W, one quantity at a time.

    Each loop draws one quantity for all m events (fixed order: luminous region,
    B flags and polar angle, B azimuth, B flight, K* line shape and isospin, B
    decay direction, K* decay direction, c*tau of a mixture, LLP decay).
    Azimuths and isotropic directions are stored as disk points (decays.disk_rows)
    and mapped in stage 2; the K* mass as a half-disk point whose coordinate
    ratio is the Cauchy variate (:func:`_cauchy_rows`).  A block's events depend
    on its stream, its size and the fixed SUB_BLOCK.
    """
    for r in range(3):
        for i in range(m):
            W[(_R_PV + r) * S + i] = rng.standard_normal()
    for i in range(m):
        W[_R_CHG * S + i] = 1.0 if rng.random() < f_charged else 0.0
        W[_R_ANTI * S + i] = 1.0 if rng.random() < 0.5 else 0.0
        W[_R_COS * S + i] = sin2_cos_1(rng.random(), rng.random(), rng.random())
    disk_rows(rng, counter, m, W, _R_PHI, idx)
    for i in range(m):
        W[_R_FLIGHT * S + i] = rng.standard_exponential()
    counter[0] += 5 * m
    counter[1] += 3 * m
    counter[2] += m
    if with_kst:
        _cauchy_rows(rng, counter, m, W, bw, idx)
        for i in range(m):
            W[_R_CPI * S + i] = 1.0 if rng.random() < 2.0 / 3.0 else 0.0
        counter[0] += m
    else:
        for i in range(m):
            W[_R_MH * S + i] = kc[4] if W[_R_CHG * S + i] > 0.5 else kc[5]
            W[_R_CPI * S + i] = 0.0
    disk_rows(rng, counter, m, W, _R_N, idx)
    if with_kst:
        if x_spin == 0:  # helicity 0: cos^2 law about the helicity axis, uniform azimuth
            for i in range(m):
                W[(_R_HDIR + 2) * S + i] = cos2_1(rng, counter)
        disk_rows(rng, counter, m, W, _R_HDIR, idx)
    for i in range(m):
        W[_R_CTAU * S + i] = L.pick_ctau(rng, counter, ctaus)
    decay_draws(rng, counter, m, ch, pol, betaf2, me_code, m_x, kc, ref, W, _R_DECAY, idx)


@njit(inline="always", cache=True)
def _prepare(m, with_kst, x_spin, kc, bc, W):
    """Stage 2, first step: disk points to angles and directions, Cauchy points to K* masses."""
    circle_from_disk(m, W, _R_PHI)
    iso_from_disk(m, W, _R_N)
    if with_kst:
        m0c, gc, m0n, gn = bc[6], 0.5 * bc[7], bc[8], 0.5 * bc[9]
        mkc, mkn, mpc, mpn = kc[4], kc[5], kc[0], kc[1]
        for i in range(m):
            charged = W[_R_CHG * S + i] > 0.5
            charged_pi = W[_R_CPI * S + i] > 0.5
            x = W[_R_MH * S + i] / W[_R_MHV * S + i]
            mh = m0c + gc * x if charged else m0n + gn * x
            # kaon charged for K*+ -> K+ pi0 and K*0 -> K+ pi-
            mk = mkc if charged != charged_pi else mkn
            mp = mpc if charged_pi else mpn
            W[_R_MH * S + i] = max(mh, mk + mp + 1e-9)
        if x_spin == 0:
            circle_from_disk(m, W, _R_HDIR)
        else:
            iso_from_disk(m, W, _R_HDIR)


@njit(cache=True, error_model="numpy")
def _math(m, sqrt_s, bcm, rot, sig, with_kst, x_spin, m_x, ch, pol, pst, kc, bc, W,
          E, IE, D, k, R, IR):
    """Stage 2: the kinematics of m events from their draws (no random numbers, no calls)."""
    _prepare(m, with_kst, x_spin, kc, bc, W)
    decay_prepare(m, ch, pol, W, _R_DECAY)
    g = 1.0 / np.sqrt(1.0 - (bcm[0] ** 2 + bcm[1] ** 2 + bcm[2] ** 2))
    g2 = g * g / (g + 1.0)
    e_beam = 0.5 * sqrt_s
    pb_c = np.sqrt(max(e_beam * e_beam - bc[0] * bc[0], 0.0))
    pb_n = np.sqrt(max(e_beam * e_beam - bc[1] * bc[1], 0.0))
    mx2 = m_x * m_x
    # constants in locals: loads from arrays inside the loop could alias its stores
    mb_c, mb_n, ctb_c, ctb_n = bc[0], bc[1], bc[2], bc[3]
    s0, s1, s2 = sig[0], sig[1], sig[2]
    r0, r1, r2, r3, r4, r5, r6, r7, r8 = (rot[0], rot[1], rot[2], rot[3], rot[4], rot[5],
                                          rot[6], rot[7], rot[8])
    bx, by, bz = bcm[0], bcm[1], bcm[2]
    for i in range(m):
        charged = W[_R_CHG * S + i] > 0.5
        mb = mb_c if charged else mb_n
        ctb = ctb_c if charged else ctb_n
        pb = pb_c if charged else pb_n
        imb = 1.0 / mb
        pvx = s0 * W[_R_PV * S + i]
        pvy = s1 * W[(_R_PV + 1) * S + i]
        pvz = s2 * W[(_R_PV + 2) * S + i]
        E[L.PV_X * S + i], E[L.PV_Y * S + i], E[L.PV_Z * S + i] = pvx, pvy, pvz
        # B in the collision frame (z along the e- beam), rotated to the lab axes, boosted
        c = W[_R_COS * S + i]
        st = np.sqrt(max(0.0, 1.0 - c * c))
        lx, ly, lz = pb * st * W[_R_PHI * S + i], pb * st * W[(_R_PHI + 1) * S + i], pb * c
        qx = r0 * lx + r3 * ly + r6 * lz
        qy = r1 * lx + r4 * ly + r7 * lz
        qz = r2 * lx + r5 * ly + r8 * lz
        B = boost_gamma_1(qx, qy, qz, e_beam, bx, by, bz, g, g2)
        L.put4(E, L.PAR_PX, i, B)
        ctB = W[_R_FLIGHT * S + i] * ctb
        E[L.PAR_CT * S + i] = ctB
        vx = pvx + B[0] * imb * ctB
        vy = pvy + B[1] * imb * ctB
        vz = pvz + B[2] * imb * ctB
        # B -> h X in the B rest frame, X along n (two-body energies without square roots)
        mh = W[_R_MH * S + i]
        mh2 = mh * mh
        mb2 = mb * mb
        lam = (mb2 - (mh + m_x) ** 2) * (mb2 - (mh - m_x) ** 2)
        p = np.sqrt(max(lam, 0.0)) * 0.5 * imb
        ex = (mb2 + mx2 - mh2) * 0.5 * imb
        eh = mb - ex
        nx, ny, nz = W[_R_N * S + i], W[(_R_N + 1) * S + i], W[(_R_N + 2) * S + i]
        fb = 1.0 / (B[3] + mb)
        X = boost_rest_1(p * nx, p * ny, p * nz, ex, B[0], B[1], B[2], B[3], fb, imb)
        H = boost_rest_1(-p * nx, -p * ny, -p * nz, eh, B[0], B[1], B[2], B[3], fb, imb)
        L.put4(E, L.RCL_PX, i, H)
        L.put4(E, L.LLP_PX, i, X)
        E[L.LLP_VX * S + i], E[L.LLP_VY * S + i], E[L.LLP_VZ * S + i] = vx, vy, vz
    for i in range(m):
        charged = W[_R_CHG * S + i] > 0.5
        sgn = -1 if W[_R_ANTI * S + i] > 0.5 else 1
        IE[L.PAR_PDG * S + i] = (521 if charged else 511) * sgn
        IE[L.PAR_Q * S + i] = sgn if charged else 0
        if not with_kst:
            IE[L.RCL_PDG * S + i] = (321 if charged else 311) * sgn
            IE[L.RCL_Q * S + i] = sgn if charged else 0
    # short loops over the sub-block (the previous stage's results are in E): each
    # iteration is a short dependency chain, so successive events overlap in the core
    _recoil_if(with_kst, m, x_spin, kc, W, E, IE, R, IR)
    # the channel and pol are numba literals here (see _kernel): one loop for this channel
    _llp_loop(m, ch, pol, m_x, pst, kc, W, E, D)


@njit(inline="always", cache=True)
def _recoil_loop(m, helicity, kc, W, E, R):
    """K* -> K pi kinematics for m events (B and K* four-vectors from E); `helicity`
    is a literal at each call site, so the loop has no branch left to vectorise around."""
    for i in range(m):
        charged = W[_R_CHG * S + i] > 0.5
        charged_pi = W[_R_CPI * S + i] > 0.5
        mh = W[_R_MH * S + i]
        mh2 = mh * mh
        mk = kc[4] if charged != charged_pi else kc[5]
        mp = kc[0] if charged_pi else kc[1]
        B = L.get4(E, L.PAR_PX, i)
        H = L.get4(E, L.RCL_PX, i)
        imh = 1.0 / mh
        fh = 1.0 / (H[3] + mh)
        hx, hy, hz = W[_R_HDIR * S + i], W[(_R_HDIR + 1) * S + i], W[(_R_HDIR + 2) * S + i]
        if helicity:
            # (cos phi, sin phi, cos theta) about the helicity axis
            st = np.sqrt(max(0.0, 1.0 - hz * hz))
            hx, hy = st * hx, st * hy
            # helicity axis: opposite to the B in the K* rest frame (reached from the lab)
            A = boost_rest_1(B[0], B[1], B[2], B[3], -H[0], -H[1], -H[2], H[3], fh, imh)
            ia = -1.0 / np.sqrt(A[0] * A[0] + A[1] * A[1] + A[2] * A[2])
            hx, hy, hz = frame_rotate_1(hx, hy, hz, A[0] * ia, A[1] * ia, A[2] * ia)
        lam = (mh2 - (mk + mp) ** 2) * (mh2 - (mk - mp) ** 2)
        pk = np.sqrt(max(lam, 0.0)) * 0.5 * imh
        ek = (mh2 + mk * mk - mp * mp) * 0.5 * imh
        K = boost_rest_1(pk * hx, pk * hy, pk * hz, ek, H[0], H[1], H[2], H[3], fh, imh)
        P = boost_rest_1(-pk * hx, -pk * hy, -pk * hz, mh - ek, H[0], H[1], H[2], H[3], fh,
                         imh)
        # recoil daughter d, row r at (4 d + r) S + i
        R[i], R[S + i], R[2 * S + i], R[3 * S + i] = K[0], K[1], K[2], K[3]
        R[4 * S + i], R[5 * S + i], R[6 * S + i], R[7 * S + i] = P[0], P[1], P[2], P[3]


@njit(inline="always", cache=True)
def _recoil_decay(m, x_spin, kc, W, E, IE, R, IR):
    """K* -> K pi for m events: kinematics, then the ids and charges."""
    if x_spin == 0:
        _recoil_loop(m, True, kc, W, E, R)
    else:
        _recoil_loop(m, False, kc, W, E, R)
    for i in range(m):
        charged = W[_R_CHG * S + i] > 0.5
        charged_pi = W[_R_CPI * S + i] > 0.5
        sgn = -1 if W[_R_ANTI * S + i] > 0.5 else 1
        # K*+ -> K0 pi+ | K+ pi0,  K*0 -> K+ pi- | K0 pi0 (ints: (2 d + r) S + i)
        kq = 1 if charged != charged_pi else 0
        piq = (1 if charged else -1) if charged_pi else 0
        IE[L.RCL_PDG * S + i] = (323 if charged else 313) * sgn
        IE[L.RCL_Q * S + i] = sgn if charged else 0
        IR[i], IR[S + i] = (321 if kq else 311) * sgn, kq * sgn
        IR[2 * S + i] = 211 * piq * sgn if charged_pi else 111
        IR[3 * S + i] = piq * sgn


def _recoil_if(with_kst, m, x_spin, kc, W, E, IE, R, IR):
    """:func:`_recoil_decay` if with_kst (kernel-only; nothing is compiled for a literal
    False, so B -> K X kernels carry no K* code)."""
    raise NotImplementedError("_recoil_if runs inside numba kernels only")


@overload(_recoil_if, prefer_literal=True)
def _recoil_if_impl(with_kst, m, x_spin, kc, W, E, IE, R, IR):
    if isinstance(with_kst, types.BooleanLiteral) and not with_kst.literal_value:
        return lambda with_kst, m, x_spin, kc, W, E, IE, R, IR: None

    def impl(with_kst, m, x_spin, kc, W, E, IE, R, IR):
        if with_kst:
            _recoil_decay(m, x_spin, kc, W, E, IE, R, IR)
    return impl


@njit(inline="always", cache=True)
def _llp_frame(m_x, fx_im, pol, E, i):
    """LLP four-vector and production point of event i, and its helicity axis for pol 1."""
    X = L.get4(E, L.LLP_PX, i)
    ax, ay, az = 0.0, 0.0, 1.0
    if pol == 1:
        # helicity 0 about the direction opposite to the B in the X rest frame
        fx = 1.0 / (X[3] + m_x)
        B = L.get4(E, L.PAR_PX, i)
        A = boost_rest_1(B[0], B[1], B[2], B[3], -X[0], -X[1], -X[2], X[3], fx, fx_im)
        ia = -1.0 / np.sqrt(A[0] * A[0] + A[1] * A[1] + A[2] * A[2])
        ax, ay, az = A[0] * ia, A[1] * ia, A[2] * ia
    return X, ax, ay, az


@njit(cache=True, error_model="numpy")
def _llp_three(m, ch, m_x, kc, W, E, D):
    """Three-body LLP decays of m events."""
    for i in range(m):
        X = L.get4(E, L.LLP_PX, i)
        vx, vy, vz = E[L.LLP_VX * S + i], E[L.LLP_VY * S + i], E[L.LLP_VZ * S + i]
        ctau = W[_R_CTAU * S + i]
        E[L.LLP_CTAU * S + i] = ctau
        res = decay_point_1(m_x, ctau, X[0], X[1], X[2], vx, vy, vz, W, _R_DECAY, i)
        three_math_1(ch, m_x, X[0], X[1], X[2], X[3], res[2], res[3], res[4], W, _R_DECAY, i,
                     D, kc)
        L.store_llp(E, i, X, (vx, vy, vz), res)


@njit(cache=True, error_model="numpy")
def _llp_pair(m, ch, pol, m_x, pst, W, E, D):
    """Two-body LLP decays of m events (pol 0 or 1)."""
    fx_im = 1.0 / m_x
    for i in range(m):
        X, ax, ay, az = _llp_frame(m_x, fx_im, pol, E, i)
        vx, vy, vz = E[L.LLP_VX * S + i], E[L.LLP_VY * S + i], E[L.LLP_VZ * S + i]
        ctau = W[_R_CTAU * S + i]
        E[L.LLP_CTAU * S + i] = ctau
        res = decay_point_1(m_x, ctau, X[0], X[1], X[2], vx, vy, vz, W, _R_DECAY, i)
        pair_math_1(ch, pol, m_x, pst, X[0], X[1], X[2], X[3], res[2], res[3], res[4],
                    ax, ay, az, W, _R_DECAY, i, D)
        L.store_llp(E, i, X, (vx, vy, vz), res)


def _llp_loop(m, ch, pol, m_x, pst, kc, W, E, D):
    """LLP decays of m events (kernel-only): :func:`_llp_three` or :func:`_llp_pair`,
    chosen while numba types the caller when `ch` and `pol` are literals."""
    raise NotImplementedError("_llp_loop runs inside numba kernels only")


@overload(_llp_loop, prefer_literal=True)
def _llp_loop_typed(m, ch, pol, m_x, pst, kc, W, E, D):
    fam = family(ch, pol)
    if fam == "three":
        return (lambda m, ch, pol, m_x, pst, kc, W, E, D:
                _llp_three(m, ch, m_x, kc, W, E, D))
    if fam != "any":
        return (lambda m, ch, pol, m_x, pst, kc, W, E, D:
                _llp_pair(m, ch, pol, m_x, pst, W, E, D))

    def any_channel(m, ch, pol, m_x, pst, kc, W, E, D):
        if ch == PIPIPI0 or ch == PI0PI0PI0:
            _llp_three(m, ch, m_x, kc, W, E, D)
        else:
            _llp_pair(m, ch, pol, m_x, pst, W, E, D)
    return any_channel


@njit(cache=True, error_model="numpy")
def _kernel(rng, n, sqrt_s, bcm, ne, sig, f_charged, with_kst, m_x, ctaus, ch, x_spin, pol,
            me_code, kc, bc, E, IE, D, k, R, IR, counter):
    """Draws then kinematics in cache-sized sub-blocks, then copy out.

    The stream is consumed sub-block by sub-block in a fixed order, so a
    block's events depend only on its stream and size.
    """
    # one compiled variant per (recoil, channel, spin, pol, matrix element): as literals they
    # let the overloads below choose only this channel's code while numba types the kernel
    with_kst, ch, x_spin, me_code = (literally(with_kst), literally(ch), literally(x_spin),
                                     literally(me_code))
    sub = L.SUB_BLOCK
    Es, IEs, Ds, Rs, IRs = L.scratch(E, IE, D, k, R, IR, n)
    W = np.empty(_W_ROWS * L.S)
    kr = R.shape[1] // n if n > 0 else 0
    lo = kc[4] + kc[0]  # m_K+ + m_pi+
    # K* line-shape window [lo, m_B - m_X] in units of half widths about the pole
    bw = np.array([2.0 * (lo - bc[6]) / bc[7], 2.0 * (bc[0] - m_x - bc[6]) / bc[7],
                   2.0 * (lo - bc[8]) / bc[9], 2.0 * (bc[1] - m_x - bc[8]) / bc[9]])
    idx = np.empty(sub, dtype=np.int64)
    # collision-frame axes (z along the e- beam) in the lab: columns of rot
    rot = np.empty(9)
    for c in range(3):
        q = frame_rotate_1(1.0 if c == 0 else 0.0, 1.0 if c == 1 else 0.0,
                           1.0 if c == 2 else 0.0, ne[0], ne[1], ne[2])
        rot[3 * c], rot[3 * c + 1], rot[3 * c + 2] = q[0], q[1], q[2]
    pol = literally(pol)
    betaf2, pst = pair_constants(ch, m_x, kc)
    ref = np.zeros(8)  # beam four-vectors, for pol 2 only (not used by B decays)
    for a in range(0, n, sub):
        m = min(sub, n - a)
        _draws(rng, m, f_charged, with_kst, x_spin, m_x, ctaus, ch, pol, betaf2, me_code, kc,
               bw, ref, W, idx, counter)
        _math(m, sqrt_s, bcm, rot, sig, with_kst, x_spin, m_x, ch, pol, pst, kc, bc, W,
              Es, IEs, Ds, k, Rs, IRs)
        L.copy_out(Es, IEs, Ds, Rs, IRs, E, IE, D, R, IR, a, m, k, kr)


#: compiled kernel of each (with_kst, channel, spin, pol, me_code), called directly: a call
#: through the dispatcher would first type the kernel with plain ints, meet numba.literally
#: and retry with literals, which costs tens of milliseconds per block
_VARIANTS = {}
_LITERAL_ARGS = (7, 10, 11, 12, 13)  # positions of the variant's values in _kernel's arguments


def _variant(variant, args):
    """The compiled `_kernel` for this variant (compiled, or loaded from numba's cache, on
    first use through the dispatcher)."""
    fn = _VARIANTS.get(variant)
    if fn is not None:
        return fn
    want = tuple(types.literal(v) for v in variant)
    for sig, cres in _kernel.overloads.items():
        if tuple(sig[p] for p in _LITERAL_ARGS) == want:
            _VARIANTS[variant] = cres.entry_point
            return cres.entry_point
    _kernel.compile(tuple(types.literal(a) if p in _LITERAL_ARGS else _typeof(a)
                          for p, a in enumerate(args)))
    return _variant(variant, args)


def generate(rng, n, beams, with_kst, m_x, ctau, channel, me_code, f_charged, kc, bc):
    """Generate `n` B -> K(*) X events; returns the filled layout arrays and draw counts.

    Parameters
    ----------
    rng : numpy.random.Generator
    n : int
    beams : toymc.physics.production.beams.Beams
    with_kst : bool
        True for B -> K*(892) X, False for B -> K X.
    m_x : float
        LLP mass (GeV).
    ctau : float or array of float
        Proper decay length (cm), or the c*tau values of an equal-weight mixture.
    channel : toymc.physics.decays.Channel
    me_code : int
        Matrix-element code for three-body channels (toymc.physics.kinematics.threebody).
    f_charged : float
        Fraction of Upsilon(4S) -> B+ B-.
    kc, bc : float64 arrays
        Light and B-sector constants (toymc.engine.generator builds them).
    """
    k = channel.k
    k_r = 2 if with_kst else 0
    ctaus = np.atleast_1d(np.asarray(ctau, dtype=np.float64))
    E, IE, D, R, IR = L.allocate(n, k, k_r)
    counter = np.zeros(3, dtype=np.int64)
    variant = (bool(with_kst), int(channel.code), int(channel.spin),
               1 if (channel.spin == 1 and not with_kst) else 0, int(me_code))
    args = (rng, n, beams.sqrt_s, beams.beta, beams.electron_direction_cm(), beams.sigmas,
            f_charged, variant[0], m_x, ctaus, variant[1], variant[2], variant[3], variant[4],
            kc, bc, E, IE, D, k, R, IR, counter)
    _variant(variant, args)(*args)
    return (E, IE, D, R, IR), counter


# ----------------------------------------------------------------- the process entry
#: B-sector constants passed to the kernel (GeV, cm)
B_CONST = np.array([C.M_B, C.M_B0, C.CTAU_B, C.CTAU_B0, C.M_K, C.M_K0,
                    C.M_KSTP, C.G_KSTP, C.M_KST0, C.G_KST0])


def _run(cfg, rng, n, channel):
    p = cfg.production
    return generate(rng, n, cfg.beams, p.recoil == "K*", cfg.llp.mass, ctau_values(cfg),
                    channel, MATRIX_ELEMENTS[cfg.llp.matrix_element], p.charged_fraction,
                    KCONST, B_CONST)


def _limit(cfg):
    """m_B - m_K, or m_B - (m_K + m_pi) for K*: the lightest B, the heaviest recoil."""
    m_b = min(C.M_B, C.M_B0)
    if cfg.production.recoil == "K":
        return m_b - max(C.M_K, C.M_K0)
    return m_b - max(C.M_K + C.M_PI0, C.M_K0 + C.M_PI)


def _check(cfg):
    if cfg.beams.sqrt_s <= 2 * max(C.M_B, C.M_B0):
        raise ConfigError(cfg.path, "beams.e_minus", cfg.beams.e_minus,
                          f"sqrt(s) = {cfg.beams.sqrt_s:.4f} GeV must exceed 2 m_B0 = "
                          f"{2 * C.M_B0:.4f} GeV for b_meson")


def _normalisation(cfg):
    p = cfg.production
    return {"process": "b_meson", "sigma_bb_fb": p.sigma_bb, "charged_fraction":
            p.charged_fraction, "b_per_event": 2.0, "recoil": p.recoil}


PROCESS = Process(
    "b_meson", run=_run, keys={"recoil": None, "charged_fraction": None, "sigma_bb": None},
    limit=_limit, limit_note=lambda cfg: f" (m_B - m_{cfg.production.recoil})",
    normalisation=_normalisation, check=_check, models=True,
    # a vector X from B -> K X has helicity 0 (pol 1); with a K* both are unpolarised
    polarisation=lambda cfg: 1 if cfg.production.recoil == "K" else 0)
