"""Small samples shared by the hand-off tests (generated once per session)."""

from pathlib import Path

import pytest

import toymc
from toymc.engine.api import metadata, resolve
from toymc.engine.generator import iter_chunks
from toymc.io.columns import all_columns
from toymc.io.ntuple import NtupleWriter

CONFIGS = Path(__file__).resolve().parents[2] / "configs"
DEMOS = ("darkphoton_mumu", "alp_gg_bksta", "alp_3pi_bka")
N_SMALL = 3000


def write_sample(config, path, events=N_SMALL, seed=11, blocks=None, meta_update=None,
                 normalisation_update=None):
    """Write blocks of a run with (optionally) edited metadata, as a later model layer or
    another geometry would store it; the events are the generator's own."""
    cfg = resolve(config, events=events, seed=seed, output=str(path))
    meta = metadata(cfg)
    meta["columns"] = [list(c) for c in all_columns(with_reco=False)]
    if blocks is not None:
        meta["blocks"] = list(blocks)
    if normalisation_update:
        meta["normalisation"] = dict(meta["normalisation"], **normalisation_update)
    meta.update(meta_update or {})
    with NtupleWriter(path, meta) as w:
        for chunk in iter_chunks(cfg, blocks=blocks):
            w.write(chunk)
    return str(path)


@pytest.fixture(scope="session")
def demo_files(tmp_path_factory):
    """name -> path of a 3000-event truth sample of each demo config (seed 11)."""
    d = tmp_path_factory.mktemp("demos")
    out = {}
    for name in DEMOS:
        out[name] = str(d / f"{name}.root")
        toymc.run(CONFIGS / f"{name}.toml", output=out[name], events=N_SMALL, seed=11)
    return out


@pytest.fixture(scope="session")
def bad_files(tmp_path_factory, demo_files):
    """name -> path of inputs that are not usable toymc files."""
    import uproot

    d = tmp_path_factory.mktemp("bad")
    good = Path(demo_files["alp_gg_bksta"]).read_bytes()
    out = {"text": d / "notes.root", "foreign": d / "foreign.root", "truncated": d / "cut.root",
           "damaged": d / "damaged.root", "missing": d / "absent.root"}
    out["text"].write_text("run 1: looks fine\n")
    with uproot.recreate(out["foreign"]) as f:
        f["events"] = {"x": [1.0, 2.0, 3.0]}
    out["truncated"].write_bytes(good[: len(good) // 2])
    # the baskets lie between the file header and the tree metadata at the end:
    # overwrite the middle of the file, keeping both ends intact
    mid = len(good) // 2
    out["damaged"].write_bytes(good[:mid] + b"\x00" * 200_000 + good[mid + 200_000:])
    return {k: str(v) for k, v in out.items()}
