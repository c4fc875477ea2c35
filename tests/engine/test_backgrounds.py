"""Tests of the background species (toymc.engine.backgrounds, toymc.physics.backgrounds) against
PDG values (`particle`), scipy and published formulas.

Statistical checks use fixed seeds; tolerances follow from the sample sizes.
"""

import math

import numpy as np
import pytest
from particle import Particle
from scipy import integrate, stats

from toymc.engine import backgrounds as B
from toymc.engine.rng import DETECTOR, GENERATOR, block_generator
from toymc.errors import ConfigError
from toymc.physics import backgrounds as PB
from toymc.physics.production.beams import Beams

# a collision frame at rest in the lab, point-like luminous region
BEAMS_AT_REST = Beams(e_minus=5.29, e_plus=5.29)


def _ctau_cm(pdgid):
    """c*tau from `particle` (mm) in cm, independently of toymc.physics.constants."""
    return float(Particle.from_pdgid(pdgid).ctau) / 10.0


def _species(name, **kw):
    args = {"name": name, "sigma": 1.0, "br": 1.0, "p_mean": 0.8, "p_shape": 2.0}
    args.update(kw)
    return B.Species(**args)


def test_ks_flight_distance_is_exponential_with_pdg_ctau():
    """l/(beta gamma) of K_S is exponential with mean c*tau (PDG review "Kinematics",
    survival probability; c*tau of K_S from `particle`): Kolmogorov-Smirnov test."""
    blk = B.generate_species(_species("ks"), BEAMS_AT_REST, None, seed=11, events=40000)
    ev = blk.event
    p = np.sqrt(ev["llp_px"] ** 2 + ev["llp_py"] ** 2 + ev["llp_pz"] ** 2)
    m = float(Particle.from_pdgid(310).mass) / 1000.0
    proper = ev["llp_l"] / (p / m)
    ks = stats.kstest(proper, stats.expon(scale=_ctau_cm(310)).cdf)
    assert ks.pvalue > 1e-3
    # the decay point lies at l along the momentum
    dl = np.sqrt((ev["llp_dx"] - ev["llp_vx"]) ** 2 + (ev["llp_dy"] - ev["llp_vy"]) ** 2
                 + (ev["llp_dz"] - ev["llp_vz"]) ** 2)
    np.testing.assert_allclose(dl, ev["llp_l"], rtol=1e-9, atol=1e-12)


def test_ks_fraction_beyond_r_min_at_fixed_momentum():
    """Fraction of K_S with decay radius > r_min at fixed p, isotropic:
    P = int_0^1 dc exp(-r_min / (lambda sqrt(1 - c^2))), lambda = (p/m) c*tau
    (exponential decay law, PDG review "Kinematics", survival probability)."""
    p0 = 0.6
    sp = _species("ks", p_mean=p0, p_shape=1e9)  # spread of p: 3e-5 relative
    n = 60000
    blk = B.generate_species(sp, BEAMS_AT_REST, None, seed=12, events=n)
    m = float(Particle.from_pdgid(310).mass) / 1000.0
    lam = p0 / m * _ctau_cm(310)
    for r_min in (0.5, 2.0, 5.0):
        expect = integrate.quad(lambda c, r0=r_min: math.exp(-r0 / (lam * math.sqrt(1 - c * c))),
                                0.0, 1.0)[0]
        k = int(np.count_nonzero(blk.event["llp_dr"] > r_min))
        sigma = math.sqrt(n * expect * (1 - expect))
        assert abs(k - n * expect) < 4.0 * sigma, (r_min, k / n, expect)


def _demo_layers():
    # beam pipe, two vertex layers, a chamber wall: thickness x/X0 at normal incidence
    return {"radius": np.array([1.0, 2.0, 5.0, 16.0]),
            "z_min": np.array([-50.0, -50.0, -50.0, -50.0]),
            "z_max": np.array([50.0, 50.0, 50.0, 50.0]),
            "thickness": np.array([0.006, 0.02, 0.05, 0.1])}


@pytest.mark.parametrize("theta_deg", [90.0, 60.0])
def test_conversion_probability_per_layer(theta_deg):
    """Per crossed layer, P(convert | reached) = 1 - exp(-(7/9) x/X0) with x = t/sin(theta)
    for a photon from the axis (PDG review "Passage of particles through matter", pair
    production, high-energy limit): binomial 4-sigma check per layer."""
    n = 200000
    lay = _demo_layers()
    rng = np.random.default_rng(5)
    phi = rng.uniform(0, 2 * np.pi, n)
    th = math.radians(theta_deg)
    d = (math.sin(th) * np.cos(phi), math.sin(th) * np.sin(phi), np.full(n, math.cos(th)))
    o = (np.zeros(n), np.zeros(n), np.zeros(n))
    layer, x, y, _z, w = PB.convert_photons(np.random.default_rng(6), o, d, lay, forced=False)
    reached = n
    for i, t in enumerate(lay["thickness"]):
        p = 1.0 - math.exp(-(7.0 / 9.0) * t / math.sin(th))
        k = int(np.count_nonzero(layer == i))
        sigma = math.sqrt(reached * p * (1 - p))
        assert abs(k - reached * p) < 4.0 * sigma, (i, k, reached * p)
        r = np.hypot(x[layer == i], y[layer == i])
        np.testing.assert_allclose(r, lay["radius"][i], rtol=1e-12)
        reached -= k
    assert np.all(w[layer >= 0] == 1.0)


def test_forced_conversion_weight_and_layer_shares():
    """Forced mode: weight P_tot = 1 - prod(1 - P_i), layer i chosen with probability
    P_i prod_{j<i}(1 - P_j) / P_tot; chi-square test of the layer counts (scipy)."""
    n = 100000
    lay = _demo_layers()
    o = (np.zeros(n), np.zeros(n), np.zeros(n))
    d = (np.ones(n), np.zeros(n), np.zeros(n))
    layer, _x, _y, _z, w = PB.convert_photons(np.random.default_rng(7), o, d, lay, forced=True)
    p = 1.0 - np.exp(-(7.0 / 9.0) * lay["thickness"])
    reach = np.concatenate([[1.0], np.cumprod(1 - p)[:-1]])
    ptot = 1.0 - np.prod(1 - p)
    np.testing.assert_allclose(w, ptot, rtol=1e-12)
    counts = np.bincount(layer, minlength=len(p))
    expect = n * p * reach / ptot
    chi2 = float(np.sum((counts - expect) ** 2 / expect))
    assert stats.chi2.sf(chi2, len(p) - 1) > 1e-3
    # outside the material's z range nothing converts
    c = 0.01 / math.hypot(0.01, 1.0)
    d2 = (np.full(10, c), np.zeros(10), np.full(10, math.sqrt(1 - c * c)))
    o2 = (np.zeros(10),) * 3
    layer2, *_, w2 = PB.convert_photons(np.random.default_rng(8), o2, d2, lay, forced=True)
    assert np.all(layer2 == -1) and np.all(w2 == 0.0)


def test_conversion_pairs_energy_sharing_and_mass():
    """Conversion e+e- pairs: x = E(e-)/E(gamma) follows 1 - (4/3) x (1 - x) (PDG review
    "Passage of particles through matter", complete screening, from memory); the pair
    starts on a material cylinder and its energy equals the photon's."""
    geo = {"radius": np.array([1.0, 3.0]), "z_min": np.array([-40.0, -40.0]),
           "z_max": np.array([40.0, 40.0]), "thickness": np.array([0.01, 0.02])}
    blk = B.generate_species(_species("conversion", p_mean=1.0), BEAMS_AT_REST, geo, seed=3,
                             events=30000)
    _counts, dau = blk.groups["dau"]
    ev = blk.event
    ok = ev["w_gen"] > 0
    e = dau["e"].reshape(-1, 2)
    np.testing.assert_allclose(e.sum(axis=1)[ok], ev["llp_e"][ok], rtol=1e-9)
    r = np.hypot(dau["vx"], dau["vy"]).reshape(-1, 2)[ok, 0]
    assert np.all(np.isclose(r, 1.0) | np.isclose(r, 3.0))
    x = (e[:, 0] / e.sum(axis=1))[ok & (ev["llp_e"] > 0.2)]
    # density f(x) = (1 - 4/3 x(1-x)) / (7/9) on [0, 1]: compare the CDF with a KS test
    cdf = lambda t: (t - (2.0 / 3.0) * t ** 2 + (4.0 / 9.0) * t ** 3) / (7.0 / 9.0)
    assert stats.kstest(x, cdf).pvalue > 1e-3
    assert set(np.unique(dau["pdg"])) == {11, -11}


def test_lambda_daughters_and_antiparticle_fraction():
    """Lambda -> p pi-: the pair mass is the PDG Lambda mass (`particle`); anti-Lambda
    fraction binomial; the positive track is stored first."""
    n = 20000
    blk = B.generate_species(_species("lambda", anti_fraction=0.3), BEAMS_AT_REST, None,
                             seed=4, events=n)
    _counts, dau = blk.groups["dau"]
    px, py, pz, e = (dau[k].reshape(-1, 2).sum(axis=1) for k in ("px", "py", "pz", "e"))
    m = np.sqrt(e ** 2 - px ** 2 - py ** 2 - pz ** 2)
    np.testing.assert_allclose(m, float(Particle.from_pdgid(3122).mass) / 1000.0, rtol=1e-7)
    pdg = dau["pdg"].reshape(-1, 2)
    anti = blk.event["llp_pdg"] < 0
    assert np.all(pdg[~anti] == [2212, -211]) and np.all(pdg[anti] == [211, -2212])
    assert np.all(dau["q"].reshape(-1, 2) == [1, -1])
    k = int(anti.sum())
    assert abs(k - 0.3 * n) < 4 * math.sqrt(n * 0.3 * 0.7)
    # the proton carries the proton mass
    mp = float(Particle.from_pdgid(2212).mass) / 1000.0
    ep = np.where(anti, dau["e"].reshape(-1, 2)[:, 1], dau["e"].reshape(-1, 2)[:, 0])
    pp = np.where(anti, 1, 0)
    p3 = np.stack([dau[c].reshape(-1, 2)[np.arange(n), pp] for c in ("px", "py", "pz")])
    np.testing.assert_allclose(np.sqrt(ep ** 2 - (p3 ** 2).sum(axis=0)), mp, rtol=1e-6)


def test_kl_forced_decay_weight():
    """Forced K_L decay within L: weight 1 - exp(-L/(beta gamma c tau)) (exponential law),
    every decay inside L, c*tau of K_L from `particle`."""
    L = 100.0
    blk = B.generate_species(_species("kl", force_decay=L), BEAMS_AT_REST, None, seed=9,
                             events=5000)
    ev = blk.event
    p = np.sqrt(ev["llp_px"] ** 2 + ev["llp_py"] ** 2 + ev["llp_pz"] ** 2)
    m = float(Particle.from_pdgid(130).mass) / 1000.0
    np.testing.assert_allclose(ev["w_gen"], -np.expm1(-L / (p / m * _ctau_cm(130))),
                               rtol=1e-10)
    assert np.all(ev["llp_l"] <= L * (1 + 1e-12))
    # the five stored daughters: pi+ pi- pi0 gamma gamma, pi0 -> gamma gamma conserves p
    d = blk.groups["dau"][1]
    e = d["e"].reshape(-1, 5)
    np.testing.assert_allclose(e[:, 3] + e[:, 4], e[:, 2], rtol=1e-9)
    np.testing.assert_allclose(e[:, :3].sum(axis=1), ev["llp_e"], rtol=1e-9)


def test_gamma_variate_vs_scipy():
    """Squeeze gamma sampler (ACM TOMS 26 (2000) 363) vs scipy.stats.gamma (shape k, scale mean/k)."""
    for shape in (0.6, 2.0, 7.5):
        x = PB.gamma_variate(np.random.default_rng(1), 20000, shape, 0.7)
        assert stats.kstest(x, stats.gamma(shape, scale=0.7 / shape).cdf).pvalue > 1e-3


def test_streams_differ_from_signal_and_between_species():
    """Background stages never equal the signal's (0, 1) nor each other."""
    st = [s for name in B.SPECIES for s in B.stages(name)]
    assert len(set(st)) == len(st) and not set(st) & {GENERATOR, DETECTOR}
    first = {s: block_generator(1, 0, s).random() for s in st + [GENERATOR, DETECTOR]}
    assert len(set(first.values())) == len(first)


def test_block_is_reproducible_and_in_signal_layout():
    sp = _species("combo", vertex="lambda", anti_fraction=0.5)
    a = B.generate_species_block(sp, BEAMS_AT_REST, None, 2, 3, 500)
    b = B.generate_species_block(sp, BEAMS_AT_REST, None, 2, 3, 500)
    for k in a.event:
        np.testing.assert_array_equal(a.event[k], b.event[k])
    assert set(a.groups) == {"dau", "rcld"}
    d = a.groups["dau"][1]
    assert set(d) == {"pdg", "q", "status", "mother", "px", "py", "pz", "e", "vx", "vy", "vz"}
    st = d["status"].reshape(-1, 5)
    assert np.all(st == [1, 1, 2, 1, 1])
    # the pi0 and its photons start at the primary vertex
    vx = d["vx"].reshape(-1, 5)
    np.testing.assert_array_equal(vx[:, 2], a.event["pv_x"])


@pytest.mark.parametrize("raw, key", [
    ({"sigma_ref": "3 nb", "ks": {"yield": 0.5}}, "backgrounds.ks.p_mean"),
    ({"sigma_ref": "3 nb", "kss": {"yield": 0.5}}, "backgrounds.kss"),
    ({"ks": {"yield": 0.5, "p_mean": 0.5}}, "backgrounds.sigma_ref"),
    ({"sigma_ref": "3 nb", "ks": {"yield": 0.5, "sigma": "1 nb", "p_mean": 0.5}},
     "backgrounds.ks.yield"),
    ({"sigma_ref": "3 nb", "ks": {"yield": -1, "p_mean": 0.5}}, "backgrounds.ks.yield"),
    ({"sigma_ref": "3 nb", "combo": {"yield": 1, "p_mean": 0.5, "vertex": "kl"}},
     "backgrounds.combo.vertex"),
    ({"sigma_ref": "3 nb", "ks": {"yield": 1, "p_mean": 0.5, "cos2": -2}},
     "backgrounds.ks.cos2"),
    ({"sigma_ref": "3 nb"}, "backgrounds"),
])
def test_bad_background_config(raw, key):
    with pytest.raises(ConfigError) as exc:
        B.parse_backgrounds(raw, "x.toml")
    assert exc.value.key == key


def test_parse_backgrounds_units_and_default_br():
    bc = B.parse_backgrounds({"sigma_ref": "3.5 nb", "ks": {"yield": 0.5, "p_mean": "700 MeV"},
                              "lambda": {"sigma": "10 pb", "p_mean": 1.0, "br": 0.5}})
    ks, lam = bc.species["ks"], bc.species["lambda"]
    assert ks.sigma == pytest.approx(0.5 * 3.5e6) and ks.p_mean == pytest.approx(0.7)
    assert ks.br == B.DEFAULT_BR["ks"] and lam.br == 0.5 and lam.sigma == pytest.approx(1e4)
    assert B.expected_count(ks, 2.0) == pytest.approx(2.0 * 0.5 * 3.5e6 * ks.br)
