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

import awkward as ak
import uproot

from toymc.engine.block import block_to_arrays, versions
from toymc.errors import InputFileError, OutputError
from toymc.io import files as _files
from toymc.io.files import atomic_write
from toymc.io.rootfile import META, SCHEMA_VERSION, TREE, open_root
from toymc.io.verify import column_digests, meta_text

__all__ = ("SCHEMA_VERSION", "TREE", "META", "NtupleWriter", "atomic_write", "block_to_arrays",
           "open_root", "read_meta", "read_arrays", "versions")



def _column_crc32(path):
    with uproot.open(path) as f:
        if TREE not in f:
            return {}
        return column_digests(path, f[TREE])


def _branch_names(data):
    """Branch names mktree makes of `data`: ``n<group>`` and ``<group>_<field>`` for groups."""
    names = set()
    for k, v in data.items():
        if isinstance(v, ak.Array):
            names.add("n" + k)
            names.update(f"{k}_{f}" for f in v.fields) if v.fields else names.add(k)
        else:
            names.add(k)
    return names


class NtupleWriter:
    """Write blocks to ``path`` atomically.

    Parameters
    ----------
    path : str or Path
    metadata : dict
        JSON-serialisable; ``events`` and ``schema_version`` are filled in on
        close, and the column table (``columns``) keeps only the columns written.
    force : bool
        Overwrite an existing regular file (otherwise :class:`OutputError`).
    compression : str
        "lz4" (default: fast, any ROOT 6), "zlib" (slowest, readable by
        every ROOT version), "zstd" (smallest files, ROOT >= 6.20) or "none".
    inputs : iterable of paths
        The run's input files (config, geometry): never overwritten.

    The output follows the policy of :mod:`toymc.io.files`: checked before any
    work, written under a temporary name, put in place by a no-clobber rename
    (without `force`) so that of two runs writing the same file one fails.
    """

    COMPRESSION = {"lz4": lambda: uproot.LZ4(1), "zlib": lambda: uproot.ZLIB(1),
                   "zstd": lambda: uproot.ZSTD(1), "none": lambda: None}

    def __init__(self, path, metadata, force=False, compression="lz4", inputs=()):
        self.path = _files.check_output(path, force=force, inputs=inputs)
        self.force = force
        self.metadata = dict(metadata)
        self.events = 0
        self._tree = None
        self._file = None
        self.tmp = _files.temporary(self.path)
        try:
            self._file = uproot.recreate(self.tmp, compression=self.COMPRESSION[compression]())
        except OSError as exc:
            _files.discard(self.tmp)
            raise OutputError(f"{self.path}: cannot write: {exc.strerror or exc}") from None
        except BaseException:
            _files.discard(self.tmp)
            raise

    def write(self, block):
        data = block_to_arrays(block)
        try:
            if self._tree is None:
                types = {k: (v.type if isinstance(v, ak.Array) else v.dtype) for k, v in data.items()}
                self._tree = self._file.mktree(TREE, types, counter_name=lambda c: "n" + c,
                                               field_name=lambda o, i: o + "_" + i)
                self._names = _branch_names(data)
            self._tree.extend(data)
        except OSError as exc:
            self.abort()
            raise OutputError(f"{self.path}: write failed: {exc.strerror or exc}") from None
        self.events += block.n

    def close(self):
        meta = dict(self.metadata, events=self.events, schema_version=SCHEMA_VERSION)
        if self._tree is not None and "columns" in meta:  # promise only what was written
            meta["columns"] = [list(c) for c in meta["columns"] if c[0] in self._names]
        try:
            # the tree first; then the checksums of its stored baskets and of the metadata
            # (toymc.io.verify), added to the complete file
            self._file.close()
            meta["column_crc32"] = _column_crc32(self.tmp)
            with uproot.update(self.tmp) as f:
                f[META] = meta_text(meta)
        except OSError as exc:
            self.abort()
            raise OutputError(f"{self.path}: write failed: {exc.strerror or exc}") from None
        except BaseException:
            self.abort()
            raise
        _files.commit(self.tmp, self.path, self.force)

    def abort(self):
        try:
            if self._file is not None:
                self._file.close()
        except Exception:  # noqa: BLE001 - best effort cleanup
            pass
        _files.discard(self.tmp)

    def __enter__(self):
        return self

    def __exit__(self, typ, exc, tb):
        if typ is None:
            self.close()
        else:
            self.abort()
        return False


def read_meta(path):
    """The metadata dict of a toymc file."""
    with open_root(path) as f:
        try:
            return json.loads(str(f[META]))
        except Exception as exc:  # noqa: BLE001
            raise InputFileError(f"{path}: damaged toymc metadata ({type(exc).__name__})") from None


def read_arrays(path, columns=None):
    """All events of a toymc file as an awkward array (small files; see toymc.read)."""
    with open_root(path) as f:
        tree = f[TREE]
        if columns is not None:
            missing = [c for c in columns if c not in tree.keys()]
            if missing:
                raise InputFileError(f"{path}: no column(s) {', '.join(missing)}")
        try:
            return tree.arrays(columns)
        except Exception as exc:  # noqa: BLE001
            raise InputFileError(f"{path}: cannot read events ({type(exc).__name__}: {exc})") from None
