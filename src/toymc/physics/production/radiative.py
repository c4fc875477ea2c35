"""e+e- -> gamma V with the exact tree-level angular distribution.

For massless beams and a vector boson V of mass m coupling to electrons with
a vector coupling g = eps e, the spin-summed squared amplitude is
    sum |M|^2 = 8 e^2 g^2 [u/t + t/u + 2 m^2 s/(t u)]
(crossing of q qbar -> V g; checked in tests/physics/test_radiative.py against an
explicit Dirac-trace computation), which gives, with x = m^2/s and theta
the photon angle to the e- beam in the collision frame,
    dsigma/dcos = (2 pi alpha^2 eps^2 / s) (1 - x) [(1 + cos^2) + 4x/(1 - x)^2] / sin^2 .
For m -> 0 and eps = 1 this is the QED result for e+e- -> gamma gamma
(textbook QED, e.g. "An Introduction to Quantum Field Theory" (1995),
sec. 5.5, massless limit; there the total needs a factor 1/2 for identical
photons, here it does not).

Integrated over c1 < cos(theta) < c2 (antiderivative -c + (2 + K) artanh(c),
K = 4x/(1 - x)^2):
    sigma = (2 pi alpha^2 eps^2 / s)(1 - x) [-(c2 - c1) + (2 + K)(artanh c2 - artanh c1)].

Sampling: cos(theta) from the envelope 1/sin^2 (c = tanh(a + u (b - a))),
kept with probability [(1 + c^2) + K]/(2 + K) (>= 1/2).  The photon has
E* = (s - m^2)/(2 sqrt(s)) in the collision frame.  The V decay uses the
full spin correlation with the beams (pol code 2 in toymc.physics.decays).
"""

import numpy as np
from numba import njit

from toymc.physics import layout as L
from toymc.physics.constants import ALPHA_EM, FB_PER_INV_GEV2
from toymc.physics.decays import (
    DECAY_ROWS,
    KCONST,
    PIPI,
    circle_1,
    decay_point_1,
    pair_constants,
    pair_math_1,
    polarised_direction,
)
from toymc.physics.kinematics.elementary import atanh_1, tanh_1
from toymc.physics.kinematics.lorentz import boost_1, rotate_to_1
from toymc.physics.layout import S
from toymc.physics.production.spec import Process, ctau_values

__all__ = ("dsigma_dcos", "sigma", "generate", "PROCESS")


def dsigma_dcos(cos_theta, sqrt_s, m, eps=1.0):
    """dsigma/dcos(theta) of e+e- -> gamma V in fb (photon angle in the collision frame).

    The one formula of this cross-section in toymc
    (:mod:`toymc.physics.models.vector_boson` calls it with eps = c_e/e).

    Parameters
    ----------
    cos_theta : array_like
        Cosine of the photon angle to the e- beam.
    sqrt_s, m : float or array_like
        Centre-of-mass energy and V mass, GeV.
    eps : float
        Coupling to electrons in units of e.
    """
    c = np.asarray(cos_theta, dtype=np.float64)
    s = sqrt_s * sqrt_s
    x = m * m / s
    k = 4.0 * x / (1.0 - x) ** 2
    pref = 2.0 * np.pi * ALPHA_EM**2 * eps**2 / s * (1.0 - x)
    return pref * ((1.0 + c * c) + k) / (1.0 - c * c) * FB_PER_INV_GEV2


def sigma(sqrt_s, m, cos_min, cos_max, eps=1.0):
    """Cross-section (fb) of e+e- -> gamma V with cos_min < cos(theta_gamma) < cos_max.

    A float for a scalar mass, an array for an array of masses (same formula).
    """
    s = sqrt_s * sqrt_s
    x = m * m / s
    k = 4.0 * x / (1.0 - x) ** 2
    pref = 2.0 * np.pi * ALPHA_EM**2 * eps**2 / s * (1.0 - x)
    val = -(cos_max - cos_min) + (2.0 + k) * (atanh_1(cos_max) - atanh_1(cos_min))
    out = pref * val * FB_PER_INV_GEV2
    return float(out) if np.ndim(out) == 0 else out


@njit(cache=True)
def _events(rng, n, sqrt_s, bcm, ne, sig, m_v, ctaus, ch, cmin, cmax, em, ep, kc,
            E, IE, D, k, R, IR, W, counter):
    s = sqrt_s * sqrt_s
    x = m_v * m_v / s
    kk = 4.0 * x / (1.0 - x) ** 2
    a, b = atanh_1(cmin), atanh_1(cmax)
    eg = (s - m_v * m_v) / (2.0 * sqrt_s)
    ev = sqrt_s - eg
    ref = np.zeros(8)
    ref[0:4] = em
    ref[4:8] = ep
    ptot = em + ep
    betaf2, pst = pair_constants(ch, m_v, kc)
    scalar_pair = ch == PIPI
    for i in range(n):
        for r in range(3):  # Gaussian luminous region
            E[(L.PV_X + r) * S + i] = sig[r] * rng.standard_normal()
        counter[1] += 3
        while True:
            c = tanh_1(a + rng.random() * (b - a))
            counter[0] += 2
            if rng.random() * (2.0 + kk) <= (1.0 + c * c) + kk:
                break
        cphi, sphi = circle_1(rng, counter)
        st = np.sqrt(max(0.0, 1.0 - c * c))
        q = rotate_to_1(eg * st * cphi, eg * st * sphi, eg * c, ne[0], ne[1], ne[2])
        G = boost_1(q[0], q[1], q[2], eg, bcm[0], bcm[1], bcm[2])
        V = boost_1(-q[0], -q[1], -q[2], ev, bcm[0], bcm[1], bcm[2])
        L.put4(E, L.PAR_PX, i, ptot)
        E[L.PAR_CT * S + i] = 0.0
        L.put4(E, L.RCL_PX, i, G)
        L.put4(IE, L.PAR_PDG, i, (0, 0, 22, 0))  # no parent; the recoil is a photon
        vx, vy, vz = E[L.PV_X * S + i], E[L.PV_Y * S + i], E[L.PV_Z * S + i]
        ctau = L.pick_ctau(rng, counter, ctaus)
        E[L.LLP_CTAU * S + i] = ctau
        # the spin correlation with the beams (pol 2) needs V's velocity at draw time
        # (the V decays to a pair: what decays.decay_draws_1 draws for a two-body
        # channel with pol 2, without the other channels' code)
        W[i] = rng.standard_exponential()
        counter[2] += 1
        nx, ny, nz = polarised_direction(rng, counter, 2, scalar_pair, betaf2, V[0] / V[3],
                                         V[1] / V[3], V[2] / V[3], ref)
        W[S + i], W[2 * S + i], W[3 * S + i] = nx, ny, nz
        res = decay_point_1(m_v, ctau, V[0], V[1], V[2], vx, vy, vz, W, 0, i)
        pair_math_1(ch, 2, m_v, pst, V[0], V[1], V[2], V[3], res[2], res[3], res[4],
                    0.0, 0.0, 1.0, W, 0, i, D)
        L.store_llp(E, i, V, (vx, vy, vz), res)


@njit(cache=True)
def _kernel(rng, n, sqrt_s, bcm, ne, sig, m_v, ctaus, ch, cmin, cmax, em, ep, kc, E, IE, D, k, R,
            IR, counter):
    """Run :func:`_events` in cache-sized sub-blocks, then copy out (same stream order)."""
    sub = L.SUB_BLOCK
    Es, IEs, Ds, Rs, IRs = L.scratch(E, IE, D, k, R, IR, n)
    W = np.empty(DECAY_ROWS * S)
    kr = R.shape[1] // n if n > 0 else 0
    for a in range(0, n, sub):
        m = min(sub, n - a)
        _events(rng, m, sqrt_s, bcm, ne, sig, m_v, ctaus, ch, cmin, cmax, em, ep, kc, Es,
                IEs, Ds, k, Rs, IRs, W, counter)
        L.copy_out(Es, IEs, Ds, Rs, IRs, E, IE, D, R, IR, a, m, k, kr)


def generate(rng, n, beams, m_v, ctau, channel, cos_min, cos_max, kc):
    """Generate `n` e+e- -> gamma V events; returns the layout arrays and draw counts."""
    k = channel.k
    ctaus = np.atleast_1d(np.asarray(ctau, dtype=np.float64))
    E, IE, D, R, IR = L.allocate(n, k, 0)
    counter = np.zeros(3, dtype=np.int64)
    em, ep = beams.four_momenta()
    _kernel(rng, n, beams.sqrt_s, beams.beta, beams.electron_direction_cm(), beams.sigmas,
            m_v, ctaus, channel.code, cos_min, cos_max, em, ep, kc, E, IE, D, k, R, IR, counter)
    return (E, IE, D, R, IR), counter


# ----------------------------------------------------------------- the process entry
def _run(cfg, rng, n, channel):
    p = cfg.production
    return generate(rng, n, cfg.beams, cfg.llp.mass, ctau_values(cfg), channel,
                    p.photon_cos_min, p.photon_cos_max, KCONST)


def _normalisation(cfg):
    p = cfg.production
    return {"process": "radiative", "sigma_per_eps2_fb": sigma(
        cfg.beams.sqrt_s, cfg.llp.mass, p.photon_cos_min, p.photon_cos_max),
        "photon_cos_min": p.photon_cos_min, "photon_cos_max": p.photon_cos_max}


PROCESS = Process(
    "radiative", run=_run, keys={"photon_cos_min": None, "photon_cos_max": None},
    limit=lambda cfg: cfg.beams.sqrt_s, limit_note=" (sqrt(s))", normalisation=_normalisation,
    spins=(1,), polarisation=2, models=True)
