"""One convention for the sub-decays the generator forces: every pi0 is decayed to two photons,
so every yield of a final state with pi0s carries BR(pi0 -> gamma gamma) once per pi0 (signal
channels, the metadata's br_decay, the reach, the K_L and combo backgrounds).

Reference: BR(pi0 -> gamma gamma) = (98.823 +- 0.034) % (PDG listing, from memory).
"""

import math
import tomllib

import pytest
from _demo import CONFIGS

from toymc.physics.channels import CHANNELS
from toymc.physics.constants import BR_PI0_GG
from toymc.physics.models.point import decay_properties


def test_pi0_branching_fraction_is_the_pdg_value():
    assert abs(BR_PI0_GG - 0.98823) <= 0.00034


@pytest.mark.parametrize("channel, n_pi0", [("pi_pi_pi0", 1), ("pi0_pi0_pi0", 3),
                                            ("gamma_gamma", 0), ("mu_mu", 0), ("e_e", 0)])
def test_channel_forced_branching_fraction(channel, n_pi0):
    assert CHANNELS[channel].forced_br == pytest.approx(BR_PI0_GG**n_pi0, rel=1e-15)


@pytest.mark.parametrize("channel, n_pi0", [("pi_pi_pi0", 1), ("pi0_pi0_pi0", 3),
                                            ("gamma_gamma", 0)])
def test_model_branching_fraction_of_the_generated_final_state(channel, n_pi0):
    ctau, br, brs = decay_properties("alp_gluon", 0.8, 1e-3, channel)
    assert 0 < brs[channel] < 1
    assert br == pytest.approx(brs[channel] * BR_PI0_GG**n_pi0, rel=1e-14)
    assert sum(brs.values()) == pytest.approx(1.0, rel=1e-12)  # the models' own BRs


def test_metadata_and_yields_carry_the_factor(tmp_path):
    from toymc.config.loader import from_dict
    from toymc.engine.api import metadata

    data = tomllib.loads((CONFIGS / "reach_alp_gluon.toml").read_text())
    for sec in ("reach", "detector", "selection"):
        data.pop(sec, None)
    data["llp"].update(mass=0.8, channel="pi_pi_pi0")
    cfg = from_dict(data, str(tmp_path / "x.toml"))
    norm = metadata(cfg)["normalisation"]
    _, _, brs = decay_properties("alp_gluon", 0.8, cfg.model.coupling, "pi_pi_pi0")
    assert norm["br_decay"] == pytest.approx(brs["pi_pi_pi0"] * BR_PI0_GG, rel=1e-12)
    assert not math.isclose(norm["br_decay"], brs["pi_pi_pi0"], rel_tol=1e-3)


def test_backgrounds_with_a_pi0_carry_the_factor():
    from toymc.config.backgrounds import DEFAULT_BR, parse_backgrounds

    table = {"sigma_ref": "1 nb", "kl": {"yield": 1.0, "p_mean": "1 GeV"},
             "ks": {"yield": 1.0, "p_mean": "1 GeV"},
             "combo": {"yield": 1.0, "p_mean": "1 GeV"}}
    species = parse_backgrounds(table, "x.toml").species
    assert species["kl"].br == pytest.approx(DEFAULT_BR["kl"] * BR_PI0_GG, rel=1e-15)
    assert species["combo"].br == pytest.approx(DEFAULT_BR["ks"] * BR_PI0_GG, rel=1e-15)
    assert species["ks"].br == pytest.approx(DEFAULT_BR["ks"], rel=1e-15)
