"""Kernels and formulas of the standard-model long-lived backgrounds.

Arrays and plain numbers in, arrays out: no config, no Block (the species, their
random streams and the Blocks are :mod:`toymc.engine.backgrounds`).  The kernel
:func:`species_kernel` fills the per-event rows of :mod:`toymc.physics.layout`,
the daughter rows, the weights and the particle/antiparticle signs of one block
of one species; :func:`species_layout` gives a species' kernel code, PDG ids,
masses, c*tau and stored daughters.

Decays (kernel codes :data:`KS`, :data:`KL`, :data:`LAM`, :data:`CONV`, :data:`COMBO`)
--------------------------------------------------------------------------------------
``KS``     K_S -> pi+ pi-, isotropic in the K_S rest frame.
``KL``     K_L -> pi+ pi- pi0 (pi0 -> gamma gamma), Dalitz plot with the measured
           slopes (|M|^2 = 1 + g u + h u^2 + k v^2, threebody.kl_msq_1): the density
           varies by a factor ~7.7 over the plot and shapes m(pi+ pi-).
``LAM``    Lambda -> p pi- and anti-Lambda -> pbar pi+ (fraction ``anti``),
           isotropic: the parity-violating decay asymmetry times the (unknown,
           sample-dependent) polarisation is neglected.
``CONV``   gamma -> e- e+ in the material (cylinders given as arrays).
``COMBO``  a displaced two-track vertex (K_S -> pi+ pi- or Lambda -> p pi-)
           combined with the two photons of an independent prompt pi0 from the
           primary vertex (its own momentum spectrum).

Kinematics of the long-lived particle (every species)
-----------------------------------------------------
In the e+e- collision frame the momentum p follows a gamma distribution,
dN/dp ~ p^(k - 1) exp(-k p / <p>) (shape ``k``, mean ``<p>``; sampled with
the squeeze method of ACM Trans. Math. Softw. 26 (2000) 363),
and the polar angle about the e- beam direction dN/dcos(theta) ~
1 + a cos^2(theta) (azimuth uniform).  The particle is boosted to the lab
with the velocity of the collision frame (:class:`toymc.physics.production.beams.Beams`)
and starts at the primary vertex (Gaussian luminous region).  The proper
decay length is exponential with the PDG c*tau (toymc.physics.constants; PDG review
"Kinematics", survival probability): c*t = -c*tau ln(1 - u).  With
``force_decay = L`` the decay is forced inside the lab length L: c*t is drawn
from the exponential truncated at L/(beta gamma) and ``w_gen`` =
1 - exp(-L/(beta gamma c tau)), the probability to decay there.

Photon conversions
------------------
A photon from the primary vertex flies on a straight line; it crosses every
cylinder i of radius R_i inside [z_min, z_max] at most once, with path
x_i/X0 = t_i / cos(alpha_i) (t_i: thickness at normal incidence, alpha_i:
angle between the photon and the cylinder's normal).  The conversion
probability in one layer, high-energy limit, is
P_i = 1 - exp(-(7/9) x_i/X0) (PDG review "Passage of particles through
matter", pair production: the photon attenuation length is (9/7) X0).
In the forced mode (the default for generation) every photon converts:
layer i is chosen with probability P_i prod_{j<i}(1 - P_j) / P_tot and the
weight is P_tot = 1 - prod_i (1 - P_i); the unforced mode (used by the
tests) converts in layer i only if a uniform number falls below P_i.
The conversion point is on the cylinder (thin layers).

Energy sharing: the electron takes x = E_e-/E_gamma from the complete-
screening Bethe-Heitler spectrum dsigma/dx ~ 1 - (4/3) x (1 - x) (PDG review
"Passage of particles through matter", pair-production section, from
memory), restricted to m_e <= x E_gamma <= E_gamma - m_e.  Opening angle (a
simple model of our own): each lepton leaves at the polar angle
theta = m_e / E (its characteristic angle) to the photon direction, the two
on opposite azimuths about it; |p| = sqrt(E^2 - m_e^2).  Momentum
conservation then holds to O(m_e) (the nucleus takes the rest).
"""

import numpy as np
from numba import njit

from toymc.physics import constants as C
from toymc.physics import layout as L
from toymc.physics.decays import circle_1, exp_1, iso_1
from toymc.physics.kinematics.lorentz import boost_1, rotate_to_1
from toymc.physics.kinematics.threebody import dalitz_1, kl_msq_max, momenta3_1

__all__ = (
    "COMBO",
    "CONV",
    "KL",
    "KS",
    "LAM",
    "conversion_probability",
    "convert_photons",
    "gamma_variate",
    "layer_arrays",
    "species_kernel",
    "species_layout",
)

#: kernel codes of the species, in the order of toymc.config.backgrounds.SPECIES
KS, KL, LAM, CONV, COMBO = range(5)


def conversion_probability(x_over_x0):
    """Conversion probability in a layer of x/X0: 1 - exp(-(7/9) x/X0).

    High-energy limit (PDG review "Passage of particles through matter",
    pair production: attenuation length (9/7) X0).
    """
    return -np.expm1(-(7.0 / 9.0) * np.asarray(x_over_x0, dtype=np.float64))


@njit(cache=True)
def _gamma_1(rng, counter, shape):
    """Gamma variate of unit scale (squeeze method, ACM TOMS 26 (2000) 363).

    For shape < 1: G(shape) = G(shape + 1) U^(1/shape) (same paper, sec. 6).
    """
    boost = 1.0
    a = shape
    if a < 1.0:
        boost = (1.0 - rng.random()) ** (1.0 / a)
        counter[0] += 1
        a += 1.0
    d = a - 1.0 / 3.0
    c = 1.0 / np.sqrt(9.0 * d)
    while True:
        x = rng.standard_normal()
        counter[1] += 1
        v = 1.0 + c * x
        if v <= 0.0:
            continue
        v = v * v * v
        u = rng.random()
        counter[0] += 1
        if np.log(u) < 0.5 * x * x + d - d * v + d * np.log(v):
            return d * v * boost


@njit(cache=True)
def _gamma_array(rng, n, shape, mean):
    out = np.empty(n)
    cnt = np.zeros(2, dtype=np.int64)
    for i in range(n):
        out[i] = _gamma_1(rng, cnt, shape) * mean / shape
    return out


def gamma_variate(rng, n, shape, mean):
    """`n` gamma variates with the given shape and mean (numba kernel).

    dN/dx ~ x^(shape - 1) exp(-shape x / mean) (squeeze sampler, ACM TOMS 26 (2000) 363).
    """
    return _gamma_array(rng, int(n), float(shape), float(mean))


@njit(inline="always", cache=True)
def _direction_1(rng, counter, a, ax, ay, az):
    """Unit vector with dN/dcos ~ 1 + a cos^2 about the unit axis (ax, ay, az).

    Accept-reject against the flat density (maximum 1 + max(a, 0)).
    """
    top = 1.0 + max(a, 0.0)
    while True:
        c = 2.0 * rng.random() - 1.0
        counter[0] += 2
        if rng.random() * top <= 1.0 + a * c * c:
            break
    cp, sp = circle_1(rng, counter)
    st = np.sqrt(max(0.0, 1.0 - c * c))
    return rotate_to_1(st * cp, st * sp, c, ax, ay, az)


@njit(inline="always", cache=True)
def _lab_particle(rng, counter, m, p_shape, p_mean, cos2, axis, beta):
    """Lab four-momentum of a particle with the collision-frame spectrum."""
    p = _gamma_1(rng, counter, p_shape) * p_mean / p_shape
    nx, ny, nz = _direction_1(rng, counter, cos2, axis[0], axis[1], axis[2])
    e = np.sqrt(p * p + m * m)
    return boost_1(p * nx, p * ny, p * nz, e, beta[0], beta[1], beta[2])


@njit(inline="always", cache=True)
def _put(D, j, q, vx, vy, vz):
    D[0, j] = q[0]
    D[1, j] = q[1]
    D[2, j] = q[2]
    D[3, j] = q[3]
    D[4, j] = vx
    D[5, j] = vy
    D[6, j] = vz


@njit(inline="always", cache=True)
def _two_body(rng, counter, m, m1, m2, px, py, pz, e):
    """Isotropic two-body decay of (px, py, pz, e) of mass m; lab daughters."""
    lam = (m * m - (m1 + m2) ** 2) * (m * m - (m1 - m2) ** 2)
    q = np.sqrt(max(lam, 0.0)) / (2.0 * m)
    nx, ny, nz = iso_1(rng, counter)
    bx, by, bz = px / e, py / e, pz / e
    a = boost_1(q * nx, q * ny, q * nz, np.sqrt(q * q + m1 * m1), bx, by, bz)
    b = boost_1(-q * nx, -q * ny, -q * nz, np.sqrt(q * q + m2 * m2), bx, by, bz)
    return a, b


@njit(inline="always", cache=True)
def _decay_length(rng, counter, ctau, bg, force):
    """Proper decay length c*t and weight; forced inside lab length `force` if > 0."""
    if force > 0.0:
        ct_max = force / bg
        pdec = -np.expm1(-ct_max / ctau)
        counter[0] += 1
        ct = -ctau * np.log1p(-rng.random() * pdec)
        return min(ct, ct_max), pdec
    return exp_1(rng, counter, ctau), 1.0


@njit(cache=True)
def _convert_1(rng, counter, vx, vy, vz, nx, ny, nz, radius, z_min, z_max, thick, forced):
    """Conversion layer of one photon; returns (layer or -1, x, y, z, weight)."""
    nt2 = nx * nx + ny * ny
    nl = radius.shape[0]
    prob = np.zeros(nl)
    tt = np.zeros(nl)
    if nt2 <= 0.0:
        return -1, vx, vy, vz, 0.0
    b = vx * nx + vy * ny
    c0 = vx * vx + vy * vy
    surv = 1.0
    for i in range(nl):
        r = radius[i]
        disc = b * b - nt2 * (c0 - r * r)
        if disc < 0.0:
            continue
        t = (-b + np.sqrt(disc)) / nt2
        if t <= 0.0:
            continue
        z = vz + t * nz
        if z < z_min[i] or z > z_max[i]:
            continue
        cosa = ((vx + t * nx) * nx + (vy + t * ny) * ny) / r
        if cosa <= 1e-9:
            continue
        prob[i] = -np.expm1(-(7.0 / 9.0) * thick[i] / cosa)
        tt[i] = t
        surv *= 1.0 - prob[i]
    ptot = 1.0 - surv
    if ptot <= 0.0:
        return -1, vx, vy, vz, 0.0
    u = rng.random()
    counter[0] += 1
    if forced:
        u *= ptot
        acc = 0.0
        s = 1.0
        layer = -1
        for i in range(nl):
            acc += s * prob[i]
            s *= 1.0 - prob[i]
            if prob[i] > 0.0 and u < acc:
                layer = i
                break
        if layer < 0:  # rounding: the last layer with material
            for i in range(nl - 1, -1, -1):
                if prob[i] > 0.0:
                    layer = i
                    break
        w = ptot
    else:
        layer = -1
        for i in range(nl):
            if prob[i] > 0.0:
                if u < prob[i]:
                    layer = i
                    break
                u = rng.random()
                counter[0] += 1
        w = 1.0
    if layer < 0:
        return -1, vx, vy, vz, 0.0
    t = tt[layer]
    return layer, vx + t * nx, vy + t * ny, vz + t * nz, w


@njit(cache=True)
def _convert_array(rng, vx, vy, vz, nx, ny, nz, radius, z_min, z_max, thick, forced):
    n = vx.shape[0]
    lay = np.empty(n, dtype=np.int64)
    x = np.empty(n)
    y = np.empty(n)
    z = np.empty(n)
    w = np.empty(n)
    cnt = np.zeros(2, dtype=np.int64)
    for i in range(n):
        lay[i], x[i], y[i], z[i], w[i] = _convert_1(rng, cnt, vx[i], vy[i], vz[i], nx[i], ny[i],
                                                     nz[i], radius, z_min, z_max, thick, forced)
    return lay, x, y, z, w


def convert_photons(rng, origin, direction, layers, forced=False):
    """Conversion layer and point of photons flying from `origin` along `direction`.

    Parameters
    ----------
    rng : numpy.random.Generator
    origin : tuple of 3 arrays
        Start points (cm).
    direction : tuple of 3 arrays
        Unit direction vectors.
    layers : dict
        ``radius, z_min, z_max`` (cm) and ``thickness`` (x/X0 at normal
        incidence), e.g. ``Geometry.tracking_layers()``, sorted by radius.
    forced : bool
        True: every photon with material on its path converts, with weight
        P_tot; False: converts with probability P_i per crossed layer.

    Returns
    -------
    layer, x, y, z, weight : numpy.ndarray
        Index of the conversion layer (-1: none), point (cm), weight.
    """
    f = [np.ascontiguousarray(a, dtype=np.float64) for a in (*origin, *direction)]
    return _convert_array(rng, *f, *layer_arrays(layers), bool(forced))


def layer_arrays(layers):
    """(radius, z_min, z_max, thickness) of `layers` as contiguous float64 arrays."""
    return tuple(np.ascontiguousarray(layers[k], dtype=np.float64)
                 for k in ("radius", "z_min", "z_max", "thickness"))


@njit(inline="always", cache=True)
def _bethe_heitler_x(rng, counter, xmin):
    """x from dsigma/dx ~ 1 - (4/3) x (1 - x) on [xmin, 1 - xmin] (maximum 1)."""
    while True:
        x = xmin + (1.0 - 2.0 * xmin) * rng.random()
        counter[0] += 2
        if rng.random() <= 1.0 - (4.0 / 3.0) * x * (1.0 - x):
            return x


@njit(cache=True)
def species_kernel(rng, n, code, m, ctau, m1, m2, p_shape, p_mean, cos2, force, anti,
            pi0_shape, pi0_mean, axis, beta, sig, mpi0, me, radius, z_min, z_max, thick,
            E, IE, D, W, PDG):
    """Fill the per-event rows E/IE, daughters D, weights W and particle ids PDG.

    For ``combo`` m, ctau, m1, m2 describe the two-track vertex source.
    """
    counter = np.zeros(2, dtype=np.int64)
    k = D.shape[1] // n if n > 0 else 0
    kl_max = kl_msq_max(m, m1, mpi0) if code == KL else 1.0
    for i in range(n):
        for r in range(E.shape[0]):
            E[r, i] = 0.0
        for r in range(IE.shape[0]):
            IE[r, i] = 0
        L.primary_vertex(rng, counter, sig, E, i)
        vx, vy, vz = E[L.PV_X, i], E[L.PV_Y, i], E[L.PV_Z, i]
        mm = 0.0 if code == CONV else m
        p = _lab_particle(rng, counter, mm, p_shape, p_mean, cos2, axis, beta)
        j = i * k
        PDG[i] = 1
        if code == CONV:
            pp = np.sqrt(p[0] * p[0] + p[1] * p[1] + p[2] * p[2])
            nx, ny, nz = p[0] / pp, p[1] / pp, p[2] / pp
            _lay, dx, dy, dz, w = _convert_1(rng, counter, vx, vy, vz, nx, ny, nz,
                                            radius, z_min, z_max, thick, True)
            eg = p[3]
            x = _bethe_heitler_x(rng, counter, min(me / eg, 0.499))
            cp, sp = circle_1(rng, counter)
            for s in range(2):
                el = x * eg if s == 0 else (1.0 - x) * eg
                el = max(el, me)
                ql = np.sqrt(el * el - me * me)
                th = me / el
                sgn = 1.0 if s == 0 else -1.0
                st, ct_ = np.sin(th), np.cos(th)
                q = rotate_to_1(ql * st * cp * sgn, ql * st * sp * sgn, ql * ct_, nx, ny, nz)
                _put(D, j + s, (q[0], q[1], q[2], el), dx, dy, dz)
            ct, lab = 0.0, np.sqrt((dx - vx) ** 2 + (dy - vy) ** 2 + (dz - vz) ** 2)
        else:
            bgx, bgy, bgz = p[0] / m, p[1] / m, p[2] / m
            bg = np.sqrt(bgx * bgx + bgy * bgy + bgz * bgz)
            ct, w = _decay_length(rng, counter, ctau, bg, force)
            dx, dy, dz = vx + bgx * ct, vy + bgy * ct, vz + bgz * ct
            lab = bg * ct
            if code == KL:
                # measured Dalitz slopes (threebody.kl_msq_1), not flat phase space
                m12sq, m23sq = dalitz_1(rng, m, m1, m1, mpi0, 2, kl_max, counter)
                p1x, p1z, e1, p2x, p2z, e2, p3z, e3 = momenta3_1(m, m1, m1, mpi0, m12sq, m23sq)
                nx, ny, nz = iso_1(rng, counter)
                cp, sp = circle_1(rng, counter)
                bx, by, bz = p[0] / p[3], p[1] / p[3], p[2] / p[3]
                q1 = rotate_to_1(p1x * cp, p1x * sp, p1z, nx, ny, nz)
                q2 = rotate_to_1(p2x * cp, p2x * sp, p2z, nx, ny, nz)
                a = boost_1(q1[0], q1[1], q1[2], e1, bx, by, bz)
                b = boost_1(q2[0], q2[1], q2[2], e2, bx, by, bz)
                c = boost_1(p3z * nx, p3z * ny, p3z * nz, e3, bx, by, bz)
                _put(D, j, a, dx, dy, dz)
                _put(D, j + 1, b, dx, dy, dz)
                _put(D, j + 2, c, dx, dy, dz)
                g1, g2 = _two_body(rng, counter, mpi0, 0.0, 0.0, c[0], c[1], c[2], c[3])
                _put(D, j + 3, g1, dx, dy, dz)
                _put(D, j + 4, g2, dx, dy, dz)
            else:
                a, b = _two_body(rng, counter, m, m1, m2, p[0], p[1], p[2], p[3])
                if anti > 0.0:
                    counter[0] += 1
                    if rng.random() < anti:
                        PDG[i] = -1
                        a, b = b, a  # stored order: positive track first
                _put(D, j, a, dx, dy, dz)
                _put(D, j + 1, b, dx, dy, dz)
                if code == COMBO:
                    c = _lab_particle(rng, counter, mpi0, pi0_shape, pi0_mean, cos2, axis, beta)
                    _put(D, j + 2, c, vx, vy, vz)
                    g1, g2 = _two_body(rng, counter, mpi0, 0.0, 0.0, c[0], c[1], c[2], c[3])
                    _put(D, j + 3, g1, vx, vy, vz)
                    _put(D, j + 4, g2, vx, vy, vz)
        W[i] = w
        E[L.LLP_PX, i], E[L.LLP_PY, i], E[L.LLP_PZ, i], E[L.LLP_E, i] = p[0], p[1], p[2], p[3]
        E[L.LLP_VX, i], E[L.LLP_VY, i], E[L.LLP_VZ, i] = vx, vy, vz
        E[L.LLP_DX, i], E[L.LLP_DY, i], E[L.LLP_DZ, i] = dx, dy, dz
        E[L.LLP_DR, i] = np.sqrt(dx * dx + dy * dy)
        E[L.LLP_CT, i], E[L.LLP_L, i] = ct, lab
    return counter


def species_layout(name, vertex=None):
    """(code, parent pdg, mass, ctau, m1, m2, dau pdg, q, status, mother) of species `name`.

    `vertex` (``"ks"`` or ``"lambda"``) is the two-track source of ``combo``.
    Masses and c*tau from :mod:`toymc.physics.constants` (PDG).
    """
    if name == "ks" or (name == "combo" and vertex == "ks"):
        base = (310, C.M_KS, C.CTAU_KS, C.M_PI, C.M_PI, [211, -211], [1, -1])
    elif name == "lambda" or name == "combo":
        base = (3122, C.M_LAMBDA, C.CTAU_LAMBDA, C.M_P, C.M_PI, [2212, -211], [1, -1])
    if name == "kl":
        return (KL, 130, C.M_KL, C.CTAU_KL, C.M_PI, C.M_PI0, [211, -211, 111, 22, 22],
                [1, -1, 0, 0, 0], [1, 1, 2, 1, 1], [-1, -1, -1, 2, 2])
    if name == "conversion":
        return (CONV, 22, 0.0, np.inf, C.M_E, C.M_E, [11, -11], [-1, 1], [1, 1], [-1, -1])
    pdg0, m, ctau, m1, m2, dp, dq = base
    if name == "combo":
        return (COMBO, pdg0, m, ctau, m1, m2, dp + [111, 22, 22], dq + [0, 0, 0],
                [1, 1, 2, 1, 1], [-1, -1, -1, 2, 2])
    return ({"ks": KS, "lambda": LAM}[name], pdg0, m, ctau, m1, m2, dp, dq, [1, 1],
            [-1, -1])
