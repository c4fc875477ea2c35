"""Tests of the shared model helpers and the channel names."""

import numpy as np
import pytest

import toymc.physics.models
from toymc.errors import ConfigError
from toymc.physics.models import _common


def test_channel_names():
    assert toymc.physics.models.CHANNELS == (
        "gamma_gamma", "pi_pi_pi0", "pi0_pi0_pi0", "e_e", "mu_mu", "tau_tau",
        "pi_pi", "nu_nu", "hadrons", "other",
    )  # fmt: skip
    assert toymc.physics.models.__all__ == ("CHANNELS",)


def test_branching_fractions_and_ctau_of_zero_width():
    br = _common.branching_fractions({"e_e": np.array([0.0, 1.0]), "mu_mu": np.array([0.0, 3.0])})
    np.testing.assert_allclose(br["e_e"], [0.0, 0.25])
    assert np.isinf(_common.ctau_from_width(0.0))


def test_input_checks():
    with pytest.raises(ConfigError, match="llp.mass = -1.0"):
        _common.as_mass(-1.0, "llp.mass")
    with pytest.raises(ConfigError):
        _common.as_coupling(np.array([1.0, np.nan]))
    assert _common.as_coupling(-2.0, allow_negative=True) == -2.0
