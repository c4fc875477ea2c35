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


def test_expected_limits():
    b = 3.2
    # median of Poisson(3.2) is 3
    assert stats.expected_upper_limit(b, 0.9) == pytest.approx(stats.poisson_upper_limit(3, b, 0.9))
    ns = np.arange(60)
    mean = np.sum(poisson.pmf(ns, b) * [stats.poisson_upper_limit(k, b, 0.9) for k in ns])
    assert stats.expected_upper_limit(b, 0.9, "mean") == pytest.approx(mean, rel=1e-9)
    assert stats.expected_upper_limit(0.0, 0.9) == pytest.approx(2.3026, abs=1e-4)
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
    ],
)
def test_bad_inputs(call):
    with pytest.raises(ConfigError):
        call()
