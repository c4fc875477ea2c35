"""Python entry points: run a config to a file, or generate into memory."""

import time
from pathlib import Path

import awkward as ak
import numpy as np

from toymc.config import schema as _config
from toymc.engine.block import concatenate
from toymc.engine.generator import iter_chunks, normalisation, warm_up
from toymc.engine.rng import BLOCK_SIZE, n_blocks
from toymc.io.ntuple import NtupleWriter, block_to_arrays, versions

__all__ = ("generate", "run", "resolve", "metadata", "detector_for")


def resolve(config, events=None, seed=None, output=None, chunk_blocks=None):
    """A :class:`toymc.config.schema.RunConfig` from a path or config, with overrides applied."""
    cfg = config if isinstance(config, _config.RunConfig) else _config.load(config)
    if output is not None:
        output = str(output)  # a pathlib.Path is fine too (the metadata stores text)
    return cfg.with_run(events=events, seed=seed, output=output, chunk_blocks=chunk_blocks)


def detector_for(cfg):
    """The detector response callable for a config, or None for truth only."""
    if not cfg.geometry:
        return None
    from toymc.detector.response import respond

    geometry, selection = cfg.detector, cfg.selection
    weights = cfg.run.decay_weights

    def detector(block, rng, counter=None):
        respond(block, geometry, selection, rng, counter=counter)
        if weights:
            from toymc.analysis.fold_sample import decay_weight

            ct = block.event["llp_ctau"]
            w = np.empty(block.n)
            for value in np.unique(ct):  # one value, or the components of a mixture
                sel = ct == value
                w[sel] = decay_weight({k: v[sel] for k, v in block.event.items()
                                       if k.startswith("llp_")}, selection, geometry, value)
            block.event["w_fold"] = w

    return detector


def metadata(cfg):
    """Metadata dict stored with every output file."""
    return {
        "config_toml": _config.to_toml(cfg),
        "config_path": cfg.path,
        "seed": cfg.run.seed,
        "block_size": BLOCK_SIZE,
        "process": cfg.production.process,
        "channel": cfg.llp.channel,
        "mass_gev": cfg.llp.mass,
        "ctau_cm": cfg.llp.ctau,
        "sqrt_s_gev": cfg.beams.sqrt_s,
        "normalisation": normalisation(cfg),
        "versions": versions(),
        "geometry": cfg.geometry,
    }


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
    from toymc.io.columns import all_columns

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


def generate(config, events=None, seed=None):
    """Generate events into memory and return them as an awkward array.

    Parameters
    ----------
    config : str, Path or RunConfig
    events, seed : int, optional
        Overrides of ``[run]``.

    Examples
    --------
    >>> ev = toymc.generate("configs/darkphoton_mumu.toml", events=1000)  # doctest: +SKIP
    >>> ev.llp_dr  # transverse decay radius, cm  # doctest: +SKIP
    """
    cfg = resolve(config, events, seed)
    det = detector_for(cfg)
    block = concatenate(list(iter_chunks(cfg, detector=det)))
    data = block_to_arrays(block)
    return ak.zip(data, depth_limit=1)
