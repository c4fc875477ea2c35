"""The info, merge and export subcommands through an argparse parser, as toymc.cli.main wires them."""

import argparse
import json
import re

import pytest

from toymc.cli import export, info, merge
from toymc.errors import ConfigError, InputFileError, OutputError
from toymc.io.info import load_meta
from toymc.io.weights import lumi_weight


def _run(argv):
    p = argparse.ArgumentParser(prog="toymc")
    sub = p.add_subparsers(dest="command")
    for command in (info, merge, export):
        command.register(sub)
    args = p.parse_args(argv)
    return args.func(args)


def test_info_text(demo_files, capsys):
    assert _run(["info", demo_files["alp_gg_bksta"], demo_files["darkphoton_mumu"]]) == 0
    out = capsys.readouterr().out
    assert "mass               1 GeV" in out and "mass               0.8 GeV" in out
    assert "c*tau              30 cm" in out and "channel            mu_mu" in out
    assert "seed               11, blocks 0" in out
    assert "sigma x BR         unknown: needs BR(X -> gamma_gamma)" in out
    # the column count is what the file says it holds (its stored column table)
    n_cols = len(load_meta(demo_files["alp_gg_bksta"])["columns"])
    assert f"columns ({n_cols}):" in out
    assert re.search(r"    llp_dr +cm   transverse radius of the LLP decay vertex", out)


def test_info_json_and_lumi(demo_files, capsys):
    path = demo_files["darkphoton_mumu"]
    assert _run(["info", path, "--json", "--lumi", "1 ab-1", "--eps", "1e-3",
                 "--br-decay", "0.25"]) == 0
    (s,) = json.loads(capsys.readouterr().out)
    meta = load_meta(path)
    w = lumi_weight(meta, 1000.0, eps=1e-3, br_decay=0.25)
    assert s["weight_per_event"] == pytest.approx(w, rel=1e-14)
    assert s["expected_yield"] == pytest.approx(w * meta["events"], rel=1e-12)
    assert s["sigma_times_br_terms"]["eps2"] == pytest.approx(1e-6, rel=1e-12)
    assert s["columns"] == meta["columns"] and s["events"] == 3000 and s["seed"] == 11
    # the demo runs through the demo detector: geometry and selection come from its config
    assert s["geometry"].endswith("geometries/demo.toml")
    assert s["selection"]["profile"] == {"kind": "linear", "eps0": 0.9}


def test_info_errors(demo_files, bad_files):
    with pytest.raises(InputFileError, match="--br-production"):
        _run(["info", demo_files["alp_3pi_bka"], "--lumi", "1", "--br-decay", "1"])
    with pytest.raises(ConfigError, match="lumi"):
        _run(["info", demo_files["alp_3pi_bka"], "--lumi", "1 ab", "--sigma-times-br", "1"])
    with pytest.raises(InputFileError, match="not a toymc file"):
        _run(["info", bad_files["foreign"]])
    with pytest.raises(SystemExit):  # argparse: a BR outside [0, 1]
        _run(["info", demo_files["alp_3pi_bka"], "--br-decay", "2"])


def test_merge_and_export_commands(demo_files, tmp_path, capsys):
    a = demo_files["alp_gg_bksta"]
    out = tmp_path / "m.root"
    assert _run(["merge", str(out), a, "--compression", "zstd"]) == 0
    assert "merged 1 files (3000 events, one sample)" in capsys.readouterr().out
    with pytest.raises(OutputError, match="exists"):
        _run(["merge", str(out), a])
    assert _run(["merge", str(out), a, "--force"]) == 0
    assert _run(["export", str(out), "--output", str(tmp_path / "m.parquet")]) == 0
    assert "exported 3000 events" in capsys.readouterr().out
    assert (tmp_path / "m.parquet").is_file()


@pytest.mark.parametrize("command, words", [
    ("info", ["--json", "--lumi", "--br-production", "--br-decay", "--eps", "--sigma-times-br"]),
    ("merge", ["OUTPUT", "--allow-mixed", "--force", "--compression"]),
    ("export", ["--format", "--output", "--force", 'toymc[parquet]']),
])
def test_help_is_complete(command, words, capsys):
    with pytest.raises(SystemExit) as ex:
        _run([command, "--help"])
    assert ex.value.code == 0
    text = capsys.readouterr().out
    for w in words:
        assert w in text


def test_info_of_a_merge_lists_inputs(tmp_path, capsys):
    from _samples import CONFIGS, write_sample

    from toymc.io.merge import merge

    cfg = CONFIGS / "darkphoton_mumu.toml"
    a = write_sample(cfg, tmp_path / "a.root", events=300, seed=1)
    b = write_sample(cfg, tmp_path / "b.root", events=200, seed=2)
    merge(tmp_path / "ab.root", [a, b])
    assert _run(["info", str(tmp_path / "ab.root"), "--no-columns"]) == 0
    out = capsys.readouterr().out
    assert "events             500" in out and "per input (merge of 2 inputs)" in out
    assert f"input              {a}: 300 events, seed 1, blocks 0" in out
    assert "columns (" not in out


@pytest.mark.parametrize("module", ["io.reader", "io.weights", "io.merge", "io.export",
                                    "io.info", "cli.info", "cli.merge", "cli.export"])
def test_public_names(module):
    """Every name in __all__ exists, and every public function or class is in __all__."""
    import importlib
    import inspect

    mod = importlib.import_module(f"toymc.{module}")
    assert all(hasattr(mod, n) for n in mod.__all__)
    public = {n for n, v in vars(mod).items() if not n.startswith("_")
              and (inspect.isfunction(v) or inspect.isclass(v)) and v.__module__ == mod.__name__}
    assert public <= set(mod.__all__), public - set(mod.__all__)
