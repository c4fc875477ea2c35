"""The efficiency map file of a scan (``efficiency_map.csv``): writing and reading.

Columns: ``mass_gev, ctau_cm, efficiency, error, method, events``, one row per grid
point in (mass, c*tau) order, numbers as Python's ``repr`` (exact round trip).
``toymc reach`` with ``efficiency = "map"`` reads it back (:func:`read_map`).
"""

import csv as _csv
from pathlib import Path as _Path

import numpy as _np

from toymc.errors import InputFileError as _InputFileError
from toymc.io.tables import write_csv as _write_csv

__all__ = ("MAP_COLUMNS", "read_map", "write_map")

#: the columns of an efficiency map
MAP_COLUMNS = ("mass_gev", "ctau_cm", "efficiency", "error", "method", "events")


def write_map(path, points, force=None):
    """Write the rows of a scan index (``mass``, ``ctau``, ``efficiency``, ``error``,
    ``method``, ``events``, ``mass_index``, ``ctau_index``) as an efficiency map.

    Parameters
    ----------
    path : str or Path
    points : list of dict
        Index rows (:func:`toymc.analysis.scan.run_mass_task`), written sorted by
        (mass_index, ctau_index).
    force : bool, optional
        Replace an existing map (default: the command's ``replacing``).
    """
    rows = ([repr(r["mass"]), repr(r["ctau"]), repr(r["efficiency"]), repr(r["error"]),
             r["method"], r["events"]]
            for r in sorted(points, key=lambda r: (r["mass_index"], r["ctau_index"])))
    _write_csv(path, MAP_COLUMNS, rows, force=force)


def read_map(path):
    """Read an ``efficiency_map.csv`` of a scan into a rectangular grid.

    Returns
    -------
    masses : ndarray (GeV), ctaus : ndarray (cm), eff : ndarray (n_mass, n_ctau)

    Raises
    ------
    toymc.errors.InputFileError
        Missing file, missing columns, non-numeric or NaN entries, a grid that
        is not a full rectangle, fewer than two masses or two c*tau values.
    """
    p = _Path(path)
    if not p.is_file():
        raise _InputFileError(f"{p}: efficiency map not found")
    try:
        with open(p, newline="") as f:
            rows = list(_csv.DictReader(f))
    except (OSError, UnicodeDecodeError, _csv.Error) as exc:
        raise _InputFileError(f"{p}: cannot read efficiency map ({exc})") from None
    need = ("mass_gev", "ctau_cm", "efficiency")
    if not rows or any(k not in rows[0] for k in need):
        raise _InputFileError(f"{p}: an efficiency map needs the columns {', '.join(need)}")
    try:
        trip = _np.array([[float(r[k]) for k in need] for r in rows])
    except (TypeError, ValueError):
        raise _InputFileError(f"{p}: non-numeric mass_gev, ctau_cm or efficiency entry") from None
    if not _np.all(_np.isfinite(trip)):
        bad = int(_np.argwhere(~_np.all(_np.isfinite(trip), axis=1))[0, 0]) + 2
        raise _InputFileError(f"{p}: line {bad}: mass, c*tau and efficiency must be finite")
    masses = _np.unique(trip[:, 0])
    ctaus = _np.unique(trip[:, 1])
    if masses.size < 2 or ctaus.size < 2 or _np.any(ctaus <= 0):
        raise _InputFileError(f"{p}: need at least two masses and two c*tau values > 0")
    if len(rows) != masses.size * ctaus.size:
        raise _InputFileError(f"{p}: {len(rows)} rows do not fill the {masses.size} x "
                              f"{ctaus.size} grid of its masses and c*tau values")
    eff = _np.full((masses.size, ctaus.size), _np.nan)
    eff[_np.searchsorted(masses, trip[:, 0]), _np.searchsorted(ctaus, trip[:, 1])] = trip[:, 2]
    if _np.any(_np.isnan(eff)):
        raise _InputFileError(f"{p}: duplicate (mass, c*tau) rows; the grid is not complete")
    return masses, ctaus, eff
