"""Python entry points of the engine: a run's config, detector and metadata; events in memory.

Writing a run to a file is :func:`toymc.io.run.run` (``toymc.run``).
"""

import awkward as ak
import numpy as np

from toymc.config import loader as _config
from toymc.engine.block import block_to_arrays, concatenate, versions
from toymc.engine.generator import iter_chunks, normalisation
from toymc.engine.rng import BLOCK_SIZE

__all__ = ("generate", "resolve", "metadata", "detector_for")


def resolve(config, events=None, seed=None, output=None, chunk_blocks=None):
    """A :class:`toymc.config.loader.RunConfig` from a path or config, with overrides applied."""
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
            from toymc.detector.fold import decay_weight

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
