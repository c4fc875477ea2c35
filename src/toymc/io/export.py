"""Export toymc ntuples to other formats (Parquet), and read the exports back.

Parquet layout
--------------
One row per event; the columns have the same names, types and units as the
ROOT file's branches (:mod:`toymc.io.columns`): per-event columns as plain
columns, group counters (``ndau``) as int32 columns and group fields
(``dau_px``) as list columns.  The file's metadata (JSON) is stored in the
Parquet key-value metadata under the key ``AWKWARD_ATTRS`` as
``{"toymc_meta": {...}}`` (written through awkward's ``attrs``), so
``ak.from_parquet(path).attrs["toymc_meta"]`` or, with pyarrow alone,
``json.loads(pyarrow.parquet.read_schema(path).metadata[b"AWKWARD_ATTRS"])``
gives it back.  One row group is written per read chunk, so memory holds one
chunk at a time; the file is written under a temporary name and renamed
when complete.

pyarrow is an optional dependency: ``pip install "toymc[parquet]"``.
"""

from pathlib import Path

from toymc.errors import ConfigError, InputFileError, OutputError, ToymcError
from toymc.io.files import check_output, commit, discard, temporary

__all__ = ("FORMATS", "META_KEY", "export", "read_parquet")

#: export formats and their file suffixes
FORMATS = {"parquet": ".parquet"}
#: key of the metadata inside awkward's attrs
META_KEY = "toymc_meta"


def _require_pyarrow():
    try:
        import pyarrow
        import pyarrow.parquet
    except ImportError:
        raise ToymcError('Parquet needs pyarrow, an optional dependency: '
                         'pip install "toymc[parquet]"') from None


def export(path, output=None, format="parquet", force=False, step_size=None):
    """Write the events and metadata of a toymc file in another format.

    Parameters
    ----------
    path : str or Path
        A toymc ROOT file.
    output : str or Path, optional
        Default: `path` with the format's suffix (``.parquet``).
    format : str
        One of :data:`FORMATS`.
    force : bool
        Overwrite an existing `output`.
    step_size : int or str, optional
        Events per row group, or an uproot step size such as ``"100 MB"``
        (default :data:`toymc.io.reader.DEFAULT_STEP_SIZE`).

    Returns
    -------
    dict
        ``output``, ``events``, ``format``.

    Raises
    ------
    InputFileError
        `path` is not a readable toymc file.
    OutputError
        `output` exists (without `force`), is the input, or cannot be written.
    ToymcError
        pyarrow is missing (with the install command).
    """
    import awkward as ak

    from toymc.io.info import load_meta
    from toymc.io.reader import DEFAULT_STEP_SIZE, _open_tree, _reason, layout

    if format not in FORMATS:
        raise ConfigError(None, "format", format, "one of " + ", ".join(FORMATS))
    _require_pyarrow()
    src = Path(path)
    meta = load_meta(src)
    out = check_output(output if output is not None else src.with_suffix(FORMATS[format]),
                       force=force, inputs=[src])
    f, tree = _open_tree(src)
    counted = [0]

    def chunks():
        it = tree.iterate(step_size=step_size or DEFAULT_STEP_SIZE, library="ak")
        first = True
        while True:
            try:
                chunk = next(it)
            except StopIteration:
                return
            except Exception as exc:  # noqa: BLE001 - damaged baskets
                raise InputFileError(f"{src}: cannot read events ({_reason(exc)})") from None
            if first:
                chunk = ak.Array(chunk, attrs={META_KEY: meta})
                first = False
            counted[0] += len(chunk)
            yield chunk

    tmp = temporary(out)
    try:
        layout(tree)  # checks the toymc column layout
        if tree.num_entries == 0:
            empty = ak.Array(tree.arrays(entry_stop=0, library="ak"), attrs={META_KEY: meta})
            ak.to_parquet(empty, tmp)
        else:
            ak.to_parquet_row_groups(chunks(), tmp)
        if counted[0] != tree.num_entries:
            raise InputFileError(f"{src}: read {counted[0]} of {tree.num_entries} events")
        commit(tmp, out, force)
    except OSError as exc:
        raise OutputError(f"{out}: write failed: {exc.strerror or exc}") from None
    finally:
        f.close()
        discard(tmp)
    return {"output": str(out), "events": counted[0], "format": format}


def read_parquet(path, columns=None, vectors=True):
    """Read a Parquet export back: events (as :func:`toymc.io.reader.read`) and metadata.

    Parameters
    ----------
    path : str or Path
    columns : list of str, optional
        Stored column names to read (default: all).
    vectors : bool
        Add the `vector` records of :func:`toymc.io.reader.add_records`.

    Returns
    -------
    events : ak.Array
    meta : dict
    """
    import awkward as ak

    from toymc.io.reader import _reason, add_records

    _require_pyarrow()
    p = Path(path)
    if not p.is_file():
        raise InputFileError(f"{path}: file not found")
    try:
        available = ak.metadata_from_parquet(p)["form"].fields
    except Exception as exc:  # noqa: BLE001 - pyarrow raises many types for bad files
        raise InputFileError(f"{path}: not a readable Parquet file ({type(exc).__name__})") from None
    if columns is not None:
        missing = [c for c in columns if c not in available]
        if missing:
            raise InputFileError(f"{path}: no column(s) {', '.join(missing)}")
    try:
        events = ak.from_parquet(p, columns=columns)
    except Exception as exc:  # noqa: BLE001
        raise InputFileError(f"{path}: cannot read Parquet ({_reason(exc)})") from None
    meta = dict(events.attrs).get(META_KEY)
    if not isinstance(meta, dict):
        raise InputFileError(f"{path}: not a toymc export (no {META_KEY} metadata)")
    events = ak.Array(events, attrs=None)
    return (add_records(events) if vectors else events), meta
