"""Tests of toymc.physics.models.b_to_k: form factors and B -> K(*) a rates."""

import math

import numpy as np
import pytest
from particle import Particle
from scipy import constants as sc

from toymc.errors import ConfigError
from toymc.physics import constants as const
from toymc.physics.models import b_to_k

# hbar in GeV ns from CODATA (scipy.constants)
HBAR_GEV_NS = sc.hbar / (sc.e * 1e9) * 1e9


def test_all_exports():
    assert sorted(n for n in dir(b_to_k) if not n.startswith("_")) == sorted(b_to_k.__all__)


def test_form_factors_at_zero_recoil_vs_published_values():
    # f_0^{B->K}(0) = 0.33 (hep-ph/0406232, fit r2 = 0.330; from memory)
    assert b_to_k.f0_b_to_k(0.0) == pytest.approx(0.330, abs=5e-4)
    # A_0^{B->K*}(0) = 0.374 (hep-ph/0412079, r1 + r2 = 1.364 - 0.990; from memory)
    assert b_to_k.a0_b_to_kstar(0.0) == pytest.approx(0.374, abs=5e-4)
    # both rise with q^2 (poles above the physical region q^2 < (m_B - m_K)^2)
    q2 = np.linspace(0, (const.M_B - const.M_K) ** 2, 50)
    assert np.all(np.diff(b_to_k.f0_b_to_k(q2)) > 0)
    assert np.all(np.diff(b_to_k.a0_b_to_kstar(q2)) > 0)


def _p_star(M, m1, m2):
    # two-body momentum via E1* = (M^2 + m1^2 - m2^2)/(2M) (PDG review "Kinematics")
    e1 = (M * M + m1 * m1 - m2 * m2) / (2 * M)
    return math.sqrt(e1 * e1 - m1 * m1)


@pytest.mark.parametrize("parent,pdg_b,pdg_k", [("B+", 521, 321), ("B0", 511, 311)])
@pytest.mark.parametrize("m_a", [0.01, 0.5, 2.0, 4.0])
def test_br_b_to_k_independent_evaluation(parent, pdg_b, pdg_k, m_a):
    # |M| = g_V (m_B^2 - m_K^2) f_0(m_a^2); Gamma = |M|^2 p*/(8 pi m_B^2); BR = Gamma tau/hbar
    g = 3e-9
    mb = Particle.from_pdgid(pdg_b).mass / 1e3
    mk = Particle.from_pdgid(pdg_k).mass / 1e3
    tau_ns = Particle.from_pdgid(pdg_b).lifetime  # ns
    f0 = 0.330 / (1 - m_a**2 / 37.46)
    amp2 = (g * (mb**2 - mk**2) * f0) ** 2
    width = amp2 * _p_star(mb, mk, m_a) / (8 * math.pi * mb**2)
    br = width * tau_ns / HBAR_GEV_NS
    assert b_to_k.br_b_to_k(m_a, g, parent) == pytest.approx(br, rel=1e-6)


@pytest.mark.parametrize("parent,pdg_b,pdg_ks", [("B+", 521, 323), ("B0", 511, 313)])
@pytest.mark.parametrize("m_a", [0.05, 1.0, 3.5])
def test_br_b_to_kstar_from_explicit_polarisation(parent, pdg_b, pdg_ks, m_a):
    # K* along +z with momentum p: only the longitudinal eta_L = (p, 0, 0, E)/m couples,
    # eta_L . q = p m_B/m_K*, so |M|^2 = g_A^2 (2 m_K* A_0)^2 (p m_B/m_K*)^2.
    g = 2e-9
    mb = Particle.from_pdgid(pdg_b).mass / 1e3
    mks = Particle.from_pdgid(pdg_ks).mass / 1e3
    tau_ns = Particle.from_pdgid(pdg_b).lifetime
    q2 = m_a**2
    a0 = 1.364 / (1 - q2 / 5.28**2) - 0.990 / (1 - q2 / 36.78)
    p = _p_star(mb, mks, m_a)
    e = math.sqrt(p * p + mks * mks)
    eta_l = np.array([p, 0, 0, e]) / mks
    q = np.array([mb - e, 0, 0, -p])
    eta_dot_q = eta_l[0] * q[0] - eta_l[1:] @ q[1:]
    assert eta_dot_q == pytest.approx(p * mb / mks, rel=1e-12)
    amp2 = (g * 2 * mks * a0 * eta_dot_q) ** 2
    width = amp2 * p / (8 * math.pi * mb**2)
    assert b_to_k.width_b_to_kstar(m_a, g, parent) == pytest.approx(width, rel=1e-6)
    assert b_to_k.br_b_to_kstar(m_a, g, parent) == pytest.approx(
        width * tau_ns / HBAR_GEV_NS, rel=1e-6
    )


def test_zero_above_kinematic_limit_and_vectorised():
    m = np.array([1.0, const.M_B - const.M_K + 1e-3, 6.0])
    w = b_to_k.width_b_to_k(m, 1e-8)
    assert w[0] > 0 and w[1] == 0 and w[2] == 0
    assert b_to_k.width_b_to_kstar(const.M_B - const.M_KSTP + 1e-3, 1e-8) == 0.0
    # quadratic in the coupling
    assert b_to_k.width_b_to_k(1.0, 2e-8) == pytest.approx(4 * w[0], rel=1e-12)


@pytest.mark.parametrize(
    "call",
    [
        lambda: b_to_k.width_b_to_k(1.0, -1e-8),
        lambda: b_to_k.width_b_to_k(-1.0, 1e-8),
        lambda: b_to_k.br_b_to_k(1.0, 1e-8, parent="Bs"),
        lambda: b_to_k.width_b_to_kstar(1.0, np.inf),
    ],
)
def test_bad_inputs(call):
    with pytest.raises(ConfigError):
        call()
