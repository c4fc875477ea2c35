"""``toymc cutflow FILE``: the selection steps of an ntuple with efficiencies.

Only the steps that mean something for the file's decay channel are shown
(:func:`channel_steps`): a channel without charged daughters has no track step
(``cut_tracks`` is true for every event), a channel without photons has no
photon step (``cut_photons`` equals ``cut_vertex``).  For photon-only decays
the window and the vertex profile apply to the true decay point (see
:mod:`toymc.detector.response`); the table marks those steps.
"""

import math

import numpy as np

from toymc.detector.response import CUT_STEPS, cutflow
from toymc.errors import InputFileError
from toymc.io.info import load_meta
from toymc.io.ntuple import read_arrays

__all__ = ("TRUE_POINT_NOTE", "channel_steps", "cutflow_rows", "cutflow_table", "step_flags")

#: footnote of the steps that use the true decay point (photon-only decays)
TRUE_POINT_NOTE = ("* photon-only decay (no tracker vertex): window and profile at the true "
                   "decay point")


def channel_steps(channel):
    """The cutflow steps that apply to a decay channel, with their labels.

    Parameters
    ----------
    channel : str or None
        Name in :data:`toymc.physics.decays.CHANNELS`; an unknown name keeps every step.

    Returns
    -------
    list of (step, label)
        Steps in the order of :data:`toymc.detector.response.CUT_STEPS`; the
        label of ``fiducial`` and ``vertex`` ends in ``*`` for a channel without
        charged daughters (see :data:`TRUE_POINT_NOTE`).
    """
    from toymc.physics.decays import CHANNELS

    ch = CHANNELS.get(channel)
    if ch is None:
        return [(s, s) for s in CUT_STEPS]
    final = ch.status == 1
    charged = bool(np.any(ch.q[final] != 0))
    photons = bool(np.any(ch.pdg[final] == 22))
    out = []
    for s in CUT_STEPS:
        if (s == "tracks" and not charged) or (s == "photons" and not photons):
            continue
        out.append((s, s + "*" if s in ("fiducial", "vertex") and not charged else s))
    return out


def step_flags(columns, channel):
    """The pass flags of the steps that apply, as ``[(step, label, flags)]``.

    A step left out for the channel passes exactly the events of the step
    before it (all events for the first step); should it not, it is kept.
    """
    keep = dict(channel_steps(channel))
    out, prev = [], None
    for s in CUT_STEPS:
        flags = np.asarray(columns[f"cut_{s}"], dtype=bool)
        same = np.array_equal(flags, prev) if prev is not None else bool(np.all(flags))
        if s in keep or not same:
            out.append((s, keep.get(s, s), flags))
        prev = flags
    return out


def cutflow_rows(path):
    """(events, [(step, n_pass, step eff, step err, cumulative eff, cumulative err)]) of a file."""
    meta = load_meta(path)
    cols = [f"cut_{s}" for s in CUT_STEPS]
    try:
        ev = read_arrays(path, cols)
    except InputFileError:
        raise InputFileError(f"{path}: no cutflow columns (cut_*): generated without a geometry? "
                             f"(process {meta.get('process')}, geometry "
                             f"{meta.get('geometry') or 'none'})") from None
    flags = step_flags({c: np.asarray(ev[c]) for c in cols}, meta.get("channel"))
    n = len(np.asarray(ev[cols[0]]))
    label = {s: lab for s, lab, _ in flags}
    rows = []
    for step, n_pass, eff, err in cutflow({f"cut_{s}": f for s, _, f in flags}):
        cum = n_pass / n if n else 0.0
        rows.append((label[step], n_pass, eff, err, cum,
                     math.sqrt(cum * (1 - cum) / n) if n else 0.0))
    return n, rows


def cutflow_table(path):
    """The cutflow of `path` as printable text (binomial errors)."""
    n, rows = cutflow_rows(path)
    lines = [f"cutflow of {path}: {n} events",
             f"{'step':10s} {'events':>9s} {'step eff':>18s} {'cumulative eff':>18s}",
             f"{'generated':10s} {n:9d} {'':>18s} {'1':>18s}"]
    for step, k, eff, err, cum, cerr in rows:
        lines.append(f"{step:10s} {k:9d} {eff:9.4f} +- {err:6.4f} {cum:9.4f} +- {cerr:6.4f}")
    if any(r[0].endswith("*") for r in rows):
        lines.append(TRUE_POINT_NOTE)
    return "\n".join(lines)
