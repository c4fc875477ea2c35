"""K_L -> pi+ pi- pi0 on the Dalitz plot with the measured slopes.

Reference: the PDG parametrisation |M|^2 ~ 1 + g u + h u^2 + k v^2, u = (s3 - s0)/m_pi+^2,
v = (s1 - s2)/m_pi+^2, s_i = (P_K - p_i)^2 with pi0 as particle 3, s0 = (s1 + s2 + s3)/3;
g = 0.678, h = 0.076, k = 0.0099 (PDG listing, from memory).  Masses from `particle`.
The expected density is written out here and integrated over the Dalitz region (PDG review
"Kinematics", limits of m23^2 at fixed m12^2) by a fine Riemann sum; the sampled
distribution is compared with it by a chi-square test (scipy).
"""

import numpy as np
from numba import njit
from particle import Particle
from scipy import stats
from scipy.integrate import trapezoid

from toymc.physics.kinematics.threebody import KL_SLOPES, dalitz_1, kl_msq_max

MK = Particle.from_pdgid(130).mass / 1000.0
MPI = Particle.from_pdgid(211).mass / 1000.0
MPI0 = Particle.from_pdgid(111).mass / 1000.0
G, H, K = 0.678, 0.076, 0.0099


def _msq(s12, s23):
    tot = MK**2 + 2 * MPI**2 + MPI0**2
    s13 = tot - s12 - s23
    u, v = (s12 - tot / 3) / MPI**2, (s23 - s13) / MPI**2
    return 1 + G * u + H * u * u + K * v * v


def _limits(s12):
    e2 = np.sqrt(s12) / 2
    e3 = (MK**2 - s12 - MPI0**2) / (2 * np.sqrt(s12))
    p2 = np.sqrt(np.maximum(e2 * e2 - MPI**2, 0))
    p3 = np.sqrt(np.maximum(e3 * e3 - MPI0**2, 0))
    return (e2 + e3) ** 2 - (p2 + p3) ** 2, (e2 + e3) ** 2 - (p2 - p3) ** 2


@njit(cache=False)
def _draw_kernel(rng, n, me_code, par):
    out = np.empty((n, 2))
    counter = np.zeros(3, dtype=np.int64)
    for i in range(n):
        a, b = dalitz_1(rng, 0.497611, 0.13957039, 0.13957039, 0.1349768, me_code, par,
                        counter)
        out[i, 0], out[i, 1] = a, b
    return out


def _draw(n, seed, me_code, par):
    return _draw_kernel(np.random.default_rng(seed), n, me_code, par)


def test_slopes_are_the_documented_ones():
    assert KL_SLOPES == (G, H, K)


def _expected_m12_fractions(edges):
    """Fractions of decays in bins of m12^2 = m^2(pi+ pi-) from the density above."""
    lo, hi = 4 * MPI**2, (MK - MPI0) ** 2
    s12 = np.linspace(lo, hi, 20001)[1:-1]
    a, b = _limits(s12)
    t = np.linspace(0, 1, 401)[None, :]
    s23 = a[:, None] + (b - a)[:, None] * t
    dens = trapezoid(_msq(s12[:, None], s23), s23, axis=1)  # integral over m23^2
    cdf = np.concatenate([[0], np.cumsum(0.5 * (dens[1:] + dens[:-1]) * np.diff(s12))])
    cdf /= cdf[-1]
    return np.diff(np.interp(edges, s12, cdf))


def test_kl_background_sample_has_the_measured_dalitz_plot():
    """The K_L background of tune-cuts (engine.backgrounds) decays with these slopes: the
    pi+ pi- mass of its stored daughters against the expected distribution (chi-square)."""
    from toymc.engine import backgrounds as B
    from toymc.physics.production.beams import Beams

    n = 60_000
    sp = B.Species(name="kl", sigma=1.0, br=1.0, p_mean=0.8, p_shape=2.0, force_decay=100.0)
    blk = B.generate_species(sp, Beams(e_minus=5.29, e_plus=5.29), None, seed=4, events=n)
    d = blk.groups["dau"][1]
    four = np.stack([d[c].reshape(-1, 5)[:, :2].sum(axis=1) for c in ("e", "px", "py", "pz")])
    m12sq = four[0] ** 2 - (four[1:] ** 2).sum(axis=0)
    edges = np.linspace(4 * MPI**2, (MK - MPI0) ** 2, 16)
    counts, _ = np.histogram(m12sq, edges)
    expected = _expected_m12_fractions(edges) * counts.sum()
    chi2 = np.sum((counts - expected) ** 2 / expected)
    assert counts.sum() > 0.99 * n
    assert stats.chi2.sf(chi2, len(counts) - 1) > 1e-3, chi2


def test_sampled_dalitz_plot_follows_the_measured_slopes():
    # the kernel's masses above are the PDG values of particle (checked here)
    assert abs(MK - 0.497611) < 1e-6 and abs(MPI - 0.13957039) < 1e-8
    assert abs(MPI0 - 0.1349768) < 1e-7
    wmax = kl_msq_max(MK, MPI, MPI0)
    n = 200_000
    pts = _draw(n, 7, 2, wmax)
    # expected fractions in bins of m12^2 (= m^2(pi+ pi-))
    edges = np.linspace(4 * MPI**2, (MK - MPI0) ** 2, 16)
    expected = _expected_m12_fractions(edges) * n
    counts, _ = np.histogram(pts[:, 0], edges)
    chi2 = np.sum((counts - expected) ** 2 / expected)
    assert stats.chi2.sf(chi2, len(counts) - 1) > 1e-3, chi2
    # the flat plot is rejected by the same test: the slopes matter
    flat = _draw(n, 7, 0, 0.0)
    fc, _ = np.histogram(flat[:, 0], edges)
    assert stats.chi2.sf(np.sum((fc - expected) ** 2 / expected), len(fc) - 1) < 1e-6


def test_weight_varies_by_a_factor_of_about_eight():
    lo, hi = 4 * MPI**2, (MK - MPI0) ** 2
    s12 = np.linspace(lo, hi, 4001)
    a, b = _limits(s12)
    vals = np.concatenate([_msq(s12, a), _msq(s12, b), _msq(s12, 0.5 * (a + b))])
    assert 7.0 < vals.max() / vals.min() < 8.5
    assert kl_msq_max(MK, MPI, MPI0) >= vals.max()
