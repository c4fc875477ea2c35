"""Grid scans: executors agree, kill and resume, mixture reweighting, bad input."""

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
from _demo import ROOT

from toymc.analysis.scan import grid_from_config, point_seed, run_scan
from toymc.config import loader as config
from toymc.engine.generator import mixture_density
from toymc.errors import ConfigError, OutputError, ToymcError
from toymc.io.ntuple import read_arrays

GEOM = ROOT / "geometries" / "demo.toml"

TINY = f"""
[run]
seed = 5
[beams]
e_minus = "6.60 GeV"
e_plus = "4.25 GeV"
crossing_angle = "45 mrad"
sigma_x = "15 um"
sigma_y = "0.5 um"
sigma_z = "0.4 mm"
[production]
process = "radiative"
[llp]
mass = "0.5 GeV"
ctau = "1 cm"
channel = "mu_mu"
[detector]
geometry = "{GEOM}"
[selection]
r_min = "1.5 cm"
r_max = "60 cm"
z_min = "-40 cm"
z_max = "120 cm"
profile = {{ kind = "linear", eps0 = 0.9 }}
[scan]
masses = ["0.4 GeV", "0.9 GeV"]
ctau_min = "0.3 cm"
ctau_max = "300 cm"
ctau_points = 3
events_per_mass = EVENTS
"""


def _cfg(tmp_path, events=8000, extra=""):
    p = tmp_path / "scan.toml"
    p.write_text(TINY.replace("EVENTS", str(events)) + extra)
    return p


def _map(outdir):
    return (Path(outdir) / "efficiency_map.csv").read_text()


def test_point_seeds_depend_on_coordinates_only():
    assert point_seed(5, 0.4) == point_seed(5, 0.4)
    assert point_seed(5, 0.4) != point_seed(5, 0.9)
    assert point_seed(5, 0.4) != point_seed(6, 0.4)
    assert point_seed(5, 0.4, 1.0) != point_seed(5, 0.4)


def test_one_worker_two_workers_and_dask_agree(tmp_path):
    distributed = pytest.importorskip("distributed")
    cfg = _cfg(tmp_path)
    run_scan(cfg, tmp_path / "w1", workers=1)
    run_scan(cfg, tmp_path / "w2", workers=2)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster:
        run_scan(cfg, tmp_path / "dask", scheduler=cluster.scheduler_address)
    m1 = _map(tmp_path / "w1")
    assert m1 == _map(tmp_path / "w2") == _map(tmp_path / "dask")
    rows = m1.strip().splitlines()
    assert len(rows) == 1 + 2 * 3
    # the sample files hold the same events too
    a = read_arrays(tmp_path / "w1" / "points" / "m0.4_ref.root", ["llp_ct", "cut_mass"])
    b = read_arrays(tmp_path / "dask" / "points" / "m0.4_ref.root", ["llp_ct", "cut_mass"])
    assert np.array_equal(a.llp_ct, b.llp_ct) and np.array_equal(a.cut_mass, b.cut_mass)


def test_kill_and_resume_equals_uninterrupted(tmp_path):
    cfg = _cfg(tmp_path, events=30000)
    whole = tmp_path / "whole"
    run_scan(cfg, whole, workers=1)
    part = tmp_path / "part"
    proc = subprocess.Popen([sys.executable, "-m", "toymc", "scan", str(cfg), "-o", str(part),
                             "-j", "1", "-q"], stdout=subprocess.DEVNULL,
                            stderr=subprocess.DEVNULL)
    deadline = time.monotonic() + 240
    # kill as soon as the first mass is in the index and the second is being written
    while time.monotonic() < deadline and proc.poll() is None:
        idx = part / "index.json"
        if idx.exists() and json.loads(idx.read_text())["points"]:
            break
        time.sleep(0.05)
    if proc.poll() is not None:
        pytest.fail("the scan finished before it could be interrupted")
    os.kill(proc.pid, signal.SIGKILL)
    proc.wait()
    done = json.loads((part / "index.json").read_text())["points"]
    assert {r["mass_index"] for r in done} == {0}
    # nothing truncated under a final name: every final .root file is complete
    for f in (part / "points").glob("*.root"):
        assert f.name == "m0.4_ref.root"
    run_scan(cfg, part, workers=1, resume=True)
    a = json.loads((whole / "index.json").read_text())
    b = json.loads((part / "index.json").read_text())
    for d in (a, b):
        d.pop("seconds", None)
    assert a == b
    assert _map(whole) == _map(part)
    for f in sorted((whole / "points").glob("*.root")):
        x, y = read_arrays(f), read_arrays(part / "points" / f.name)
        for col in ("llp_ct", "llp_px", "vtx_r", "cut_mass"):
            assert np.array_equal(np.asarray(x[col]), np.asarray(y[col]), equal_nan=True), col
    assert not list((part / "points").glob(".*.tmp"))


def test_mixture_reweighting_agrees_with_direct_generation(tmp_path):
    """Mixture weights f_1(t)/g(t) (importance sampling) vs samples made at c*tau_1.

    Both efficiencies are estimates of the same number: their difference over the
    combined error is a standard normal variable; |z| < 4 for each of 3 points
    (two-sided tail 6e-5 each).
    """
    cfg = _cfg(tmp_path, events=40000,
               extra="").read_text().replace("ess_min_fraction", "x")
    p = tmp_path / "mix.toml"
    p.write_text(cfg)
    idx = run_scan(p, tmp_path / "mix", workers=1)
    base = config.load(p)
    for row in idx["points"]:
        if row["mass_index"] != 0:
            continue
        c = base.with_llp(mass=row["mass"], ctau=row["ctau"]).with_run(events=40000, seed=99)
        import toymc

        ev = toymc.generate(c)
        k = int(np.sum(ev.cut_mass))
        e = k / len(ev)
        err = np.sqrt(e * (1 - e) / len(ev))
        z = (row["efficiency"] - e) / np.hypot(err, row["error"])
        assert abs(z) < 4, (row["ctau"], row["efficiency"], e, z)


def test_mixture_density_is_normalised():
    # the mixture density integrates to 1 (scipy quad, exponential-law normalisation)
    from scipy.integrate import quad

    comps = [0.3, 3.0, 30.0]
    val, _ = quad(lambda t: float(mixture_density(t, comps)), 0, np.inf, limit=200)
    assert val == pytest.approx(1.0, rel=1e-8)


def test_grid_errors(tmp_path):
    p = _cfg(tmp_path)
    bad = p.read_text().replace('masses = ["0.4 GeV", "0.9 GeV"]', 'masses = ["0.4 GeV", "0.4 GeV"]')
    q = tmp_path / "dup.toml"
    q.write_text(bad)
    with pytest.raises(ConfigError, match="scan.masses"):
        grid_from_config(config.load(q))
    single = p.read_text().replace('masses = ["0.4 GeV", "0.9 GeV"]', 'masses = ["0.4 GeV"]')
    q.write_text(single)
    with pytest.raises(ConfigError, match="scan.masses"):
        grid_from_config(config.load(q))
    q.write_text(p.read_text().replace('ctau_min = "0.3 cm"', 'ctau_min = "3000 cm"'))
    with pytest.raises(ConfigError, match="scan.ctau_min"):
        grid_from_config(config.load(q))


def test_resume_with_another_config_is_refused(tmp_path):
    p = _cfg(tmp_path, events=3000)
    run_scan(p, tmp_path / "s", workers=1)
    q = tmp_path / "other.toml"
    q.write_text(p.read_text().replace('seed = 5', 'seed = 6'))
    with pytest.raises(ConfigError, match=r"run.seed: 6 here vs 5 in the scan"):
        run_scan(q, tmp_path / "s", workers=1, resume=True)
    with pytest.raises(OutputError, match="--resume"):
        run_scan(p, tmp_path / "s", workers=1)


def test_unreachable_scheduler_fails_fast(tmp_path):
    pytest.importorskip("distributed")
    p = _cfg(tmp_path, events=1000)
    t0 = time.monotonic()
    with pytest.raises(ToymcError, match="cannot reach the Dask scheduler"):
        run_scan(p, tmp_path / "s", scheduler="tcp://127.0.0.1:1")
    assert time.monotonic() - t0 < 15


def test_unwritable_output_folder(tmp_path):
    p = _cfg(tmp_path, events=1000)
    blocker = tmp_path / "file"
    blocker.write_text("a file, not a folder")
    with pytest.raises(OutputError, match="not writable"):
        run_scan(p, blocker / "scan", workers=1)
