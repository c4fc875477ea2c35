"""``toymc cutflow FILE``: the selection steps of an ntuple with efficiencies."""

import math

import numpy as np

from .detector.response import CUT_STEPS, cutflow
from .errors import InputFileError
from .info import load_meta
from .io import read_arrays

__all__ = ("cutflow_rows", "cutflow_table")


def cutflow_rows(path):
    """[(step, n_pass, step eff, step err, cumulative eff, cumulative err)] of a file."""
    meta = load_meta(path)
    cols = [f"cut_{s}" for s in CUT_STEPS]
    try:
        ev = read_arrays(path, cols)
    except InputFileError:
        raise InputFileError(f"{path}: no cutflow columns (cut_*): generated without a geometry? "
                             f"(process {meta.get('process')}, geometry "
                             f"{meta.get('geometry') or 'none'})") from None
    data = {c: np.asarray(ev[c]) for c in cols}
    n = len(data[cols[0]])
    rows = []
    for step, n_pass, eff, err in cutflow(data):
        cum = n_pass / n if n else 0.0
        rows.append((step, n_pass, eff, err, cum, math.sqrt(cum * (1 - cum) / n) if n else 0.0))
    return n, rows


def cutflow_table(path):
    """The cutflow of `path` as printable text (binomial errors)."""
    n, rows = cutflow_rows(path)
    lines = [f"cutflow of {path}: {n} events",
             f"{'step':10s} {'events':>9s} {'step eff':>18s} {'cumulative eff':>18s}",
             f"{'generated':10s} {n:9d} {'':>18s} {'1':>18s}"]
    for step, k, eff, err, cum, cerr in rows:
        lines.append(f"{step:10s} {k:9d} {eff:9.4f} +- {err:6.4f} {cum:9.4f} +- {cerr:6.4f}")
    return "\n".join(lines)
