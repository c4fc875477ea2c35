"""``toymc report``: the plots of one ntuple, and clear errors for unusable files."""

import argparse

import pytest
from _demo import ROOT

from toymc.cli.report import register
from toymc.errors import InputFileError
from toymc.io.run import run

NAMES = ("vertex_r.png", "vertex_z.png", "mass.png", "cutflow.png", "efficiency_vs_r.png")


def _parse(argv):
    p = argparse.ArgumentParser(prog="toymc")
    register(p.add_subparsers(dest="command"))
    return p.parse_args(argv)


@pytest.mark.parametrize("cfg", ["darkphoton_mumu.toml", "alp_gg_bksta.toml"])
def test_report_writes_its_pngs(tmp_path, cfg, capsys):
    f = tmp_path / "s.root"
    run(str(ROOT / "configs" / cfg), output=str(f), events=3000, seed=2)
    out = tmp_path / "rep"
    args = _parse(["report", str(f), "-o", str(out)])
    assert args.func(args) == 0
    for n in NAMES:
        data = (out / n).read_bytes()
        assert data[:8] == b"\x89PNG\r\n\x1a\n" and len(data) > 10_000
    assert "efficiency_vs_r.png" in capsys.readouterr().out


def test_report_without_reco_columns(tmp_path):
    text = (ROOT / "configs" / "darkphoton_mumu.toml").read_text()
    cfg = tmp_path / "truth.toml"
    cfg.write_text(text[:text.index("[detector]")])
    f = tmp_path / "t.root"
    run(str(cfg), output=str(f), events=500, seed=1)
    with pytest.raises(InputFileError) as exc:
        _parse(["report", str(f)]).func(_parse(["report", str(f), "-o", str(tmp_path / "r")]))
    msg = str(exc.value)
    assert "reco columns" in msg and "vtx_r" in msg and "\n" not in msg
    assert not (tmp_path / "r").exists()


def test_report_missing_file(tmp_path):
    with pytest.raises(InputFileError):
        _parse(["report", str(tmp_path / "nope.root")]).func(
            _parse(["report", str(tmp_path / "nope.root")]))
