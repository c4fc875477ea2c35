"""The validation suite (toymc.analysis.validate) and its statistics.

References:
* binomial distribution and normal quantiles from scipy.stats; pull and
  chi-square conventions of the PDG review "Statistics";
* Bonferroni's inequality: P(any of N tests fails) <= N alpha/N = alpha;
* exponential decay law (PDG review "Kinematics", sec. 40.4.1) through the fold;
* linear error propagation checked against the spread of Gaussian-smeared
  replicas drawn with numpy (n-sigma tolerance from the replica count).
"""

import math

import numpy as np
import pytest
from _demo import ROOT
from scipy import stats

from toymc.analysis.mass_predictions import ip_pointing_mass, propagated_mass_sigma
from toymc.analysis.pulls import ALPHA, assess, binomial_pull
from toymc.cli.validate import main_validate, run_validation
from toymc.config import loader as config


def test_binomial_pull_gaussian_formula():
    z, g = binomial_pull(330, 1000, 0.3, 0.01)
    assert g and z == pytest.approx((0.33 - 0.3) / math.sqrt(0.3 * 0.7 / 1000 + 1e-4))


def test_binomial_pull_unit_width_under_the_null():
    rng = np.random.default_rng(1)
    n, f, m = 2000, 0.2, 4000
    k = rng.binomial(n, f, m)
    z = np.array([binomial_pull(int(x), n, f)[0] for x in k])
    # sample std of m unit normals: error 1/sqrt(2(m-1)); 5 sigma
    assert abs(z.std(ddof=1) - 1) < 5 / math.sqrt(2 * (m - 1))
    assert abs(z.mean()) < 5 / math.sqrt(m)


def test_binomial_pull_small_counts_exact_and_conservative():
    n, f = 1000, 0.002  # n f = 2: exact branch
    z, g = binomial_pull(2, n, f)
    assert not g and abs(z) < 0.5
    z, g = binomial_pull(12, n, f)
    p = 2 * stats.binom.sf(11, n, f)
    assert z == pytest.approx(stats.norm.isf(p / 2)) and z > 3
    rng = np.random.default_rng(2)
    m = 5000
    zs = np.array([binomial_pull(int(x), n, f)[0] for x in rng.binomial(n, f, m)])
    # an exact test rejects at most its level: rate(|z| > z_0.01) <= 0.01 (+ 5 sigma)
    assert np.mean(np.abs(zs) > stats.norm.isf(0.005)) <= 0.01 + 5 * math.sqrt(0.01 / m)


def test_assess_criteria():
    n = 100
    zl = stats.norm.isf(ALPHA / (2 * n))
    ok = assess(np.zeros(n), np.ones(n, bool))
    assert ok["passed"] and ok["z_limit"] == pytest.approx(zl) and ok["p_chi2"] == 1.0
    z = np.zeros(n)
    z[5] = -(zl + 0.01)
    bad = assess(z, np.zeros(n, bool))  # not in the chi-square, but above z_B
    assert not bad["passed"] and bad["max_pull"] == pytest.approx(-(zl + 0.01))
    z = np.full(n, 2.0)  # chi2 = 400 for 100 ndf
    bad = assess(z, np.ones(n, bool))
    assert not bad["passed"] and bad["p_chi2"] == pytest.approx(stats.chi2.sf(400, 100))


def test_ip_pointing_mass_prompt_decays_give_the_true_mass():
    cfg = config.load(ROOT / "configs" / "alp_gg_bksta.toml").with_llp(ctau=1e-4)
    from toymc.engine.block import concatenate
    from toymc.engine.generator import iter_chunks

    blk = concatenate(list(iter_chunks(cfg.with_run(events=2000, seed=5))))
    m, fac = ip_pointing_mass(blk, cfg.detector)
    ok = np.isfinite(m)
    assert ok.mean() > 0.5
    # decays within ~1e-3 cm of the origin: directions from the IP are the true ones up to
    # displacement/calorimeter radius ~ 1e-5
    np.testing.assert_allclose(m[ok], cfg.llp.mass, rtol=1e-3)
    assert np.all((fac[ok] < 1) & (fac[ok] > 0.99))


def test_propagated_sigma_against_smeared_replicas():
    rng = np.random.default_rng(3)
    pt = np.array([[0.8, 0.5]])
    phi = np.array([[0.3, 2.1]])
    lam = np.array([[0.2, -0.4]])
    mm = np.full((1, 2), 0.10566)
    spt, sphi, slam = np.array([[0.01, 0.02]]), np.array([[2e-3, 3e-3]]), np.array([[1e-3, 4e-3]])
    sig = propagated_mass_sigma(pt, phi, lam, mm, spt, sphi, slam)[0]
    r = 40000
    from toymc.analysis.mass_predictions import mass_from_params

    rep = mass_from_params(pt * (1 + spt * rng.standard_normal((r, 2))),
                            phi + sphi * rng.standard_normal((r, 2)),
                            lam + slam * rng.standard_normal((r, 2)), np.broadcast_to(mm, (r, 2)))
    # sample std error ~ sigma/sqrt(2r); 5 sigma, plus 1 % for the second-order terms
    assert rep.std(ddof=1) == pytest.approx(sig, rel=5 / math.sqrt(2 * r) + 0.01)


def test_validate_quick_every_check_passes(tmp_path):
    r = run_validation(tmp_path, quick=True, progress=None)
    text = (tmp_path / "summary.md").read_text()
    for name in ("fold", "reweight", "radial", "mass", "diphoton"):
        assert r["results"][name]["passed"], (name, r["results"][name]["max_pull"])
        assert f"| {name} | **PASS** |" in text
        for p in r["results"][name]["pngs"]:
            assert p.stat().st_size > 10_000
    assert r["passed"] and "Overall: **PASS**" in text
    assert r["results"]["fold"]["n"] >= 5 * 12
    # the long-lifetime point is beyond 2 ctau0 and warns about its ESS
    assert r["results"]["reweight"]["notes"]


def test_validate_script_bad_output_dir(tmp_path, capsys):
    f = tmp_path / "a_file"
    f.write_text("x")
    assert main_validate(["--quick", "-q", "--output-dir", str(f / "sub")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "cannot create" in err


@pytest.mark.parametrize("name", ["analysis.validate", "analysis.validation_checks",
                                  "analysis.pulls",
                                  "analysis.mass_predictions", "analysis.fold_sample",
                                  "analysis.report", "cli.validate", "cli.fold", "cli.report",
                                  "plots.validation", "plots.report"])
def test_exports(name):
    import importlib

    mod = importlib.import_module(f"toymc.{name}")
    assert sorted(n for n in dir(mod) if not n.startswith("_")) == sorted(mod.__all__)
