"""The folder of a scan: its index (``index.json``) and the checks of the folder before a
scan starts or resumes.

The index holds the config text, the grid and one row per finished point (status,
method, efficiency and error, events, ESS, file, seed); the scan rewrites it atomically
after each finished mass (:func:`write_index`).  :func:`load_index` refuses an index that
is not the structure a scan writes; :func:`check_scan_dir` refuses a folder a scan cannot
use, before anything is created.
"""

import json
import os
from pathlib import Path

from toymc.errors import InputFileError, OutputError
from toymc.io.files import check_output_dir
from toymc.io.tables import write_json

__all__ = ("INDEX", "MAP_FILES", "check_index", "check_rows", "check_scan_dir", "load_index",
           "write_index")

INDEX = "index.json"
#: the efficiency map files a scan writes next to its index
MAP_FILES = ("efficiency_map.csv", "efficiency_map.png")


def write_index(path, index, force=True):
    """Write a scan index (sorted keys); a new scan's first index passes ``force=False``."""
    write_json(path, index, sort_keys=True, force=force)


def _is_int(v):
    return isinstance(v, int) and not isinstance(v, bool)


def _is_number(v):
    return isinstance(v, (int, float)) and not isinstance(v, bool)


#: kinds of the fields of an index row (toymc.analysis.scan.run_mass_task)
_ROW_FIELDS = (("mass_index", _is_int, "an integer"), ("ctau_index", _is_int, "an integer"),
               ("mass", _is_number, "a number"), ("ctau", _is_number, "a number"),
               ("efficiency", _is_number, "a number"), ("error", _is_number, "a number"),
               ("events", _is_int, "an integer"), ("status", lambda v: isinstance(v, str), "text"),
               ("method", lambda v: isinstance(v, str), "text"),
               ("file", lambda v: isinstance(v, str), "text"))


def check_index(index, path):
    """Refuse an index that is not the structure a scan writes (InputFileError)."""
    def bad(what):
        raise InputFileError(f"{path}: damaged scan index ({what})")

    if not isinstance(index, dict):
        bad(f"a JSON object expected, found {type(index).__name__}")
    for key, kind in (("config", str), ("grid", dict), ("points", list)):
        if not isinstance(index.get(key), kind):
            bad(f"{key}: {kind.__name__} expected" if key in index else f"no {key}")
    for i, row in enumerate(index["points"]):
        if not isinstance(row, dict):
            bad(f"points[{i}] is not an object")
        for key, ok, what in _ROW_FIELDS:
            if not ok(row.get(key)):
                bad(f"points[{i}].{key} = {row.get(key)!r}: {what}")
    return index


def load_index(outdir):
    """The checked index of the scan in `outdir`, or None if it has none."""
    p = Path(outdir) / INDEX
    if not os.path.lexists(p):
        return None
    if not p.is_file():
        raise InputFileError(f"{p}: damaged scan index (not a regular file)")
    try:
        index = json.loads(p.read_text())
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputFileError(f"{p}: damaged scan index ({exc})") from None
    return check_index(index, p)




def check_scan_dir(out, resume):
    """Every check of the scan folder `out` (a Path), before anything is created; returns
    the index of the scan to resume (None for a new scan)."""
    try:
        check_output_dir(out)  # a folder, or missing under a folder
    except OutputError as exc:
        raise OutputError(f"scan folder not writable: {exc}") from None
    exists = out.is_dir()
    points = out / "points"
    if os.path.lexists(points) and not points.is_dir():
        raise OutputError(f"{points}: not a folder (the scan keeps its samples there)")
    if not resume:
        if os.path.lexists(out / INDEX):
            raise OutputError(f"{out}: holds a scan already ({INDEX}); use --resume to continue "
                              "it or another folder")
        present = [n for n in MAP_FILES if os.path.lexists(out / n)]
        if points.is_dir() and any(points.iterdir()):
            present.append("points/")
        if present:
            raise OutputError(f"{out}: holds scan outputs ({', '.join(present)}) but no "
                              f"{INDEX}; choose another folder")
        return None
    if not exists:
        raise OutputError(f"{out}: no scan to resume (the folder does not exist); run without "
                          "--resume to start one")
    # the files a resume rewrites must be regular files
    check_output_dir(out, (INDEX,) + MAP_FILES, force=True)
    old = load_index(out)
    if old is None:
        raise OutputError(f"{out}: no scan to resume (no {INDEX}); run without --resume to "
                          "start one")
    return old


def check_rows(old, grid, path):
    """Rows of a resumed index must fit the grid (``masses`` and ``ctaus`` of a
    :class:`toymc.analysis.scan.Grid`), and a finished mass must have every c*tau."""
    n_m, n_c = len(grid.masses), len(grid.ctaus)
    done = {}
    for i, r in enumerate(old["points"]):
        if not (0 <= r["mass_index"] < n_m and 0 <= r["ctau_index"] < n_c):
            raise InputFileError(f"{path}: damaged scan index (points[{i}] lies outside the "
                                 f"{n_m} x {n_c} grid)")
        if r["status"] == "done":
            done.setdefault(r["mass_index"], set()).add(r["ctau_index"])
    for m, cts in done.items():
        if cts != set(range(n_c)):
            raise InputFileError(f"{path}: damaged scan index (mass {m} is marked done with "
                                 f"{len(cts)} of {n_c} c*tau points)")
