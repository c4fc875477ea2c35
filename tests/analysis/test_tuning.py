"""Tests of toymc.analysis.tuning: figures of merit, the grid scan, config errors, a small full run."""

import json
import math

import numpy as np
import pytest
from _demo import ROOT
from scipy.special import lambertw
from scipy.stats import chi2

from toymc.analysis import tuning as T
from toymc.analysis.candidates import candidates
from toymc.errors import ConfigError


def _tcfg(**kw):
    args = {"masses": (0.5,), "r_min": (0.0,), "r_max": (1.0,), "windows": (1.0,)}
    args.update(kw)
    return T.TuningConfig(**args)


def _grid(eff, bkg):
    eff = np.atleast_2d(np.asarray(eff, dtype=float))
    bkg = np.atleast_2d(np.asarray(bkg, dtype=float))
    return {"eff": eff, "bkg": bkg, "bkg_w2": bkg, "n_mc": np.ones_like(eff, dtype=int),
            "valid": np.ones_like(eff, dtype=bool)}


def test_punzi_worked_points():
    """Punzi figure of merit eps/(a/2 + sqrt(B)) (physics/0308063, eq. 7 from memory):
    eps = 0.5, B = 0, a = 3 -> 1/3; eps = 0.5, B = 4, a = 5 -> 0.5/4.5; eps = 0.2, B = 9,
    a = 2 -> 0.05."""
    cases = [(0.5, 0.0, 3.0, 1.0 / 3.0), (0.5, 4.0, 5.0, 0.5 / 4.5), (0.2, 9.0, 2.0, 0.05)]
    for eff, b, a, expect in cases:
        _k, _i, _j, f = T.best_point([_grid(eff, b)], _tcfg(fom="punzi", punzi_a=a))
        assert f == pytest.approx(expect, rel=1e-12)
    # the best of several cells: 0.3/(1.5 + 0) = 0.2 beats 0.6/(1.5 + 2) = 0.171
    _k, i, j, f = T.best_point([_grid([[0.6, 0.3]], [[4.0, 0.0]])], _tcfg(fom="punzi"))
    assert (i, j) == (0, 1) and f == pytest.approx(0.2)


def test_upper_limit_fom_zero_background():
    """Expected classical limit at B = 0 is (1/2) chi2_quantile(CL; 2) = -ln(1 - CL) events
    (PDG review "Statistics", Poisson upper limits); the fom is that divided by eps."""
    _k, _i, _j, f = T.best_point([_grid(0.25, 0.0)], _tcfg(fom="upper_limit", cl=0.9))
    assert -f == pytest.approx(0.5 * chi2.ppf(0.9, 2) / 0.25, rel=1e-9)


def test_s_over_sqrt_b_floor_at_zero_background():
    tc = _tcfg(fom="s_over_sqrt_b", signal_sigma=2.0, lumi=50.0)
    _k, _i, _j, f = T.best_point([_grid(0.1, 0.0)], tc, b_floor=4.0)
    assert f == pytest.approx(0.1 * 100.0 / 2.0)


def test_synthetic_optimum_s_over_sqrt_b():
    """Signal uniform in r on [0, R], background exponential with scale lam.  With
    r_max = R, S ~ R - x and B ~ exp(-x/lam) - exp(-R/lam); d ln(S/sqrt(B))/dx = 0 gives,
    with u = (R - x)/lam, u = 2 (1 - exp(-u)), i.e. u* = 2 + W0(-2 exp(-2)) (Lambert W,
    scipy.special.lambertw).  Samples are the exact quantiles (i + 1/2)/N."""
    R, lam, n = 100.0, 30.0, 1000000
    q = (np.arange(n) + 0.5) / n
    sig_r = R * q
    bkg_r = -lam * np.log1p(-q)
    u = 2.0 + float(np.real(lambertw(-2.0 * math.exp(-2.0), 0)))
    assert u == pytest.approx(2.0 * (1.0 - math.exp(-u)), rel=1e-12)
    x_star = R - lam * u
    step = 0.5
    r_min = np.arange(20.0, 99.0, step)
    r_max = np.array([60.0, 80.0, 90.0, R + 1e-9, 120.0])
    g = T.scan_window(sig_r, n, bkg_r, np.full(n, 1e-3), r_min, r_max)
    tc = _tcfg(fom="s_over_sqrt_b", signal_sigma=1.0, lumi=1.0)
    _k, i, j, _f = T.best_point([g], tc)
    assert abs(r_min[i] - x_star) <= step, (r_min[i], x_star)
    assert r_max[j] >= R


def test_scan_window_counts_half_open_interval():
    g = T.scan_window([1.0, 2.0, 3.0], 10, [1.0, 2.5], [0.5, 2.0], [1.0, 2.0], [2.0, 3.5])
    # [1, 2): signal 1 -> eff 0.1, background 0.5; [1, 3.5): 3 -> 0.3, 2.5; [2, 2): invalid
    np.testing.assert_allclose(g["eff"], [[0.1, 0.3], [0.0, 0.2]])
    np.testing.assert_allclose(g["bkg"], [[0.5, 2.5], [0.0, 2.0]])
    np.testing.assert_array_equal(g["valid"], [[True, True], [False, True]])
    np.testing.assert_array_equal(g["n_mc"], [[1, 2], [0, 1]])


def _cands(r, m, w=None):
    n = len(r)
    return {"sel": np.ones(n, dtype=bool), "r": np.asarray(r, float), "m": np.asarray(m, float),
            "m_pipi": np.full(n, 2.0), "m_ppi": np.full(n, 3.0), "m_pip": np.full(n, 3.0),
            "w": np.ones(n) if w is None else np.asarray(w, float)}


def test_tune_mass_zero_background_is_finite_and_flagged():
    rng = np.random.default_rng(3)
    s = _cands(rng.uniform(1, 20, 5000), rng.normal(1.0, 0.01, 5000))
    b = _cands(np.array([5.0]), np.array([5.0]), [0.7])  # far outside the mass window
    b["w1"] = 0.7
    tc = _tcfg(masses=(1.0,), r_min=(1.0, 2.0), r_max=(10.0, 20.0), windows=(1.0, 2.0),
               signal_events=10000, min_mc_events=10)
    row = T.tune_mass(1.0, s, {"x": b}, tc, 0.7, "pi_pi_pi0")
    assert row["bkg"] == 0.0 and row["low_mc"] == 1 and math.isfinite(row["fom"])
    assert row["bkg_err"] == pytest.approx(T.ZERO_EVENT_BOUND * 0.7)
    assert row["fom"] == pytest.approx(row["eff"] / 1.5)
    assert row["eff_err"] == pytest.approx(math.sqrt(row["eff"] * (1 - row["eff"]) / 10000))
    # resolution: half the central 68 % interval of a Gaussian is its sigma
    assert row["sigma_m"] == pytest.approx(0.01, rel=0.05)


def _raw(**kw):
    raw = {"masses": ["0.5 GeV", "0.8 GeV"], "r_min": ["1 cm", "2 cm"], "r_max": ["10 cm"],
           "lumi": "1 ab-1", "fom": "punzi"}
    raw.update(kw)
    return raw


def test_lumi_and_grid_parsing():
    tc = T.parse_tuning(_raw(r_min={"start": "1 mm", "stop": "2 cm", "points": 20}),
                        "t.toml", species=("ks",))
    assert tc.lumi == pytest.approx(1000.0)  # 1 ab^-1 = 1000 fb^-1
    assert tc.r_min[0] == pytest.approx(0.1) and tc.r_min[-1] == pytest.approx(2.0)
    assert len(tc.r_min) == 20 and tc.background_events == {"ks": 200000}


@pytest.mark.parametrize("over, key", [
    ({"masses": []}, "tuning.masses"),
    ({"r_min": []}, "tuning.r_min"),
    ({"r_min": ["10 cm", "12 cm"], "r_max": ["5 cm", "10 cm"]}, "tuning.r_min"),
    ({"r_min": {"start": 2.0, "stop": 1.0, "points": 5}}, "tuning.r_min.stop"),
    ({"background_events": 0}, "tuning.background_events"),
    ({"background_events": {"ks": 0}}, "tuning.background_events.ks"),
    ({"fom": "significance"}, "tuning.fom"),
    ({"fom": "s_over_sqrt_b"}, "tuning.signal_sigma"),
    ({"lumi": "1 parsec"}, "tuning.lumi"),
    ({"windows": [0.0]}, "tuning.windows"),
    ({"punzi_a": -1}, "tuning.punzi_a"),
    ({"r_mim": [1.0]}, "tuning.r_mim"),
])
def test_bad_tuning_config(over, key):
    with pytest.raises(ConfigError) as exc:
        T.parse_tuning(_raw(**over), "t.toml", species=("ks",))
    assert exc.value.key == key
    assert key in str(exc.value)


_SMALL = """
[run]
seed = 3
[beams]
e_minus = "6.60 GeV"
e_plus = "4.25 GeV"
sigma_z = "0.4 mm"
[production]
process = "b_meson"
[llp]
mass = "0.6 GeV"
ctau = "5 cm"
channel = "pi_pi_pi0"
[detector]
geometry = "{geo}"
[selection]
r_min = "0.2 cm"
r_max = "60 cm"
z_min = "-60 cm"
z_max = "120 cm"
[backgrounds]
sigma_ref = "3.5 nb"
[backgrounds.kl]
yield = 0.5
p_mean = "0.7 GeV"
force_decay = "80 cm"
[backgrounds.combo]
yield = 1.0
vertex = "lambda"
p_mean = "0.7 GeV"
[tuning]
masses = ["0.55 GeV", "1.0 GeV"]
r_min = ["0.2 cm", "1 cm", "3 cm"]
r_max = ["20 cm", "60 cm"]
windows = [1.0, 2.0]
lumi = "1 fb-1"
signal_events = 4000
background_events = 4000
"""


def test_cli_end_to_end_and_reproducible(tmp_path):
    import argparse

    from toymc.cli import tune as tuning_cli

    cfgp = tmp_path / "t.toml"
    cfgp.write_text(_SMALL.format(geo=str(ROOT / "geometries" / "demo.toml")))
    parser = argparse.ArgumentParser()
    tuning_cli.register(parser.add_subparsers())
    outs = []
    for name in ("a", "b"):
        args = parser.parse_args(["tune-cuts", str(cfgp), "-q", "-o", str(tmp_path / name)])
        assert args.func(args) == 0
        outs.append(json.loads((tmp_path / f"{name}.json").read_text())["rows"])
    assert outs[0] == outs[1]
    assert (tmp_path / "a.png").stat().st_size > 0
    head = (tmp_path / "a.csv").read_text().splitlines()[0].split(",")
    assert head == [c[0] for c in T.TABLE_COLUMNS]
    rows = outs[0]
    assert [r["mass"] for r in rows] == [0.55, 1.0]
    for r in rows:
        # the optimum is a cell of the configured grid, and the row's numbers follow from
        # its eff and bkg: Punzi eps/(a/2 + sqrt(B)) with the default a = 3 (physics/0308063,
        # eq. 7, from memory), the binomial error, the window m_center +- window * sigma_m
        assert r["r_min"] in (0.2, 1.0, 3.0) and r["r_max"] in (20.0, 60.0)
        assert r["window"] in (1.0, 2.0)
        assert r["fom"] == pytest.approx(r["eff"] / (1.5 + math.sqrt(r["bkg"])), rel=1e-12)
        assert r["eff_err"] == pytest.approx(math.sqrt(r["eff"] * (1 - r["eff"]) / 4000),
                                             rel=1e-12)
        assert r["m_low"] == pytest.approx(r["m_center"] - r["window"] * r["sigma_m"])
        assert r["m_high"] == pytest.approx(r["m_center"] + r["window"] * r["sigma_m"])
        assert r["bkg"] == pytest.approx(sum(r["bkg_species"].values()), rel=1e-12, abs=1e-300)
    # a different seed changes the samples
    args = parser.parse_args(["tune-cuts", str(cfgp), "-q", "--seed", "4", "-o",
                              str(tmp_path / "c")])
    args.func(args)
    assert json.loads((tmp_path / "c.json").read_text())["rows"] != outs[0]


def test_mass_outside_channel_range_names_the_key(tmp_path):
    cfgp = tmp_path / "t.toml"
    text = _SMALL.format(geo=str(ROOT / "geometries" / "demo.toml")).replace(
        'masses = ["0.55 GeV", "1.0 GeV"]', 'masses = ["0.55 GeV", "0.3 GeV"]')
    cfgp.write_text(text)
    with pytest.raises(ConfigError) as exc:
        T.load_tuning(cfgp)
    assert exc.value.key == "tuning.masses[1]"


def test_demo_config_parses():
    _cfg, tc, bc = T.load_tuning(ROOT / "configs" / "tune_alp_3pi.toml")
    assert len(tc.masses) == 10 and tc.lumi == pytest.approx(1000.0)
    assert set(bc.species) == {"ks", "kl", "lambda", "combo"}


@pytest.fixture(scope="module")
def detector():
    from toymc.config.geometry import load_geometry, parse_selection
    from toymc.detector import respond

    geo = load_geometry(ROOT / "geometries" / "demo.toml")
    sel = parse_selection({"r_min": 0.0, "r_max": 60.0, "z_min": -60.0, "z_max": 120.0}, None,
                          geo)
    return geo, (lambda blk, rng: respond(blk, geo, sel, rng))


@pytest.mark.parametrize("species, channel, column", [
    ("ks", "pi_pi", "m"), ("ks", "pi_pi", "m_pipi"), ("lambda", "pi_pi", "lambda"),
    ("kl", "pi_pi_pi0", "m"), ("conversion", "e_e", "m")])
def test_candidate_mass_equals_detector_mass_under_true_hypothesis(detector, species, channel,
                                                                   column):
    """Where the signal hypothesis is the true one, the candidate mass is the detector's
    rec_m (all found daughters with their PDG masses, toymc.detector.response)."""
    from toymc.engine import backgrounds as B
    from toymc.physics.production.beams import Beams

    geo, det = detector
    beams = Beams(6.6, 4.25, 0.045, 15e-4, 0.5e-4, 0.04)
    sp = B.Species(species, 1.0, 1.0, 0.7, force_decay=60.0 if species == "kl" else 0.0,
                   anti_fraction=0.5)
    blk = B.generate_species(sp, beams, geo.tracking_layers(), 5, 3000, det)
    c = candidates(blk, channel)
    ok = c["sel"]
    assert ok.sum() > 300
    if column == "lambda":  # p pi- for Lambda, pi+ pbar for anti-Lambda
        val = np.where(blk.event["llp_pdg"] > 0, c["m_ppi"], c["m_pip"])
    else:
        val = c[column]
    np.testing.assert_allclose(val[ok], blk.event["rec_m"][ok], rtol=1e-9, atol=1e-12)


def test_vetoes_remove_ks_and_lambda_except_at_the_ks_mass_in_pi_pi():
    from toymc.physics import constants as C

    rng = np.random.default_rng(4)
    n = 2000
    s = _cands(rng.uniform(1, 20, n), rng.normal(1.0, 0.01, n))
    ks = _cands(rng.uniform(1, 20, n), rng.normal(1.0, 0.01, n))
    ks["m_pipi"][:] = C.M_KS
    lam = _cands(rng.uniform(1, 20, n), rng.normal(1.0, 0.01, n))
    lam["m_ppi"][: n // 2] = C.M_LAMBDA
    lam["m_pip"][n // 2:] = C.M_LAMBDA
    for b in (ks, lam):
        b["w1"] = 1.0
    tc = _tcfg(masses=(1.0,), r_min=(1.0,), r_max=(20.0,), windows=(2.0,), signal_events=n)
    row = T.tune_mass(1.0, s, {"ks": ks, "lambda": lam}, tc, 1.0, "pi_pi_pi0")
    assert row["bkg"] == 0.0 and row["ks_veto"] == 1
    # a pi_pi signal at the K_S mass: the K_S veto would remove the signal, so it is off
    s2 = _cands(rng.uniform(1, 20, n), rng.normal(C.M_KS, 0.003, n))
    s2["m_pipi"] = s2["m"]
    ks2 = _cands(rng.uniform(1, 20, n), rng.normal(C.M_KS, 0.003, n))
    ks2["m_pipi"] = ks2["m"]
    ks2["w1"] = 1.0
    row2 = T.tune_mass(C.M_KS, s2, {"ks": ks2}, tc, 1.0, "pi_pi")
    assert row2["ks_veto"] == 0 and row2["eff"] > 0.5 and row2["bkg"] > 0


def test_electron_demo_config_parses_with_conversions():
    cfg, tc, bc = T.load_tuning(ROOT / "configs" / "tune_darkphoton_ee.toml")
    assert cfg.llp.channel == "e_e" and "conversion" in bc.species
    assert tc.background_events["conversion"] == 600000


# ---------------------------------------------------------- hand-made candidates, hand sums
# Signal: 30 selected candidates at these radii (cm) and 5 unselected ones that must not
# count; 40 signal events generated.  Radii on the grid edges (2, 4, 5, 8, 30 cm) test the
# half-open window r_min <= r < r_max.
_SIG_R = [0.5, 1.0, 1.5, 2.0, 2.5, 3.0, 3.5, 4.0, 4.5, 5.0, 5.5, 6.0, 6.5, 7.0, 7.5, 8.0,
          9.0, 10.0, 12.0, 14.0, 16.0, 18.0, 20.0, 22.0, 25.0, 28.0, 29.9, 30.0, 35.0, 40.0]
_SIG_GEN = 40
# Background species: (radius cm, expected events, candidate mass GeV, selected)
_BKG = {
    "a": [(0.3, 4.0, 1.0, True), (1.9, 0.5, 1.0, True), (2.0, 0.25, 1.0, True),
          (3.3, 0.2, 1.0, True), (7.9, 0.1, 1.0, True), (8.0, 0.3, 1.0, True),
          (15.0, 0.05, 1.0, True), (29.0, 0.02, 1.0, True),
          (5.0, 100.0, 3.0, True),     # outside the mass window
          (6.0, 50.0, 1.0, False)],    # not selected
    "b": [(1.0, 2.0, 1.0, True), (4.0, 0.01, 1.0, True), (6.0, 0.03, 1.0, True),
          (10.0, 0.07, 1.0, True), (40.0, 1.0, 1.0, True)],
}
_R_MIN = (0.0, 2.0, 5.0)
_R_MAX = (4.0, 8.0, 30.0)


def _hand_inputs():
    n = len(_SIG_R)
    # signal masses spread by 0.5 MeV around 1 GeV; the 50-sigma window holds them all, and
    # the in-window backgrounds at 1 GeV; the 3 GeV one is far outside
    m = 1.0 + 5e-4 * np.sin(np.arange(n))
    r = np.array(_SIG_R + [3.0, 6.0, 9.0, 1.0, 20.0])
    s = _cands(r, np.concatenate([m, np.full(5, 1.0)]))
    s["sel"][n:] = False
    bk = {}
    for name, rows in _BKG.items():
        rr, ww, mm, ss = (np.array(v) for v in zip(*rows))
        c = _cands(rr, mm, ww)
        c["sel"] = ss.astype(bool)
        c["w1"] = 0.2 if name == "a" else 0.1
        bk[name] = c
    return s, bk


def _hand_cells():
    """(r_min, r_max) -> (eff, B, sum w^2, {species: B}) by explicit sums over the lists."""
    cells = {}
    for lo in _R_MIN:
        for hi in _R_MAX:
            if not lo < hi:
                continue
            eff = sum(1 for r in _SIG_R if lo <= r < hi) / _SIG_GEN
            per = {n: sum(w for r, w, m, sel in rows if sel and m == 1.0 and lo <= r < hi)
                   for n, rows in _BKG.items()}
            w2 = sum(w * w for rows in _BKG.values() for r, w, m, sel in rows
                     if sel and m == 1.0 and lo <= r < hi)
            cells[(lo, hi)] = (eff, sum(per.values()), w2, per)
    return cells


def test_scan_window_grid_equals_hand_sums():
    s, bk = _hand_inputs()
    ok = s["sel"]
    br = np.concatenate([c["r"][c["sel"] & (c["m"] < 2)] for c in bk.values()])
    bw = np.concatenate([c["w"][c["sel"] & (c["m"] < 2)] for c in bk.values()])
    g = T.scan_window(s["r"][ok], _SIG_GEN, br, bw, _R_MIN, _R_MAX)
    cells = _hand_cells()
    for i, lo in enumerate(_R_MIN):
        for j, hi in enumerate(_R_MAX):
            assert g["valid"][i, j] == ((lo, hi) in cells)
            if (lo, hi) not in cells:
                continue
            eff, b, w2, _per = cells[(lo, hi)]
            assert g["eff"][i, j] == pytest.approx(eff, rel=1e-15), (lo, hi)
            assert g["bkg"][i, j] == pytest.approx(b, rel=1e-12, abs=1e-15), (lo, hi)
            assert g["bkg_w2"][i, j] == pytest.approx(w2, rel=1e-12, abs=1e-15), (lo, hi)


def test_tune_mass_punzi_optimum_is_the_hand_maximum():
    """Punzi figure of merit eps/(a/2 + sqrt(B)) (physics/0308063, eq. 7, from memory),
    evaluated by hand on every cell; the row must be the cell of the largest value."""
    s, bk = _hand_inputs()
    a = 3.0
    tc = _tcfg(masses=(1.0,), r_min=_R_MIN, r_max=_R_MAX, windows=(50.0,),
               signal_events=_SIG_GEN, fom="punzi", punzi_a=a, min_mc_events=3)
    row = T.tune_mass(1.0, s, bk, tc, 0.0, "pi_pi_pi0")
    cells = _hand_cells()
    fom = {k: eff / (a / 2 + math.sqrt(b)) for k, (eff, b, _w2, _p) in cells.items()}
    best = max(fom, key=fom.get)
    # the hand optimum is neither the widest window nor the one of the highest efficiency
    assert best != (0.0, 30.0) and best != max(cells, key=lambda k: cells[k][0])
    eff, b, w2, per = cells[best]
    assert (row["r_min"], row["r_max"]) == best
    assert row["eff"] == pytest.approx(eff, rel=1e-15)
    assert row["bkg"] == pytest.approx(b, rel=1e-12)
    assert row["fom"] == pytest.approx(fom[best], rel=1e-12)
    assert row["bkg_err"] == pytest.approx(math.sqrt(w2), rel=1e-12)
    assert row["bkg_mc"] == pytest.approx(b * b / w2, rel=1e-12)
    assert row["low_mc"] == int(b * b / w2 < 3)
    assert row["bkg_species"] == pytest.approx(per, rel=1e-12)
    assert row["eff_err"] == pytest.approx(math.sqrt(eff * (1 - eff) / _SIG_GEN), rel=1e-12)
    assert row["m_low"] < 1.0 - 5e-4 and row["m_high"] > 1.0 + 5e-4 and row["m_high"] < 3.0


@pytest.mark.parametrize("cl, unc", [(0.9, 0.0), (0.95, 0.3)])
def test_tune_mass_upper_limit_optimum_is_the_hand_minimum(cl, unc):
    """upper_limit: the expected CLs limit for the count n = B
    (toymc.analysis.stats.expected_upper_limit, asimov, checked against an independent
    computation in tests/analysis/test_stats.py) divided by eps, minimised over the cells."""
    from toymc.analysis.stats import expected_upper_limit

    s, bk = _hand_inputs()
    tc = _tcfg(masses=(1.0,), r_min=_R_MIN, r_max=_R_MAX, windows=(50.0,),
               signal_events=_SIG_GEN, fom="upper_limit", cl=cl, background_uncertainty=unc)
    row = T.tune_mass(1.0, s, bk, tc, 0.0, "pi_pi_pi0")
    cells = _hand_cells()
    ul = {k: float(expected_upper_limit(b, cl, "asimov", unc)) / eff
          for k, (eff, b, _w2, _p) in cells.items() if eff > 0}
    best = min(ul, key=ul.get)
    assert (row["r_min"], row["r_max"]) == best
    assert row["fom"] == pytest.approx(ul[best], rel=1e-9)
    assert row["eff"] == pytest.approx(cells[best][0], rel=1e-15)
    assert row["bkg"] == pytest.approx(cells[best][1], rel=1e-12)
