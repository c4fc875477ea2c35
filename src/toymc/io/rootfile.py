"""What makes a ROOT file a toymc file, and the one opener of input ROOT files.

A toymc file holds the TTree ``events`` and the JSON text object ``toymc_meta``
(:mod:`toymc.io.ntuple` writes them; :mod:`toymc.io.verify` checks them).
"""

from pathlib import Path

from toymc.errors import InputFileError

__all__ = ("META", "SCHEMA_VERSION", "TREE", "open_root")

#: bumped whenever columns change meaning, are renamed or removed
SCHEMA_VERSION = 1
TREE = "events"
META = "toymc_meta"


def open_root(path, toymc=True):
    """Open a ROOT file for reading: the one place where toymc opens an input file.

    Parameters
    ----------
    path : str or Path
    toymc : bool
        Also require the ``events`` tree and the ``toymc_meta`` metadata.

    Returns
    -------
    uproot.ReadOnlyDirectory
        Close it (or use it in a ``with`` statement).

    Raises
    ------
    toymc.errors.InputFileError
        ``<path>: file not found``, ``not a readable ROOT file (<error type>)`` or
        ``not a toymc file (...)``.
    """
    import uproot

    p = Path(path)
    if not p.is_file():
        raise InputFileError(f"{path}: file not found")
    try:
        f = uproot.open(p)
    except Exception as exc:  # noqa: BLE001 - uproot raises many types for bad files
        raise InputFileError(f"{path}: not a readable ROOT file ({type(exc).__name__})") from None
    if toymc and (META not in f or TREE not in f):
        f.close()
        raise InputFileError(f"{path}: not a toymc file (no '{TREE}' tree and '{META}' metadata)")
    return f
