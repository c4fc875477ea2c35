"""Small samples of the demo configs, shared by the file tests (reader, merge, weights,
export, info)."""

from _demo import CONFIGS

from toymc.engine.api import metadata, resolve
from toymc.engine.generator import iter_chunks
from toymc.io.columns import all_columns
from toymc.io.ntuple import NtupleWriter

__all__ = ("CONFIGS", "DEMOS", "N_SMALL", "write_sample")

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
