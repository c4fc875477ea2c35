"""What a new user meets on the command line: a closed pipe, warnings, errors before any
progress bar, default output names, and the messages quoted in the README."""

import os
import subprocess
import sys
from pathlib import Path

import pytest

import toymc

ROOT = Path(__file__).resolve().parents[1]
CONFIGS = ROOT / "configs"


def _env(tmp_path):
    return dict(os.environ, PYTHONPATH=str(ROOT), COLUMNS="80")


def _closed_pipe_run(argv, tmp_path):
    """Run toymc with stdout a pipe whose reader has gone before toymc writes."""
    p = subprocess.Popen([sys.executable, "-m", "toymc", *map(str, argv)], cwd=tmp_path,
                         env=_env(tmp_path), stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    p.stdout.close()  # the only read end: every write of toymc now fails with EPIPE
    with p.stderr:
        err = p.stderr.read().decode()
    return p.wait(timeout=300), err


@pytest.fixture(scope="module")
def small_file(tmp_path_factory):
    path = tmp_path_factory.mktemp("pipe") / "dp.root"
    toymc.run(CONFIGS / "darkphoton_mumu.toml", output=str(path), events=2000, seed=3)
    return path


@pytest.mark.parametrize("argv", [
    ("info", "--json", "FILE"),
    ("info", "FILE"),
    ("cutflow", "FILE"),
    ("--help",),
    ("reach", "--help"),
], ids=lambda a: " ".join(a))
def test_closed_stdout_ends_quietly(argv, small_file, tmp_path):
    rc, err = _closed_pipe_run([small_file if a == "FILE" else a for a in argv], tmp_path)
    assert err == "", err
    assert rc == 141


def _toymc(argv, cwd):
    return subprocess.run([sys.executable, "-m", "toymc", *map(str, argv)], cwd=cwd,
                          env=_env(cwd), capture_output=True, text=True, timeout=600)


def test_warnings_are_one_clean_line(tmp_path):
    # a map covering only part of the reach grid: toymc.reach warns about the rest
    rows = ["mass_gev,ctau_cm,efficiency"] + [f"{m},{c},0.1" for m in (0.3, 0.6)
                                               for c in (1.0, 100.0)]
    (tmp_path / "map.csv").write_text("\n".join(rows) + "\n")
    r = _toymc(["reach", CONFIGS / "reach_dark_photon.toml", "--efficiency", "map",
                "--map", "map.csv", "--no-plot", "-o", "out"], tmp_path)
    assert r.returncode == 0, r.stderr
    lines = r.stderr.splitlines()
    assert len(lines) == 1, r.stderr
    assert lines[0].startswith("toymc: warning: reach: ")
    assert "outside the efficiency map" in lines[0]
    assert "UserWarning" not in r.stderr and ".py:" not in r.stderr
