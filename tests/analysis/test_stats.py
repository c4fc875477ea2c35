"""Tests of toymc.analysis.stats against the PDG review "Statistics" and closed forms."""

import math

import numpy as np
import pytest
from scipy.stats import poisson

from toymc.analysis import stats
from toymc.errors import ConfigError


def test_all_exports():
    assert sorted(n for n in dir(stats) if not n.startswith("_")) == sorted(stats.__all__)


@pytest.mark.parametrize(
    "n,cl,expected",
    # PDG review "Statistics", table of Poisson upper limits for b = 0
    [(0, 0.90, 2.30), (0, 0.95, 3.00), (1, 0.90, 3.89), (1, 0.95, 4.74),
     (2, 0.90, 5.32), (2, 0.95, 6.30), (3, 0.90, 6.68), (3, 0.95, 7.75)],
)  # fmt: skip
def test_no_background_table(n, cl, expected):
    assert stats.poisson_upper_limit(n, 0.0, cl) == pytest.approx(expected, abs=0.006)


def test_n0_closed_form_with_background():
    # n = 0: P(0 | mu + b) = exp(-mu - b) = 1 - CL  =>  mu_up = -ln(1 - CL) - b
    for b in (0.1, 0.5, 1.5, 2.2):
        assert stats.poisson_upper_limit(0, b, 0.9) == pytest.approx(-math.log(0.1) - b, abs=1e-9)
    # b above -ln(1 - CL): no non-negative solution, returned as 0
    assert stats.poisson_upper_limit(0, 2.5, 0.9) == 0.0


def test_limit_solves_the_defining_equation():
    n = np.array([1, 3, 5, 10])
    b = np.array([0.7, 2.0, 3.3, 6.0])
    mu = stats.poisson_upper_limit(n, b, 0.95)
    np.testing.assert_allclose(poisson.cdf(n, mu + b), 0.05, atol=1e-10)
    assert np.all(np.diff(stats.poisson_upper_limit(np.arange(6), 1.0, 0.9)) > 0)


# ----------------------------------------------------------------------------- CLs


def _bayes_flat_limit(n, b, cl, r=0.0):
    """Independent computation: the Bayesian upper limit with a uniform prior in the signal,
    integral_0^mu L ds / integral_0^inf L ds = CL, L(s) = (s + b)^n exp(-(s + b)) (averaged
    over a log-normal b' of mean b and sd r b when r > 0).  For a single counting channel it
    coincides with the CLs limit (PDG review "Statistics", section on the CLs procedure), for
    a real n too; computed here by adaptive quadrature (scipy.integrate.quad) and brentq."""
    from scipy.integrate import quad
    from scipy.optimize import brentq
    from scipy.special import gammaln

    def like(s, bb):
        return math.exp(n * math.log(s + bb) - (s + bb) - gammaln(n + 1)) if s + bb > 0 else (
            1.0 if n == 0 else 0.0)

    if r == 0.0:
        def post_tail(mu):  # integral_mu^inf L ds
            return quad(like, mu, np.inf, args=(b,), epsabs=0, epsrel=1e-12, limit=200)[0]
    else:
        sg = math.sqrt(math.log1p(r * r))

        def post_tail(mu):
            def over_b(z):
                bb = b * math.exp(sg * z - 0.5 * sg * sg)
                inner = quad(like, mu, np.inf, args=(bb,), epsabs=0, epsrel=1e-11)[0]
                return inner * math.exp(-0.5 * z * z) / math.sqrt(2 * math.pi)
            return quad(over_b, -9, 9, epsabs=0, epsrel=1e-10)[0]

    total = post_tail(0.0)
    return brentq(lambda mu: post_tail(mu) / total - (1 - cl), 0.0, 200.0, xtol=1e-11)


@pytest.mark.parametrize(
    "n,cl,expected",
    # PDG review "Statistics", table of Poisson upper limits for b = 0 (CLs = classical there)
    [(0, 0.90, 2.30), (0, 0.95, 3.00), (1, 0.90, 3.89), (1, 0.95, 4.74),
     (2, 0.90, 5.32), (2, 0.95, 6.30), (3, 0.90, 6.68), (3, 0.95, 7.75)],
)  # fmt: skip
def test_cls_no_background_table(n, cl, expected):
    assert stats.cls_upper_limit(n, 0.0, cl) == pytest.approx(expected, abs=0.006)


@pytest.mark.parametrize("r", [0.0, 0.3])
def test_cls_at_zero_events_is_3_at_95_percent_for_any_background(r):
    # n = 0: CLs = exp(-mu) whatever b (and whatever the background's uncertainty):
    # mu_up = -ln(0.05) = 2.996 (PDG review "Statistics": 3.00 events at 95 % CL)
    for b in (0.0, 0.1, 0.7, 2.5, 10.0, 100.0):
        ul = stats.cls_upper_limit(0, b, 0.95, r)
        assert ul == pytest.approx(-math.log(0.05), rel=1e-9), b
        assert abs(ul - 3.00) < 0.005


def test_cls_limit_solves_its_defining_equation():
    # CLs = P(N <= n | mu + b) / P(N <= n | b) = 1 - CL, with scipy.stats.poisson
    n = np.array([1, 3, 5, 10])
    b = np.array([0.7, 2.0, 3.3, 6.0])
    mu = stats.cls_upper_limit(n, b, 0.95)
    np.testing.assert_allclose(poisson.cdf(n, mu + b) / poisson.cdf(n, b), 0.05, rtol=1e-9)


@pytest.mark.parametrize("n,b", [(0, 1.0), (1, 0.5), (2, 2.0), (4, 3.3), (7, 7.5)])
def test_cls_equals_the_flat_prior_bayesian_limit(n, b):
    assert stats.cls_upper_limit(n, b, 0.95) == pytest.approx(_bayes_flat_limit(n, b, 0.95),
                                                             rel=1e-7)


#: background values of the expected-limit table (the old classical median limit was
#: saw-toothed across 0.69 -> 0.70 and 1.5 -> 1.7)
TABLE_B = (0.0, 0.3, 0.5, 0.69, 0.7, 1.0, 1.5, 1.7, 3.0, 6.0, 12.0)


def test_expected_asimov_limit_table_against_an_independent_computation():
    ours = stats.expected_upper_limit(np.array(TABLE_B), 0.95, "asimov")
    ref = [_bayes_flat_limit(b, b, 0.95) for b in TABLE_B]  # continuous n = b
    np.testing.assert_allclose(ours, ref, rtol=1e-7)


def test_expected_mean_limit_table_against_an_independent_computation():
    from scipy.stats import poisson as pois
    for b in (0.5, 0.7, 1.7, 3.0):
        ns = np.arange(int(pois.isf(1e-10, b)) + 2)
        ref = sum(pois.pmf(k, b) * _bayes_flat_limit(int(k), b, 0.95) for k in ns)
        assert stats.expected_upper_limit(b, 0.95, "mean") == pytest.approx(ref, rel=1e-6)


@pytest.mark.parametrize("method", ["asimov", "mean"])
@pytest.mark.parametrize("cl", [0.9, 0.95])
def test_expected_limit_increases_with_background(method, cl):
    b = np.linspace(0.0, 15.0, 301)
    ul = stats.expected_upper_limit(b, cl, method)
    assert ul[0] == pytest.approx(-math.log(1 - cl), rel=1e-9)
    assert np.all(np.diff(ul) > 0), b[1:][np.diff(ul) <= 0]


def test_median_expected_limit_stays_stepped():
    """The median count is a step function of b; within a step the limit falls as b grows.
    Documented, and the reason the median is not the default."""
    b = np.linspace(0.0, 5.0, 501)
    ul = stats.expected_upper_limit(b, 0.95, "median")
    assert np.any(np.diff(ul) < 0)
    assert ul[0] == pytest.approx(-math.log(0.05), rel=1e-9)


def test_background_uncertainty():
    # no uncertainty is the known-background limit; the limit grows with the uncertainty
    b = 3.0
    known = stats.expected_upper_limit(b, 0.95)
    assert stats.expected_upper_limit(b, 0.95, rel_unc=1e-9) == pytest.approx(known, rel=1e-8)
    uls = [stats.expected_upper_limit(b, 0.95, rel_unc=r) for r in (0.0, 0.1, 0.3, 0.6)]
    assert np.all(np.diff(uls) > 0), uls
    # against the independent quadrature over the log-normal background
    assert stats.cls_upper_limit(4, b, 0.95, 0.3) == pytest.approx(
        _bayes_flat_limit(4, b, 0.95, 0.3), rel=1e-5)


def test_expected_limit_methods():
    assert stats.LIMIT_METHODS[0] == "asimov"
    b = 3.2
    # median of Poisson(3.2) is 3
    assert stats.expected_upper_limit(b, 0.9, "median") == pytest.approx(
        stats.cls_upper_limit(3, b, 0.9))
    assert stats.expected_upper_limit(b, 0.9) == pytest.approx(stats.cls_upper_limit(b, b, 0.9))
    with pytest.raises(ConfigError):
        stats.expected_upper_limit(b, 0.9, "mode")


def test_punzi_fom():
    # eff/(a/2 + sqrt(B)), physics/0308063 eq. 7 (from memory)
    assert stats.punzi_fom(0.4, 4.0, 3.0) == pytest.approx(0.4 / 3.5)
    np.testing.assert_allclose(stats.punzi_fom([0.2, 0.5], [0.0, 9.0], 5.0), [0.08, 0.5 / 5.5])


@pytest.mark.parametrize(
    "call",
    [
        lambda: stats.poisson_upper_limit(-1, 0.0),
        lambda: stats.poisson_upper_limit(1.5, 0.0),
        lambda: stats.poisson_upper_limit(1, -0.2),
        lambda: stats.poisson_upper_limit(1, 0.0, cl=1.2),
        lambda: stats.punzi_fom(1.2, 1.0),
        lambda: stats.punzi_fom(0.5, -1.0),
        lambda: stats.punzi_fom(0.5, 1.0, a=0.0),
        lambda: stats.cls_upper_limit(-1, 0.0),
        lambda: stats.cls_upper_limit(1, 0.0, rel_unc=-0.1),
        lambda: stats.expected_upper_limit(1.0, 0.95, rel_unc=float("nan")),
    ],
)
def test_bad_inputs(call):
    with pytest.raises(ConfigError):
        call()


def test_config_offers_the_limit_methods_of_stats():
    # every method the config accepts is computed by stats, and nothing else is
    from toymc.config.schema import SCHEMA

    assert SCHEMA["reach"]["limit"]["choices"] == stats.LIMIT_METHODS
    assert SCHEMA["reach"]["limit"]["default"] == "asimov"
    for m in stats.LIMIT_METHODS:
        assert stats.expected_upper_limit(1.0, 0.95, m) > 3.0
