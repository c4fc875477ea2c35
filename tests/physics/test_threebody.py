"""Three-body decays of the LLP: Dalitz-plot densities of a -> pi+ pi- pi0 and a -> 3 pi0.

References
----------
* PDG review "Kinematics", three-body decays: dGamma = |M|^2/((2 pi)^3 32 M^3) dm12^2 dm23^2,
  so the Dalitz plot is uniform for constant |M|^2; m23^2 limits at fixed m12^2 from the
  energies E2*, E3* in the m12 rest frame.
* Leading-order chiral amplitude of a -> pi+ pi- pi0 proportional to (s - m_pi^2), s = m^2(pi+ pi-)
  (arXiv:1708.00443, from memory; also toymc's REFERENCES): |M|^2 ~ (s - m_pi^2)^2.
* Goodness of fit: chi-square and Kolmogorov-Smirnov tests from scipy.stats, p-value > ALPHA.
"""

from itertools import pairwise

import numpy as np
import pytest
from _demo import CONFIGS, truth_dict
from particle import Particle
from scipy import integrate, stats

from toymc.config.loader import from_dict
from toymc.engine.generator import generate_block
from toymc.physics.kinematics.threebody import m23_limits, me_weight_1

ALPHA = 1e-3  # p-value below which a fixed-seed goodness-of-fit test fails
M_PI = float(Particle.from_pdgid(211).mass) / 1000.0
M_PI0 = float(Particle.from_pdgid(111).mass) / 1000.0
M_LLP = 1.0
N_EVENTS = 200_000
NBINS = 24


def _inside(s12, s23, M, m1, m2, m3):
    """Physical region from the parent rest frame: E1 >= m1, E3 >= m3 and |cos theta13| <= 1."""
    e1 = (M * M + m1 * m1 - s23) / (2 * M)
    e3 = (M * M + m3 * m3 - s12) / (2 * M)
    s13 = M * M + m1 * m1 + m2 * m2 + m3 * m3 - s12 - s23
    p1 = np.sqrt(np.clip(e1 * e1 - m1 * m1, 0, None))
    p3 = np.sqrt(np.clip(e3 * e3 - m3 * m3, 0, None))
    num = m1 * m1 + m3 * m3 + 2 * e1 * e3 - s13
    return (e1 >= m1) & (e3 >= m3) & (np.abs(num) <= 2 * p1 * p3)


def _limits(s12, M, m1, m2, m3):
    """m23^2 limits at fixed m12^2, PDG review 'Kinematics' (written out independently here)."""
    m12 = np.sqrt(s12)
    e2 = (s12 - m1**2 + m2**2) / (2 * m12)
    e3 = (M**2 - s12 - m3**2) / (2 * m12)
    p2 = np.sqrt(np.clip(e2**2 - m2**2, 0, None))
    p3 = np.sqrt(np.clip(e3**2 - m3**2, 0, None))
    return (e2 + e3) ** 2 - (p2 + p3) ** 2, (e2 + e3) ** 2 - (p2 - p3) ** 2


def _generate(channel, me="flat", n=N_EVENTS, seed=5):
    data = truth_dict(CONFIGS / "alp_3pi_bka.toml")
    data["run"].update(events=n, seed=seed)
    data["llp"].update(mass=M_LLP, channel=channel, matrix_element=me)
    block = generate_block(from_dict(data), 0, n)
    counts, d = block.groups["dau"]
    k = int(counts[0])
    p = np.array([d["px"], d["py"], d["pz"], d["e"]]).reshape(4, n, k)

    def m2(*idx):
        q = p[:, :, list(idx)].sum(2)
        return q[3] ** 2 - q[0] ** 2 - q[1] ** 2 - q[2] ** 2

    pdg = d["pdg"].reshape(n, k)[0]
    return m2(0, 1), m2(1, 2), pdg


def _grid(M, m1, m2, m3):
    e12 = np.linspace((m1 + m2) ** 2, (M - m3) ** 2, NBINS + 1)
    e23 = np.linspace((m2 + m3) ** 2, (M - m1) ** 2, NBINS + 1)
    # a bin counts when a 6x6 grid of its points (corners included) is inside
    t = np.linspace(0, 1, 6)
    full = np.zeros((NBINS, NBINS), bool)
    for i in range(NBINS):
        for j in range(NBINS):
            a = e12[i] + (e12[i + 1] - e12[i]) * t
            b = e23[j] + (e23[j + 1] - e23[j]) * t
            A, B = np.meshgrid(a, b)
            full[i, j] = _inside(A, B, M, m1, m2, m3).all()
    return e12, e23, full


def _dalitz_area(M, m1, m2, m3, weight=lambda s: 1.0):
    def f(s):
        lo, hi = _limits(s, M, m1, m2, m3)
        return (hi - lo) * weight(s)

    val, _ = integrate.quad(f, (m1 + m2) ** 2, (M - m3) ** 2, epsabs=0, epsrel=1e-12, limit=200)
    return val


def test_limits_agree_with_rest_frame_region():
    """toymc's m23 limits against the parent-rest-frame definition of the physical region."""
    M, m1, m2, m3 = M_LLP, M_PI, M_PI, M_PI0
    s12 = np.linspace((m1 + m2) ** 2 + 1e-9, (M - m3) ** 2 - 1e-9, 301)
    lo, hi = m23_limits(s12, M, m1, m2, m3)
    mine_lo, mine_hi = _limits(s12, M, m1, m2, m3)
    np.testing.assert_allclose(lo, mine_lo, rtol=1e-12)
    np.testing.assert_allclose(hi, mine_hi, rtol=1e-12)
    eps = 1e-7
    assert _inside(s12, lo + eps, M, m1, m2, m3).all() and _inside(s12, hi - eps, M, m1, m2, m3).all()
    assert not _inside(s12, lo - eps, M, m1, m2, m3).any()
    assert not _inside(s12, hi + eps, M, m1, m2, m3).any()


def test_chiral_weight_is_normalised_square():
    M, m3, mpi2 = M_LLP, M_PI0, M_PI**2
    smax = (M - m3) ** 2
    for s in np.linspace(4 * mpi2, smax, 7):
        w = me_weight_1(1, s, 0.3, M, M_PI, M_PI, m3, mpi2)
        assert w == pytest.approx(((s - mpi2) / (smax - mpi2)) ** 2, rel=1e-14)
        assert 0.0 <= w <= 1.0
    assert me_weight_1(0, 0.2, 0.3, M, M_PI, M_PI, m3, mpi2) == 1.0


@pytest.mark.parametrize("channel,masses", [
    ("pi_pi_pi0", (M_PI, M_PI, M_PI0)),
    ("pi0_pi0_pi0", (M_PI0, M_PI0, M_PI0)),
])
def test_flat_dalitz_plot_is_uniform(channel, masses):
    """No matrix element: uniform density in (m12^2, m23^2) (PDG 'Kinematics', three-body)."""
    m1, m2, m3 = masses
    s12, s23, pdg = _generate(channel)
    expected_ids = {"pi_pi_pi0": [211, -211, 111], "pi0_pi0_pi0": [111, 111, 111]}[channel]
    assert list(pdg[:3]) == expected_ids
    assert _inside(s12, s23, M_LLP, m1, m2, m3).mean() > 1 - 1e-4  # rounding at the edge only
    e12, e23, full = _grid(M_LLP, m1, m2, m3)
    h, _, _ = np.histogram2d(s12, s23, bins=[e12, e23])
    c = h[full]
    # all fully inside bins have the same area: equal expectations
    exp = np.full(c.size, c.sum() / c.size)
    chi2 = ((c - exp) ** 2 / exp).sum()
    assert stats.chi2.sf(chi2, c.size - 1) > ALPHA
    # the fraction of events in those bins equals their share of the Dalitz area
    area_bin = (e12[1] - e12[0]) * (e23[1] - e23[0])
    frac = full.sum() * area_bin / _dalitz_area(M_LLP, m1, m2, m3)
    n = s12.size
    assert abs(c.sum() - n * frac) < 5 * np.sqrt(n * frac * (1 - frac))
    # marginal m12^2 density ~ length of the m23^2 interval: KS test
    nodes = np.linspace((m1 + m2) ** 2, (M_LLP - m3) ** 2, 1501)
    cdf = _cdf_on_nodes(nodes, lambda s: 1.0, M_LLP, m1, m2, m3)
    assert stats.kstest(s12, lambda x: np.interp(x, nodes, cdf)).pvalue > ALPHA


def _cdf_on_nodes(nodes, weight, M, m1, m2, m3):
    def f(s):
        lo, hi = _limits(s, M, m1, m2, m3)
        return (hi - lo) * weight(s)

    parts = [integrate.quad(f, a, b, epsabs=0, epsrel=1e-10)[0] for a, b in pairwise(nodes)]
    cdf = np.concatenate([[0.0], np.cumsum(parts)])
    return cdf / cdf[-1]


def test_chiral_matrix_element_density():
    """matrix_element='chiral': density ~ (m12^2 - m_pi^2)^2 over phase space.

    2D chi-square over bins fully inside the boundary (expectation: the weight
    integrated over each bin) and a KS test of the m12^2 marginal against the
    numerically integrated (s - m_pi^2)^2 (m23max - m23min)(s).
    """
    m1, m2, m3 = M_PI, M_PI, M_PI0
    mpi2 = M_PI**2
    s12, s23, _ = _generate("pi_pi_pi0", "chiral", seed=6)
    e12, e23, full = _grid(M_LLP, m1, m2, m3)
    h, _, _ = np.histogram2d(s12, s23, bins=[e12, e23])
    w12 = ((e12[1:] - mpi2) ** 3 - (e12[:-1] - mpi2) ** 3) / 3.0  # integral of (s - m^2)^2
    wbin = np.repeat(w12[:, None], NBINS, axis=1)[full]
    c = h[full]
    exp = c.sum() * wbin / wbin.sum()
    chi2 = ((c - exp) ** 2 / exp).sum()
    assert stats.chi2.sf(chi2, c.size - 1) > ALPHA
    nodes = np.linspace((m1 + m2) ** 2, (M_LLP - m3) ** 2, 1501)
    cdf = _cdf_on_nodes(nodes, lambda s: (s - mpi2) ** 2, M_LLP, m1, m2, m3)
    assert stats.kstest(s12, lambda x: np.interp(x, nodes, cdf)).pvalue > ALPHA
    # the weighted sample is clearly not flat: the flat marginal must be rejected
    flat = _cdf_on_nodes(nodes, lambda s: 1.0, M_LLP, m1, m2, m3)
    assert stats.kstest(s12, lambda x: np.interp(x, nodes, flat)).pvalue < ALPHA
