"""e+e- -> gamma V: cross-section, photon angle and the spin correlation of the V decay.

References
----------
* QED e+e- -> gamma gamma, massless limit: dsigma/dcos = (2 pi alpha^2/s)(1 + cos^2)/sin^2
  ("An Introduction to Quantum Field Theory" (1995), sec. 5.5, high-energy limit; from memory).
* 2 -> 2 cross-section dsigma/dcos = |M|^2 p_f/(32 pi s p_i) (PDG review "Kinematics",
  two-body cross-sections) with sum |M|^2 = 8 e^2 g^2 [u/t + t/u + 2 m^2 s/(t u)].
* An independent tree-level computation in this file: explicit Dirac matrices (Dirac
  representation), trace technique for e+e- -> gamma (V -> f fbar) with massless electrons,
  photon polarisation sum -g_{mu nu}, V propagator numerator -g_{mu nu} + q_mu q_nu/m^2,
  vector couplings; the V is on shell (narrow width). It checks the 2 -> 2 formula and the
  decay density of toymc.physics.decays (pol mode 2).
* Unit conversion (hbar c)^2 from scipy.constants (CODATA); integrals with scipy.integrate.quad;
  goodness of fit with scipy.stats (p-value > ALPHA).
"""

import math
from itertools import pairwise

import numpy as np
import pytest
import vector
from _demo import CONFIGS, truth_dict
from particle import Particle
from scipy import constants as sc
from scipy import integrate, stats

from toymc.config.loader import from_dict
from toymc.engine.generator import generate_block
from toymc.physics.production.radiative import dsigma_dcos, sigma

ALPHA = 1e-3
ALPHA_EM = sc.fine_structure
#: 1 GeV^-2 in fb, from hbar c in GeV cm (CODATA): 1 fb = 1e-39 cm^2
HBARC_GEV_CM = sc.hbar * sc.c / (sc.e * 1e9) * 100.0
FB = HBARC_GEV_CM**2 / 1e-39
M_MU = float(Particle.from_pdgid(13).mass) / 1000.0
M_PI = float(Particle.from_pdgid(211).mass) / 1000.0
M_E = float(Particle.from_pdgid(11).mass) / 1000.0


# ------------------------------------------------------------ cross-section formulas
@pytest.mark.parametrize("sqrt_s", [10.58, 4.0, 1.0])
def test_massless_limit_is_qed_gamma_gamma(sqrt_s):
    c = np.linspace(-0.99, 0.99, 41)
    s = sqrt_s**2
    qed = 2 * math.pi * ALPHA_EM**2 / s * (1 + c**2) / (1 - c**2) * FB
    np.testing.assert_allclose(dsigma_dcos(c, sqrt_s, 1e-5 * sqrt_s), qed, rtol=1e-8)


@pytest.mark.parametrize("sqrt_s,m", [(10.58, 0.3), (10.58, 3.0), (10.58, 9.0), (5.0, 1.0)])
def test_dsigma_from_mandelstam_formula(sqrt_s, m):
    """dsigma/dcos = (1/(32 pi s)) (1 - m^2/s) (1/4) 8 e^4 [u/t + t/u + 2 m^2 s/(t u)], eps = 1."""
    s = sqrt_s**2
    c = np.linspace(-0.98, 0.98, 25)
    t = -(s - m * m) * (1 - c) / 2  # photon angle theta to the e- beam
    u = -(s - m * m) * (1 + c) / 2
    e2 = 4 * math.pi * ALPHA_EM
    m2 = 8 * e2 * e2 * (u / t + t / u + 2 * m * m * s / (t * u)) / 4
    want = m2 * (1 - m * m / s) / (32 * math.pi * s) * FB
    np.testing.assert_allclose(dsigma_dcos(c, sqrt_s, m), want, rtol=1e-12)
    np.testing.assert_allclose(dsigma_dcos(c, sqrt_s, m, eps=1e-3), 1e-6 * want, rtol=1e-12)


@pytest.mark.parametrize("sqrt_s,m,c1,c2", [(10.58, 0.8, -0.9, 0.9), (10.58, 0.02, -0.95, 0.6),
                                            (10.58, 8.0, -0.3, 0.99), (3.0, 2.0, 0.1, 0.2)])
def test_sigma_is_integral_of_dsigma(sqrt_s, m, c1, c2):
    val, _ = integrate.quad(lambda c: float(dsigma_dcos(c, sqrt_s, m)), c1, c2, epsabs=0,
                            epsrel=1e-12, limit=200)
    assert sigma(sqrt_s, m, c1, c2) == pytest.approx(val, rel=1e-8)


# ------------------------------------------------------------ generated events
def _demo(**llp):
    data = truth_dict(CONFIGS / "darkphoton_mumu.toml")
    data["llp"].update(llp)
    return data


def _sample(n, seed, **llp):
    data = _demo(**llp)
    data["run"].update(events=n, seed=seed)
    cfg = from_dict(data)
    return cfg, generate_block(cfg, 0, n)


def _beams_lab(cfg):
    """Lab e- and e+ four-momenta from the configured energies and full crossing angle."""
    h = cfg.beams.crossing_angle / 2
    e1, e2 = cfg.beams.e_minus, cfg.beams.e_plus
    return (vector.obj(px=e1 * math.sin(h), py=0.0, pz=e1 * math.cos(h), E=e1),
            vector.obj(px=e2 * math.sin(h), py=0.0, pz=-e2 * math.cos(h), E=e2))


def _v(px, py, pz, e):
    return vector.array({"px": px, "py": py, "pz": pz, "E": e})


def test_photon_angle_follows_dsigma():
    """Photon angle to the e- beam in the collision frame: chi-square against dsigma/dcos
    integrated over each bin (scipy.integrate.quad); photon energy (s - m^2)/(2 sqrt(s))."""
    n = 200_000
    cfg, b = _sample(n, 21, mass=2.5)
    em, ep = _beams_lab(cfg)
    tot = em + ep
    ev = b.event
    g = _v(ev["rcl_px"], ev["rcl_py"], ev["rcl_pz"], ev["rcl_e"]).boostCM_of_p4(tot)
    emc = em.boostCM_of_p4(tot)
    c = (g.px * emc.px + g.py * emc.py + g.pz * emc.pz) / (g.p * emc.p)
    s, m = tot.mass**2, cfg.llp.mass
    np.testing.assert_allclose(g.E, (s - m * m) / (2 * math.sqrt(s)), rtol=1e-9)
    c1, c2 = cfg.production.photon_cos_min, cfg.production.photon_cos_max
    assert c.min() >= c1 - 1e-9 and c.max() <= c2 + 1e-9
    edges = np.linspace(c1, c2, 31)
    w = np.array([integrate.quad(lambda x: float(dsigma_dcos(x, math.sqrt(s), m)), a, bb,
                                 epsrel=1e-10)[0] for a, bb in pairwise(edges)])
    h, _ = np.histogram(c, edges)
    exp = n * w / w.sum()
    chi2 = ((h - exp) ** 2 / exp).sum()
    assert stats.chi2.sf(chi2, len(h) - 1) > ALPHA
    # a flat photon angle would be rejected: the test sees the shape
    flat = n / len(h)
    assert stats.chi2.sf(((h - flat) ** 2 / flat).sum(), len(h) - 1) < ALPHA


# ------------------------------------------------------------ Dirac-trace computation
_I2, _Z2 = np.eye(2), np.zeros((2, 2))
_SIGMA = (np.array([[0, 1], [1, 0]], complex), np.array([[0, -1j], [1j, 0]]),
          np.array([[1, 0], [0, -1]], complex))
GAMMA = np.zeros((4, 4, 4), complex)
GAMMA[0] = np.block([[_I2, _Z2], [_Z2, -_I2]])
for _i in range(3):
    GAMMA[_i + 1] = np.block([[_Z2, _SIGMA[_i]], [-_SIGMA[_i], _Z2]])
METRIC = np.diag([1.0, -1.0, -1.0, -1.0])
ONE = np.eye(4)


def _slash(p):
    """p-slash = gamma^mu p_mu for p given with upper index (E, px, py, pz)."""
    return np.einsum("m,mij->ij", METRIC @ p, GAMMA)


def _dirac_bar(a):
    return GAMMA[0] @ a.conj().T @ GAMMA[0]


def test_dirac_matrices():
    for a in range(4):
        for b in range(4):
            np.testing.assert_allclose(GAMMA[a] @ GAMMA[b] + GAMMA[b] @ GAMMA[a],
                                       2 * METRIC[a, b] * ONE, atol=1e-15)


def _msq(p1, p2, k, q, l1, l2, m, mf, scalar):
    """Spin-summed |M|^2 of e-(p1) e+(p2) -> gamma(k) V(q), V -> l1 l2 (couplings 1).

    Electron line: vbar(p2) [gamma^mu S(p1 - k) gamma^alpha / t + gamma^alpha S(p1 - q) gamma^mu / u]
    u(p1); photon polarisation sum -g; V numerator D = -g + q q/m^2; decay current
    ubar(l1) gamma^nu v(l2) (fermions) or (l1 - l2)^nu (spin-0 pair).
    """
    t = (p1 - k) @ METRIC @ (p1 - k)
    u = (p2 - k) @ METRIC @ (p2 - k)
    s1, s2 = _slash(p1 - k), _slash(p1 - q)
    A = np.empty((4, 4, 4, 4), complex)
    for mu in range(4):
        for al in range(4):
            A[mu, al] = GAMMA[mu] @ s1 @ GAMMA[al] / t + GAMMA[al] @ s2 @ GAMMA[mu] / u
    Abar = np.conj(np.swapaxes(A, 2, 3))
    Abar = np.einsum("ij,mnjk,kl->mnil", GAMMA[0], Abar, GAMMA[0])
    T = np.einsum("maij,jk,nbkl,li->mnab", A, _slash(p1), Abar, _slash(p2), optimize=True)
    E = -np.einsum("mnab,ab->mn", T, METRIC)
    ql = METRIC @ q
    D = -METRIC + np.outer(ql, ql) / m**2
    if scalar:
        r = l1 - l2
        L = np.outer(r, r).astype(complex)
    else:
        L = np.einsum("nij,jk,mkl,li->nm", GAMMA, _slash(l2) - mf * ONE, GAMMA,
                      _slash(l1) + mf * ONE, optimize=True)
    val = np.einsum("mn,mr,ns,rs->", E, D, D, L)
    return val, t, u


def _arr(v):
    return np.array([v.E, v.px, v.py, v.pz])


def _obj(a):
    return vector.obj(px=a[1], py=a[2], pz=a[3], E=a[0])


def _phase_space_point(rng, m):
    rs = rng.uniform(m + 0.5, 11.0)
    s = rs * rs
    c, phi = rng.uniform(-0.95, 0.95), rng.uniform(0, 2 * math.pi)
    p1 = np.array([rs / 2, 0, 0, rs / 2])
    p2 = np.array([rs / 2, 0, 0, -rs / 2])
    eg = (s - m * m) / (2 * rs)
    st = math.sqrt(1 - c * c)
    k = eg * np.array([1.0, st * math.cos(phi), st * math.sin(phi), c])
    return p1, p2, k, p1 + p2 - k, s


def _decay(q, m, mf, n):
    """Daughter four-momenta for direction n of daughter 1 in the V rest frame (vector boost)."""
    pf = math.sqrt(m * m / 4 - mf * mf)
    Q = _obj(q)
    l1 = vector.obj(px=pf * n[0], py=pf * n[1], pz=pf * n[2], E=m / 2).boost_p4(Q)
    l2 = vector.obj(px=-pf * n[0], py=-pf * n[1], pz=-pf * n[2], E=m / 2).boost_p4(Q)
    return _arr(l1), _arr(l2)


def _toymc_density(a, b, n, beta2, scalar):
    """The decay density of toymc/decays.py, pol mode 2 (module docstring)."""
    s = a[0] ** 2 + b[0] ** 2
    da, db = a[1:] @ n, b[1:] @ n
    if scalar:
        return s - da**2 - db**2
    return (2 - beta2) * s + beta2 * (da**2 + db**2)


OCTAHEDRON = [np.array(d, float) for d in ((1, 0, 0), (-1, 0, 0), (0, 1, 0), (0, -1, 0),
                                           (0, 0, 1), (0, 0, -1))]


@pytest.mark.parametrize("scalar,mf", [(False, M_MU), (False, M_E), (True, M_PI)])
def test_trace_average_gives_two_to_two_formula(scalar, mf):
    """(a) The average of |M|^2 over the daughter direction in the V rest frame, divided by
    u/t + t/u + 2 m^2 s/(t u), is the same at every phase-space point.

    The average over the six octahedron directions is exact: |M|^2 is a polynomial of degree
    2 in the direction. The constant equals (8/3)(-g_{rs} L^{rs}) (derived: the 2 -> 2
    sum 8[...] times the average 1/3 over the V polarisations times the decay trace).
    """
    rng = np.random.default_rng(31)
    for m in (0.3, 0.9, 3.0):
        if m <= 2 * mf:
            continue
        beta2 = 1 - 4 * mf * mf / (m * m)
        glg = m * m * beta2 if scalar else 4 * m * m * (1 + 2 * mf * mf / (m * m))
        ratios = []
        for _ in range(4):
            p1, p2, k, q, s = _phase_space_point(rng, m)
            vals = []
            for n in OCTAHEDRON:
                val, t, u = _msq(p1, p2, k, q, *_decay(q, m, mf, n), m, mf, scalar)
                assert abs(val.imag) < 1e-10 * abs(val.real)
                vals.append(val.real)
            f22 = u / t + t / u + 2 * m * m * s / (t * u)
            ratios.append(np.mean(vals) / f22)
        np.testing.assert_allclose(ratios, ratios[0], rtol=1e-8)
        assert ratios[0] == pytest.approx(8.0 / 3.0 * glg, rel=1e-8)


@pytest.mark.parametrize("scalar,mf,m", [(False, M_MU, 0.25), (False, M_MU, 1.5),
                                         (False, M_E, 0.2), (True, M_PI, 0.32),
                                         (True, M_PI, 2.0)])
def test_trace_direction_dependence_is_toymc_density(scalar, mf, m):
    """(b) |M|^2 as a function of the daughter direction n equals toymc's pol-mode-2 density
    (in the V rest frame, with the beam momenta boosted there) times a point constant."""
    rng = np.random.default_rng(32)
    beta2 = 1 - 4 * mf * mf / (m * m)
    for _ in range(3):
        p1, p2, k, q, _ = _phase_space_point(rng, m)
        Q = _obj(q)
        a, b = _arr(_obj(p1).boostCM_of_p4(Q)), _arr(_obj(p2).boostCM_of_p4(Q))
        ns = rng.normal(size=(8, 3))
        ns /= np.linalg.norm(ns, axis=1)[:, None]
        r = []
        for n in list(ns) + OCTAHEDRON:
            val, _, _ = _msq(p1, p2, k, q, *_decay(q, m, mf, n), m, mf, scalar)
            r.append(val.real / _toymc_density(a, b, n, beta2, scalar))
        np.testing.assert_allclose(r, r[0], rtol=1e-8)
        # and the density really varies with n at this point (the check is not empty)
        f = [_toymc_density(a, b, n, beta2, scalar) for n in ns]
        assert np.ptp(f) > 1e-3 * np.mean(f)


def _pit(cfg, b, channel):
    """Per-event probability-integral transform of c = (e- direction . n) in the V rest frame.

    For the density f(n) = A0 + n.Q.n (toymc pol mode 2), integrating the azimuth about the
    e- direction gives h(c) = A + B c^2; U = F(c) is uniform if the events follow f.
    """
    ev = b.event
    mf = {"mu_mu": M_MU, "e_e": M_E, "pi_pi": M_PI}[channel]
    m = cfg.llp.mass
    beta2 = 1 - 4 * mf * mf / (m * m)
    V = _v(ev["llp_px"], ev["llp_py"], ev["llp_pz"], ev["llp_e"])
    em, ep = _beams_lab(cfg)
    n = len(ev["llp_e"])
    one = np.ones(n)
    a = _v(em.px * one, em.py * one, em.pz * one, em.E * one).boostCM_of_p4(V)
    bb = _v(ep.px * one, ep.py * one, ep.pz * one, ep.E * one).boostCM_of_p4(V)
    _, d = b.groups["dau"]
    l1 = _v(d["px"][0::2], d["py"][0::2], d["pz"][0::2], d["e"][0::2]).boostCM_of_p4(V)
    av = np.array([a.px, a.py, a.pz])
    bv = np.array([bb.px, bb.py, bb.pz])
    nv = np.array([l1.px, l1.py, l1.pz]) / l1.p
    amag = np.linalg.norm(av, axis=0)
    ahat = av / amag
    c = (ahat * nv).sum(0)
    bpar = (bv * ahat).sum(0)
    bperp2 = (bv * bv).sum(0) - bpar**2
    S = a.E**2 + bb.E**2
    if channel == "pi_pi":
        A = S - bperp2 / 2
        B = -amag**2 - bpar**2 + bperp2 / 2
    else:
        A = (2 - beta2) * S + beta2 * bperp2 / 2
        B = beta2 * (amag**2 + bpar**2 - bperp2 / 2)
    F = (A * (c + 1) + B * (c**3 + 1) / 3) / (2 * A + 2 * B / 3)
    return F, B / A


@pytest.mark.parametrize("channel,mass", [("mu_mu", 0.3), ("mu_mu", 2.0), ("pi_pi", 0.5),
                                          ("e_e", 0.8)])
def test_generated_decays_follow_spin_correlation(channel, mass):
    """(c) Generated V -> f fbar (pi pi) events follow the density checked in (b): the
    per-event transform F(c) of the decay angle about the e- direction is uniform (KS)."""
    cfg, b = _sample(200_000, 41, mass=mass, channel=channel)
    u, anis = _pit(cfg, b, channel)
    assert stats.kstest(u, "uniform").pvalue > ALPHA
    # the same transform for an isotropic decay (B = 0) must be rejected
    ev = b.event
    assert np.abs(anis).mean() > 0.05
    _, d = b.groups["dau"]
    V = _v(ev["llp_px"], ev["llp_py"], ev["llp_pz"], ev["llp_e"])
    l1 = _v(d["px"][0::2], d["py"][0::2], d["pz"][0::2], d["e"][0::2]).boostCM_of_p4(V)
    em, _ = _beams_lab(cfg)
    one = np.ones(len(ev["llp_e"]))
    a = _v(em.px * one, em.py * one, em.pz * one, em.E * one).boostCM_of_p4(V)
    c = (a.px * l1.px + a.py * l1.py + a.pz * l1.pz) / (a.p * l1.p)
    assert stats.kstest((c + 1) / 2, "uniform").pvalue < ALPHA
