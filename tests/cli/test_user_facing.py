"""What a new user meets on the command line: a closed pipe, warnings, errors before any
progress bar, default output names, and the messages quoted in the README."""

import os
import subprocess
import sys

import pytest
from _demo import CONFIGS, ROOT

import toymc


def _env(tmp_path):
    return dict(os.environ, PYTHONPATH=str(ROOT / "src"), COLUMNS="80")


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
    # a map covering only part of the reach grid: toymc.analysis.reach warns about the rest
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


def _without_sections(src, dst, *names):
    """Copy a config, dropping whole sections, with its geometry path made absolute."""
    out, skip = [], False
    for line in src.read_text().splitlines():
        if line.startswith("["):
            skip = line.strip("[] ") in names
        if not skip:
            out.append(line.replace('"../geometries/', f'"{ROOT}/geometries/'))
    dst.write_text("\n".join(out) + "\n")
    return dst


def _assert_only_error_line(r, needle):
    assert r.returncode == 2, r.stderr
    # no progress bar: tqdm draws with carriage returns, and clears its line at exit
    assert "\r" not in r.stderr, repr(r.stderr)
    lines = r.stderr.split("\n")
    assert len(lines) == 2 and lines[1] == "", repr(r.stderr)
    assert lines[0].startswith("toymc: error: ") and needle in lines[0], lines[0]


def test_generate_existing_output_error_comes_without_progress_bar(tmp_path):
    (tmp_path / "x.root").write_bytes(b"keep")
    r = _toymc(["generate", CONFIGS / "darkphoton_mumu.toml", "-n", "1000", "-o", "x.root"],
               tmp_path)
    _assert_only_error_line(r, "exists; use --force")
    assert (tmp_path / "x.root").read_bytes() == b"keep"


@pytest.mark.parametrize("source,drop,needle", [
    ("fold", ("detector", "selection"), "selection"),
    ("mc", ("detector", "selection"), "detector.geometry"),
])
def test_reach_input_errors_come_without_progress_bar(source, drop, needle, tmp_path):
    cfg = _without_sections(CONFIGS / "reach_dark_photon.toml", tmp_path / "r.toml", *drop)
    r = _toymc(["reach", cfg, "--efficiency", source, "-o", "out"], tmp_path)
    _assert_only_error_line(r, needle)
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize("prefix,source,expected", [
    ("reach", "configs/reach_dark_photon.toml", "reach_dark_photon"),
    ("reach", "configs/darkphoton_mumu.toml", "reach_darkphoton_mumu"),
    ("scan", "configs/scan_demo.toml", "scan_demo"),
    ("tune", "configs/tune_alp_3pi.toml", "tune_alp_3pi"),
    ("fold", "/a/b/dp_fold.toml", "dp_fold"),
    ("report", "alp_3pi.root", "report_alp_3pi"),
    ("geometry", "geometries/demo.toml", "geometry_demo"),
    ("scan", "reachscan.toml", "scan_reachscan"),  # whole words only
])
def test_default_output_name(prefix, source, expected):
    from toymc.io.names import default_output

    assert default_output(prefix, source) == expected


def _map(tmp_path):
    rows = ["mass_gev,ctau_cm,efficiency"] + [f"{m},{c},0.1" for m in (0.2, 9.0)
                                               for c in (1e-3, 1e9)]
    (tmp_path / "map.csv").write_text("\n".join(rows) + "\n")


def test_reach_default_folder_is_not_doubled(tmp_path):
    _map(tmp_path)
    r = _toymc(["reach", CONFIGS / "reach_dark_photon.toml", "--efficiency", "map", "--map",
                "map.csv", "--no-plot", "-q"], tmp_path)
    assert r.returncode == 0, r.stderr
    assert (tmp_path / "reach_dark_photon" / "reach.csv").is_file()
    assert not (tmp_path / "reach_reach_dark_photon").exists()


def test_scan_default_folder_follows_the_config(tmp_path, monkeypatch, capsys):
    from toymc.cli.main import main

    seen = {}

    def fake_run_scan(config, outdir, **kw):
        seen["outdir"] = outdir
        return {"points": [], "grid": {"ctaus": [1.0]}, "seconds": 0.0}

    monkeypatch.setattr("toymc.analysis.scan.run_scan", fake_run_scan)
    monkeypatch.setattr("toymc.plots.scan.draw_map", lambda index, path: None)
    assert main(["scan", str(CONFIGS / "scan_demo.toml"), "-q"]) == 0
    assert str(seen["outdir"]) == "scan_demo"
    assert "scan_demo" in capsys.readouterr().out


def test_report_fold_and_drawing_default_names(small_file, tmp_path):
    r = _toymc(["report", small_file], tmp_path)
    assert r.returncode == 0, r.stderr
    assert (tmp_path / f"report_{small_file.stem}" / "cutflow.png").is_file()
    cfg = _without_sections(CONFIGS / "darkphoton_mumu.toml", tmp_path / "fold_dp.toml")
    r = _toymc(["fold", cfg, "--ctau", "1:10:2", "-n", "500"], tmp_path)
    assert r.returncode == 0, r.stderr
    assert (tmp_path / "fold_dp.csv").is_file() and (tmp_path / "fold_dp.png").is_file()
    r = _toymc(["draw-geometry", ROOT / "geometries" / "demo.toml"], tmp_path)
    assert r.returncode == 0, r.stderr
    assert (tmp_path / "geometry_demo.png").is_file()


@pytest.mark.parametrize("name,expected", [("mytune.toml", "tune_mytune"),
                                           ("tune_x.toml", "tune_x")])
def test_tuning_default_stem_follows_the_config(name, expected, tmp_path):
    from toymc.analysis.tuning import load_tuning

    src = (CONFIGS / "tune_alp_3pi.toml").read_text()
    text = "\n".join(line for line in src.splitlines() if not line.startswith("output ="))
    p = tmp_path / name
    p.write_text(text.replace('"../geometries/', f'"{ROOT}/geometries/'))
    assert load_tuning(p)[1].output == expected


@pytest.mark.parametrize("bad", ["0", "-3", "nan", "inf", "abc", ""])
def test_fold_single_ctau_must_be_positive_finite(bad):
    from toymc.analysis.fold_sample import parse_ctau_grid
    from toymc.errors import ConfigError

    with pytest.raises(ConfigError):
        parse_ctau_grid(bad)


def test_fold_takes_a_single_ctau(tmp_path):
    import numpy as np

    from toymc.analysis.fold_sample import parse_ctau_grid
    from toymc.cli.fold import run_fold

    assert parse_ctau_grid("20").tolist() == [20.0]
    assert parse_ctau_grid("1e-2").tolist() == [0.01]
    assert parse_ctau_grid("1:100:3").tolist() == pytest.approx([1.0, 10.0, 100.0])
    cfg = CONFIGS / "darkphoton_mumu.toml"
    one = run_fold(cfg, [20.0], events=2000, output_dir=tmp_path / "one", seed=5)
    two = run_fold(cfg, [20.0, 40.0], events=2000, output_dir=tmp_path / "two", seed=5)
    # the same events folded at the same c*tau: the single value is the grid's first point
    assert one["eff"].shape == (1,) and one["eff"][0] == two["eff"][0]
    r = _toymc(["fold", cfg, "--ctau", "20", "-n", "2000", "--seed", "5", "-o", "cli"],
               tmp_path)
    assert r.returncode == 0, r.stderr
    rows = (tmp_path / "cli" / "fold_darkphoton_mumu.csv").read_text().splitlines()
    assert len(rows) == 2 and float(rows[1].split(",")[1]) == float(np.float64(one["eff"][0]))


@pytest.mark.parametrize("section,key,value,units", [
    ("llp", "ctau", '"10 GeV"', "nm, um, micrometer, mm, cm, m, km"),
    ("llp", "ctau", "true", "nm, um, micrometer, mm, cm, m, km"),
    ("llp", "mass", '"3 cm"', "eV, keV, MeV, GeV, TeV"),
    ("beams", "crossing_angle", '"45 urad"', "rad, mrad, deg, degree"),
    ("llp", "ctau_mixture", '["1 cm", "2 GeV"]', "nm, um, micrometer, mm, cm, m, km"),
])
def test_unit_error_says_each_thing_once(section, key, value, units):
    import re

    from toymc.config import loader as config
    from toymc.errors import ConfigError

    text = (CONFIGS / "darkphoton_mumu.toml").read_text()
    text = re.sub(rf"(?m)^{key} = .*$", "", text)
    if key == "ctau_mixture":
        text = re.sub(r"(?m)^ctau = .*$", "", text)
    text = text.replace(f"[{section}]", f"[{section}]\n{key} = {value}", 1)
    with pytest.raises(ConfigError) as exc:
        config.loads(text.replace('"../geometries/', f'"{ROOT}/geometries/'), "c.toml")
    msg = exc.value.allowed
    assert f"unit one of {units}" in msg, msg
    for phrase in ("'<number> <unit>'", "unit one of", "a number", "internal unit"):
        assert msg.count(phrase) <= 1, (phrase, msg)
