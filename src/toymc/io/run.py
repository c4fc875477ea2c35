"""``toymc.run``: generate a config's events and write them to a ROOT file."""

import time
from pathlib import Path

from toymc.engine.api import detector_for, metadata, resolve
from toymc.engine.generator import iter_chunks, warm_up
from toymc.engine.rng import n_blocks
from toymc.io.columns import all_columns
from toymc.io.ntuple import NtupleWriter

__all__ = ("run",)


def run(config, output=None, events=None, seed=None, force=False, progress=False,
        chunk_blocks=None):
    """Generate a config's events and write them to a ROOT file.

    Returns
    -------
    dict
        Summary: output path, events, seconds and events per second of the generation
        and writing, and ``warm_up_seconds``: the time before it, in which numba compiled
        the kernels or loaded them from its cache (not counted in the rate).
    """
    cfg = resolve(config, events, seed, output, chunk_blocks)
    det = detector_for(cfg)
    meta = metadata(cfg)
    meta["columns"] = [list(c) for c in all_columns(with_reco=det is not None)
                       if c[0] != "w_fold" or cfg.run.decay_weights]
    bar = None
    with NtupleWriter(cfg.run.output, meta, force=force, compression=cfg.run.compression,
                      inputs=(cfg.path, cfg.geometry)) as writer:
        # compile (or load from numba's cache) before the clock and the bar start
        t_warm = time.perf_counter()
        warm_up(cfg, detector=det)
        warm = time.perf_counter() - t_warm
        t0 = time.perf_counter()
        if progress:  # after the output checks of the writer: errors come without a bar
            from tqdm import tqdm

            bar = tqdm(total=cfg.run.events, unit="ev", unit_scale=True, leave=False,
                       desc="generate")
        try:
            for chunk in iter_chunks(cfg, detector=det):
                writer.write(chunk)
                if bar is not None:
                    bar.update(chunk.n)
        finally:
            if bar is not None:
                bar.close()
    dt = time.perf_counter() - t0
    return {"output": str(Path(cfg.run.output)), "events": cfg.run.events, "seconds": dt,
            "rate": cfg.run.events / dt if dt > 0 else float("inf"),
            "blocks": n_blocks(cfg.run.events), "warm_up_seconds": warm}
