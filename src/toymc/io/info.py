"""What a toymc file holds: metadata checks, physics points, detector setups and blocks.

The ``toymc info`` summary is :mod:`toymc.io.summary`.

Every file toymc writes carries a JSON metadata object (see :mod:`toymc.io.ntuple`).
This module reads it, checks that it is complete, and answers the questions
the hand-off commands ask of it:

* which *physics point* a file belongs to (:func:`physics_point`): the
  resolved ``[beams]``, ``[production]`` and ``[llp]`` config sections and the
  ``normalisation`` dict; two files of the same point may be merged and share
  one luminosity normalisation;
* which *detector setup* it was made with (:func:`detector_setup`): the
  geometry and the ``[selection]`` section; files of different setups are
  never merged;
* which random blocks it holds (:func:`leaf_inputs`): a run of ``N`` events
  with seed ``s`` holds blocks ``0 .. ceil(N / 65536) - 1`` of seed ``s``;
  a part written by :func:`toymc.io.merge.write_blocks` records its ``blocks``;
  two files of one point holding the same (seed, block) hold the same events.

Nothing read from a file is evaluated as code: the stored config is parsed
as TOML data only.
"""

import json
import math
import tomllib

from toymc.engine.rng import n_blocks
from toymc.errors import InputFileError
from toymc.io.verify import REQUIRED_KEYS, check_file

__all__ = (
    "PHYSICS_SECTIONS",
    "REQUIRED_KEYS",
    "SETUP_SECTIONS",
    "blocks_of",
    "config_sections",
    "detector_setup",
    "differences",
    "leaf_inputs",
    "load_meta",
    "physics_point",
    "point_key",
)

#: config sections that define a physics point
PHYSICS_SECTIONS = ("beams", "production", "llp")
#: config sections that define the detector setup (besides the geometry)
SETUP_SECTIONS = ("detector", "selection")


def load_meta(path):
    """The metadata dict of a toymc file, after the whole file passed
    :func:`toymc.io.verify.check_file` (metadata keys, event count, columns and their
    types, every basket readable).  Every command that reads a toymc file starts here.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    dict

    Raises
    ------
    InputFileError
        The file is missing, not a ROOT file, not written by toymc, or its
        metadata is damaged or incomplete.
    """
    meta = check_file(path)
    if meta.get("mixed"):
        return meta
    config_sections(meta, path)
    return meta


def config_sections(meta, path=""):
    """The stored resolved config (``config_toml``) as a dict of sections.

    Returns an empty dict for a mixed-point merge (which has no single config).
    """
    text = meta.get("config_toml")
    if text is None:
        return {}
    try:
        return tomllib.loads(text)
    except (tomllib.TOMLDecodeError, TypeError) as exc:
        raise InputFileError(f"{path}: damaged toymc metadata (config_toml: {exc})") from None


def physics_point(meta, path=""):
    """The parts of a file's metadata that define its physics point.

    Returns
    -------
    dict
        ``{section: table}`` for :data:`PHYSICS_SECTIONS` of the stored config,
        plus ``"normalisation"`` (cross-sections, and branching fractions and
        couplings when a model supplied them).
    """
    cfg = config_sections(meta, path)
    point = {name: cfg.get(name, {}) for name in PHYSICS_SECTIONS}
    point["normalisation"] = meta.get("normalisation")
    return point


def point_key(meta, path=""):
    """A canonical string for the physics point (equal strings: same point)."""
    return json.dumps(physics_point(meta, path), sort_keys=True)


def detector_setup(meta, path=""):
    """Geometry and selection a file was made with (``{"geometry": .., "selection": ..}``)."""
    cfg = config_sections(meta["inputs"][0] if meta.get("mixed") else meta, path)
    return {"geometry": meta.get("geometry"), "selection": cfg.get("selection")}


def _flat(prefix, value, out):
    if isinstance(value, dict):
        for k in sorted(value):
            _flat(f"{prefix}.{k}" if prefix else str(k), value[k], out)
    else:
        out[prefix] = value
    return out


def _short(value):
    text = json.dumps(value) if not isinstance(value, str) else repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


def differences(a, b, what):
    """Dotted keys at which two nested dicts differ, as ``"key (a vs b)"`` strings.

    Parameters
    ----------
    a, b : dict
    what : str
        Name of the top level, e.g. ``"geometry"``: a difference of a plain
        (non-dict) value is reported as ``"geometry (x vs y)"``.
    """
    fa, fb = _flat(what, a, {}), _flat(what, b, {})
    out = []
    for key in sorted(set(fa) | set(fb)):
        va, vb = fa.get(key, "<absent>"), fb.get(key, "<absent>")
        if va != vb and not (isinstance(va, float) and isinstance(vb, float)
                             and math.isnan(va) and math.isnan(vb)):
            out.append(f"{key} ({_short(va)} vs {_short(vb)})")
    return out


def blocks_of(meta):
    """Random-block indices a (non-merged) file holds."""
    if "blocks" in meta:
        return [int(b) for b in meta["blocks"]]
    return list(range(n_blocks(int(meta["events"]))))


def leaf_inputs(meta, path):
    """The original (un-merged) samples a file is made of.

    Returns
    -------
    list of dict
        For a merged file, its ``inputs`` list; otherwise one entry: the
        file's metadata without the column table, with ``file`` (the path)
        and ``blocks`` filled in.
    """
    if meta.get("inputs"):
        return [dict(m) for m in meta["inputs"]]
    leaf = {k: v for k, v in meta.items() if k not in ("columns", "column_crc32", "meta_crc32")}
    leaf["file"] = str(path)
    leaf["blocks"] = blocks_of(meta)
    return [leaf]
