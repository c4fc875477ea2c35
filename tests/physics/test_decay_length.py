"""Decay lengths and vertices of the LLP and of the B meson.

References
----------
* Exponential decay law and lab decay length beta*gamma*c*t = (|p|/m) c*t; survival
  P(L1 < L < L2) = exp(-L1/lambda) - exp(-L2/lambda), lambda = (p/m) c tau
  (PDG review "Kinematics", survival probability).
* B lifetimes: PDG values from `particle` (c*tau in mm, converted here to cm).
* KS tests with scipy.stats.kstest; p-value > ALPHA; moments within 5 standard errors.
"""


import numpy as np
import pytest
from _demo import CONFIGS, truth_dict
from particle import Particle
from scipy import stats

from toymc.config.loader import from_dict
from toymc.engine.generator import generate_block

ALPHA = 1e-3
N = 100_000


def _block(demo, seed=3, **llp):
    data = truth_dict(CONFIGS / demo)
    data["run"].update(events=N, seed=seed)
    data["llp"].update(llp)
    cfg = from_dict(data)
    return cfg, generate_block(cfg, 0, N)


@pytest.fixture(scope="module", params=["alp_gg_bksta.toml", "darkphoton_mumu.toml",
                                        "alp_3pi_bka.toml"])
def sample(request):
    return _block(request.param)


def _bg(ev):
    p = np.sqrt(ev["llp_px"] ** 2 + ev["llp_py"] ** 2 + ev["llp_pz"] ** 2)
    return p / ev["llp_m"]


def test_proper_decay_length_is_exponential(sample):
    """c*t = l/(beta gamma) ~ exp(c tau): KS test against expon(scale=ctau)."""
    cfg, b = sample
    ev = b.event
    ctau = cfg.llp.ctau
    ct = ev["llp_l"] / _bg(ev)
    assert stats.kstest(ct, stats.expon(scale=ctau).cdf).pvalue > ALPHA
    assert stats.kstest(ev["llp_ct"], stats.expon(scale=ctau).cdf).pvalue > ALPHA
    assert abs(ct.mean() - ctau) < 5 * ctau / np.sqrt(ct.size)
    np.testing.assert_array_equal(ev["llp_ctau"], ctau)


def test_lab_length_is_beta_gamma_ct(sample):
    """llp_l = |p|/m * llp_ct (up to rounding), the vertex moves by p/m * ct."""
    _, b = sample
    ev = b.event
    bg = _bg(ev)
    np.testing.assert_allclose(ev["llp_l"], bg * ev["llp_ct"], rtol=1e-14, atol=0)
    for c in "xyz":
        moved = ev["llp_v" + c] + ev["llp_p" + c] / ev["llp_m"] * ev["llp_ct"]
        np.testing.assert_allclose(ev["llp_d" + c], moved, rtol=0,
                                   atol=1e-13 * (1 + np.abs(moved)).max())
    np.testing.assert_allclose(ev["llp_dr"], np.hypot(ev["llp_dx"], ev["llp_dy"]), rtol=1e-15)
    d = np.sqrt(sum((ev["llp_d" + c] - ev["llp_v" + c]) ** 2 for c in "xyz"))
    np.testing.assert_allclose(d, ev["llp_l"], rtol=1e-12, atol=1e-14)


def test_survival_probability_in_a_shell(sample):
    """Events decaying in L1 < l < L2 against sum_i exp(-L1/lambda_i) - exp(-L2/lambda_i).

    The count is a sum of independent Bernoulli variables; its variance is sum p_i (1 - p_i).
    """
    cfg, b = sample
    ev = b.event
    lam = _bg(ev) * cfg.llp.ctau
    for l1, l2 in ((1.0, 5.0), (10.0, 30.0), (50.0, 150.0)):
        p = np.exp(-l1 / lam) - np.exp(-l2 / lam)
        k = np.count_nonzero((ev["llp_l"] > l1) & (ev["llp_l"] < l2))
        assert abs(k - p.sum()) < 5 * np.sqrt((p * (1 - p)).sum()) + 1


def test_b_meson_flight():
    """B proper decay length ~ exp(c tau_B) per species (PDG via `particle`); LLP starts at
    the B decay point pv + p_B/m_B c t_B."""
    cfg, b = _block("alp_gg_bksta.toml", seed=4)
    ev = b.event
    for pdgid in (521, 511):
        sel = np.abs(ev["par_pdg"]) == pdgid
        assert sel.sum() > 0.4 * N
        part = Particle.from_pdgid(pdgid)
        ctau_cm = float(part.ctau) / 10.0
        assert stats.kstest(ev["par_ct"][sel], stats.expon(scale=ctau_cm).cdf).pvalue > ALPHA
        m = float(part.mass) / 1000.0
        for c in "xyz":
            start = ev["pv_" + c][sel] + ev["par_p" + c][sel] / m * ev["par_ct"][sel]
            np.testing.assert_allclose(ev["llp_v" + c][sel], start, rtol=0, atol=1e-13)
    # charged fraction of the config: binomial
    f = cfg.production.charged_fraction
    k = np.count_nonzero(np.abs(ev["par_pdg"]) == 521)
    assert abs(k - N * f) < 5 * np.sqrt(N * f * (1 - f))
    # B or anti-B with equal odds
    k = np.count_nonzero(ev["par_pdg"] > 0)
    assert abs(k - N / 2) < 5 * np.sqrt(N / 4)


def test_luminous_region_is_gaussian(sample):
    cfg, b = sample
    for c, s in zip("xyz", (cfg.beams.sigma_x, cfg.beams.sigma_y, cfg.beams.sigma_z)):
        assert s > 0
        assert stats.kstest(b.event["pv_" + c], stats.norm(scale=s).cdf).pvalue > ALPHA


def test_radiative_llp_starts_at_primary_vertex():
    _, b = _block("darkphoton_mumu.toml", seed=8)
    for c in "xyz":
        np.testing.assert_array_equal(b.event["llp_v" + c], b.event["pv_" + c])
    np.testing.assert_array_equal(b.event["par_ct"], 0.0)
