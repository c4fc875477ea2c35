"""Decay of the long-lived particle: decay vertex and daughters, per channel.

The proper decay length c*t is exponential with mean c*tau (exponential
decay law, PDG review "Kinematics", survival probability); the lab decay
point is the production point plus (p/m) c*t along the LLP momentum, i.e.
beta*gamma*c*t (PDG review "Kinematics", sec. 49.2).

Built-in channels (``CHANNELS``, the table of toymc.physics.channels; daughters in the
order they are stored):

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
   u/t + t/u + 2 m^2 s/(t u), checked in tests/physics/test_radiative.py).  With
   l1,2 = q/2 +- r and current conservation this gives, in the V rest frame
   with e-, e+ momenta p1, p2 there,
       fermions:  (2 - beta_f^2)(E1^2 + E2^2) + beta_f^2 [(p1.n)^2 + (p2.n)^2]
       pions:     (E1^2 + E2^2) - (p1.n)^2 - (p2.n)^2
   (derived here; it reproduces 1 + cos^2 + (1 - beta^2) sin^2 and sin^2 for
   e+e- -> f fbar, pi pi in the collinear limit).

Rest-frame directions are sampled by accept-reject against the flat
density, which keeps events unweighted.

A decay is split in two: :func:`decay_draws_1` draws all its random numbers
(a standard exponential for c*t/c*tau, the Dalitz point, directions) into a
column of a scratch table, and :func:`decay_point_1` with :func:`three_math_1` or
:func:`pair_math_1` turns them into the decay point and the daughters' four-momenta; production kernels run the first
for a sub-block of events before the second, so the arithmetic runs without
random-number calls in between.  :func:`decay_draws` does the same for a whole
sub-block, one quantity at a time, with the directions drawn as disk points
(:func:`disk_rows`) and mapped by :func:`decay_prepare` in the kinematics stage.
"""

import numpy as np
from numba import njit, types
from numba.extending import overload

from toymc.physics import constants as C
from toymc.physics.channels import (
    CHANNELS,
    EE,
    GG,
    MUMU,
    PI0PI0PI0,
    PIPI,
    PIPIPI0,
    Channel,
    threshold,
)
from toymc.physics.channels import get as channel
from toymc.physics.kinematics.elementary import log_1
from toymc.physics.kinematics.lorentz import boost_1, boost_rest_1, frame_rotate_1
from toymc.physics.kinematics.threebody import dalitz_1, momenta3_1
from toymc.physics.layout import S

__all__ = (
    "Channel", "CHANNELS", "channel", "KCONST", "DECAY_ROWS", "decay_draws_1", "decay_point_1",
    "three_math_1", "pair_math_1", "decay_draws", "decay_prepare", "disk_rows",
    "circle_from_disk", "iso_from_disk", "pair_constants", "iso_1", "circle_1", "cos2_1",
    "exp_1", "helicity_local_1", "polarised_direction", "threshold", "family",
)

# kernel constant array: masses in GeV, passed to kernels (not frozen globals)
K_PI, K_PI0, K_E, K_MU, K_K, K_K0 = 0, 1, 2, 3, 4, 5
KCONST = np.array([C.M_PI, C.M_PI0, C.M_E, C.M_MU, C.M_K, C.M_K0], dtype=np.float64)


# ----------------------------------------------------------------- kernels
@njit(inline="always", cache=True)
def circle_1(rng, counter):
    """(cos phi, sin phi) of a uniform azimuth, without trigonometric calls.

    A point (u, v) uniform in the unit disk has a uniform polar angle phi;
    cos(2 phi) = (u^2 - v^2)/r^2 and sin(2 phi) = 2uv/r^2 then give a uniform
    angle too (acceptance pi/4).
    """
    u, v = _disk_point(rng, counter)
    r2 = u * u + v * v
    return (u * u - v * v) / r2, 2.0 * u * v / r2


@njit(inline="always", cache=True)
def _disk_point(rng, counter):
    """(u, v) uniform in the unit disk without its centre: accept-reject from the square."""
    while True:
        u = 2.0 * rng.random() - 1.0
        v = 2.0 * rng.random() - 1.0
        counter[0] += 2
        s = u * u + v * v
        if 0.0 < s <= 1.0:
            return u, v


@njit(inline="always", cache=True)
def iso_1(rng, counter):
    """Isotropic unit vector: the disk method for points on a sphere.

    For (u, v) uniform in the unit disk with s = u^2 + v^2,
    (2u sqrt(1 - s), 2v sqrt(1 - s), 1 - 2s) is uniform on the sphere
    (Ann. Math. Stat. 43 (1972) 645).
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
def disk_rows(rng, counter, m, W, r, idx):
    """Points (u, v) uniform in the unit disk (origin excluded) for m events, into rows r, r + 1.

    Row-wise accept-reject: a first try for every event, stored without a
    branch; the rejected events (probability 1 - pi/4) are listed, also without
    a branch, and drawn again until accepted.  The points have the law of
    :func:`_disk_point` (an event-by-event loop; the stream is consumed in
    another order, so the values differ); the map to an angle
    or a direction (:func:`circle_from_disk`, :func:`iso_from_disk`) is left to
    the kinematics stage, where it vectorises.  ``idx`` is int64 scratch of at
    least m entries.
    """
    nrej = 0
    for i in range(m):
        u = 2.0 * rng.random() - 1.0
        v = 2.0 * rng.random() - 1.0
        W[r * S + i] = u
        W[(r + 1) * S + i] = v
        s = u * u + v * v
        idx[nrej] = i
        nrej += (s > 1.0) | (s == 0.0)
    counter[0] += 2 * m
    for j in range(nrej):
        i = idx[j]
        W[r * S + i], W[(r + 1) * S + i] = _disk_point(rng, counter)


@njit(inline="always", cache=True)
def circle_from_disk(m, W, r):
    """Rows r, r + 1 of m events: disk points (u, v) -> (cos phi, sin phi), phi uniform.

    cos(2 theta) = (u^2 - v^2)/s, sin(2 theta) = 2uv/s with s = u^2 + v^2
    (as :func:`circle_1`).
    """
    for i in range(m):
        u = W[r * S + i]
        v = W[(r + 1) * S + i]
        f = 1.0 / (u * u + v * v)
        W[r * S + i] = (u * u - v * v) * f
        W[(r + 1) * S + i] = 2.0 * u * v * f


@njit(inline="always", cache=True)
def iso_from_disk(m, W, r):
    """Rows r .. r + 2 of m events: disk points (u, v) in rows r, r + 1 -> isotropic unit vector.

    (2u sqrt(1 - s), 2v sqrt(1 - s), 1 - 2s) with s = u^2 + v^2 (Ann. Math.
    Stat. 43 (1972) 645; as :func:`iso_1`).
    """
    for i in range(m):
        u = W[r * S + i]
        v = W[(r + 1) * S + i]
        s = u * u + v * v
        f = 2.0 * np.sqrt(1.0 - s)
        W[r * S + i] = u * f
        W[(r + 1) * S + i] = v * f
        W[(r + 2) * S + i] = 1.0 - 2.0 * s


@njit(inline="always", cache=True)
def exp_1(rng, counter, mean):
    """Exponential variate with the given mean: -mean * log(1 - u), u in [0, 1)."""
    counter[0] += 1
    return -mean * log_1(1.0 - rng.random())


@njit(inline="always", cache=True)
def _put(D, d, i, px, py, pz, e, vx, vy, vz):
    """Daughter d of event i into the flat scratch D (rows px py pz e vx vy vz)."""
    b = d * 7 * S + i
    D[b] = px
    D[b + S] = py
    D[b + 2 * S] = pz
    D[b + 3 * S] = e
    D[b + 4 * S] = vx
    D[b + 5 * S] = vy
    D[b + 6 * S] = vz


@njit(inline="always", cache=True)
def polarised_direction(rng, counter, mode, scalar_pair, betaf2, bx, by, bz, ref):
    """Rest-frame direction (lab axes) of daughter 1 of a vector two-body decay, pol 0 or 2.

    Pol 1 needs the helicity axis, which the kinematics stage knows: its
    direction is drawn by :func:`helicity_local_1` in the axis frame and
    rotated there (toymc.physics.production.b_meson).

    Parameters
    ----------
    mode : int
        Polarisation code 0 or 2 (module docstring).
    scalar_pair : bool
        True for a pair of spin-0 daughters (pi pi, K pi), False for fermions.
    betaf2 : float
        Squared velocity of a daughter in the rest frame.
    bx, by, bz : float
        Velocity of the decaying particle in the lab.
    ref : float64[8]
        Lab four-vectors (px, py, pz, E) of the beams for mode 2: e- = ref[0:4],
        e+ = ref[4:8].
    """
    if mode == 0:
        return iso_1(rng, counter)
    a = boost_1(ref[0], ref[1], ref[2], ref[3], -bx, -by, -bz)
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


#: rows of the per-event draw scratch used by one LLP decay (decay_draws_1)
DECAY_ROWS = 17


@njit(inline="always", cache=True)
def cos2_1(rng, counter):
    """cos(theta) with dN/dcos ~ cos^2 on [-1, 1], from three uniforms, no cube root.

    Of three uniforms on [-1, 1] take the one of largest modulus: its modulus
    is the maximum of three uniforms on [0, 1], with density 3x^2 (order
    statistics), and its sign is uniform and independent, so the density of
    the value is (3/2) c^2.
    """
    a = 2.0 * rng.random() - 1.0
    b = 2.0 * rng.random() - 1.0
    c = 2.0 * rng.random() - 1.0
    counter[0] += 3
    if abs(b) > abs(a):
        a = b
    if abs(c) > abs(a):
        a = c
    return a


@njit(inline="always", cache=True)
def helicity_local_1(rng, counter, scalar_pair, betaf2):
    """Rest-frame direction of daughter 1 for helicity 0 (pol code 1).

    Given in the frame whose z axis is the helicity axis.

    dN/dc ~ c^2 for a pair of spin-0 daughters, ~ 1 - beta_f^2 c^2 for
    fermions (module docstring); uniform azimuth.
    """
    if scalar_pair:
        c = cos2_1(rng, counter)
    else:
        while True:
            c = 2.0 * rng.random() - 1.0
            counter[0] += 2
            if rng.random() <= 1.0 - betaf2 * c * c:
                break
    cp, sp = circle_1(rng, counter)
    st = np.sqrt(max(0.0, 1.0 - c * c))
    return st * cp, st * sp, c


@njit(cache=True)
def pair_constants(ch, m, kc):
    """(beta_f^2, p*) of the daughters of a two-body channel of an LLP of mass m (GeV).

    beta_f^2 = 1 - 4 m_f^2/m^2 and p* = (m/2) beta_f (equal masses); for
    gamma gamma (1, m/2); for three-body channels (0, 0), unused.
    """
    if ch == GG:
        return 1.0, 0.5 * m
    if ch == EE or ch == MUMU or ch == PIPI:
        mf = kc[K_E] if ch == EE else (kc[K_MU] if ch == MUMU else kc[K_PI])
        b2 = max(0.0, 1.0 - 4.0 * mf * mf / (m * m))
        return b2, 0.5 * m * np.sqrt(b2)
    return 0.0, 0.0


@njit(inline="always", cache=True)
def _iso_rows(rng, counter, W, r, i):
    nx, ny, nz = iso_1(rng, counter)
    W[r * S + i], W[(r + 1) * S + i], W[(r + 2) * S + i] = nx, ny, nz


@njit(inline="always", cache=True)
def decay_draws_1(rng, counter, ch, pol, betaf2, me_code, m, kc, bx, by, bz, ref, W, r0, i):
    """Draw every random number of one LLP decay into rows r0.. of event i of W (at r S + i).

    Row r0 holds a standard exponential (the proper decay length in units of
    c*tau); then per channel: gamma gamma and vector pairs a rest-frame
    direction (pol 0 and 2: in the lab axes; pol 1: in the frame of the
    helicity axis, which the kinematics fix later); three-body channels
    (m12^2, m23^2), the direction of daughter 3, the decay-plane azimuth
    (cos, sin) and one direction per pi0 -> gamma gamma.  Only pol 2 needs
    the LLP velocity (bx, by, bz) and the beam four-vectors ``ref``.
    Counts draws in counter (uniform, normal, exponential).
    """
    W[r0 * S + i] = rng.standard_exponential()
    counter[2] += 1
    if ch == GG:
        _iso_rows(rng, counter, W, r0 + 1, i)
    elif ch == PIPIPI0 or ch == PI0PI0PI0:
        mpi, mpi0 = kc[K_PI], kc[K_PI0]
        if ch == PIPIPI0:
            m12sq, m23sq = dalitz_1(rng, m, mpi, mpi, mpi0, me_code, mpi * mpi, counter)
        else:
            m12sq, m23sq = dalitz_1(rng, m, mpi0, mpi0, mpi0, 0, 0.0, counter)
        W[(r0 + 1) * S + i], W[(r0 + 2) * S + i] = m12sq, m23sq
        _iso_rows(rng, counter, W, r0 + 3, i)
        W[(r0 + 6) * S + i], W[(r0 + 7) * S + i] = circle_1(rng, counter)
        for k in range(1 if ch == PIPIPI0 else 3):
            _iso_rows(rng, counter, W, r0 + 8 + 3 * k, i)
    elif pol == 1:
        lx, ly, lz = helicity_local_1(rng, counter, ch == PIPI, betaf2)
        W[(r0 + 1) * S + i], W[(r0 + 2) * S + i], W[(r0 + 3) * S + i] = lx, ly, lz
    else:
        nx, ny, nz = polarised_direction(rng, counter, pol, ch == PIPI, betaf2, bx, by, bz, ref)
        W[(r0 + 1) * S + i], W[(r0 + 2) * S + i], W[(r0 + 3) * S + i] = nx, ny, nz


def _literal(t):
    """The value of a numba literal type (IntegerLiteral, BooleanLiteral), or None."""
    return t.literal_value if isinstance(t, types.Literal) else None


def family(ch, pol):
    """Which code a (channel, pol) pair needs: "three" (three-body), "row" (two-body with
    row-wise directions: gamma gamma, pol 0), "hel" (two-body, pol 1) or "event" (drawn
    event by event: pol 2).  Plain ints or numba literal types; "any" for a non-literal
    numba type (the kernel then carries every family)."""
    if isinstance(ch, types.Type):
        ch, pol = _literal(ch), _literal(pol)
        if ch is None or (pol is None and ch not in (PIPIPI0, PI0PI0PI0)):
            return "any"
    if ch == PIPIPI0 or ch == PI0PI0PI0:
        return "three"
    if ch == GG or pol == 0:
        return "row"
    return "hel" if pol == 1 else "event"


# Kernels call decay_draws and decay_prepare with the channel and pol as numba literals
# (production kernels take them with numba.literally).  The overloads below then choose,
# while numba types the kernel, the one function the channel needs, so a kernel compiles
# only its own channel's code; with run-time values they keep every branch.  Compiling
# every channel into each kernel took most of a cold first run.


@njit(cache=True, error_model="numpy")
def _draws_three(rng, counter, m, ch, me_code, mass, kc, W, r0, idx):
    """Row-wise draws of m three-body decays (Dalitz points, then disk points)."""
    for i in range(m):
        W[r0 * S + i] = rng.standard_exponential()
    counter[2] += m
    mpi, mpi0 = kc[K_PI], kc[K_PI0]
    for i in range(m):
        if ch == PIPIPI0:
            m12sq, m23sq = dalitz_1(rng, mass, mpi, mpi, mpi0, me_code, mpi * mpi, counter)
        else:
            m12sq, m23sq = dalitz_1(rng, mass, mpi0, mpi0, mpi0, 0, 0.0, counter)
        W[(r0 + 1) * S + i], W[(r0 + 2) * S + i] = m12sq, m23sq
    disk_rows(rng, counter, m, W, r0 + 3, idx)
    disk_rows(rng, counter, m, W, r0 + 6, idx)
    for k in range(1 if ch == PIPIPI0 else 3):
        disk_rows(rng, counter, m, W, r0 + 8 + 3 * k, idx)


@njit(cache=True, error_model="numpy")
def _draws_row(rng, counter, m, W, r0, idx):
    """Row-wise draws of m isotropic two-body decays."""
    for i in range(m):
        W[r0 * S + i] = rng.standard_exponential()
    counter[2] += m
    disk_rows(rng, counter, m, W, r0 + 1, idx)


@njit(cache=True, error_model="numpy")
def _draws_hel(rng, counter, m, ch, betaf2, W, r0):
    """Draws of m two-body decays with helicity 0 (directions in the helicity-axis frame)."""
    for i in range(m):
        W[r0 * S + i] = rng.standard_exponential()
    counter[2] += m
    for i in range(m):
        lx, ly, lz = helicity_local_1(rng, counter, ch == PIPI, betaf2)
        W[(r0 + 1) * S + i], W[(r0 + 2) * S + i], W[(r0 + 3) * S + i] = lx, ly, lz


@njit(cache=True, error_model="numpy")
def _draws_event(rng, counter, m, ch, pol, betaf2, me_code, mass, kc, ref, W, r0):
    """:func:`decay_draws_1` for m events, with zero velocity (no row-wise branch)."""
    for i in range(m):
        decay_draws_1(rng, counter, ch, pol, betaf2, me_code, mass, kc, 0.0, 0.0, 0.0, ref,
                      W, r0, i)


def decay_draws(rng, counter, m, ch, pol, betaf2, me_code, mass, kc, ref, W, r0, idx):
    """:func:`decay_draws_1` for m events with pol 0 or 1, one quantity at a time.

    For the channels of the table (pol 0 or 1) every quantity is drawn for all
    m events before the next: the exponential, the Dalitz point, then each
    isotropic direction or azimuth as a disk point (:func:`disk_rows`);
    :func:`decay_prepare` maps those to directions in the kinematics stage,
    after which the rows hold what :func:`decay_draws_1` stores.  Pol 1 draws
    its helicity-frame direction event by event (:func:`helicity_local_1`).
    Anything else (pol 2 needs the LLP velocity, a channel without a row-wise
    branch) runs :func:`decay_draws_1` event by event, with zero velocity.
    """
    raise NotImplementedError("decay_draws runs inside numba kernels only")


@overload(decay_draws, prefer_literal=True)
def _decay_draws_typed(rng, counter, m, ch, pol, betaf2, me_code, mass, kc, ref, W, r0, idx):
    fam = family(ch, pol)
    if fam == "three":
        return (lambda rng, counter, m, ch, pol, betaf2, me_code, mass, kc, ref, W, r0, idx:
                _draws_three(rng, counter, m, ch, me_code, mass, kc, W, r0, idx))
    if fam == "row":
        return (lambda rng, counter, m, ch, pol, betaf2, me_code, mass, kc, ref, W, r0, idx:
                _draws_row(rng, counter, m, W, r0, idx))
    if fam == "hel":
        return (lambda rng, counter, m, ch, pol, betaf2, me_code, mass, kc, ref, W, r0, idx:
                _draws_hel(rng, counter, m, ch, betaf2, W, r0))
    if fam == "event":
        return (lambda rng, counter, m, ch, pol, betaf2, me_code, mass, kc, ref, W, r0, idx:
                _draws_event(rng, counter, m, ch, pol, betaf2, me_code, mass, kc, ref, W, r0))

    def any_channel(rng, counter, m, ch, pol, betaf2, me_code, mass, kc, ref, W, r0, idx):
        if ch == PIPIPI0 or ch == PI0PI0PI0:
            _draws_three(rng, counter, m, ch, me_code, mass, kc, W, r0, idx)
        elif ch == GG or pol == 0:
            _draws_row(rng, counter, m, W, r0, idx)
        elif pol == 1:
            _draws_hel(rng, counter, m, ch, betaf2, W, r0)
        else:
            _draws_event(rng, counter, m, ch, pol, betaf2, me_code, mass, kc, ref, W, r0)
    return any_channel


@njit(cache=True, error_model="numpy")
def _prepare_three(m, ch, W, r0):
    iso_from_disk(m, W, r0 + 3)
    circle_from_disk(m, W, r0 + 6)
    for k in range(1 if ch == PIPIPI0 else 3):
        iso_from_disk(m, W, r0 + 8 + 3 * k)


@njit(cache=True, error_model="numpy")
def _prepare_row(m, W, r0):
    iso_from_disk(m, W, r0 + 1)


def decay_prepare(m, ch, pol, W, r0):
    """Map the disk points drawn by :func:`decay_draws` to directions (kinematics stage)."""
    raise NotImplementedError("decay_prepare runs inside numba kernels only")


@overload(decay_prepare, prefer_literal=True)
def _decay_prepare_typed(m, ch, pol, W, r0):
    fam = family(ch, pol)
    if fam == "three":
        return lambda m, ch, pol, W, r0: _prepare_three(m, ch, W, r0)
    if fam == "row":
        return lambda m, ch, pol, W, r0: _prepare_row(m, W, r0)
    if fam != "any":
        return lambda m, ch, pol, W, r0: None

    def any_channel(m, ch, pol, W, r0):
        if ch == PIPIPI0 or ch == PI0PI0PI0:
            _prepare_three(m, ch, W, r0)
        elif ch == GG or pol == 0:
            _prepare_row(m, W, r0)
    return any_channel


@njit(inline="always", cache=True)
def _pair(D, d, i, q, nx, ny, nz, e1, e2, px, py, pz, e, f, im, vx, vy, vz):
    """Two daughters at +-q n with rest-frame energies e1, e2, boosted by the parent."""
    a = boost_rest_1(q * nx, q * ny, q * nz, e1, px, py, pz, e, f, im)
    b = boost_rest_1(-q * nx, -q * ny, -q * nz, e2, px, py, pz, e, f, im)
    _put(D, d, i, a[0], a[1], a[2], a[3], vx, vy, vz)
    _put(D, d + 1, i, b[0], b[1], b[2], b[3], vx, vy, vz)


@njit(inline="always", cache=True)
def _pi0_pair(D, d, src, W, r, i, mpi0, vx, vy, vz):
    """pi0 (stored as daughter src) -> gamma gamma as daughters d, d + 1, direction in rows r.."""
    b = src * 7 * S + i
    px, py, pz, e = D[b], D[b + S], D[b + 2 * S], D[b + 3 * S]
    q = 0.5 * mpi0
    _pair(D, d, i, q, W[r * S + i], W[(r + 1) * S + i], W[(r + 2) * S + i], q, q, px, py, pz, e,
          1.0 / (e + mpi0), 1.0 / mpi0, vx, vy, vz)


@njit(inline="always", cache=True)
def decay_point_1(m, ctau, px, py, pz, vx, vy, vz, W, r0, i):
    """Proper and lab decay length and decay point (cm) of an LLP from row r0 of W."""
    ct = W[r0 * S + i] * ctau
    im = 1.0 / m
    lab = np.sqrt(px * px + py * py + pz * pz) * im * ct
    return ct, lab, vx + px * im * ct, vy + py * im * ct, vz + pz * im * ct


@njit(inline="always", cache=True)
def three_math_1(ch, m, px, py, pz, e, dx, dy, dz, W, r0, i, D, kc):
    """Daughters of a three-body decay (and the pi0 photons) from rows r0.. of W."""
    im = 1.0 / m
    f = 1.0 / (e + m)
    mpi, mpi0 = kc[K_PI], kc[K_PI0]
    m1 = mpi if ch == PIPIPI0 else mpi0
    p1x, p1z, e1, p2x, p2z, e2, p3z, e3 = momenta3_1(m, m1, m1, mpi0, W[(r0 + 1) * S + i],
                                                     W[(r0 + 2) * S + i])
    nx, ny, nz = W[(r0 + 3) * S + i], W[(r0 + 4) * S + i], W[(r0 + 5) * S + i]
    cp, sp = W[(r0 + 6) * S + i], W[(r0 + 7) * S + i]
    q1 = frame_rotate_1(p1x * cp, p1x * sp, p1z, nx, ny, nz)
    q2 = frame_rotate_1(p2x * cp, p2x * sp, p2z, nx, ny, nz)
    a = boost_rest_1(q1[0], q1[1], q1[2], e1, px, py, pz, e, f, im)
    b = boost_rest_1(q2[0], q2[1], q2[2], e2, px, py, pz, e, f, im)
    c = boost_rest_1(p3z * nx, p3z * ny, p3z * nz, e3, px, py, pz, e, f, im)
    _put(D, 0, i, a[0], a[1], a[2], a[3], dx, dy, dz)
    _put(D, 1, i, b[0], b[1], b[2], b[3], dx, dy, dz)
    _put(D, 2, i, c[0], c[1], c[2], c[3], dx, dy, dz)
    if ch == PIPIPI0:
        _pi0_pair(D, 3, 2, W, r0 + 8, i, mpi0, dx, dy, dz)
    else:
        for k in range(3):
            _pi0_pair(D, 3 + 2 * k, k, W, r0 + 8 + 3 * k, i, mpi0, dx, dy, dz)


@njit(inline="always", cache=True)
def pair_math_1(ch, pol, m, pst, px, py, pz, e, dx, dy, dz, ax, ay, az, W, r0, i, D):
    """The two daughters of a two-body decay from the direction in rows r0 + 1.. of W."""
    im = 1.0 / m
    f = 1.0 / (e + m)
    nx, ny, nz = W[(r0 + 1) * S + i], W[(r0 + 2) * S + i], W[(r0 + 3) * S + i]
    if pol == 1 and ch != GG:
        nx, ny, nz = frame_rotate_1(nx, ny, nz, ax, ay, az)
    # equal daughter masses: each has half the rest energy
    _pair(D, 0, i, pst, nx, ny, nz, 0.5 * m, 0.5 * m, px, py, pz, e, f, im, dx, dy, dz)
