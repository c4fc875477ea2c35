"""``toymc report FILE``: the data of the plots an analysis wants from one ntuple with reco
columns (histograms, cutflow counts, efficiencies per bin); the figures are drawn by
:mod:`toymc.plots.report` and the command is :mod:`toymc.cli.report`.

The report writes into its output folder (units on every axis):

``vertex_r.png``        transverse decay radius: truth (all events, and events with a
                        found vertex) and reconstructed (vertex candidates, found vertices)
``vertex_z.png``        the same for z
``mass.png``            reconstructed mass of events with all daughters found
                        (``cut_photons``) and after the full selection (``cut_mass``;
                        one histogram when there is no mass window)
``cutflow.png``         events passing each cutflow step that applies to the channel
                        (:func:`toymc.analysis.cutflow.step_flags`), with step and cumulative
                        efficiencies (binomial errors, :func:`toymc.detector.response.cutflow`)
``efficiency_vs_r.png`` fraction of events passing each such step per bin of the TRUE
                        decay radius (binomial errors); steps passed by the same events
                        share one series (:func:`efficiency_series`)

Histograms have round bin widths (:func:`toymc.analysis.binning.round_edges`).

Photon-only decays have no reconstructed vertex (``vtx_*`` are NaN, see
:mod:`toymc.detector.response`); their vertex plots show truth only.
"""

import numpy as _np

from toymc.analysis.binning import round_edges as _round_edges
from toymc.errors import InputFileError as _InputFileError

__all__ = ("REPORT_COLUMNS", "REPORT_FILES", "cutflow_steps", "efficiency_series",
           "efficiency_vs_radius", "mass_histograms", "read_columns", "vertex_histograms")

#: the files the report writes into its folder
REPORT_FILES = ("vertex_r.png", "vertex_z.png", "mass.png", "cutflow.png", "efficiency_vs_r.png")
#: columns the report reads
REPORT_COLUMNS = ("llp_dr", "llp_dz", "llp_m", "vtx_r", "vtx_z", "rec_m", "cut_tracks",
                  "cut_fiducial", "cut_vertex", "cut_photons", "cut_mass")


def _binomial(k, n):
    with _np.errstate(invalid="ignore", divide="ignore"):
        eff = _np.where(n > 0, k / _np.maximum(n, 1), _np.nan)
        err = _np.where(n > 0, _np.sqrt(eff * (1 - eff) / _np.maximum(n, 1)), _np.nan)
    return eff, err


def _range(*arrays, lo_q=0.0, hi_q=99.0):
    vals = _np.concatenate([a[_np.isfinite(a)] for a in arrays])
    if vals.size == 0:
        return 0.0, 1.0
    lo, hi = _np.percentile(vals, [lo_q, hi_q])
    if not hi > lo:
        hi = lo + 1.0
    return float(lo), float(hi)


def efficiency_series(r, steps, edges):
    """Efficiency per bin of the true radius for each cutflow step, one series per
    distinct set of passing events.

    Parameters
    ----------
    r : array_like
        True transverse decay radius of every event, cm.
    steps : list of (label, flags)
        Cumulative pass flags in cutflow order (:func:`toymc.analysis.cutflow.step_flags`).
    edges : array_like
        Bin edges, cm.

    Returns
    -------
    list of (label, eff, err)
        Binomial efficiency and error per bin (NaN in empty bins).  Consecutive
        steps passed by exactly the same events would lie on top of each other:
        they form one series labelled ``"a = b (same events)"``.
    """
    r = _np.asarray(r)
    tot = _np.histogram(r, edges)[0].astype(float)
    groups = []
    for label, flags in steps:
        flags = _np.asarray(flags, dtype=bool)
        if groups and _np.array_equal(groups[-1][1], flags):
            groups[-1][0].append(label)
        else:
            groups.append(([label], flags))
    out = []
    for labels, flags in groups:
        k = _np.histogram(r[flags], edges)[0].astype(float)
        e, s = _binomial(k, tot)
        name = " = ".join(labels) + (" (same events)" if len(labels) > 1 else "")
        out.append((name, e, s))
    return out


def read_columns(path, meta):
    """The columns of :data:`REPORT_COLUMNS` of a checked toymc file (`meta` from
    :func:`toymc.io.info.load_meta`) and its number of events.

    Raises
    ------
    toymc.errors.InputFileError
        A file without the reco columns (generated without a geometry), or no events.
    """
    from toymc.io.ntuple import read_arrays

    try:
        ev = read_arrays(path, list(REPORT_COLUMNS))
    except _InputFileError as exc:
        raise _InputFileError(f"{exc} -- the report needs the reco columns: generate with a "
                              f"[detector] geometry (this file: geometry "
                              f"{meta.get('geometry') or 'none'})") from None
    col = {k: _np.asarray(ev[k]) for k in REPORT_COLUMNS}
    n = col["llp_dr"].size
    if n == 0:
        raise _InputFileError(f"{path}: no events")
    return col, n


def vertex_histograms(col):
    """Histograms of the decay vertex in r and z (keys ``"r"``, ``"z"``), 60 round bins.

    Each is a dict: ``edges`` (cm); counts of the truth decay point of all events
    (``truth``) and of events with a found vertex (``truth_found``); and, when some
    event has a vertex candidate, of the reconstructed vertex of all candidates
    (``reco``) and of found vertices (``reco_found``), else None for both.
    """
    found = col["cut_vertex"].astype(bool)
    cand = _np.isfinite(col["vtx_r"])
    out = {}
    for key, tcol, rcol in (("r", "llp_dr", "vtx_r"), ("z", "llp_dz", "vtx_z")):
        lo, hi = _range(col[tcol], col[rcol], lo_q=0.5 if key == "z" else 0.0, hi_q=99.0)
        if key == "r":
            lo = 0.0
        edges = _round_edges(lo, hi, 60)
        h = {"edges": edges, "truth": _np.histogram(col[tcol], edges)[0],
             "truth_found": _np.histogram(col[tcol][found], edges)[0], "reco": None,
             "reco_found": None}
        if cand.any():
            h["reco"] = _np.histogram(col[rcol][cand], edges)[0]
            h["reco_found"] = _np.histogram(col[rcol][found & cand], edges)[0]
        out[key] = h
    return out


def mass_histograms(col):
    """Reconstructed mass of events with all daughters found (``cut_photons``) and after the
    full selection (``cut_mass``), 80 bins of a round width in MeV.

    Returns
    -------
    dict
        ``m_true`` (median true mass, GeV), ``edges`` (GeV), ``found`` (counts of
        cut_photons events) and ``selected`` (counts of cut_mass events, or None when both
        steps pass the same events: no mass window).
    """
    m_true = float(_np.nanmedian(col["llp_m"]))
    allf = col["cut_photons"].astype(bool)
    sel = col["cut_mass"].astype(bool)
    rec = col["rec_m"]
    base = rec[allf & _np.isfinite(rec)]
    if base.size:
        lo, hi = _np.percentile(base, [0.5, 99.5])
        lo, hi = min(lo, m_true) - 0.05 * m_true, max(hi, m_true) + 0.05 * m_true
    else:
        lo, hi = 0.0, 2.0 * m_true
    edges = _round_edges(lo * 1e3, hi * 1e3, 80) / 1e3  # round in MeV
    same = _np.array_equal(allf, sel)
    return {"m_true": m_true, "edges": edges, "found": _np.histogram(base, edges)[0],
            "selected": None if same else _np.histogram(rec[sel], edges)[0]}


def cutflow_steps(col, channel):
    """The cutflow steps that apply to `channel` (:func:`toymc.analysis.cutflow.step_flags`)
    and their counts (:func:`toymc.detector.response.cutflow`).

    Returns
    -------
    steps : list of (step, label, flags)
    rows : list of (step, passing, step efficiency, its error, ...)
    marked : bool
        Whether a label is marked ``*`` (a step applied to the true decay point).
    """
    from toymc.analysis.cutflow import step_flags
    from toymc.detector.response import cutflow

    steps = step_flags(col, channel)
    rows = cutflow({f"cut_{s}": f for s, _, f in steps})
    return steps, rows, any(lab.endswith("*") for _, lab, _ in steps)


def efficiency_vs_radius(col, steps):
    """Bin edges (40 round bins of the true radius, cm) and :func:`efficiency_series` of the
    cutflow steps."""
    _lo, hi = _range(col["llp_dr"], hi_q=99.0)
    edges = _round_edges(0.0, hi, 40)
    return edges, efficiency_series(col["llp_dr"], [(lab, f) for _, lab, f in steps], edges)
