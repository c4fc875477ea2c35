"""Tests of toymc.physics.models.alp against independently computed published formulas."""

import itertools
import math

import numba
import numpy as np
import pytest
from scipy import constants as sc
from scipy.integrate import dblquad

from toymc.errors import ConfigError
from toymc.physics import constants as const
from toymc.physics.kinematics.threebody import me_weight_1
from toymc.physics.models import alp, three_pion

# hbar c in GeV cm straight from CODATA (scipy.constants), independent of toymc.physics.constants
HBARC = sc.hbar * sc.c / (sc.e * 1e9) * 100.0


def test_all_exports():
    # strict exports: every public name is in __all__ and vice versa
    assert sorted(n for n in dir(alp) if not n.startswith("_")) == sorted(alp.__all__)


def _levi_civita_contraction(a, b, c, d):
    """epsilon^{mu nu rho sigma} a_mu b_nu c_rho d_sigma by explicit permutation sum."""
    total = 0.0
    for perm in itertools.permutations(range(4)):
        inv = sum(1 for i in range(4) for j in range(i + 1, 4) if perm[i] > perm[j])
        total += (-1) ** inv * a[perm[0]] * b[perm[1]] * c[perm[2]] * d[perm[3]]
    return total


def test_gamma_gamma_width_from_polarisation_sum():
    # L = -(g/4) a F Fdual -> |M| = g |eps^{mu nu rho sigma} k1 e1 k2 e2|; two-body width
    # Gamma = (1/2) sum|M|^2 p*/(8 pi m^2) (PDG review "Kinematics", two-body decay;
    # 1/2 for identical photons).  Check of Gamma = g^2 m^3/(64 pi) (PDG axion review).
    m, g = 0.35, 2.0e-3
    k1 = 0.5 * m * np.array([1.0, 0.0, 0.0, 1.0])
    k2 = 0.5 * m * np.array([1.0, 0.0, 0.0, -1.0])
    pols = [np.array([0.0, 1.0, 0.0, 0.0]), np.array([0.0, 0.0, 1.0, 0.0])]
    msq = sum(g**2 * _levi_civita_contraction(k1, e1, k2, e2) ** 2 for e1 in pols for e2 in pols)
    assert msq == pytest.approx(g**2 * m**4 / 2.0, rel=1e-12)
    width = 0.5 * msq * (m / 2.0) / (8.0 * math.pi * m**2)
    assert alp.width_gamma_gamma(m, g) == pytest.approx(width, rel=1e-12)


def test_photon_alp_ctau_worked_point():
    # m = 0.1 GeV, g = 1e-4 GeV^-1: Gamma = g^2 m^3/(64 pi), c tau = hbar c/Gamma
    m, g = 0.1, 1e-4
    gamma = g * g * m**3 / (64 * math.pi)
    w = alp.photon_alp_widths(m, g)
    assert alp.ctau(w) == pytest.approx(HBARC / gamma, rel=1e-8)
    assert float(alp.ctau(w)) == pytest.approx(0.3968, rel=1e-3)  # hand evaluation
    assert alp.branching_fractions(w)["gamma_gamma"] == 1.0


def test_phase_space_functions_at_zero_and_threshold():
    # g(0) = 1 for both (arXiv:1708.00443 normalisation); zero at/below threshold r >= 1/9
    assert three_pion.g00(0.0) == 1.0 and three_pion.gpm(0.0) == 1.0
    assert three_pion.g00(1e-7) == pytest.approx(1.0, abs=1e-3)
    assert three_pion.gpm(1e-7) == pytest.approx(1.0, abs=1e-3)
    assert three_pion.g00(1.0 / 9.0) == 0.0 and three_pion.gpm(0.2) == 0.0


def _dalitz_integral(M, m, amp2, m3=None):
    """Int dm12^2 dm23^2 amp2(s12, s23) over the Dalitz plot of M -> 1 2 3, particles 1 and 2
    of mass m and particle 3 of mass m3 (default m).

    Limits of m23^2 at fixed m12^2 from the PDG review "Kinematics" (Dalitz plot section):
    (E2*+E3*)^2 - (sqrt(E2*^2-m2^2) +- sqrt(E3*^2-m3^2))^2, E2* = m12/2,
    E3* = (M^2 - m12^2 - m3^2)/(2 m12).
    """
    m3 = m if m3 is None else m3

    def lo_hi(s12):
        m12 = math.sqrt(s12)
        e2 = s12 / (2 * m12)
        e3 = (M * M - s12 - m3 * m3) / (2 * m12)
        p2 = math.sqrt(max(e2 * e2 - m * m, 0.0))
        p3 = math.sqrt(max(e3 * e3 - m3 * m3, 0.0))
        return (e2 + e3) ** 2 - (p2 + p3) ** 2, (e2 + e3) ** 2 - (p2 - p3) ** 2

    val, _ = dblquad(
        lambda s23, s12: amp2(s12, s23),
        4 * m * m,
        (M - m3) ** 2,
        lambda s12: lo_hi(s12)[0],
        lambda s12: lo_hi(s12)[1],
        epsabs=0.0,
        epsrel=1e-9,
    )
    return val


@pytest.mark.parametrize("M", [0.45, 0.7, 0.95])
def test_three_pion_widths_vs_dalitz_integration(M):
    # LO amplitudes (REFERENCES / arXiv:1708.00443 conventions):
    #   A(s) = K (s - m^2)/(M^2 - m^2),  A_000 = A(s12) + A(s13) + A(s23)  (Delta I = 1),
    #   K = m_pi0^2 delta/(2 f F);  Gamma = S/((2 pi)^3 32 M^3) Int |A|^2 dm12^2 dm23^2
    # (PDG review "Kinematics", three-body decay), S = 1/3! for three pi0.
    f, F = 800.0, alp.F_PI_DEFAULT
    delta = alp.isospin_delta()
    K = const.M_PI0**2 * delta / (2 * f * F)
    norm = 1.0 / ((2 * math.pi) ** 3 * 32 * M**3)

    m0 = const.M_PI0

    def a_s(x, m):
        return K * (x - m * m) / (M * M - m * m)

    def amp000(s12, s23):
        s13 = M * M + 3 * m0 * m0 - s12 - s23
        return (a_s(s12, m0) + a_s(s13, m0) + a_s(s23, m0)) ** 2

    g000 = norm / 6.0 * _dalitz_integral(M, m0, amp000)
    assert alp.width_3pi0(M, f) == pytest.approx(g000, rel=1e-6)

    # pi+ pi- pi0 with the physical masses: s12 = m^2(pi+ pi-), the pi0 as particle 3;
    # amplitude A(s12) with m = m_pi+ (the module's convention for the matrix element)
    mp = const.M_PI
    gpm0 = norm * _dalitz_integral(M, mp, lambda s12, s23: a_s(s12, mp) ** 2, m3=m0)
    assert alp.width_pipipi0(M, f) == pytest.approx(gpm0, rel=1e-6)


@pytest.mark.parametrize("M", [0.415, 0.4186, 0.43, 0.45, 0.5, 0.6])
def test_pipipi0_width_uses_the_physical_pi0_mass(M):
    """Near threshold the width follows the physical phase space (2 m_pi+ + m_pi0 = 0.4141 GeV,
    masses from `particle`): against a two-dimensional Dalitz integration (scipy dblquad) with
    the pi0 mass for the third pion; with three charged masses it would be zero below
    3 m_pi+ = 0.4187 GeV and too small above."""
    f, F = 800.0, alp.F_PI_DEFAULT
    delta = alp.isospin_delta()
    K = const.M_PI0**2 * delta / (2 * f * F)
    norm = 1.0 / ((2 * math.pi) ** 3 * 32 * M**3)
    mp, m0 = const.M_PI, const.M_PI0

    def amp2(s12, s23):
        return (K * (s12 - mp * mp) / (M * M - mp * mp)) ** 2

    ref = norm * _dalitz_integral(M, mp, amp2, m3=m0)
    assert ref > 0
    assert alp.width_pipipi0(M, f) == pytest.approx(ref, rel=1e-5)
    if M > 3 * mp:  # the equal-mass phase space is smaller: the old error
        assert norm * _dalitz_integral(M, mp, amp2) < 0.95 * ref


def test_width_matches_1708_00443_normalisation():
    # arXiv:1708.00443: Gamma(a -> pi^a pi^b pi^0) = (pi/6) m_a m_pi^4 [C_GG delta]^2
    # g_ab/(Lambda^2 f_pi^2) (from memory), with L = g_s^2 C_GG (a/Lambda) G Gdual.
    # Ours: L = alpha_s/(8 pi) (a/f) G Gdual => Lambda = 32 pi^2 C_GG f; f_pi = sqrt(2) F.
    m, f, cgg = 0.8, 1500.0, 1.0
    lam = 32 * math.pi**2 * cgg * f
    fpi = math.sqrt(2) * alp.F_PI_DEFAULT
    delta = alp.isospin_delta()
    pref = math.pi / 6 * m * const.M_PI0**4 * (cgg * delta) ** 2 / (lam**2 * fpi**2)
    assert alp.width_pipipi0(m, f) == pytest.approx(pref * three_pion.gpm_physical(m), rel=1e-12)
    assert alp.width_3pi0(m, f) == pytest.approx(pref * three_pion.g00(const.M_PI0**2 / m**2), rel=1e-12)


def test_isospin_delta_from_pdg_quark_masses():
    from particle import Particle

    mu, md = Particle.from_pdgid(2).mass, Particle.from_pdgid(1).mass
    assert alp.isospin_delta() == pytest.approx((md - mu) / (md + mu), rel=1e-12)
    assert alp.isospin_delta(2.0, 4.0) == pytest.approx(1.0 / 3.0)


def test_induced_photon_coupling_light_alp_limit():
    # m_a << m_pi0: 5/3 + delta = 2 N_c Tr(kappa Q^2) with kappa_q = m_q^-1/sum m^-1
    # (chiral-rotation anomaly term, derived; arXiv:1708.00443 C_gg^eff, from memory)
    mu, md = const.mass(2), const.mass(1)
    ku, kd = md / (mu + md), mu / (mu + md)
    coeff = 2 * 3 * (ku * (2 / 3) ** 2 + kd * (1 / 3) ** 2)
    f = 1e3
    expected = const.ALPHA_EM / (2 * math.pi * f) * coeff
    assert alp.gluon_alp_photon_coupling(1e-4, f) == pytest.approx(expected, rel=1e-6)


def test_gluon_alp_branchings_and_ctau():
    m = np.array([0.3, 0.6, 0.9])
    w = alp.gluon_alp_widths(m, 1000.0)
    br = alp.branching_fractions(w)
    np.testing.assert_allclose(sum(br.values()), 1.0, rtol=1e-12)
    assert br["gamma_gamma"][0] == 1.0  # below 3 m_pi only two photons
    assert br["pi_pi_pi0"][0] == 0.0 and br["pi0_pi0_pi0"][0] == 0.0
    tot = sum(w.values())
    np.testing.assert_allclose(alp.ctau(w), HBARC / tot, rtol=1e-8)
    # widths scale as 1/f^2
    w2 = alp.gluon_alp_widths(m, 2000.0)
    np.testing.assert_allclose(sum(w2.values()), tot / 4, rtol=1e-12)


def test_warning_above_validity_range():
    with pytest.warns(alp.ModelValidityWarning, match="m_a <= 1.0 GeV"):
        alp.gluon_alp_widths(1.5, 1000.0)


def test_warning_nonperturbative_mixing():
    # theta = (F/2f) delta m^2/|m^2 - m_pi0^2| > 0.1 for m 1 MeV above m_pi0 and f = 10 GeV
    m = const.M_PI0 + 1e-3
    assert alp.gluon_alp_mixing_angle(m, 10.0) > alp.MIXING_ANGLE_MAX
    with pytest.warns(alp.ModelValidityWarning, match="mixing"):
        alp.gluon_alp_widths(m, 10.0)


@pytest.mark.parametrize(
    "call",
    [
        lambda: alp.width_gamma_gamma(0.1, -1e-3),
        lambda: alp.width_gamma_gamma(-0.1, 1e-3),
        lambda: alp.width_gamma_gamma(0.0, 1e-3),
        lambda: alp.gluon_alp_widths(0.5, -100.0),
        lambda: alp.gluon_alp_widths(np.array([0.5, np.nan]), 100.0),
    ],
)
def test_bad_inputs_raise_config_error(call):
    with pytest.raises(ConfigError):
        call()


def test_dalitz_weight_python_and_numba():
    m_a = 0.7
    rng = np.random.default_rng(7)
    s = rng.uniform(4 * const.M_PI**2, (m_a - const.M_PI0) ** 2, 1000)
    w = alp.pipipi0_weight(s)
    np.testing.assert_allclose(w, (s - const.M_PI**2) ** 2, rtol=1e-14)
    wmax = alp.pipipi0_weight_max(m_a)
    assert np.all(w <= wmax)
    assert alp.pipipi0_weight((m_a - const.M_PI0) ** 2) == pytest.approx(wmax, rel=1e-14)

    @numba.njit
    def jitted(x, m):
        return alp.pipipi0_weight(x) / alp.pipipi0_weight_max(m)

    np.testing.assert_allclose(jitted(s, m_a), w / wmax, rtol=1e-14)
    # the generator's matrix-element code 1 is this weight over its maximum
    gen = [me_weight_1(1, x, 0.0, m_a, const.M_PI, const.M_PI, const.M_PI0, const.M_PI**2)
           for x in s[:50]]
    np.testing.assert_allclose(gen, w[:50] / wmax, rtol=1e-14)


def test_config_between_the_two_thresholds_loads(tmp_path):
    """m_a = 0.416 GeV lies above 2 m_pi+ + m_pi0 (the generator's threshold, masses from
    `particle`) and below 3 m_pi+: the channel is open, so a [model] config there loads with a
    finite c*tau and BR(pi+ pi- pi0) > 0."""
    import tomllib

    from _demo import CONFIGS

    from toymc.config.loader import from_dict

    data = tomllib.loads((CONFIGS / "reach_alp_gluon.toml").read_text())
    data.pop("reach", None)
    data.pop("detector", None)
    data.pop("selection", None)
    data["llp"]["mass"] = 0.416
    data["llp"]["channel"] = "pi_pi_pi0"
    assert 2 * const.M_PI + const.M_PI0 < 0.416 < 3 * const.M_PI
    cfg = from_dict(data, str(tmp_path / "x.toml"))
    assert 0 < cfg.llp.ctau < math.inf
