"""``toymc fold`` and the per-event decay weights (toymc.analysis.fold_sample).

References:
* exponential decay law, P(L in dL) = (1/lambda) exp(-L/lambda) dL with
  lambda = beta gamma c tau (PDG review "Kinematics", sec. 40.4.1);
* scipy.integrate.quad for the integral of that density times the DETECTOR's
  profile (toymc.detector.profile.profile_efficiency) along the flight line:
  this checks the mapping of the [selection] profile to the fold
  (vertexing.fold_profile), which tests/detector/test_fold.py does not cover;
* the CSV is compared with toymc.detector.fold.fold_efficiency on the same events.
"""

import argparse
import csv
import itertools
import math

import numpy as np
import pytest
from _demo import ROOT
from scipy.integrate import quad
from scipy.optimize import brentq

from toymc.analysis.fold_sample import (
    decay_weight,
    fold_inputs,
    parse_ctau_grid,
    truth_sample,
)
from toymc.cli.fold import register, run_fold
from toymc.config import loader as config
from toymc.detector.fold import fold_efficiency
from toymc.detector.profile import profile_efficiency
from toymc.detector.vertexing import fold_profile
from toymc.errors import ConfigError, ToymcError

MUMU = ROOT / "configs" / "darkphoton_mumu.toml"
THREEPI = ROOT / "configs" / "alp_3pi_bka.toml"


def _parse(argv):
    p = argparse.ArgumentParser(prog="toymc")
    register(p.add_subparsers(dest="command"))
    return p.parse_args(argv)


def test_grid_parsing():
    g = parse_ctau_grid("1e-3:1e5:9")
    assert g.size == 9 and g[0] == pytest.approx(1e-3) and g[-1] == pytest.approx(1e5)
    assert np.allclose(np.diff(np.log10(g)), 1.0)


@pytest.mark.parametrize("text", ["1:100:1", "0:10:5", "-1:10:5", "10:1:5", "5:5:3", "a:b:c",
                                  "1:10", "1:inf:3", "1:10:2.5", "1:10:3:4", ""])
def test_bad_grid(text):
    with pytest.raises(ConfigError) as exc:
        parse_ctau_grid(text)
    assert "--ctau" in str(exc.value) and "\n" not in str(exc.value)


def test_fold_command_csv_matches_fold_efficiency(tmp_path, capsys):
    args = _parse(["fold", str(MUMU), "--ctau", "0.1:1000:7", "--events", "3000",
                   "--seed", "7", "-o", str(tmp_path)])
    assert args.func(args) == 0
    printed = capsys.readouterr().out
    with open(tmp_path / "fold_darkphoton_mumu.csv") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) == 7
    ctau = np.array([float(r["ctau_cm"]) for r in rows])
    eff = np.array([float(r["efficiency"]) for r in rows])
    err = np.array([float(r["error"]) for r in rows])
    assert np.allclose(ctau, np.geomspace(0.1, 1000, 7), rtol=1e-14)
    cfg = config.load(MUMU)
    ev = truth_sample(cfg, 3000, 7)
    sel = cfg.selection
    ref, ref_err = fold_efficiency(*fold_inputs(ev), ctau, sel.r_min, sel.r_max, sel.z_min,
                                   sel.z_max, fold_profile(sel, cfg.detector))
    np.testing.assert_array_equal(eff, ref)
    np.testing.assert_array_equal(err, ref_err)
    assert (tmp_path / "fold_darkphoton_mumu.png").stat().st_size > 10_000
    assert f"{eff[3]:12.6g}".strip() in printed


def test_fold_bad_grid_and_config(tmp_path):
    with pytest.raises(ConfigError):
        run_fold(MUMU, [10.0, 1.0], events=100, output_dir=tmp_path)
    with pytest.raises(ConfigError):
        run_fold(MUMU, [], events=100, output_dir=tmp_path)
    text = MUMU.read_text()
    text = text[:text.index("[detector]")]
    p = tmp_path / "truth_only.toml"
    p.write_text(text)
    with pytest.raises(ToymcError) as exc:
        run_fold(p, [1.0, 10.0], events=100, output_dir=tmp_path)
    assert "selection" in str(exc.value)


def test_decay_weight_mean_against_decays_drawn_by_hand():
    """The mean per-event decay weight is the selected fraction of decays: checked against
    decay points drawn here (numpy's exponential, L = beta gamma c*tau x Exp(1) along each
    LLP's line), counted when inside the fiducial window and weighted by the demo's linear
    profile eps(r) = eps0 (r_max - r)/(r_max - r_min), written out by hand; tolerance five
    standard errors of the drawn sample."""
    cfg = config.load(THREEPI)
    ev = truth_sample(cfg, 2000, 3)
    sel = cfg.selection
    assert sel.profile.kind == "linear"
    x0, y0, z0, ux, uy, uz, bg = fold_inputs(ev)
    rng = np.random.default_rng(20261205)
    k = 200
    for ct in (0.5, 20.0, 3000.0):
        w = decay_weight(ev, sel, cfg.detector, ct)
        assert w.shape == (2000,) and np.all((w >= 0) & (w <= 1))
        L = (bg * ct)[:, None] * rng.standard_exponential((2000, k))
        r = np.hypot(x0[:, None] + L * ux[:, None], y0[:, None] + L * uy[:, None])
        z = z0[:, None] + L * uz[:, None]
        inside = (r >= sel.r_min) & (r < sel.r_max) & (z >= sel.z_min) & (z < sel.z_max)
        eps = sel.profile.eps0 * (sel.r_max - r) / (sel.r_max - sel.r_min)
        x = np.where(inside, eps, 0.0)
        err = x.std() / math.sqrt(x.size)
        assert abs(w.mean() - x.mean()) < 5 * err + 1e-12, (ct, w.mean(), x.mean(), err)
        # the fold command's function gives the same mean (one kernel behind both)
        eff, _ = fold_efficiency(*fold_inputs(ev), [ct], sel.r_min, sel.r_max, sel.z_min,
                                 sel.z_max, fold_profile(sel, cfg.detector))
        assert w.mean() == pytest.approx(eff[0], rel=1e-12, abs=1e-15)


def test_decay_weight_against_quad_with_detector_profile():
    """Weight of single events = quad of (1/lambda) e^(-L/lambda) eps_det(r(L)) [L in window]."""
    cfg = config.load(THREEPI)
    ev = truth_sample(cfg, 50, 11)
    sel = cfg.selection
    ct = 15.0
    w = decay_weight(ev, sel, cfg.detector, ct)
    x0, y0, z0, ux, uy, uz, bg = fold_inputs(ev)
    lam = bg * ct
    for i in range(10):
        def r_of(L, i=i):
            return math.hypot(x0[i] + L * ux[i], y0[i] + L * uy[i])

        def margin(L, i=i):  # > 0 inside the window, continuous in L
            z = z0[i] + L * uz[i]
            r = r_of(L)
            return min(r - sel.r_min, sel.r_max - r, z - sel.z_min, sel.z_max - z)

        def f(L, i=i):
            return math.exp(-L / lam[i]) / lam[i] * float(
                profile_efficiency(sel.profile, np.array([r_of(L)]))[0])

        # window edges along the line: sign changes of the margin, refined by brentq
        grid = np.linspace(0.0, 400.0, 4001)
        m = np.array([margin(L) for L in grid])
        cuts = [0.0] + [brentq(margin, grid[k], grid[k + 1], xtol=1e-13)
                        for k in np.nonzero(np.sign(m[1:]) != np.sign(m[:-1]))[0]] + [400.0]
        val = sum(quad(f, a, b, epsabs=1e-13, epsrel=1e-12)[0]
                  for a, b in itertools.pairwise(cuts) if margin(0.5 * (a + b)) > 0)
        assert w[i] == pytest.approx(val, rel=1e-9, abs=1e-13)


def test_decay_weight_missing_columns():
    cfg = config.load(MUMU)
    with pytest.raises(ConfigError):
        decay_weight({"llp_vx": np.zeros(2)}, cfg.selection, cfg.detector, 1.0)
