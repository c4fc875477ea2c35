"""PDG values in toymc.physics.constants against the `particle` package, queried here independently.

Reference: the PDG tables shipped with `particle` (masses and widths in MeV,
c*tau in mm), converted in this file by hand: 1 GeV = 1000 MeV, 1 cm = 10 mm.
Physical constants against scipy.constants (CODATA).
"""

import math

import pytest
import scipy.constants as sc
from particle import Particle

import toymc.physics.constants as C

# (constant name in toymc.physics.constants, PDG id, quantity)
MASSES = [
    ("M_E", 11), ("M_MU", 13), ("M_PI", 211), ("M_PI0", 111), ("M_K", 321), ("M_K0", 311),
    ("M_KST0", 313), ("M_KSTP", 323), ("M_B", 521), ("M_B0", 511), ("M_UPS4S", 300553),
    ("M_KS", 310), ("M_KL", 130), ("M_LAMBDA", 3122), ("M_P", 2212),
]
WIDTHS = [("G_KST0", 313), ("G_KSTP", 323)]
CTAUS = [("CTAU_B", 521), ("CTAU_B0", 511), ("CTAU_KS", 310), ("CTAU_KL", 130),
         ("CTAU_LAMBDA", 3122)]

MEV_PER_GEV = 1000.0
MM_PER_CM = 10.0
REL = 4 * 2.0**-52  # a few units in the last place: only the unit conversion differs


def _pdg(pdgid):
    return Particle.from_pdgid(pdgid)


@pytest.mark.parametrize("name,pdgid", MASSES)
def test_mass_constants_equal_pdg(name, pdgid):
    expected = float(_pdg(pdgid).mass) / MEV_PER_GEV
    assert getattr(C, name) == pytest.approx(expected, rel=REL)
    assert C.mass(pdgid) == pytest.approx(expected, rel=REL)
    assert C.mass(-pdgid) == C.mass(pdgid)


@pytest.mark.parametrize("name,pdgid", WIDTHS)
def test_width_constants_equal_pdg(name, pdgid):
    expected = float(_pdg(pdgid).width) / MEV_PER_GEV
    assert expected > 0.0
    assert getattr(C, name) == pytest.approx(expected, rel=REL)
    assert C.width(pdgid) == pytest.approx(expected, rel=REL)


@pytest.mark.parametrize("name,pdgid", CTAUS)
def test_ctau_constants_equal_pdg(name, pdgid):
    expected = float(_pdg(pdgid).ctau) / MM_PER_CM
    assert math.isfinite(expected) and expected > 0.0
    assert getattr(C, name) == pytest.approx(expected, rel=REL)
    assert C.ctau(pdgid) == pytest.approx(expected, rel=REL)


@pytest.mark.parametrize("pdgid", [13, 211, 321, 310, 130, 3122, 521, 511, 111])
def test_ctau_is_hbar_c_over_width(pdgid):
    """c*tau = hbar c / Gamma (PDG review 'Kinematics'; hbar c from scipy.constants)."""
    hbarc_mev_mm = sc.hbar * sc.c / (sc.e * 1e6) * 1e3
    expected_cm = hbarc_mev_mm / float(_pdg(pdgid).width) / MM_PER_CM
    assert C.ctau(pdgid) == pytest.approx(expected_cm, rel=1e-6)


@pytest.mark.parametrize("pdgid", [11, 22, 2212])
def test_stable_particles(pdgid):
    assert C.width(pdgid) == 0.0
    assert C.ctau(pdgid) == math.inf


@pytest.mark.parametrize("pdgid", [11, -11, 13, 211, -211, 111, 321, -321, 521, -521, 511, 2212])
def test_charge(pdgid):
    assert C.charge(pdgid) == float(_pdg(pdgid).charge)


def test_pdg_ids_match_particle_names():
    """toymc's name -> PDG id table against the names `particle` gives those ids."""
    for name, pdgid in C.PDG.items():
        assert _pdg(pdgid).name == name


def test_physical_constants_from_scipy():
    """hbar c, alpha and c against CODATA values from scipy.constants."""
    hbarc_gev_cm = sc.hbar * sc.c / (sc.e * 1e9) * 100.0
    assert C.HBARC_GEV_CM == pytest.approx(hbarc_gev_cm, rel=1e-9)
    alpha = sc.e**2 / (4 * math.pi * sc.epsilon_0 * sc.hbar * sc.c)
    assert C.ALPHA_EM == pytest.approx(alpha, rel=1e-9)
    assert C.C_LIGHT_CM_NS == pytest.approx(sc.c * 100.0 * 1e-9, rel=1e-12)
    # 1 GeV^-2 = (hbar c / 1 GeV)^2 in m^2, over 1 fb = 1e-43 m^2 (about 0.3894 mb)
    hbarc_gev_m = sc.hbar * sc.c / (sc.e * 1e9)
    assert C.FB_PER_INV_GEV2 == pytest.approx(hbarc_gev_m**2 / 1e-43, rel=1e-9)
    assert C.FB_PER_INV_GEV2 == pytest.approx(0.3894e12, rel=1e-3)
