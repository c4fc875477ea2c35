"""Tests of toymc.analysis.reweight: lifetime weights, effective sample size, weighted efficiency.

References used below:
* exponential decay law, density of the proper decay length
  f(ct; ctau) = exp(-ct/ctau)/ctau (PDG review "Kinematics", survival
  probability); scipy.stats.expon gives the same density independently;
* binomial standard deviation sqrt(eff (1 - eff)/n) (PDG review "Statistics");
* the sample variance of R independent Gaussian estimates follows
  s^2 (R - 1)/sigma^2 ~ chi2(R - 1) (PDG review "Statistics", chi-square
  distribution), quantiles from scipy.stats.chi2.
"""

import math
import warnings

import numpy as np
import pytest
from scipy import stats
from scipy.integrate import quad

from toymc.analysis import reweight
from toymc.analysis.reweight import (
    LowEffectiveSampleWarning,
    check_ess,
    effective_sample_size,
    reweighted_efficiency,
    weights,
)
from toymc.detector.fold import fold_efficiency
from toymc.detector.profile import Profile, profile_efficiency
from toymc.errors import ConfigError

WIN = (1.0, 30.0, -20.0, 35.0)  # r_min, r_max, z_min, z_max in cm (demo numbers)


def test_public_names():
    assert sorted(n for n in dir(reweight) if not n.startswith("_")) == sorted(reweight.__all__)


@pytest.mark.parametrize("ctau0,ctau1", [(1.0, 3.0), (10.0, 2.5), (0.01, 0.011), (5.0, 5.0)])
def test_weights_are_density_ratio(ctau0, ctau1):
    """w = f(ct; ctau1)/f(ct; ctau0) with f the exponential density (scipy.stats.expon)."""
    ct = np.linspace(0.0, 20.0 * ctau0, 101)
    ref = stats.expon.pdf(ct, scale=ctau1) / stats.expon.pdf(ct, scale=ctau0)
    np.testing.assert_allclose(weights(ct, ctau0, ctau1), ref, rtol=1e-12)


@pytest.mark.parametrize("ctau1", [2.0, 7.0, 15.0])
def test_weight_moments(ctau1):
    """E0[w] = Int f1 = 1; E0[w^2] = ctau0^2/(ctau1 (2 ctau0 - ctau1)) for ctau1 < 2 ctau0.

    Derived: Int_0^inf f1^2/f0 dct = (ctau0/ctau1^2) / (2/ctau1 - 1/ctau0).
    """
    ctau0 = 10.0
    # up to 5000 cm: the integrands fall at least like exp(-ct/30 cm), so the tail
    # beyond is below e^-160, and the weights stay far from overflow
    m1 = quad(lambda t: stats.expon.pdf(t, scale=ctau0) * weights(t, ctau0, ctau1),
              0.0, 5000.0, epsrel=1e-12, limit=200)[0]
    m2 = quad(lambda t: stats.expon.pdf(t, scale=ctau0) * weights(t, ctau0, ctau1) ** 2,
              0.0, 5000.0, epsrel=1e-12, limit=200)[0]
    assert m1 == pytest.approx(1.0, rel=1e-10)
    assert m2 == pytest.approx(ctau0**2 / (ctau1 * (2 * ctau0 - ctau1)), rel=1e-10)


def test_effective_sample_size_by_hand():
    # (1 + 2 + 3)^2 / (1 + 4 + 9) = 36/14
    assert effective_sample_size([1.0, 2.0, 3.0]) == pytest.approx(36.0 / 14.0, rel=1e-15)
    # (0.5 + 0.5 + 2)^2 / (0.25 + 0.25 + 4) = 9/4.5 = 2
    assert effective_sample_size([0.5, 0.5, 2.0]) == pytest.approx(2.0, rel=1e-15)
    assert effective_sample_size(np.full(17, 0.3)) == pytest.approx(17.0, rel=1e-14)
    assert effective_sample_size([]) == 0.0
    assert effective_sample_size([0.0, 0.0]) == 0.0


def test_reweighted_efficiency_by_hand():
    # eff = (1 + 3)/(1 + 2 + 3 + 4) = 0.4
    # err^2 = [1 (0.6)^2 + 4 (0.4)^2 + 9 (0.6)^2 + 16 (0.4)^2]/100 = 6.8/100
    eff, err = reweighted_efficiency(np.array([True, False, True, False]), [1.0, 2.0, 3.0, 4.0])
    assert eff == pytest.approx(0.4, rel=1e-15)
    assert err == pytest.approx(math.sqrt(0.068), rel=1e-14)


@pytest.mark.parametrize("k,n", [(0, 10), (3, 10), (10, 10), (517, 2000)])
def test_reweighted_efficiency_unit_weights_is_binomial(k, n):
    mask = np.zeros(n, dtype=bool)
    mask[:k] = True
    eff, err = reweighted_efficiency(mask, np.ones(n))
    assert eff == pytest.approx(k / n, rel=1e-15)
    assert err == pytest.approx(math.sqrt(eff * (1 - eff) / n), rel=1e-12, abs=1e-15)


# ------------------------------------------------------------------ toy detector for samples


def _sample(rng, n, ctau, prof, win=WIN):
    """Events from a beam spot, isotropic, with exponential ct; pass = decay found."""
    u = rng.normal(size=(3, n))
    u /= np.linalg.norm(u, axis=0)
    o = np.stack((rng.normal(0.0, 0.05, n), rng.normal(0.0, 0.01, n), rng.normal(0.0, 1.0, n)))
    bg = rng.uniform(0.5, 4.0, n)
    ct = rng.exponential(ctau, n)
    d = o + bg * ct * u
    r = np.hypot(d[0], d[1])
    inside = (d[2] > win[2]) & (d[2] < win[3])
    passed = inside & (rng.uniform(size=n) < profile_efficiency(prof, r, window=win[:2]))
    return o, u, bg, ct, passed


PROF = Profile("tabulated", r=(1.0, 5.0, 15.0, 30.0), eps=(1.0, 0.8, 0.4, 0.1))


def test_reweighted_vs_direct_sampling():
    """Weighted efficiency from ctau0 vs independent samples at ctau1 and vs the fold.

    Each comparison at 3 sigma with sigma from the computed errors (ratio-estimator
    error of the weighted sample, binomial error of the direct one); ctau1 < 2 ctau0
    so that the weights have finite variance.
    """
    rng = np.random.default_rng(np.random.SeedSequence(4242, spawn_key=(0,)))
    ctau0 = 10.0
    n = 20000
    o, u, bg, ct, passed = _sample(rng, n, ctau0, PROF)
    grid = np.array([3.0, 5.0, 8.0, 12.0, 16.0])
    fold_eff, fold_err = fold_efficiency(*o, *u, bg, grid, *WIN, PROF)
    for ctau1, fe, ferr in zip(grid, fold_eff, fold_err):
        w = weights(ct, ctau0, ctau1)
        eff_w, err_w = reweighted_efficiency(passed, w)
        _, _, _, _, passed_d = _sample(rng, n, ctau1, PROF)
        eff_d, err_d = reweighted_efficiency(passed_d, np.ones(n))
        assert abs(eff_w - eff_d) <= 3.0 * math.hypot(err_w, err_d), (ctau1, eff_w, eff_d)
        # the fold on the same kinematics is the expectation of the weighted pass rate
        assert abs(eff_w - fe) <= 3.0 * math.hypot(err_w, ferr), (ctau1, eff_w, fe)


def test_weighted_error_matches_spread():
    """The ratio-estimator error agrees with the spread over independent replicas.

    With R replicas, (R - 1) s^2/sigma^2 ~ chi2(R - 1); accept between the 0.1% and
    99.9% quantiles.  With a loose selection (any decay with r < 30 cm inside the z
    slab, efficiency about 0.67) the naive variance sum_pass w^2/(sum w)^2, which
    ignores the numerator-denominator correlation, is about twice the observed
    spread, far outside that band, so the check has power.
    """
    rng = np.random.default_rng(np.random.SeedSequence(4242, spawn_key=(1,)))
    ctau0, ctau1 = 10.0, 14.0
    n, reps = 2000, 400
    loose = (0.0, 30.0, -20.0, 35.0)
    effs, errs2, naive2 = [], [], []
    for _ in range(reps):
        _, _, _, ct, passed = _sample(rng, n, ctau0, Profile("flat"), loose)
        w = weights(ct, ctau0, ctau1)
        e, s = reweighted_efficiency(passed, w)
        effs.append(e)
        errs2.append(s * s)
        naive2.append(np.sum(w[passed] ** 2) / np.sum(w) ** 2)
    s2 = np.var(effs, ddof=1)
    lo, hi = stats.chi2.ppf([0.001, 0.999], reps - 1) / (reps - 1)
    assert lo <= s2 / np.mean(errs2) <= hi
    assert not lo <= s2 / np.mean(naive2) <= hi


# ----------------------------------------------------------------------------- ESS warning


def test_check_ess_warns_with_numbers():
    w = np.array([1.0, 1.0, 1.0, 50.0])  # ESS = 53^2/2503 = 1.122...
    with pytest.warns(LowEffectiveSampleWarning, match=r"1\.1 of 4 weighted events.*threshold 3"):
        ess = check_ess(w, 3)
    assert ess == pytest.approx(53.0**2 / 2503.0, rel=1e-14)


def test_check_ess_silent_above_threshold():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert check_ess(np.ones(100), 50.0) == pytest.approx(100.0)


def test_low_ess_warning_is_user_warning():
    assert issubclass(LowEffectiveSampleWarning, UserWarning)


# ----------------------------------------------------------------------------- bad input


@pytest.mark.parametrize("ctau0,ctau1", [(0.0, 1.0), (1.0, -1.0), (np.nan, 1.0), (1.0, np.inf),
                                         (True, 1.0), ("1 cm", 1.0)])
def test_weights_reject_bad_ctau(ctau0, ctau1):
    with pytest.raises(ConfigError):
        weights([0.1, 0.2], ctau0, ctau1)


def test_weights_reject_bad_ct():
    with pytest.raises(ConfigError):
        weights([0.1, -0.2], 1.0, 2.0)
    with pytest.raises(ConfigError):
        weights([0.1, np.nan], 1.0, 2.0)


def test_efficiency_rejects_bad_input():
    with pytest.raises(ConfigError):
        reweighted_efficiency(np.array([True, False]), [1.0])
    with pytest.raises(ConfigError):
        reweighted_efficiency(np.array([1, 0]), [1.0, 1.0])  # not boolean
    with pytest.raises(ConfigError):
        reweighted_efficiency(np.array([True, False]), [0.0, 0.0])
    with pytest.raises(ConfigError):
        reweighted_efficiency(np.array([True, False]), [1.0, np.inf])
    with pytest.raises(ConfigError):
        check_ess([1.0, 2.0], -1.0)
    with pytest.raises(ConfigError):
        effective_sample_size([[1.0, 2.0]])
