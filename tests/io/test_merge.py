"""Merging: halves of a run equal the whole, weights stay right, incompatible inputs refused."""

import os

import awkward as ak
import numpy as np
import pytest
import uproot
from _samples import CONFIGS, write_sample

import toymc
import toymc.io.ntuple
from toymc.engine.rng import BLOCK_SIZE
from toymc.errors import InputFileError, OutputError
from toymc.io.info import load_meta
from toymc.io.merge import merge, write_blocks
from toymc.io.reader import read
from toymc.io.summary import summary
from toymc.io.weights import lumi_weight, sigma_times_br

GG = CONFIGS / "alp_gg_bksta.toml"
N_TWO_BLOCKS = BLOCK_SIZE + 2500
OVER = {"br_production": 1e-6, "br_decay": 0.8}


def _columns(path):
    with uproot.open(path) as f:
        return list(f["events"].keys())


def _no_leftovers(folder, allowed):
    left = sorted(p for p in os.listdir(folder) if p not in allowed)
    assert left == [], left


@pytest.fixture(scope="module")
def run_and_halves(tmp_path_factory):
    """A two-block run, and its blocks written as two part files."""
    d = tmp_path_factory.mktemp("halves")
    whole = str(d / "whole.root")
    toymc.run(GG, output=whole, events=N_TWO_BLOCKS, seed=5)
    h0 = write_blocks(GG, d / "h0.root", [0], events=N_TWO_BLOCKS, seed=5)["output"]
    h1 = write_blocks(GG, d / "h1.root", [1], events=N_TWO_BLOCKS, seed=5)["output"]
    return whole, h0, h1


def test_merged_halves_equal_the_whole(run_and_halves, tmp_path):
    """Block i holds the same events in any file: merging block 1 then block 0 gives the whole
    run's events with the two blocks swapped, every column exactly."""
    whole, h0, h1 = run_and_halves
    out = tmp_path / "merged.root"
    s = merge(out, [h1, h0], step_size=20000)
    assert s == {"output": str(out), "events": N_TWO_BLOCKS, "inputs": 2, "mixed": False}
    a, b = read(out), read(whole)
    n1 = N_TWO_BLOCKS - BLOCK_SIZE
    order = np.r_[BLOCK_SIZE:N_TWO_BLOCKS, 0:BLOCK_SIZE]
    assert _columns(out) == _columns(whole)
    for col in _columns(whole):
        assert ak.array_equal(a[col], b[col][order], dtype_exact=True, equal_nan=True), col
    assert not ak.array_equal(a.llp_ct[:n1], b.llp_ct[:n1])  # the blocks really differ
    # metadata: events add, each input is kept, the seed is common
    meta, wm = load_meta(out), load_meta(whole)
    assert meta["events"] == wm["events"] == N_TWO_BLOCKS
    assert [m["blocks"] for m in meta["inputs"]] == [[1], [0]]
    assert [m["events"] for m in meta["inputs"]] == [n1, BLOCK_SIZE]
    assert meta["seed"] == 5 and meta["merged"] is True


def test_merged_weights_equal_the_whole(run_and_halves, tmp_path):
    """Per-event lumi weight of the merge = L sigma BR / N_total = the whole run's weight; the
    halves read together get the same weights; each half alone sums to L sigma BR too."""
    whole, h0, h1 = run_and_halves
    out = tmp_path / "merged.root"
    merge(out, [h0, h1])
    xs, _ = sigma_times_br(load_meta(whole), **OVER)
    w_whole = lumi_weight(load_meta(whole), "1 ab-1", **OVER)
    assert lumi_weight(load_meta(out), "1 ab-1", **OVER) == pytest.approx(w_whole, rel=1e-14)
    assert w_whole == pytest.approx(1000 * xs / N_TWO_BLOCKS, rel=1e-14)
    ev = read(out, columns=["w_gen"], lumi_fb="1 ab-1", overrides=OVER)
    assert ak.sum(ev.w_lumi) == pytest.approx(1000 * xs, rel=1e-10)
    ev2 = read([h0, h1], columns=["w_gen"], lumi_fb="1 ab-1", overrides=OVER)
    assert ak.all(ev2.w_lumi == ev.w_lumi)
    one = read(h1, columns=["w_gen"], lumi_fb="1 ab-1", overrides=OVER)
    assert ak.sum(one.w_lumi) == pytest.approx(1000 * xs, rel=1e-10)


def test_merge_refuses_duplicate_blocks(run_and_halves, tmp_path):
    whole, h0, _ = run_and_halves
    with pytest.raises(InputFileError, match="seed 5 block 0 .* counted twice"):
        merge(tmp_path / "dup.root", [whole, h0])
    with pytest.raises(InputFileError, match="given twice"):
        merge(tmp_path / "dup.root", [h0, h0])
    _no_leftovers(tmp_path, [])


def test_merge_refuses_other_points_unless_mixed(demo_files, tmp_path):
    a, b = demo_files["alp_gg_bksta"], demo_files["alp_3pi_bka"]
    with pytest.raises(InputFileError, match=r"physics point differs .*llp\.channel "
                                             r".*--allow-mixed"):
        merge(tmp_path / "m.root", [a, b])
    # mixed needs sigma x BR of every input
    with pytest.raises(InputFileError, match="br_decay"):
        merge(tmp_path / "m.root", [a, b], allow_mixed=True)
    _no_leftovers(tmp_path, [])


def test_mixed_merge_weights_per_point(tmp_path):
    """--allow-mixed: w_xsec = sigma x BR / N_point per event; two parts of one point share
    N_point; per point, sum of L w_xsec = L sigma x BR of that point."""
    model = {"br_production": 1e-6, "br_decay": 0.9}
    p1 = write_sample(GG, tmp_path / "p1.root", events=600, seed=1, normalisation_update=model)
    p2 = write_sample(GG, tmp_path / "p2.root", events=300, seed=2, normalisation_update=model)
    q = write_sample(CONFIGS / "alp_3pi_bka.toml", tmp_path / "q.root", events=500, seed=1,
                     normalisation_update={"br_production": 4e-7, "br_decay": 0.2})
    out = tmp_path / "mixed.root"
    s = merge(out, [p1, q, p2], allow_mixed=True)
    assert s["mixed"] and s["events"] == 1400
    meta = load_meta(out)
    assert meta["mixed"] and meta["mass_gev"] is None and meta["process"] == "b_meson"
    assert meta["columns"][-1][0] == "w_xsec"
    with pytest.raises(InputFileError, match="w_xsec"):
        lumi_weight(meta, 1.0)
    ev = read(out, columns=["llp_m", "w_xsec"], lumi_fb=20.0)
    xs_p, _ = sigma_times_br(load_meta(p1))
    xs_q, _ = sigma_times_br(load_meta(q))
    is_p = ev.llp_m == load_meta(p1)["mass_gev"]
    assert ak.sum(is_p) == 900
    assert ak.sum(ev.w_lumi[is_p]) == pytest.approx(20.0 * xs_p, rel=1e-10)
    assert ak.sum(ev.w_lumi[~is_p]) == pytest.approx(20.0 * xs_q, rel=1e-10)
    # toymc info: sigma x BR per input and the total yield agree with the weights
    info = summary(out, lumi_fb=20.0)
    assert [m["sigma_times_br_fb"] for m in info["inputs"]] == pytest.approx([xs_p, xs_q, xs_p])
    assert info["expected_yield"] == pytest.approx(ak.sum(ev.w_lumi), rel=1e-10)
    with pytest.raises(InputFileError, match="overrides br_decay do not apply"):
        read(out, columns=["llp_m"], lumi_fb=20.0, overrides={"br_decay": 0.5})
    # a mixed merge is not merged again, nor read together with one of its points
    with pytest.raises(InputFileError, match="merge its original files"):
        merge(tmp_path / "again.root", [out, p1], allow_mixed=True)
    with pytest.raises(InputFileError, match=r"columns differ .*\(w_xsec\)"):
        read([out, p1], columns=["llp_m"], lumi_fb=1.0)
    p3 = write_sample(GG, tmp_path / "p3.root", events=100, seed=3, normalisation_update=model)
    q3 = write_sample(CONFIGS / "alp_3pi_bka.toml", tmp_path / "q3.root", events=100, seed=3,
                      normalisation_update={"br_production": 4e-7, "br_decay": 0.2})
    other = tmp_path / "mixed3.root"
    merge(other, [p3, q3], allow_mixed=True)
    with pytest.raises(InputFileError, match="mixed-point merge sharing a physics point"):
        read([out, other], columns=["llp_m"], lumi_fb=1.0)
    assert len(read([out, other], columns=["llp_m"])) == 1600  # without weights: fine


def test_merge_refuses_other_geometry_and_schema(tmp_path, monkeypatch):
    a = write_sample(GG, tmp_path / "a.root", events=200, seed=1,
                     meta_update={"geometry": "/det/ring_a.toml"})
    b = write_sample(GG, tmp_path / "b.root", events=200, seed=2,
                     meta_update={"geometry": "/det/ring_b.toml"})
    with pytest.raises(InputFileError, match=r"b\.root: detector setup differs from .*a\.root: "
                                             r"geometry \('/det/ring_a.toml' vs "
                                             r"'/det/ring_b.toml'\)"):
        merge(tmp_path / "m.root", [a, b], allow_mixed=True)
    monkeypatch.setattr(toymc.io.ntuple, "SCHEMA_VERSION", 2)
    c = write_sample(GG, tmp_path / "c.root", events=200, seed=3,
                     meta_update={"geometry": "/det/ring_a.toml"})
    monkeypatch.undo()
    with pytest.raises(InputFileError, match="c.root: schema version 2 differs .*version 1"):
        merge(tmp_path / "m.root", [a, c])
    with pytest.raises(InputFileError, match="c.root: schema version 2; this toymc merges "
                                             "version 1 only"):
        merge(tmp_path / "m.root", [c])
    _no_leftovers(tmp_path, ["a.root", "b.root", "c.root"])


@pytest.mark.parametrize("kind", ["text", "foreign", "truncated", "damaged", "missing"])
def test_merge_bad_input_leaves_nothing(demo_files, bad_files, tmp_path, kind):
    with pytest.raises(InputFileError) as err:
        merge(tmp_path / "m.root", [demo_files["alp_gg_bksta"], bad_files[kind]])
    assert "\n" not in str(err.value) and bad_files[kind] in str(err.value)
    _no_leftovers(tmp_path, [])


def test_merge_output_rules(demo_files, tmp_path):
    a = demo_files["alp_gg_bksta"]
    out = tmp_path / "m.root"
    out.write_text("keep me")
    with pytest.raises(OutputError, match="exists; use --force"):
        merge(out, [a])
    assert out.read_text() == "keep me"
    with pytest.raises(OutputError, match="is also an input"):
        merge(a, [a], force=True)
    merge(out, [a], force=True)
    assert load_meta(out)["events"] == load_meta(a)["events"]
    _no_leftovers(tmp_path, ["m.root"])
