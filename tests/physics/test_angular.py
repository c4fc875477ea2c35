"""Angular distributions in B-meson production and in LLP decays.

References (angular-momentum conservation, helicity formalism; PDG review "Kinematics"
for the boosts, the `vector` library to compute them here):

* e+e- -> Upsilon(4S) -> B Bbar with massless beams: the Upsilon(4S) has J_z = +-1 along the
  beam, so dN/dcos(theta_B) ~ |d^1_{1,0}|^2 ~ sin^2(theta_B); CDF (2 + 3c - c^3)/4.
* B -> K* X with spin-0 X: the K* is longitudinal, K* -> K pi gives dN/dcos(theta_K) ~ cos^2;
  CDF (c^3 + 1)/2.
* B -> K V (V spin 1): V has helicity 0; V -> f fbar: dN/dcos ~ 1 - beta_f^2 cos^2 (trace
  of the lepton tensor with a longitudinal polarisation vector, derived); V -> pi pi: ~ cos^2.
* spin-0 decays (a -> gamma gamma, B -> K a, three-body orientation): isotropic.
KS tests with scipy.stats.kstest, p-value > ALPHA.
"""

import math

import numpy as np
import pytest
import vector
from _demo import CONFIGS, truth_dict
from particle import Particle
from scipy import stats

from toymc.config.loader import from_dict
from toymc.engine.generator import generate_block

ALPHA = 1e-3
N = 100_000


def _block(demo, seed=9, production=None, **llp):
    data = truth_dict(CONFIGS / demo)
    data["run"].update(events=N, seed=seed)
    data["llp"].update(llp)
    data["production"].update(production or {})
    cfg = from_dict(data)
    return cfg, generate_block(cfg, 0, N)


def _v(px, py, pz, e):
    return vector.array({"px": px, "py": py, "pz": pz, "E": e})


def _ev4(ev, prefix):
    return _v(ev[prefix + "_px"], ev[prefix + "_py"], ev[prefix + "_pz"], ev[prefix + "_e"])


def _grp4(block, name, index):
    counts, d = block.groups[name]
    k = int(counts[0])
    return _v(*(d[c][index::k] for c in ("px", "py", "pz", "e")))


def _cos(a, b):
    """Cosine of the angle between the 3-vectors of two vector arrays."""
    return (a.px * b.px + a.py * b.py + a.pz * b.pz) / (a.p * b.p)


def _helicity_cos(d, parent, grand):
    """cos of d's direction in the parent rest frame against the parent's direction in the
    grandparent rest frame (each frame reached by a pure boost, with vector)."""
    p_g = parent.boostCM_of_p4(grand)
    d_g = d.boostCM_of_p4(grand)
    d_p = d_g.boostCM_of_p4(p_g)
    return _cos(d_p, p_g)


def _ks(x, cdf):
    return stats.kstest(x, cdf).pvalue


def _uniform_cdf(c):
    return (np.clip(c, -1, 1) + 1) / 2


def test_sin2_sampler_is_twice_the_median_minus_one():
    """sin2_cos_1 is 2 x (median of its three uniforms) - 1 (order statistics: the median
    of three uniforms has density 6x(1 - x), i.e. (3/4)(1 - c^2) in c)."""
    from toymc.physics.production.b_meson import sin2_cos_1

    u = np.random.default_rng(4).random((2000, 3))
    got = np.array([sin2_cos_1(*row) for row in u])
    np.testing.assert_array_equal(got, 2.0 * np.median(u, axis=1) - 1.0)


def test_cos2_sampler_against_its_cdf():
    """cos2_1 (largest-modulus of three uniforms) has CDF (c^3 + 1)/2 (order statistics:
    max of three uniforms has density 3x^2); KS test, scipy.stats."""
    from numba import njit

    from toymc.physics.decays import cos2_1

    @njit
    def draw(rng, n):
        out = np.empty(n)
        counter = np.zeros(3, dtype=np.int64)
        for i in range(n):
            out[i] = cos2_1(rng, counter)
        return out, counter

    c, counter = draw(np.random.default_rng(8), 200_000)
    assert counter[0] == 3 * 200_000
    assert _ks(c, lambda x: (np.clip(x, -1, 1) ** 3 + 1) / 2) > 1e-3


def _rows_sampler(kind):
    """A jitted driver for the row-wise samplers over several sub-blocks of m events."""
    from numba import njit

    from toymc.physics.decays import circle_from_disk, disk_rows, iso_from_disk
    from toymc.physics.layout import SUB_BLOCK, S

    @njit
    def draw(rng, blocks):
        m = SUB_BLOCK
        W = np.empty(3 * S)
        idx = np.empty(m, dtype=np.int64)
        out = np.empty((3, blocks * m))
        counter = np.zeros(3, dtype=np.int64)
        for b in range(blocks):
            disk_rows(rng, counter, m, W, 0, idx)
            if kind == 1:
                circle_from_disk(m, W, 0)
            elif kind == 2:
                iso_from_disk(m, W, 0)
            for r in range(3 if kind == 2 else 2):
                out[r, b * m:(b + 1) * m] = W[r * S:r * S + m]
        return out, counter

    return draw


def test_disk_points_uniform_in_the_disk():
    """disk_rows: every point inside the unit disk, r^2 uniform on [0, 1] and the polar angle
    uniform (area element r dr dphi); the uniforms used average 2 / (pi/4) per point, the
    square-to-disk acceptance (binomial 5 sigma on the number of tries)."""
    blocks = 200
    (u, v, _), counter = _rows_sampler(0)(np.random.default_rng(21), blocks)
    n = u.size
    r2 = u * u + v * v
    assert (r2 <= 1.0).all() and (r2 > 0.0).all()
    assert _ks(r2, lambda x: np.clip(x, 0, 1)) > ALPHA
    assert _ks(np.arctan2(v, u), lambda x: (np.clip(x, -np.pi, np.pi) + np.pi) / (2 * np.pi)) > ALPHA
    tries = counter[0] / 2
    p = math.pi / 4  # tries - n failures before n successes: negative binomial
    assert abs(tries - n / p) < 5 * math.sqrt(n * (1 - p)) / p


def test_circle_and_sphere_from_disk_points():
    """circle_from_disk gives (cos phi, sin phi) of a uniform phi; iso_from_disk a unit vector
    with z uniform on [-1, 1] and a uniform azimuth (Ann. Math. Stat. 43 (1972)
    645; for an isotropic direction every component is uniform on [-1, 1]: a zone of a sphere
    has an area proportional to its height)."""
    (c, s, _), _ = _rows_sampler(1)(np.random.default_rng(22), 100)
    np.testing.assert_allclose(c * c + s * s, 1.0, rtol=0, atol=1e-14)
    assert _ks(np.arctan2(s, c), lambda x: (np.clip(x, -np.pi, np.pi) + np.pi) / (2 * np.pi)) > ALPHA
    (x, y, z), _ = _rows_sampler(2)(np.random.default_rng(23), 100)
    np.testing.assert_allclose(x * x + y * y + z * z, 1.0, rtol=0, atol=1e-14)
    for comp in (x, y, z):
        assert _ks(comp, _uniform_cdf) > ALPHA
    assert _ks(np.arctan2(y, x), lambda t: (np.clip(t, -np.pi, np.pi) + np.pi) / (2 * np.pi)) > ALPHA


def test_truncated_cauchy_from_half_disk_points():
    """b_meson._cauchy_rows: u/v of a point uniform in the upper half-disk inside the wedge
    t_lo v <= u <= t_hi v is a standard Cauchy truncated to [t_lo, t_hi] (ratio of uniforms,
    ACM Trans. Math. Softw. 3 (1977) 257, from memory); KS against scipy.stats.cauchy, with
    other bounds for the charged (row _R_CHG = 1) and the neutral events."""
    from numba import njit

    from toymc.physics.layout import SUB_BLOCK, S
    from toymc.physics.production import b_meson as bm

    t = np.array([-5.0, 40.0, -0.5, 2.0])

    @njit
    def draw(rng, blocks, t):
        m = SUB_BLOCK
        W = np.empty(bm._W_ROWS * S)
        idx = np.empty(m, dtype=np.int64)
        x = np.empty(blocks * m)
        chg = np.empty(blocks * m)
        counter = np.zeros(3, dtype=np.int64)
        for b in range(blocks):
            for i in range(m):
                W[bm._R_CHG * S + i] = 1.0 if i % 3 else 0.0
            bm._cauchy_rows(rng, counter, m, W, t, idx)
            for i in range(m):
                x[b * m + i] = W[bm._R_MH * S + i] / W[bm._R_MHV * S + i]
                chg[b * m + i] = W[bm._R_CHG * S + i]
        return x, chg

    x, chg = draw(np.random.default_rng(24), 150, t)
    c = stats.cauchy()
    for sel, lo, hi in ((chg > 0.5, t[0], t[1]), (chg < 0.5, t[2], t[3])):
        xs = x[sel]
        assert xs.min() >= lo and xs.max() <= hi
        cdf = lambda q, lo=lo, hi=hi: (c.cdf(np.clip(q, lo, hi)) - c.cdf(lo)) / (c.cdf(hi) - c.cdf(lo))
        assert _ks(xs, cdf) > ALPHA


def test_b_direction_sin2_about_electron_beam():
    """dN/dcos(theta_B) ~ sin^2 in the collision frame, axis = e- beam (boost from the beams)."""
    cfg, b = _block("alp_gg_bksta.toml")
    raw = truth_dict(CONFIGS / "alp_gg_bksta.toml")["beams"]
    assert raw["crossing_angle"] == "45 mrad"
    h = 0.045 / 2
    e1, e2 = cfg.beams.e_minus, cfg.beams.e_plus
    em = vector.obj(px=e1 * math.sin(h), py=0.0, pz=e1 * math.cos(h), E=e1)
    ep = vector.obj(px=e2 * math.sin(h), py=0.0, pz=-e2 * math.cos(h), E=e2)
    tot = em + ep
    bcm = _ev4(b.event, "par").boostCM_of_p4(tot)
    emc = em.boostCM_of_p4(tot)
    c = (bcm.px * emc.px + bcm.py * emc.py + bcm.pz * emc.pz) / (bcm.p * emc.p)
    assert _ks(c, lambda x: (2 + 3 * x - x**3) / 4) > ALPHA
    assert _ks(c, _uniform_cdf) < ALPHA  # the test sees the difference from isotropy
    # azimuth about the beam is uniform: use the collision-frame y axis (perpendicular to
    # the e- beam, which lies in the xz plane)
    phi = np.arctan2(bcm.py, bcm.px * emc.pz / emc.p - bcm.pz * emc.px / emc.p)
    assert _ks(phi, stats.uniform(-np.pi, 2 * np.pi).cdf) > ALPHA
    # B momentum in the collision frame: two-body p* with E = sqrt(s)/2
    m = np.where(np.abs(b.event["par_pdg"]) == 521, Particle.from_pdgid(521).mass,
                 Particle.from_pdgid(511).mass) / 1000.0
    np.testing.assert_allclose(bcm.p, np.sqrt(tot.mass**2 / 4 - m**2), rtol=1e-9)


def test_kstar_helicity_cos2_for_spin0_x():
    """B -> K* a (spin 0), K* -> K pi: dN/dcos(theta_K) ~ cos^2, CDF (c^3 + 1)/2."""
    cfg, b = _block("alp_gg_bksta.toml", seed=10)
    assert cfg.production.recoil == "K*" and cfg.llp.channel == "gamma_gamma"
    c = _helicity_cos(_grp4(b, "rcld", 0), _ev4(b.event, "rcl"), _ev4(b.event, "par"))
    assert _ks(c, lambda x: (np.clip(x, -1, 1) ** 3 + 1) / 2) > ALPHA
    assert _ks(c, _uniform_cdf) < ALPHA
    # the pion goes the other way in the K* frame: same law
    c2 = _helicity_cos(_grp4(b, "rcld", 1), _ev4(b.event, "rcl"), _ev4(b.event, "par"))
    np.testing.assert_allclose(c2, -c, atol=1e-6)


def test_kstar_unpolarised_for_spin1_x():
    """B -> K* V: documented approximation, K* decays isotropically."""
    _, b = _block("alp_gg_bksta.toml", seed=11, mass=0.5, channel="mu_mu")
    c = _helicity_cos(_grp4(b, "rcld", 0), _ev4(b.event, "rcl"), _ev4(b.event, "par"))
    assert _ks(c, _uniform_cdf) > ALPHA


def _one_minus_b_c2_cdf(beta2):
    def cdf(c):
        c = np.clip(c, -1, 1)
        return ((c + 1) - beta2 * (c**3 + 1) / 3) / (2 - 2 * beta2 / 3)
    return cdf


@pytest.mark.parametrize("channel,mass,dau", [("mu_mu", 0.5, 13), ("e_e", 0.3, 11),
                                              ("pi_pi", 0.6, 211)])
def test_vector_from_b_to_k_v_has_helicity_zero(channel, mass, dau):
    """B -> K V: V -> f fbar ~ 1 - beta^2 cos^2, V -> pi pi ~ cos^2 (helicity angle)."""
    _, b = _block("alp_3pi_bka.toml", seed=12, mass=mass, channel=channel, matrix_element="flat")
    c = _helicity_cos(_grp4(b, "dau", 0), _ev4(b.event, "llp"), _ev4(b.event, "par"))
    mf = float(Particle.from_pdgid(dau).mass) / 1000.0
    beta2 = 1 - 4 * mf**2 / mass**2
    if channel == "pi_pi":
        assert _ks(c, lambda x: (np.clip(x, -1, 1) ** 3 + 1) / 2) > ALPHA
    else:
        assert _ks(c, _one_minus_b_c2_cdf(beta2)) > ALPHA
    assert _ks(c, _uniform_cdf) < ALPHA


def test_b_to_k_a_isotropic_in_b_frame():
    """Spin-0 B: the LLP direction in the B rest frame is isotropic about the B flight line."""
    _, b = _block("alp_3pi_bka.toml", seed=13)
    B = _ev4(b.event, "par")
    x_b = _ev4(b.event, "llp").boostCM_of_p4(B)
    assert _ks(_cos(x_b, B), _uniform_cdf) > ALPHA
    z = vector.array({"px": np.zeros(N), "py": np.zeros(N), "pz": np.ones(N), "E": np.ones(N)})
    assert _ks(_cos(x_b, z), _uniform_cdf) > ALPHA


def test_a_to_gamma_gamma_isotropic_in_rest_frame():
    """a -> gamma gamma (spin 0): isotropic in the LLP rest frame (about its flight direction
    and about the lab z axis), photons back to back with E = m/2."""
    cfg, b = _block("alp_gg_bksta.toml", seed=14)
    llp = _ev4(b.event, "llp")
    g1 = _grp4(b, "dau", 0).boostCM_of_p4(llp)
    g2 = _grp4(b, "dau", 1).boostCM_of_p4(llp)
    np.testing.assert_allclose(g1.E, cfg.llp.mass / 2, rtol=1e-9)
    np.testing.assert_allclose(_cos(g1, g2), -1.0, atol=1e-9)
    assert _ks(_cos(g1, llp), _uniform_cdf) > ALPHA
    assert _ks(g1.pz / g1.p, _uniform_cdf) > ALPHA
    assert _ks(np.arctan2(g1.py, g1.px), stats.uniform(-np.pi, 2 * np.pi).cdf) > ALPHA


def test_three_body_orientation_isotropic():
    """a -> pi+ pi- pi0: the pi0 direction and the decay-plane normal are isotropic in the
    LLP rest frame (spin 0)."""
    _, b = _block("alp_3pi_bka.toml", seed=15)
    llp = _ev4(b.event, "llp")
    p1 = _grp4(b, "dau", 0).boostCM_of_p4(llp)
    p3 = _grp4(b, "dau", 2).boostCM_of_p4(llp)
    assert _ks(p3.pz / p3.p, _uniform_cdf) > ALPHA
    assert _ks(_cos(p3, llp), _uniform_cdf) > ALPHA
    nx = p1.py * p3.pz - p1.pz * p3.py
    ny = p1.pz * p3.px - p1.px * p3.pz
    nz = p1.px * p3.py - p1.py * p3.px
    assert _ks(nz / np.sqrt(nx**2 + ny**2 + nz**2), _uniform_cdf) > ALPHA


def test_pi0_to_gamma_gamma_isotropic():
    """pi0 -> gamma gamma (spin 0) in the pi0 rest frame: isotropic about the pi0 flight
    direction, E_gamma = m_pi0/2 (PDG mass from `particle`)."""
    _, b = _block("alp_3pi_bka.toml", seed=16)
    pi0 = _grp4(b, "dau", 2)
    g = _grp4(b, "dau", 3).boostCM_of_p4(pi0)
    np.testing.assert_allclose(g.E, float(Particle.from_pdgid(111).mass) / 2000.0, rtol=1e-8)
    assert _ks(_cos(g, pi0), _uniform_cdf) > ALPHA
    assert _ks(g.pz / g.p, _uniform_cdf) > ALPHA
