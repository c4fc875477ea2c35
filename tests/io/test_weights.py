"""Luminosity weights against hand computations from the documented formulas."""

import math

import awkward as ak
import numpy as np
import pytest
import scipy.constants as sc
from _samples import CONFIGS, N_SMALL, write_sample
from scipy.integrate import quad

from toymc.config.loader import load
from toymc.errors import ConfigError, InputFileError
from toymc.io.info import load_meta
from toymc.io.reader import read
from toymc.io.weights import lumi_weight, parse_lumi, sigma_times_br
from toymc.physics.production import radiative

#: GeV^-2 in fb, from CODATA hbar*c via scipy: (hbar c)^2 in GeV^2 cm^2, 1 fb = 1e-39 cm^2
FB_PER_INV_GEV2 = (sc.hbar * sc.c / (sc.e * 1e9) * 100.0) ** 2 / 1e-39


def _dsigma_dcos(c, s, m, eps):
    """e+e- -> gamma V, massless electrons, photon angle in the collision frame (fb):
    (2 pi alpha^2 eps^2 / s)(1 - x)[(1 + c^2) + 4x/(1 - x)^2]/(1 - c^2), x = m^2/s
    (tree level; crossing of q qbar -> V g, from memory)."""
    x = m * m / s
    a = sc.fine_structure
    return (2 * math.pi * a**2 * eps**2 / s * (1 - x) * ((1 + c * c) + 4 * x / (1 - x) ** 2)
            / (1 - c * c) * FB_PER_INV_GEV2)


def test_parse_lumi():
    assert parse_lumi("1 ab-1") == pytest.approx(1000.0, rel=1e-12)
    assert parse_lumi("500 fb-1") == pytest.approx(500.0, rel=1e-12)
    assert parse_lumi("2 pb-1") == pytest.approx(2e-3, rel=1e-12)
    assert parse_lumi(1000) == 1000.0 and parse_lumi("1000") == 1000.0
    for bad in ("1 ab", "fast", -1.0, 0, "nan"):
        with pytest.raises(ConfigError, match="lumi"):
            parse_lumi(bad)


def test_radiative_weights_sum_to_lumi_sigma_br(demo_files):
    """sum of w_lumi = L_int x sigma(e+e- -> gamma V; eps) x BR(V -> mu mu), with sigma
    integrated by scipy.quad from the differential cross-section and compared with
    toymc.physics.production.radiative.sigma and the closed form
    (2 pi alpha^2 eps^2/s)[2(1+x^2)/(1-x) ln((1+c0)/(1-c0)) - 2 c0 (1-x)]."""
    path = demo_files["darkphoton_mumu"]
    meta = load_meta(path)
    eps, br, lumi = 2.0e-4, 0.35, "1 ab-1"
    s, m = meta["sqrt_s_gev"] ** 2, meta["mass_gev"]
    c0 = meta["normalisation"]["photon_cos_max"]
    assert meta["normalisation"]["photon_cos_min"] == -c0
    by_quad = quad(_dsigma_dcos, -c0, c0, args=(s, m, eps), epsabs=0, epsrel=1e-12)[0]
    x = m * m / s
    closed = (2 * math.pi * sc.fine_structure**2 * eps**2 / s * FB_PER_INV_GEV2
              * (2 * (1 + x * x) / (1 - x) * math.log((1 + c0) / (1 - c0)) - 2 * c0 * (1 - x)))
    module = radiative.sigma(meta["sqrt_s_gev"], m, -c0, c0, eps=eps)
    assert by_quad == pytest.approx(closed, rel=1e-10)
    assert module == pytest.approx(by_quad, rel=1e-10)
    expected = 1000.0 * by_quad * br
    ev = read(path, columns=["llp_m"], lumi_fb=lumi, overrides={"eps": eps, "br_decay": br})
    assert len(ev) == N_SMALL
    assert ak.sum(ev.w_lumi) == pytest.approx(expected, rel=1e-10)
    assert lumi_weight(meta, lumi, eps=eps, br_decay=br) == pytest.approx(expected / N_SMALL,
                                                                          rel=1e-10)


def test_b_meson_weights_with_model_normalisation(tmp_path):
    """sum of w = L x sigma_bb x 2 x [f BR(B+ -> K+ X) + (1 - f) BR(B0 -> K0 X)] x BR(X -> 3 pi),
    counting either B of the pair; BRs stored as a model layer would store them."""
    config = CONFIGS / "alp_3pi_bka.toml"
    cfg = load(config)
    brc, brn, brd = 3.0e-7, 2.0e-7, 0.6
    path = write_sample(config, tmp_path / "alp.root", events=1000, normalisation_update={
        "br_production_charged": brc, "br_production_neutral": brn, "br_decay": brd,
        "couplings": {"g_test": 1e-3}})
    f, sigma_bb = cfg.production.charged_fraction, cfg.production.sigma_bb
    expected = 250.0 * sigma_bb * 2 * (f * brc + (1 - f) * brn) * brd
    ev = read(path, columns=["llp_m"], lumi_fb="250 fb-1")
    assert ak.sum(ev.w_lumi) == pytest.approx(expected, rel=1e-10)
    value, terms = sigma_times_br(load_meta(path))
    assert value == pytest.approx(expected / 250.0, rel=1e-12)
    assert math.prod(terms.values()) == pytest.approx(value, rel=1e-12)
    # an override replaces the stored value
    ev2 = read(path, columns=["llp_m"], lumi_fb=250, overrides={"br_decay": 0.3})
    assert ak.sum(ev2.w_lumi) == pytest.approx(expected / 2, rel=1e-10)


def test_missing_normalisation_names_the_override(demo_files):
    b = load_meta(demo_files["alp_3pi_bka"])
    with pytest.raises(InputFileError, match=r"BR\(X -> pi_pi_pi0\).*--br-decay.*--sigma-times-br"):
        lumi_weight(b, 1000)
    with pytest.raises(InputFileError, match=r"BR\(B -> K X\).*--br-production"):
        lumi_weight(b, 1000, br_decay=1.0)
    r = load_meta(demo_files["darkphoton_mumu"])
    with pytest.raises(InputFileError, match="eps.*--eps"):
        lumi_weight(r, 1000, br_decay=1.0)
    # the coupling-free override alone is enough
    assert lumi_weight(b, "1 ab-1", sigma_times_br_fb=2.5) == pytest.approx(
        1000 * 2.5 / N_SMALL, rel=1e-12)
    with pytest.raises(ConfigError, match="br_decay"):
        lumi_weight(b, 1000, br_decay=1.5)


def test_files_of_one_point_share_the_normalisation(tmp_path):
    """Two samples of one point with different seeds read together: sum of w = L sigma BR
    (each event weighs L sigma BR / (N1 + N2)), not twice that."""
    config = CONFIGS / "darkphoton_mumu.toml"
    a = write_sample(config, tmp_path / "a.root", events=800, seed=3)
    b = write_sample(config, tmp_path / "b.root", events=400, seed=4)
    over = {"eps": 1e-3, "br_decay": 0.5}
    xs, _ = sigma_times_br(load_meta(a), **over)
    ev = read([a, b], columns=["llp_m"], lumi_fb=10.0, overrides=over)
    w = ak.to_numpy(ev.w_lumi)
    assert np.all(w == w[0]) and w[0] == pytest.approx(10.0 * xs / 1200, rel=1e-12)
    assert w.sum() == pytest.approx(10.0 * xs, rel=1e-10)
    with pytest.raises(InputFileError, match="counted twice"):
        read([a, a], columns=["llp_m"], lumi_fb=10.0, overrides=over)
