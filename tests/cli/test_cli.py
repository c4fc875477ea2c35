"""The command line: user mistakes give exit status 2 and one line on stderr naming the key
and value, no traceback and no output file; help texts list every option; the demo configs
run and write readable files (read back here with uproot and toymc.io.ntuple)."""

import os
import subprocess
import sys

import numpy as np
import pytest
import uproot
from _demo import CONFIGS, ROOT, truth_dict

from toymc.cli.main import build_parser, main
from toymc.io.ntuple import read_arrays, read_meta

DEMOS = ("alp_3pi_bka.toml", "alp_gg_bksta.toml", "darkphoton_mumu.toml")


def _toml(data):
    """Minimal TOML writer for flat tables of strings, numbers and booleans."""
    def val(v):
        if isinstance(v, bool):
            return "true" if v else "false"
        if isinstance(v, str):
            return '"' + v + '"'
        if v == float("inf"):
            return "inf"
        return repr(v)

    lines = []
    for sec, table in data.items():
        lines.append(f"[{sec}]")
        lines += [f"{k} = {val(v)}" for k, v in table.items()]
    return "\n".join(lines) + "\n"


def _write(tmp_path, demo="darkphoton_mumu.toml", edit=None, name="cfg.toml"):
    data = truth_dict(CONFIGS / demo)
    if edit:
        edit(data)
    p = tmp_path / name
    p.write_text(_toml(data))
    return p


def _run(argv, capsys):
    rc = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return rc, out, err


def _assert_one_line_error(err, *needles):
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith("toymc: error: ")
    assert "Traceback" not in err
    for s in needles:
        assert s in lines[0], (s, lines[0])


BAD = [
    ("unknown key", lambda d: d["llp"].update(ctua=3.0), ("llp.ctua", "3.0", "did you mean 'ctau'")),
    ("wrong type", lambda d: d["run"].update(events="many"), ("run.events", "'many'")),
    ("negative ctau", lambda d: d["llp"].update(ctau=-1.0), ("llp.ctau", "-1.0", "> 0")),
    ("zero ctau", lambda d: d["llp"].update(ctau="0 cm"), ("llp.ctau", "'0 cm'")),
    ("below threshold", lambda d: d["llp"].update(mass=0.2), ("llp.mass", "0.2", "threshold")),
    ("above production limit", lambda d: (d["production"].update(process="b_meson", recoil="K"),
                                          d["production"].pop("photon_cos_min"),
                                          d["production"].pop("photon_cos_max"),
                                          d["llp"].update(mass=4.9)),
     ("llp.mass", "4.9", "production limit")),
    ("unknown channel", lambda d: d["llp"].update(channel="tau_tau"), ("llp.channel", "'tau_tau'")),
    ("unknown process", lambda d: d["production"].update(process="drell_yan"),
     ("production.process", "'drell_yan'")),
    ("unknown unit", lambda d: d["beams"].update(crossing_angle="45 urad"),
     ("beams.crossing_angle", "'45 urad'", "mrad")),
    ("unit of another dimension", lambda d: d["llp"].update(ctau="3 GeV"),
     ("llp.ctau", "'3 GeV'", "cm")),
]


@pytest.mark.parametrize("what,edit,needles", BAD, ids=[b[0] for b in BAD])
def test_bad_config_exit_2_one_line_no_file(tmp_path, capsys, monkeypatch, what, edit, needles):
    monkeypatch.chdir(tmp_path)
    cfg = _write(tmp_path, edit=edit)
    out = tmp_path / "out.root"
    rc, _, err = _run(["generate", cfg, "-n", 100, "-o", out, "-q"], capsys)
    assert rc == 2
    _assert_one_line_error(err, *needles)
    assert sorted(os.listdir(tmp_path)) == ["cfg.toml"]  # no output, no temporary file


def test_missing_config_file(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    rc, _, err = _run(["generate", tmp_path / "nothere.toml", "-q"], capsys)
    assert rc == 2
    _assert_one_line_error(err, "nothere.toml", "not found")
    assert os.listdir(tmp_path) == []


def test_output_exists_without_force(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    cfg = _write(tmp_path)
    out = tmp_path / "out.root"
    out.write_text("keep me")
    rc, _, err = _run(["generate", cfg, "-n", 100, "-o", out, "-q"], capsys)
    assert rc == 2
    _assert_one_line_error(err, "out.root", "--force")
    assert out.read_text() == "keep me"
    assert sorted(os.listdir(tmp_path)) == ["cfg.toml", "out.root"]
    rc, stdout, _ = _run(["generate", cfg, "-n", 100, "-o", out, "-q", "--force"], capsys)
    assert rc == 0 and "wrote 100 events" in stdout
    assert read_meta(out)["events"] == 100


def test_argument_errors_exit_2(capsys):
    for argv in (["generate", "x.toml", "-n", "0"], ["generate", "x.toml", "--seed", "-3"],
                 ["generate"], ["frobnicate"]):
        with pytest.raises(SystemExit) as info:
            main(argv)
        assert info.value.code == 2
        err = capsys.readouterr().err
        assert "error:" in err and "Traceback" not in err
    assert main([]) == 2


OPTIONS = {
    None: ("--help", "--version", "--debug", "generate", "bench"),
    "generate": ("config", "--events", "-n", "--seed", "--output", "-o", "--chunk-blocks",
                 "--force", "--quiet", "-q", "--help"),
    "bench": ("--events", "-n", "--detector", "--help"),
}


def _parser_options(sub):
    p = build_parser()
    if sub:
        p = next(a for a in p._actions if hasattr(a, "choices") and a.choices
                 and sub in a.choices).choices[sub]
    names = []
    for a in p._actions:
        names += a.option_strings or [a.dest]
    return [n for n in names if n not in ("command",)]


@pytest.mark.parametrize("sub", [None, "generate", "bench"])
def test_help_mentions_every_option(sub, capsys):
    with pytest.raises(SystemExit) as info:
        main(([sub] if sub else []) + ["--help"])
    assert info.value.code == 0
    text = capsys.readouterr().out
    for opt in set(OPTIONS[sub]) | set(_parser_options(sub)) - {"func"}:
        assert opt in text, opt


@pytest.mark.parametrize("demo", DEMOS)
def test_demo_configs_generate(demo, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    out = tmp_path / (demo + ".root")
    rc, stdout, err = _run(["generate", CONFIGS / demo, "-n", 3000, "-o", out, "-q",
                            "--seed", 5], capsys)
    assert rc == 0, err
    assert f"wrote 3000 events to {out}" in stdout
    meta = read_meta(out)
    assert meta["events"] == 3000 and meta["seed"] == 5
    ev = read_arrays(out, ["llp_dx", "ndau", "dau_pdg"])
    assert len(ev) == 3000 and np.all(np.isfinite(ev["llp_dx"].to_numpy()))
    with uproot.open(out) as f:
        assert f["events"].num_entries == 3000
    assert sorted(os.listdir(tmp_path)) == [out.name]


def test_subprocess_entry_point(tmp_path):
    """The real process: one line on stderr and exit 2 for a missing file; help exits 0."""
    env = dict(os.environ, PYTHONPATH=str(ROOT / "src"))
    r = subprocess.run([sys.executable, "-m", "toymc", "generate", str(tmp_path / "no.toml")],
                       capture_output=True, text=True, env=env, cwd=tmp_path, timeout=120,
                       check=False)
    assert r.returncode == 2
    _assert_one_line_error(r.stderr, "no.toml")
    r = subprocess.run([sys.executable, "-m", "toymc", "--help"], capture_output=True,
                       text=True, env=env, cwd=tmp_path, timeout=120, check=False)
    assert r.returncode == 0 and "generate" in r.stdout and r.stderr == ""


@pytest.mark.parametrize("target", ["missing_dir/out.root", "", "."])
def test_bad_output_path_one_line_no_file(target, tmp_path, capsys, monkeypatch):
    """A missing folder, an empty name or a folder as --output: exit 2 and one line, even with
    --force; nothing is written."""
    monkeypatch.chdir(tmp_path)
    cfg = _write(tmp_path)
    rc, _, err = _run(["generate", cfg, "-n", 100, "-o", target, "-q", "--force"], capsys)
    assert rc == 2
    _assert_one_line_error(err)
    assert sorted(os.listdir(tmp_path)) == ["cfg.toml"]
