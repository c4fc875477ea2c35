"""Ntuple output and input: ROOT TTrees through uproot, metadata as JSON.

Writing streams block by block (``TTree.extend``), so memory does not grow
with the number of events.  The file is written under a temporary name in
the target folder and renamed into place only when complete: a run that is
interrupted leaves no file under the final name.  Metadata (resolved
config, seed, versions, normalisation, the column table, the schema
version) is stored as a JSON string object ``toymc_meta`` beside the tree
``events``.
"""

import json
import os
from pathlib import Path

import awkward as ak
import numpy as np
import uproot

from ._files import _tmp_name, atomic_write
from .errors import InputFileError, OutputError

__all__ = ("SCHEMA_VERSION", "TREE", "META", "NtupleWriter", "atomic_write", "block_to_arrays",
           "read_meta", "read_arrays", "versions")

#: bumped whenever columns change meaning, are renamed or removed
SCHEMA_VERSION = 1
TREE = "events"
META = "toymc_meta"


def versions():
    """Versions of toymc and the libraries that determine the events."""
    import numba
    import particle

    from . import __version__

    return {"toymc": __version__, "numpy": np.__version__, "numba": numba.__version__,
            "awkward": ak.__version__, "uproot": uproot.__version__,
            "particle": particle.__version__}


def block_to_arrays(block):
    """Dict of numpy arrays (per event) and awkward records (groups) for writing."""
    out = dict(block.event)
    for name, (counts, cols) in block.groups.items():
        out[name] = ak.zip({k: ak.unflatten(v, counts) for k, v in cols.items()},
                           depth_limit=None) if cols else None
        if out[name] is None:
            del out[name]
    return out


class NtupleWriter:
    """Write blocks to ``path`` atomically.

    Parameters
    ----------
    path : str or Path
    metadata : dict
        JSON-serialisable; ``events`` and ``schema_version`` are filled in on close.
    force : bool
        Overwrite an existing file (otherwise :class:`OutputError`).
    compression : str
        "lz4" (default: fast, any ROOT 6), "zlib" (slowest, readable by
        every ROOT version), "zstd" (smallest files, ROOT >= 6.20) or "none".
    """

    COMPRESSION = {"lz4": lambda: uproot.LZ4(1), "zlib": lambda: uproot.ZLIB(1),
                   "zstd": lambda: uproot.ZSTD(1), "none": lambda: None}

    def __init__(self, path, metadata, force=False, compression="lz4"):
        self.path = Path(path)
        if not self.path.name or self.path.is_dir():
            raise OutputError(f"{str(path)!r}: not a file name (empty, or an existing folder)")
        if self.path.exists() and not force:
            raise OutputError(f"{self.path}: exists; use --force to overwrite")
        if not self.path.parent.exists():
            raise OutputError(f"{self.path}: folder {self.path.parent} does not exist")
        self.tmp = _tmp_name(self.path)
        self.metadata = dict(metadata)
        self.events = 0
        self._tree = None
        try:
            self._file = uproot.recreate(self.tmp, compression=self.COMPRESSION[compression]())
        except OSError as exc:
            raise OutputError(f"{self.path}: cannot write: {exc.strerror or exc}") from None

    def write(self, block):
        data = block_to_arrays(block)
        try:
            if self._tree is None:
                types = {k: (v.type if isinstance(v, ak.Array) else v.dtype) for k, v in data.items()}
                self._tree = self._file.mktree(TREE, types, counter_name=lambda c: "n" + c,
                                               field_name=lambda o, i: o + "_" + i)
            self._tree.extend(data)
        except OSError as exc:
            self.abort()
            raise OutputError(f"{self.path}: write failed: {exc.strerror or exc}") from None
        self.events += block.n

    def close(self):
        meta = dict(self.metadata, events=self.events, schema_version=SCHEMA_VERSION)
        try:
            self._file[META] = json.dumps(meta, sort_keys=True)
            self._file.close()
            os.replace(self.tmp, self.path)
        except OSError as exc:
            self.abort()
            raise OutputError(f"{self.path}: write failed: {exc.strerror or exc}") from None

    def abort(self):
        try:
            self._file.close()
        except Exception:  # noqa: BLE001 - best effort cleanup
            pass
        if self.tmp.exists():
            self.tmp.unlink()

    def __enter__(self):
        return self

    def __exit__(self, typ, exc, tb):
        if typ is None:
            self.close()
        else:
            self.abort()
        return False


def _open(path):
    p = Path(path)
    if not p.is_file():
        raise InputFileError(f"{path}: file not found")
    try:
        f = uproot.open(p)
    except Exception as exc:  # noqa: BLE001 - uproot raises many types for bad files
        raise InputFileError(f"{path}: not a readable ROOT file ({type(exc).__name__})") from None
    if META not in f or TREE not in f:
        f.close()
        raise InputFileError(f"{path}: not a toymc file (no '{TREE}' tree and '{META}' metadata)")
    return f


def read_meta(path):
    """The metadata dict of a toymc file."""
    with _open(path) as f:
        try:
            return json.loads(str(f[META]))
        except Exception as exc:  # noqa: BLE001
            raise InputFileError(f"{path}: damaged toymc metadata ({type(exc).__name__})") from None


def read_arrays(path, columns=None):
    """All events of a toymc file as an awkward array (small files; see toymc.read)."""
    with _open(path) as f:
        tree = f[TREE]
        if columns is not None:
            missing = [c for c in columns if c not in tree.keys()]
            if missing:
                raise InputFileError(f"{path}: no column(s) {', '.join(missing)}")
        try:
            return tree.arrays(columns)
        except Exception as exc:  # noqa: BLE001
            raise InputFileError(f"{path}: cannot read events ({type(exc).__name__}: {exc})") from None
