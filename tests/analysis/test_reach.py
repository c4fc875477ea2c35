"""Reach: Poisson limits, the yield at a hand-computed point, the region, the map, bad input.

Outside references used here:
* PDG review "Statistics", Poisson upper limits for n = 0 observed and no
  background: 2.30 (90 % CL) and 3.00 (95 % CL); the closed form
  mu_up = (1/2) chi2_quantile(CL; 2(n + 1)) (scipy.stats.chi2).
* e+e- -> gamma A' integrated over |cos(theta_gamma)| < c0, massless beams:
  sigma = (2 pi alpha^2 eps^2/s)[2(1 + x^2)/(1 - x) ln((1 + c0)/(1 - c0)) - 2 c0 (1 - x)],
  x = m^2/s (from the tree-level dsigma/dcos of e+e- -> gamma V, which for
  m -> 0 is the QED gamma gamma result, textbook "An Introduction to Quantum
  Field Theory" sec. 5.5; integrated by hand).
* Gamma(A' -> l+ l-) = (alpha eps^2 m/3)(1 + 2 m_l^2/m^2) sqrt(1 - 4 m_l^2/m^2)
  (arXiv:0906.0580, from memory); below 2 m_pi the hadronic width is zero (the
  R ratio vanishes below the two-pion threshold, PDG review "Plots of cross
  sections and related quantities"; A' -> pi0 gamma, of order alpha^2, is not
  in the model).
* hbar c and alpha from scipy.constants (CODATA); lepton masses from `particle`.
"""

import argparse
import csv
import math
import warnings

import numpy as np
import pytest
from _demo import GEOMETRY
from particle import Particle
from scipy import constants as sc
from scipy.optimize import brentq
from scipy.stats import chi2, poisson

from toymc.analysis import stats
from toymc.analysis.reach import interpolate_map, parse_reach, run_reach, signal_limit
from toymc.cli.reach import write_reach
from toymc.errors import ConfigError
from toymc.io.effmap import read_map

BEAMS_SYM = """
[beams]
e_minus = "5.29 GeV"
e_plus = "5.29 GeV"
"""

DARK_PHOTON = BEAMS_SYM + """
[production]
process = "radiative"
photon_cos_min = -0.8
photon_cos_max = 0.8

[llp]
mass = 0.25
channel = "mu_mu"

[model]
name = "dark_photon"
coupling = 1e-4
"""


SELECTION = f"""
[detector]
geometry = "{GEOMETRY}"

[selection]
r_min = "0.5 cm"
r_max = "60 cm"
z_min = "-50 cm"
z_max = "100 cm"
profile = {{ kind = "flat", eps0 = 1.0 }}
"""


def _write_map(path, masses, ctaus, eff):
    with open(path, "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["mass_gev", "ctau_cm", "efficiency", "error", "method", "events"])
        for i, m in enumerate(masses):
            for j, c in enumerate(ctaus):
                w.writerow([repr(float(m)), repr(float(c)), repr(float(eff[i, j])), "0.0",
                            "direct", 1000])


def _config(tmp_path, body, reach):
    p = tmp_path / "reach.toml"
    p.write_text(body + "\n[reach]\n" + reach)
    return p


# ----------------------------------------------------------------------------- limits


@pytest.mark.parametrize("cl, pdg", [(0.90, 2.30), (0.95, 3.00)])
def test_zero_background_limits(cl, pdg):
    # PDG review "Statistics": n = 0, b = 0 upper limits 2.30 (90 %) and 3.00 (95 %),
    # quoted to two decimals -> agreement within half a unit of the last digit.
    ours = float(stats.poisson_upper_limit(0, 0.0, cl))
    assert abs(ours - pdg) < 0.005
    assert ours == pytest.approx(0.5 * chi2.ppf(cl, 2), rel=1e-12)
    assert ours == pytest.approx(-math.log(1.0 - cl), rel=1e-12)  # chi2 with 2 dof
    assert signal_limit(0.0, cl) == pytest.approx(ours, rel=1e-12)


def test_limit_with_background_solves_the_cls_condition():
    # CLs limit for the continuous count n = b: Q(n + 1, mu + b) / Q(n + 1, b) = 1 - CL, with
    # P(N <= n | lambda) = Q(n + 1, lambda) = scipy.stats.gamma(n + 1).sf(lambda)
    from scipy.stats import gamma

    b, cl = 2.0, 0.95
    g = gamma(b + 1.0)
    mu = brentq(lambda x: g.sf(x + b) / g.sf(b) - (1 - cl), 0.0, 50.0, xtol=1e-12)
    assert signal_limit(b, cl) == pytest.approx(mu, rel=1e-9)
    # the median count's limit (integer n): CLs with scipy.stats.poisson
    n = int(poisson.median(b))
    mu = brentq(lambda x: poisson.cdf(n, x + b) / poisson.cdf(n, b) - (1 - cl), 0.0, 50.0,
                xtol=1e-12)
    assert signal_limit(b, cl, "median") == pytest.approx(mu, rel=1e-9)


# ----------------------------------------------------------------------------- yield


def test_yield_at_a_hand_computed_point(tmp_path):
    eff_const = 0.37
    mp = tmp_path / "map.csv"
    _write_map(mp, [0.2, 0.3], [1e-8, 1e8], np.full((2, 2), eff_const))
    lumi_fb = 2.5e4  # "25 ab-1"
    cfg = _config(tmp_path, DARK_PHOTON, f"""
masses = [0.22, 0.25, 0.28]
couplings = [5e-5, 1e-4, 2e-4]
lumi = "25 ab-1"
efficiency = "map"
map = "{mp}"
""")
    res = write_reach(cfg, output_dir=tmp_path / "out", plot=False)
    i, j = 1, 1
    m, eps = 0.25, 1e-4
    assert res.masses[i] == m and res.couplings[j] == eps

    alpha = sc.fine_structure
    hbarc_gev_cm = sc.hbar * sc.c / (sc.e * 1e9) * 100.0
    fb_per_inv_gev2 = hbarc_gev_cm**2 / 1e-39
    s = 10.58**2
    x = m * m / s
    c0 = 0.8
    sigma = (2 * math.pi * alpha**2 * eps**2 / s) * (
        2 * (1 + x * x) / (1 - x) * math.log((1 + c0) / (1 - c0)) - 2 * c0 * (1 - x)
    ) * fb_per_inv_gev2

    def gamma_ll(ml):
        y = ml * ml / (m * m)
        return alpha * eps**2 * m / 3 * (1 + 2 * y) * math.sqrt(1 - 4 * y)

    m_e = Particle.from_pdgid(11).mass / 1e3
    m_mu = Particle.from_pdgid(13).mass / 1e3
    g_tot = gamma_ll(m_e) + gamma_ll(m_mu)
    br = gamma_ll(m_mu) / g_tot
    ctau = hbarc_gev_cm / g_tot
    n_expected = lumi_fb * sigma * br * eff_const

    assert res.sigma_fb[i, j] == pytest.approx(sigma, rel=1e-6)
    assert res.br_decay[i, j] == pytest.approx(br, rel=1e-6)
    assert res.ctau[i, j] == pytest.approx(ctau, rel=1e-6)
    assert res.eff[i, j] == pytest.approx(eff_const, rel=1e-12)
    assert res.yield_[i, j] == pytest.approx(n_expected, rel=1e-6)
    with open(tmp_path / "out" / "reach.csv") as f:
        rows = list(csv.DictReader(f))
    row = rows[i * 3 + j]
    assert float(row["mass_gev"]) == m and float(row["coupling"]) == eps
    assert float(row["yield"]) == pytest.approx(n_expected, rel=1e-6)


def test_b_meson_yield_holds_g_bs_fixed(tmp_path):
    # N = L sigma_bb 2 [f BR(B+) + (1 - f) BR(B0)] BR(decay) eps, with BR(B -> K a) from g_bs
    # only: the production factor must not change along the coupling axis.
    from toymc.physics.models import b_to_k

    mp = tmp_path / "map.csv"
    _write_map(mp, [0.4, 1.2], [1e-9, 1e9], np.full((2, 2), 0.5))
    cfg = _config(tmp_path, BEAMS_SYM + """
[production]
process = "b_meson"
recoil = "K"
sigma_bb = "1.1 nb"
charged_fraction = 0.514
[llp]
mass = 0.6
channel = "pi_pi_pi0"
[model]
name = "alp_gluon"
coupling = 1e-3
g_bs = 2e-9
""", f"""
masses = [0.5, 0.7]
coupling_min = 1e-5
coupling_max = 1e-2
coupling_points = 4
lumi = "1 ab-1"
efficiency = "map"
map = "{mp}"
""")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # model-validity warnings of the large couplings
        res = run_reach(cfg)
    for i, m in enumerate(res.masses):
        bp = b_to_k.br_b_to_k(m, 2e-9, "B+")
        b0 = b_to_k.br_b_to_k(m, 2e-9, "B0")
        sig = 1.1e6 * 2 * (0.514 * bp + 0.486 * b0)
        np.testing.assert_allclose(res.sigma_fb[i], sig, rtol=1e-12)
        np.testing.assert_allclose(res.yield_[i], 1e3 * sig * res.br_decay[i] * 0.5, rtol=1e-12)
    from toymc.plots.reach import reach_title

    title = reach_title(res)
    assert "held fixed" in title and "g_{bs}" in title


# ----------------------------------------------------------------------------- region


def test_more_coupling_more_yield_at_constant_efficiency(tmp_path):
    # map: eps = 0.3 for 1e-2 <= c*tau <= 1e2 cm, falling to 0 outside ("inside the window");
    # there sigma ~ eps^2 and BR fixed, so N must grow strictly with the coupling.
    mp = tmp_path / "map.csv"
    ct = np.array([1e-4, 1e-2, 1.0, 1e2, 1e4])
    _write_map(mp, [0.2, 0.6], ct, np.tile([0.0, 0.3, 0.3, 0.3, 0.0], (2, 1)))
    cfg = _config(tmp_path, DARK_PHOTON, f"""
masses = [0.22, 0.3, 0.4, 0.5]
coupling_min = 1e-7
coupling_max = 1e-4
coupling_points = 30
lumi = "50 ab-1"
efficiency = "map"
map = "{mp}"
""")
    res = run_reach(cfg)
    checked = 0
    for i in range(res.masses.size):
        inside = (res.ctau[i] >= 1e-2) & (res.ctau[i] <= 1e2)
        n = res.yield_[i][inside]
        assert n.size >= 5
        assert np.all(np.diff(n) > 0)
        checked += n.size
        np.testing.assert_allclose(res.eff[i][inside], 0.3, rtol=1e-12)
    assert checked >= 20


def test_fold_region_is_one_coupling_interval_per_mass(tmp_path):
    cfg = _config(tmp_path, DARK_PHOTON + SELECTION, """
masses = [0.25, 0.5, 1.0]
coupling_min = 1e-7
coupling_max = 1e-3
coupling_points = 25
lumi = "50 ab-1"
background = 0
efficiency = "fold"
events_per_mass = 2000
""")
    res = run_reach(cfg)
    assert res.excluded.any()
    for i in range(res.masses.size):
        idx = np.flatnonzero(res.excluded[i])
        if idx.size:
            assert np.all(np.diff(idx) == 1), f"region not one interval at m = {res.masses[i]}"
    # long-lived side (lab decay length >> window): eps ~ 1/c*tau ~ eps^2, N ~ eps^4
    i = 0
    long = res.ctau[i] > 1e4
    n, g = res.yield_[i][long], res.couplings[long]
    slope = np.diff(np.log(n)) / np.diff(np.log(g))
    np.testing.assert_allclose(slope, 4.0, atol=0.05)


# ----------------------------------------------------------------------------- map


def test_map_interpolation_reproduces_nodes_and_is_linear_in_log_ctau(tmp_path):
    rng = np.random.default_rng(3)
    masses = np.array([0.3, 0.5, 0.9, 1.4])
    ctaus = np.geomspace(0.1, 1e3, 5)
    eff = rng.uniform(0.0, 1.0, (4, 5))
    mp = tmp_path / "efficiency_map.csv"
    _write_map(mp, masses, ctaus, eff)
    mm, cc, ee = read_map(mp)
    np.testing.assert_array_equal(mm, masses)
    np.testing.assert_allclose(cc, ctaus, rtol=0, atol=0)
    M, C = np.meshgrid(masses, ctaus, indexing="ij")
    val, out = interpolate_map(mm, cc, ee, M, C)
    assert not out.any()
    np.testing.assert_allclose(val, eff, rtol=1e-12, atol=1e-15)
    # geometric midpoint in c*tau at a node mass: the mean of the two neighbours
    mid = np.sqrt(ctaus[1] * ctaus[2])
    val, _ = interpolate_map(mm, cc, ee, masses[2], mid)
    assert float(val) == pytest.approx(0.5 * (eff[2, 1] + eff[2, 2]), rel=1e-12)
    # arithmetic midpoint in mass at a node c*tau
    val, _ = interpolate_map(mm, cc, ee, 0.4, ctaus[3])
    assert float(val) == pytest.approx(0.5 * (eff[0, 3] + eff[1, 3]), rel=1e-12)
    val, out = interpolate_map(mm, cc, ee, [0.2, 0.5, 0.5], [1.0, 1e4, 1.0])
    np.testing.assert_array_equal(out, [True, True, False])
    assert val[0] == 0.0 and val[1] == 0.0


def test_points_outside_the_map_warn_and_get_zero(tmp_path):
    mp = tmp_path / "map.csv"
    _write_map(mp, [0.2, 0.3], [1e-3, 1e1], np.full((2, 2), 0.5))
    cfg = _config(tmp_path, DARK_PHOTON, f"""
masses = [0.22, 0.28, 0.4]
couplings = [1e-6, 1e-4]
lumi = 1000.0
efficiency = "map"
map = "{mp}"
""")
    with pytest.warns(UserWarning, match="outside the efficiency map"):
        res = run_reach(cfg)
    assert np.all(res.eff[2] == 0.0) and np.all(res.status[2] == "outside_map")


# ----------------------------------------------------------------------------- bad input


GOOD = {"mass_min": 0.3, "mass_max": 1.0, "coupling_min": 1e-6, "coupling_max": 1e-3,
        "lumi": "1 ab-1"}


@pytest.mark.parametrize("change, key", [
    ({"mass_points": 1}, "reach.mass_points"),
    ({"coupling_points": 1}, "reach.coupling_points"),
    ({"mass_min": None, "mass_max": None, "masses": [0.5, 0.3, 0.7]}, "reach.masses"),
    ({"mass_min": None, "mass_max": None, "masses": [-0.1, 0.3]}, "reach.masses"),
    ({"mass_min": None, "mass_max": None, "masses": [0.3]}, "reach.masses"),
    ({"masses": [0.3, 0.5]}, "reach.masses"),
    ({"mass_max": 0.2}, "reach.mass_max"),
    ({"coupling_min": -1e-5}, "reach.coupling_min"),
    ({"coupling_min": 0.0}, "reach.coupling_min"),
    ({"coupling_max": 1e-7}, "reach.coupling_max"),
    ({"coupling_min": None, "coupling_max": None, "couplings": [1e-3, 1e-4]}, "reach.couplings"),
    ({"coupling_min": None, "coupling_max": None, "couplings": [0.0, 1e-4]}, "reach.couplings"),
    ({"lumi": "1 ab"}, "reach.lumi"),
    ({"lumi": -5.0}, "reach.lumi"),
    ({"lumi": None}, "reach.lumi"),
    ({"background": -1.0}, "reach.background"),
    ({"cl": 1.5}, "reach.cl"),
    ({"efficiency": "guess"}, "reach.efficiency"),
    ({"events_per_mass": 1}, "reach.events_per_mass"),
    ({"lumen": 3}, "reach.lumen"),
])
def test_bad_reach_values_name_the_key(change, key):
    table = {k: v for k, v in {**GOOD, **change}.items() if v is not None}
    with pytest.raises(ConfigError) as exc:
        parse_reach(table, "x.toml")
    assert exc.value.key == key
    assert key in str(exc.value)


def test_good_reach_grid_and_units():
    g = parse_reach(GOOD, "")
    assert g.lumi == pytest.approx(1e3)  # 1 ab^-1 = 1000 fb^-1
    assert g.masses.size == 20 and g.couplings.size == 40
    np.testing.assert_allclose(np.diff(np.log(g.couplings)), math.log(1e3) / 39, rtol=1e-12)
    assert g.cl == 0.95 and g.background == 0.0


def test_missing_section_and_unreachable_mass(tmp_path):
    p = tmp_path / "c.toml"
    p.write_text(DARK_PHOTON)
    with pytest.raises(ConfigError, match="reach"):
        run_reach(p)
    cfg = _config(tmp_path, DARK_PHOTON, 'masses = [0.1, 0.3]\ncouplings = [1e-5, 1e-4]\n'
                  'lumi = 10.0\n')
    with pytest.raises(ConfigError) as exc:  # 0.1 GeV is below the mu mu threshold
        run_reach(cfg)
    assert exc.value.key == "reach.mass_min"


# ----------------------------------------------------------------------------- command


def test_reach_command_writes_table_and_plot(tmp_path):
    pytest.importorskip("matplotlib")
    from toymc.cli.reach import register

    cfg = _config(tmp_path, DARK_PHOTON + SELECTION, """
mass_min = 0.25
mass_max = 2.0
mass_points = 3
coupling_min = 1e-6
coupling_max = 1e-3
coupling_points = 5
lumi = "50 ab-1"
events_per_mass = 500
""")
    parser = argparse.ArgumentParser(prog="toymc")
    register(parser.add_subparsers(dest="command"))
    out = tmp_path / "out"
    args = parser.parse_args(["reach", str(cfg), "--output-dir", str(out), "-q"])
    assert args.func(args) == 0
    with open(out / "reach.csv") as f:
        rows = list(csv.DictReader(f))
    assert len(rows) == 15
    assert {"mass_gev", "coupling", "ctau_cm", "sigma_br_prod_fb", "efficiency",
            "yield"} <= set(rows[0])
    assert (out / "reach.png").stat().st_size > 10_000
    from toymc.errors import OutputError

    with pytest.raises(OutputError):  # no overwrite without --force
        args.func(args)


def test_mc_source_agrees_with_direct_detector_samples(tmp_path):
    # The mc source reweights reference samples (c*tau_0 = 10^k cm) to each grid c*tau.
    # Check each point against an independent sample generated directly at that c*tau
    # (another seed): the difference must lie within 4 combined standard errors (ratio-
    # estimator error of the reweighted value, binomial error of the direct one; 6 points,
    # two-sided 4 sigma each: false-alarm probability 6 x 6.3e-5).
    import tomllib

    from toymc.config import loader as tconfig
    from toymc.engine.api import generate

    body = DARK_PHOTON + SELECTION
    reach = """
masses = [0.3, 0.6]
couplings = [3e-6, 6e-6, 1.2e-5]
lumi = "50 ab-1"
events_per_mass = 3000
efficiency_step = "fiducial"
efficiency = "mc"
"""
    res = run_reach(_config(tmp_path, body, reach))
    assert np.all(res.status == "reweight")
    data = tomllib.loads(body)
    data.pop("model")
    n_direct = 4000
    for i, m in enumerate(res.masses):
        for j in range(res.couplings.size):
            d = {k: dict(v) for k, v in data.items()}
            d["llp"].update(mass=float(m), ctau=float(res.ctau[i, j]))
            d["run"] = {"seed": 1000 + 10 * i + j, "events": n_direct}
            ev = generate(tconfig.from_dict(d, str(tmp_path / "direct.toml")))
            k = int(np.count_nonzero(np.asarray(ev["cut_fiducial"])))
            p = k / n_direct
            err = math.sqrt(max(p * (1 - p), 1.0 / n_direct) / n_direct)
            assert abs(res.eff[i, j] - p) < 4 * math.hypot(err, res.eff_err[i, j]), (m, j)


def test_fold_window_profiles():
    # the fold profile must give the detector's eps(r) at the true radius (linear: eps0 at
    # r_min falling to 0 at r_max); a per-track "hits" profile is folded with a warning.
    from toymc.analysis.reach_samples import fold_window
    from toymc.config.geometry import load_geometry, parse_selection
    from toymc.detector.profile import profile_efficiency

    geo = load_geometry(GEOMETRY)
    base = {"r_min": 1.5, "r_max": 60.0, "z_min": -40.0, "z_max": 120.0}
    sel = parse_selection({**base, "profile": {"kind": "linear", "eps0": 0.9}}, None, geo)
    win, prof = fold_window(sel, geo)
    assert win == (1.5, 60.0, -40.0, 120.0)
    r = np.array([2.0, 30.75, 59.0])
    np.testing.assert_allclose(profile_efficiency(prof, r, window=(1.5, 60.0)),
                               0.9 * (60.0 - r) / (60.0 - 1.5), rtol=1e-12)
    sel = parse_selection({**base, "profile": {"kind": "hits", "eps0": 0.9}}, None, geo)
    with pytest.warns(UserWarning, match="upper estimate"):
        fold_window(sel, geo)
