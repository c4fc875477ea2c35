"""Merge toymc files, and write parts of a run (block ranges) to be merged later.

Rules of :func:`merge`
----------------------
* Always refused: inputs of another schema version than this toymc writes,
  with other columns, another geometry or ``[selection]`` (the detector
  setup), a file holding the same random blocks of the same point as another
  input (its events would be counted twice), or a mixed-point merge as input
  (merge its original files instead).
* Files of one physics point (same ``[beams]``, ``[production]``, ``[llp]``
  and ``normalisation``; seeds may differ) are one sample: events add, and
  the merged file's per-event luminosity weight is ``L sigma x BR / N_total``
  (:func:`toymc.io.weights.lumi_weight` on the merged metadata).
* Files of different points are refused unless ``allow_mixed``: then every
  event gets the column ``w_xsec = sigma x BR / N_point`` (fb), computed from
  its own input's normalisation, with ``N_point`` the events of all inputs of
  that point; its luminosity weight is ``w_lumi = L * w_xsec``.  Every input
  then needs a known ``sigma x BR`` (a model's branching fractions).

The merged metadata is the first input's, with ``events`` summed,
``merged = true``, ``inputs`` (every original input's metadata, with its
``file`` name and ``blocks``), ``seed`` (None if the inputs' seeds differ),
``merge_versions`` (versions of the merging toymc) and, for a mixed merge,
``mixed = true`` and the physics keys that differ set to None.

The output is written under a temporary name and renamed when complete
(:class:`toymc.io.ntuple.NtupleWriter`): a failed merge leaves no output file.
"""

import os
from pathlib import Path

import awkward as ak
import numpy as np

from toymc.engine.block import Block
from toymc.errors import ConfigError, InputFileError, ToymcError
from toymc.io.files import check_output
from toymc.io.info import detector_setup, differences, leaf_inputs, load_meta, physics_point
from toymc.io.ntuple import SCHEMA_VERSION, NtupleWriter, versions
from toymc.io.reader import DEFAULT_STEP_SIZE, _open_tree, _reason, layout
from toymc.io.weights import group_samples, sigma_times_br

__all__ = ("MIXED_KEYS", "W_XSEC_COLUMN", "merge", "write_blocks")

#: column table row of the weight column of mixed-point merges
W_XSEC_COLUMN = ("w_xsec", "fb", ("sigma x BR / N of this event's physics point (mixed-point "
                                  "merges); luminosity weight w_lumi = L_int * w_xsec"))
#: metadata keys set to None in a mixed-point merge when the inputs differ
MIXED_KEYS = ("process", "channel", "mass_gev", "ctau_cm", "sqrt_s_gev", "normalisation",
              "config_toml", "config_path")


def _to_block(chunk, event, groups, extra=None):
    """An awkward chunk of stored columns as a :class:`toymc.engine.block.Block`."""
    b = Block(n=len(chunk))
    for name in event:
        b.event[name] = ak.to_numpy(chunk[name])
    for name, values in (extra or {}).items():
        b.event[name] = values
    for g, fields in groups.items():
        counts = ak.to_numpy(ak.num(chunk[f"{g}_{fields[0]}"], axis=1)).astype(np.int64)
        cols = {f: ak.to_numpy(ak.flatten(chunk[f"{g}_{f}"], axis=1)) for f in fields}
        b.add_group(g, counts, cols)
    return b


def _inspect(path):
    meta = load_meta(path)
    f, tree = _open_tree(path)
    try:
        event, groups, types = layout(tree)
    except InputFileError as exc:
        raise InputFileError(f"{path}: {exc}") from None
    finally:
        f.close()
    return meta, event, groups, types


def _check(inputs, allow_mixed):
    first = inputs[0]
    p0, m0, _, _, t0 = first
    for p, meta, _, _, types in inputs:
        if meta["schema_version"] != SCHEMA_VERSION:
            if meta["schema_version"] != m0["schema_version"]:
                raise InputFileError(f"{p}: schema version {meta['schema_version']} differs from "
                                     f"{p0} (version {m0['schema_version']})")
            raise InputFileError(f"{p}: schema version {meta['schema_version']}; this toymc "
                                 f"merges version {SCHEMA_VERSION} only")
        if meta.get("mixed"):
            raise InputFileError(f"{p}: is a merge of different physics points; merge its "
                                 "original files instead")
        if types != t0:
            diff = sorted(set(types) ^ set(t0)) or [k for k in t0 if types[k] != t0[k]]
            raise InputFileError(f"{p}: columns differ from {p0} ({', '.join(diff[:5])})")
        d = differences(detector_setup(m0, p0), detector_setup(meta, p), "")
        if d:
            raise InputFileError(f"{p}: detector setup differs from {p0}: {'; '.join(d[:3])}")
    mixed = False
    for p, meta, _, _, _ in inputs[1:]:
        d = differences(physics_point(m0, p0), physics_point(meta, p), "")
        if d:
            if not allow_mixed:
                raise InputFileError(f"{p}: physics point differs from {p0}: {'; '.join(d[:3])}; "
                                     "--allow-mixed merges different points with a per-event "
                                     "weight column w_xsec")
            mixed = True
    return mixed


def _merged_meta(inputs, mixed):
    metas = [m for _, m, _, _, _ in inputs]
    leaves = [leaf for p, m, _, _, _ in inputs for leaf in leaf_inputs(m, p)]
    base = {k: v for k, v in metas[0].items()
            if k not in ("events", "schema_version", "blocks", "inputs")}
    seeds = {repr(leaf.get("seed")) for leaf in leaves}
    base.update(merged=True, inputs=leaves, merge_versions=versions(),
                seed=leaves[0].get("seed") if len(seeds) == 1 else None)
    if mixed:
        base["mixed"] = True
        for k in MIXED_KEYS:
            vals = {repr(leaf.get(k)) for leaf in leaves}
            base[k] = leaves[0].get(k) if len(vals) == 1 else None
        base["columns"] = [list(c) for c in metas[0]["columns"]] + [list(W_XSEC_COLUMN)]
    return base


def merge(output, inputs, force=False, allow_mixed=False, compression="lz4",
          step_size=DEFAULT_STEP_SIZE):
    """Merge toymc files into `output`, chunk by chunk (rules in the module docstring).

    Parameters
    ----------
    output : str or Path
        The merged ROOT file.
    inputs : list of str or Path
        Input files, merged in this order.
    force : bool
        Overwrite an existing `output`.
    allow_mixed : bool
        Allow different physics points (adds the column ``w_xsec``, fb).
    compression : str
        As :class:`toymc.io.ntuple.NtupleWriter`.
    step_size : int or str
        Chunk size for reading (uproot step size).

    Returns
    -------
    dict
        ``output``, ``events``, ``inputs`` (number of files), ``mixed``.

    Raises
    ------
    InputFileError
        An input is not a toymc file, damaged, or incompatible (named, with
        what differs).
    OutputError
        `output` exists (without `force`), is one of the inputs, or cannot be written.
    """
    if isinstance(inputs, (str, Path)):
        inputs = [inputs]
    inputs = [str(p) for p in inputs]
    if not inputs:
        raise ToymcError("merge: no input files given")
    if compression not in NtupleWriter.COMPRESSION:
        raise ConfigError(None, "compression", compression,
                          "one of " + ", ".join(NtupleWriter.COMPRESSION))
    out = check_output(output, force=force, inputs=inputs)
    seen = {}
    for p in inputs:
        key = os.path.realpath(p)
        if key in seen:
            raise InputFileError(f"{p}: given twice (also as {seen[key]})")
        seen[key] = p
    info = [(p, *_inspect(p)) for p in inputs]
    mixed = _check(info, allow_mixed)
    groups = group_samples([(p, m) for p, m, _, _, _ in info])
    w_xsec = {}
    if mixed:
        for key, g in groups.items():
            value, _ = sigma_times_br(g["meta"], path=g["paths"][0])
            for p in g["paths"]:
                w_xsec[p] = value / g["events"]
    meta = _merged_meta(info, mixed)
    total = 0
    with NtupleWriter(out, meta, force=force, compression=compression, inputs=inputs) as writer:
        for p, m, event, grp, _ in info:
            f, tree = _open_tree(p)
            try:
                it = tree.iterate(step_size=step_size, library="ak")
                while True:
                    try:
                        chunk = next(it)
                    except StopIteration:
                        break
                    except Exception as exc:  # noqa: BLE001 - damaged baskets
                        raise InputFileError(f"{p}: cannot read events ({_reason(exc)})") from None
                    extra = {"w_xsec": np.full(len(chunk), w_xsec[p])} if mixed else None
                    writer.write(_to_block(chunk, event, grp, extra))
                    total += len(chunk)
            finally:
                f.close()
        if writer.events != sum(int(m["events"]) for _, m, _, _, _ in info):
            raise InputFileError(f"{out}: read {writer.events} events, the inputs' metadata "
                                 f"promise {sum(int(m['events']) for _, m, _, _, _ in info)}")
    return {"output": str(out), "events": total, "inputs": len(inputs), "mixed": mixed}


def write_blocks(config, output, blocks, events=None, seed=None, force=False):
    """Generate some random blocks of a run and write them as a part file.

    Block ``i`` of a run (seed, events) holds the same events whichever
    file it is written to, so parts holding complementary blocks merge
    (:func:`merge`) into a file with the same events as the whole run (in
    the order the parts are merged).  The part records ``blocks`` in its
    metadata; ``events`` there is the part's own number of events.

    Parameters
    ----------
    config : str, Path or RunConfig
    output : str or Path
    blocks : list of int
        Distinct block indices in ``0 .. ceil(events / 65536) - 1``.
    events, seed : int, optional
        Overrides of ``[run]`` (the whole run's events and seed).
    force : bool

    Returns
    -------
    dict
        ``output``, ``events``, ``blocks``.
    """
    from toymc.engine.api import detector_for, metadata, resolve
    from toymc.engine.generator import iter_chunks
    from toymc.engine.rng import n_blocks
    from toymc.io.columns import all_columns

    cfg = resolve(config, events=events, seed=seed, output=str(output))
    nb = n_blocks(cfg.run.events)
    try:
        blocks = [int(b) for b in blocks]
    except (TypeError, ValueError):
        raise ConfigError(None, "blocks", blocks, f"block indices 0..{nb - 1}") from None
    if not blocks or len(set(blocks)) != len(blocks) or min(blocks) < 0 or max(blocks) >= nb:
        raise ConfigError(None, "blocks", blocks,
                          f"distinct block indices in 0..{nb - 1} (run of {cfg.run.events} events)")
    det = detector_for(cfg)
    meta = metadata(cfg)
    meta["columns"] = [list(c) for c in all_columns(with_reco=det is not None)]
    meta["blocks"] = blocks
    with NtupleWriter(cfg.run.output, meta, force=force, compression=cfg.run.compression,
                      inputs=(cfg.path, cfg.geometry)) as writer:
        for chunk in iter_chunks(cfg, detector=det, blocks=blocks):
            writer.write(chunk)
    return {"output": str(cfg.run.output), "events": writer.events, "blocks": blocks}
