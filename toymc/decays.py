"""Decay of the long-lived particle: decay vertex and daughters, per channel.

The proper decay length c*t is exponential with mean c*tau (exponential
decay law, PDG review "Kinematics", survival probability); the lab decay
point is the production point plus (p/m) c*t along the LLP momentum, i.e.
beta*gamma*c*t (PDG review "Kinematics", sec. 49.2).

Channels (``CHANNELS``; daughters in the order they are stored):

=================  ====  =====================================================
name               spin  stored daughters (status 2 = decayed further)
=================  ====  =====================================================
``gamma_gamma``    0     gamma gamma (isotropic, spin 0)
``pi_pi_pi0``      0     pi+ pi- pi0(2) gamma gamma   Dalitz phase space with an
                         optional matrix element; pi0 -> gamma gamma isotropic
``pi0_pi0_pi0``    0     pi0(2) pi0(2) pi0(2) and 6 gamma
``e_e``            1     e- e+
``mu_mu``          1     mu- mu+
``pi_pi``          1     pi+ pi-
=================  ====  =====================================================

The pi0 lives 25 nm (PDG), so its photons start at the LLP decay point.

Polarisation of a vector LLP (``pol`` code passed by the production):

0. none known: isotropic in the LLP rest frame.
1. helicity 0 about a reference four-vector R (the parent B for B -> K V):
   in the LLP rest frame (reached from the lab by a pure boost) the axis is
   a = -R/|R|; dN/dOmega ~ 1 - beta_f^2 (a.n)^2 for fermions (massive
   fermion pair from a longitudinal vector: L_{mu nu} eps^mu eps^nu with
   the trace of (l1 + m) gamma (l2 - m) gamma), ~ (a.n)^2 for pion pairs
   (vector current (l1 - l2)^mu).  The same code gives the cos^2 helicity
   law of K* -> K pi in B -> K* X with spin-0 X.
2. e+e- -> gamma V: the full spin correlation, from the lepton tensor
   contracted with the production tensor of e+e- -> gamma V.  For massless
   beams the numerator of e+e- -> gamma (V -> f fbar) is proportional to
   sum_ij (p_i . l_j)^2 (initial-state-radiation numerator for a vector
   current; its average over the decay angles reproduces
   u/t + t/u + 2 m^2 s/(t u), checked in tests/test_radiative.py).  With
   l1,2 = q/2 +- r and current conservation this gives, in the V rest frame
   with e-, e+ momenta p1, p2 there,
       fermions:  (2 - beta_f^2)(E1^2 + E2^2) + beta_f^2 [(p1.n)^2 + (p2.n)^2]
       pions:     (E1^2 + E2^2) - (p1.n)^2 - (p2.n)^2
   (derived here; it reproduces 1 + cos^2 + (1 - beta^2) sin^2 and sin^2 for
   e+e- -> f fbar, pi pi in the collinear limit).

Rest-frame directions are sampled by accept-reject against the flat
density, which keeps events unweighted.
"""

import numpy as np
from numba import njit

from . import constants as C
from .kinematics.lorentz import boost_1, rotate_to_1
from .kinematics.threebody import dalitz_1, momenta3_1

__all__ = ("Channel", "CHANNELS", "channel", "KCONST", "decay_llp_1", "iso_1", "circle_1", "exp_1", "polarised_direction", "threshold")

# codes used inside kernels
GG, PIPIPI0, PI0PI0PI0, EE, MUMU, PIPI = 0, 1, 2, 3, 4, 5

# kernel constant array: masses in GeV, passed to kernels (not frozen globals)
K_PI, K_PI0, K_E, K_MU, K_K, K_K0 = 0, 1, 2, 3, 4, 5
KCONST = np.array([C.M_PI, C.M_PI0, C.M_E, C.M_MU, C.M_K, C.M_K0], dtype=np.float64)


class Channel:
    """Static description of a decay channel (name, code, spin, stored daughters)."""

    def __init__(self, name, code, spin, pdg, q, status, mother):
        self.name, self.code, self.spin = name, code, spin
        self.pdg = np.asarray(pdg, dtype=np.int32)
        self.q = np.asarray(q, dtype=np.int32)
        self.status = np.asarray(status, dtype=np.int32)
        self.mother = np.asarray(mother, dtype=np.int32)
        self.k = len(pdg)

    @property
    def final_masses(self):
        """Masses (GeV) of the direct daughters, for the threshold."""
        direct = self.mother == -1
        return [C.mass(int(abs(p))) if abs(p) != 22 else 0.0 for p in self.pdg[direct]]


CHANNELS = {
    "gamma_gamma": Channel("gamma_gamma", GG, 0, [22, 22], [0, 0], [1, 1], [-1, -1]),
    "pi_pi_pi0": Channel(
        "pi_pi_pi0", PIPIPI0, 0, [211, -211, 111, 22, 22], [1, -1, 0, 0, 0],
        [1, 1, 2, 1, 1], [-1, -1, -1, 2, 2],
    ),
    "pi0_pi0_pi0": Channel(
        "pi0_pi0_pi0", PI0PI0PI0, 0, [111, 111, 111, 22, 22, 22, 22, 22, 22],
        [0] * 9, [2, 2, 2, 1, 1, 1, 1, 1, 1], [-1, -1, -1, 0, 0, 1, 1, 2, 2],
    ),
    "e_e": Channel("e_e", EE, 1, [11, -11], [-1, 1], [1, 1], [-1, -1]),
    "mu_mu": Channel("mu_mu", MUMU, 1, [13, -13], [-1, 1], [1, 1], [-1, -1]),
    "pi_pi": Channel("pi_pi", PIPI, 1, [211, -211], [1, -1], [1, 1], [-1, -1]),
}


def channel(name):
    """Return the :class:`Channel` called `name` (KeyError if unknown)."""
    return CHANNELS[name]


def threshold(name):
    """Lowest LLP mass (GeV) for which channel `name` is open."""
    return float(sum(CHANNELS[name].final_masses))


# ----------------------------------------------------------------- kernels
@njit(inline="always", cache=True)
def circle_1(rng, counter):
    """(cos phi, sin phi) of a uniform azimuth, without trigonometric calls.

    A point (u, v) uniform in the unit disk has a uniform polar angle phi;
    cos(2 phi) = (u^2 - v^2)/r^2 and sin(2 phi) = 2uv/r^2 then give a uniform
    angle too (acceptance pi/4).
    """
    while True:
        u = 2.0 * rng.random() - 1.0
        v = 2.0 * rng.random() - 1.0
        counter[0] += 2
        r2 = u * u + v * v
        if 0.0 < r2 <= 1.0:
            return (u * u - v * v) / r2, 2.0 * u * v / r2


@njit(inline="always", cache=True)
def iso_1(rng, counter):
    """Isotropic unit vector: the disk method for points on a sphere.

    For (u, v) uniform in the unit disk with s = u^2 + v^2,
    (2u sqrt(1 - s), 2v sqrt(1 - s), 1 - 2s) is uniform on the sphere
    (Marsaglia, Ann. Math. Stat. 43 (1972) 645).
    """
    while True:
        u = 2.0 * rng.random() - 1.0
        v = 2.0 * rng.random() - 1.0
        counter[0] += 2
        s = u * u + v * v
        if s < 1.0:
            f = 2.0 * np.sqrt(1.0 - s)
            return u * f, v * f, 1.0 - 2.0 * s


@njit(inline="always", cache=True)
def exp_1(rng, counter, mean):
    """Exponential variate with the given mean: -mean * log(1 - u), u in [0, 1)."""
    counter[0] += 1
    return -mean * np.log(1.0 - rng.random())


@njit(inline="always", cache=True)
def _put(D, j, px, py, pz, e, vx, vy, vz):
    D[0, j] = px
    D[1, j] = py
    D[2, j] = pz
    D[3, j] = e
    D[4, j] = vx
    D[5, j] = vy
    D[6, j] = vz


@njit(inline="always", cache=True)
def _two_body_lab(m, m1, m2, nx, ny, nz, bx, by, bz):
    """Daughters of a two-body decay along +-n in the rest frame, boosted by b."""
    lam = (m * m - (m1 + m2) ** 2) * (m * m - (m1 - m2) ** 2)
    p = np.sqrt(max(lam, 0.0)) / (2.0 * m)
    e1 = np.sqrt(p * p + m1 * m1)
    e2 = np.sqrt(p * p + m2 * m2)
    a = boost_1(p * nx, p * ny, p * nz, e1, bx, by, bz)
    b = boost_1(-p * nx, -p * ny, -p * nz, e2, bx, by, bz)
    return a, b


@njit(inline="always", cache=True)
def _pi0_to_gg(rng, counter, D, j, px, py, pz, e, vx, vy, vz, mpi0):
    nx, ny, nz = iso_1(rng, counter)
    a, b = _two_body_lab(mpi0, 0.0, 0.0, nx, ny, nz, px / e, py / e, pz / e)
    _put(D, j, a[0], a[1], a[2], a[3], vx, vy, vz)
    _put(D, j + 1, b[0], b[1], b[2], b[3], vx, vy, vz)


@njit(cache=True)
def _three_body(rng, counter, D, j, m, m1, m2, m3, bx, by, bz, vx, vy, vz, me_code, me_par):
    """Three-body decay, isotropic orientation, daughters 1, 2, 3 stored at j, j+1, j+2."""
    m12sq, m23sq = dalitz_1(rng, m, m1, m2, m3, me_code, me_par, counter)
    p1x, p1z, e1, p2x, p2z, e2, p3z, e3 = momenta3_1(m, m1, m2, m3, m12sq, m23sq)
    nx, ny, nz = iso_1(rng, counter)  # direction of particle 3
    cp, sp = circle_1(rng, counter)  # rotation of the decay plane about it
    q1 = rotate_to_1(p1x * cp, p1x * sp, p1z, nx, ny, nz)
    q2 = rotate_to_1(p2x * cp, p2x * sp, p2z, nx, ny, nz)
    a = boost_1(q1[0], q1[1], q1[2], e1, bx, by, bz)
    b = boost_1(q2[0], q2[1], q2[2], e2, bx, by, bz)
    c = boost_1(p3z * nx, p3z * ny, p3z * nz, e3, bx, by, bz)
    _put(D, j, a[0], a[1], a[2], a[3], vx, vy, vz)
    _put(D, j + 1, b[0], b[1], b[2], b[3], vx, vy, vz)
    _put(D, j + 2, c[0], c[1], c[2], c[3], vx, vy, vz)


@njit(cache=True)
def polarised_direction(rng, counter, mode, scalar_pair, betaf2, bx, by, bz, ref):
    """Rest-frame direction of daughter 1 of a vector (or K*) two-body decay.

    Parameters
    ----------
    mode : int
        Polarisation code 0, 1 or 2 (module docstring).
    scalar_pair : bool
        True for a pair of spin-0 daughters (pi pi, K pi), False for fermions.
    betaf2 : float
        Squared velocity of a daughter in the rest frame.
    bx, by, bz : float
        Velocity of the decaying particle in the lab.
    ref : float64[8]
        Lab four-vectors (px, py, pz, E) of the reference(s): mode 1 uses
        ref[0:4]; mode 2 uses e- = ref[0:4] and e+ = ref[4:8].
    """
    if mode == 0:
        return iso_1(rng, counter)
    a = boost_1(ref[0], ref[1], ref[2], ref[3], -bx, -by, -bz)
    if mode == 1:
        pa = np.sqrt(a[0] * a[0] + a[1] * a[1] + a[2] * a[2])
        if scalar_pair:
            # dN/dc ~ c^2: inverse CDF (c^3 + 1)/2
            c = np.cbrt(2.0 * rng.random() - 1.0)
            counter[0] += 1
        else:
            # dN/dc ~ 1 - beta_f^2 c^2 (acceptance >= 2/3)
            while True:
                c = 2.0 * rng.random() - 1.0
                counter[0] += 2
                if rng.random() <= 1.0 - betaf2 * c * c:
                    break
        cp, sp = circle_1(rng, counter)
        st = np.sqrt(max(0.0, 1.0 - c * c))
        return rotate_to_1(st * cp, st * sp, c,
                           -a[0] / pa, -a[1] / pa, -a[2] / pa)
    b = boost_1(ref[4], ref[5], ref[6], ref[7], -bx, -by, -bz)
    s = a[3] * a[3] + b[3] * b[3]
    while True:
        nx, ny, nz = iso_1(rng, counter)
        da = a[0] * nx + a[1] * ny + a[2] * nz
        db = b[0] * nx + b[1] * ny + b[2] * nz
        if scalar_pair:
            f = (s - da * da - db * db) / s
        else:
            f = ((2.0 - betaf2) * s + betaf2 * (da * da + db * db)) / (2.0 * s)
        counter[0] += 1
        if rng.random() <= f:
            return nx, ny, nz


@njit(cache=True)
def decay_llp_1(rng, counter, ch, m, ctau, px, py, pz, e, vx, vy, vz,
                pol, ref, me_code, D, j, kc):
    """Decay one LLP; daughters written to columns j.. of D (rows px py pz e vx vy vz).

    Returns (ct, lab decay length, dx, dy, dz) in cm.
    """
    ct = exp_1(rng, counter, ctau)
    bgx, bgy, bgz = px / m, py / m, pz / m
    dx, dy, dz = vx + bgx * ct, vy + bgy * ct, vz + bgz * ct
    lab = np.sqrt(bgx * bgx + bgy * bgy + bgz * bgz) * ct
    bx, by, bz = px / e, py / e, pz / e
    if ch == GG:
        nx, ny, nz = iso_1(rng, counter)
        a, b = _two_body_lab(m, 0.0, 0.0, nx, ny, nz, bx, by, bz)
        _put(D, j, a[0], a[1], a[2], a[3], dx, dy, dz)
        _put(D, j + 1, b[0], b[1], b[2], b[3], dx, dy, dz)
    elif ch == PIPIPI0:
        mpi, mpi0 = kc[K_PI], kc[K_PI0]
        _three_body(rng, counter, D, j, m, mpi, mpi, mpi0, bx, by, bz, dx, dy, dz,
                    me_code, mpi * mpi)
        _pi0_to_gg(rng, counter, D, j + 3, D[0, j + 2], D[1, j + 2], D[2, j + 2], D[3, j + 2],
                   dx, dy, dz, mpi0)
    elif ch == PI0PI0PI0:
        mpi0 = kc[K_PI0]
        _three_body(rng, counter, D, j, m, mpi0, mpi0, mpi0, bx, by, bz, dx, dy, dz, 0, 0.0)
        for i in range(3):
            _pi0_to_gg(rng, counter, D, j + 3 + 2 * i, D[0, j + i], D[1, j + i], D[2, j + i],
                       D[3, j + i], dx, dy, dz, mpi0)
    else:
        if ch == EE:
            mf = kc[K_E]
        elif ch == MUMU:
            mf = kc[K_MU]
        else:
            mf = kc[K_PI]
        betaf2 = max(0.0, 1.0 - 4.0 * mf * mf / (m * m))
        nx, ny, nz = polarised_direction(rng, counter, pol, ch == PIPI, betaf2, bx, by, bz, ref)
        a, b = _two_body_lab(m, mf, mf, nx, ny, nz, bx, by, bz)
        _put(D, j, a[0], a[1], a[2], a[3], dx, dy, dz)
        _put(D, j + 1, b[0], b[1], b[2], b[3], dx, dy, dz)
    return ct, lab, dx, dy, dz
