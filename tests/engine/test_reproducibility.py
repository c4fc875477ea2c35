"""Reproducibility: events depend on the seed and block index only, and the file holds
exactly what the in-memory API returns.

References: numpy's SeedSequence/PCG64 streams (one per block, DESIGN.md); the ROOT file is
read back independently with uproot.
"""

from pathlib import Path

import awkward as ak
import numpy as np
import pytest
import uproot
from _demo import CONFIGS

import toymc
from toymc.config import loader as config
from toymc.engine.api import resolve
from toymc.engine.block import concatenate
from toymc.engine.generator import generate_block, iter_chunks
from toymc.engine.rng import BLOCK_SIZE
from toymc.io.columns import all_columns
from toymc.io.ntuple import read_meta

CHEAP = CONFIGS / "darkphoton_mumu.toml"
N_MULTI = 150_000  # more than two blocks
assert N_MULTI > 2 * BLOCK_SIZE


def _all(cfg):
    return concatenate(list(iter_chunks(cfg)))


def _assert_blocks_equal(a, b):
    assert a.n == b.n
    assert a.event.keys() == b.event.keys()
    for k in a.event:
        np.testing.assert_array_equal(a.event[k], b.event[k], err_msg=k)
    assert a.groups.keys() == b.groups.keys()
    for g in a.groups:
        np.testing.assert_array_equal(a.groups[g][0], b.groups[g][0])
        for k in a.groups[g][1]:
            np.testing.assert_array_equal(a.groups[g][1][k], b.groups[g][1][k], err_msg=g + k)


@pytest.fixture(scope="module")
def reference():
    cfg = resolve(str(CHEAP), events=N_MULTI, seed=7, chunk_blocks=3)
    return cfg, _all(cfg)


def test_chunking_does_not_change_events(reference):
    cfg, ref = reference
    sizes = [c.n for c in iter_chunks(cfg.with_run(chunk_blocks=1))]
    assert sizes == [BLOCK_SIZE, BLOCK_SIZE, N_MULTI - 2 * BLOCK_SIZE]
    _assert_blocks_equal(_all(cfg.with_run(chunk_blocks=1)), ref)
    _assert_blocks_equal(_all(cfg.with_run(chunk_blocks=2)), ref)


def test_block_reached_directly(reference):
    """Block 2 alone equals events 2*BLOCK_SIZE.. of the full run."""
    cfg, ref = reference
    b2 = generate_block(cfg, 2)
    assert b2.n == N_MULTI - 2 * BLOCK_SIZE
    for k in ref.event:
        np.testing.assert_array_equal(b2.event[k], ref.event[k][2 * BLOCK_SIZE:])
    counts, cols = ref.groups["dau"]
    off = int(counts[: 2 * BLOCK_SIZE].sum())
    for k in cols:
        np.testing.assert_array_equal(b2.groups["dau"][1][k], cols[k][off:])


def test_different_seeds_differ(reference):
    cfg, ref = reference
    other = generate_block(cfg.with_run(seed=8), 0)
    same = np.count_nonzero(other.event["llp_px"] == ref.event["llp_px"][:BLOCK_SIZE])
    assert same < 10
    # and blocks of one run use different streams
    b1 = generate_block(cfg, 1)
    assert np.count_nonzero(b1.event["llp_ct"] == ref.event["llp_ct"][:BLOCK_SIZE]) < 10


def test_run_file_equals_generate(tmp_path):
    """toymc.run writes what toymc.generate returns, column by column, bit for bit."""
    out = tmp_path / "events.root"
    cfg = resolve(str(CONFIGS / "alp_gg_bksta.toml"), events=BLOCK_SIZE + 4000, seed=3,
                  output=str(out), chunk_blocks=1)
    summary = toymc.run(cfg)
    assert Path(summary["output"]) == out and summary["events"] == cfg.run.events
    mem = toymc.generate(cfg)
    assert len(mem) == cfg.run.events
    with uproot.open(out) as f:
        tree = f["events"]
        # the demo config runs the detector: truth and reco columns, as the table says
        # (w_fold only with run.decay_weights)
        names = [c[0] for c in all_columns(with_reco=True) if c[0] != "w_fold"]
        assert sorted(tree.keys()) == sorted(names)
        assert tree.num_entries == cfg.run.events
        for name in names:
            disk = tree[name].array(library="ak")
            if name in ("ndau", "nrcld", "ntrk", "nclu"):
                want = ak.num(mem[name[1:]])
            elif name.startswith(("dau_", "rcld_", "trk_", "clu_")):
                group, field = name.split("_", 1)
                want = mem[group][field]
            else:
                want = mem[name]
            assert len(disk) == len(want)
            if name.startswith(("dau_", "rcld_", "trk_", "clu_")):
                np.testing.assert_array_equal(ak.to_numpy(ak.num(disk)), ak.to_numpy(ak.num(want)))
            d, w = ak.flatten(disk, axis=None), ak.flatten(want, axis=None)
            np.testing.assert_array_equal(ak.to_numpy(d), ak.to_numpy(w), err_msg=name)
    assert int(ak.sum(ak.num(mem["rcld"]))) == 2 * cfg.run.events
    meta = read_meta(out)
    assert meta["events"] == cfg.run.events and meta["seed"] == 3
    assert [c[0] for c in meta["columns"]] == names
    # the stored resolved config reproduces the run
    again = config.loads(meta["config_toml"])
    assert again.run == cfg.run and again.llp == cfg.llp and again.beams == cfg.beams
    _assert_blocks_equal(generate_block(again, 1), generate_block(cfg, 1))


def test_generate_accepts_path_and_overrides():
    a = toymc.generate(str(CHEAP), events=500, seed=11)
    b = toymc.generate(config.load(CHEAP), events=500, seed=11)
    assert len(a) == 500
    np.testing.assert_array_equal(ak.to_numpy(a["llp_dz"]), ak.to_numpy(b["llp_dz"]))
