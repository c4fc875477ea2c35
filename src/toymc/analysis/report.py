"""``toymc report FILE``: the plots an analysis wants from one ntuple with reco columns.

Writes into the output folder (units on every axis):

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

Histograms have round bin widths (:func:`toymc.plots.figures.round_edges`).

Photon-only decays have no reconstructed vertex (``vtx_*`` are NaN, see
:mod:`toymc.detector.response`); their vertex plots show truth only.
"""

from pathlib import Path as _Path

import numpy as _np

from toymc.errors import InputFileError as _InputFileError

__all__ = ("REPORT_COLUMNS", "REPORT_FILES", "efficiency_series", "make_report")

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


def make_report(path, output_dir=None, force=False):
    """Write the report PNGs of one ntuple.

    Parameters
    ----------
    path : str or Path
        toymc ROOT file with reco columns (generated with a geometry).
    output_dir : str or Path, optional
        Created if missing (default ``report_<file stem>``).
    force : bool
        Replace report files already in `output_dir` (otherwise OutputError
        naming the first one, before anything is written).

    Returns
    -------
    list of str
        The PNG paths.

    Raises
    ------
    toymc.errors.InputFileError
        Missing or unreadable file, or a file without the reco columns.
    """
    from toymc.io.files import check_output_dir, make_dir, replacing
    from toymc.io.info import load_meta
    from toymc.io.names import default_output
    from toymc.io.ntuple import read_arrays

    meta = load_meta(path)
    out = check_output_dir(output_dir or default_output("report", path), REPORT_FILES,
                           force=force, inputs=[path])
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
    make_dir(out)
    with replacing(force):
        return _plots(path, meta, col, n, out)


def _plots(path, meta, col, n, out):
    from toymc.analysis.cutflow import TRUE_POINT_NOTE, step_flags
    from toymc.detector.response import cutflow
    from toymc.plots.figures import (
        binned_efficiency_plot,
        cutflow_plot,
        histogram_plot,
        round_edges,
    )

    name = _Path(path).name
    what = f"{meta.get('channel', '?')}, m = {meta.get('mass_gev', float('nan')):g} GeV, " \
           f"c$\\tau$ = {meta.get('ctau_cm', float('nan')):g} cm"
    found = col["cut_vertex"].astype(bool)
    cand = _np.isfinite(col["vtx_r"])
    pngs = []

    for key, tcol, rcol, label in (("r", "llp_dr", "vtx_r", "transverse radius r [cm]"),
                                   ("z", "llp_dz", "vtx_z", "z [cm]")):
        lo, hi = _range(col[tcol], col[rcol], lo_q=0.5 if key == "z" else 0.0, hi_q=99.0)
        if key == "r":
            lo = 0.0
        edges = round_edges(lo, hi, 60)
        series = [{"label": "truth decay point, all events", "counts":
                   _np.histogram(col[tcol], edges)[0]},
                  {"label": "truth decay point, found vertex (cut_vertex)", "counts":
                   _np.histogram(col[tcol][found], edges)[0]}]
        if cand.any():
            series += [{"label": "reconstructed vertex, all candidates", "counts":
                        _np.histogram(col[rcol][cand], edges)[0]},
                       {"label": "reconstructed vertex, found (cut_vertex)", "counts":
                        _np.histogram(col[rcol][found & cand], edges)[0]}]
        title = f"{name}: vertex {key} ({what})"
        if not cand.any():
            title += "\nno reconstructed vertex (photon-only decay): truth only"
        p = out / f"vertex_{key}.png"
        histogram_plot(edges, series, p, f"decay vertex {label}",
                       f"events per {edges[1] - edges[0]:g} cm", title, logy=True)
        pngs.append(str(p))

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
    edges = round_edges(lo * 1e3, hi * 1e3, 80) / 1e3  # round in MeV
    p = out / "mass.png"
    if _np.array_equal(allf, sel):  # no mass window: one histogram, not two on top
        series = [{"label": "all daughters found (cut_photons = cut_mass: no mass window)",
                   "counts": _np.histogram(base, edges)[0]}]
    else:
        series = [{"label": "all daughters found (cut_photons)",
                   "counts": _np.histogram(base, edges)[0]},
                  {"label": "full selection (cut_mass)",
                   "counts": _np.histogram(rec[sel], edges)[0]}]
    histogram_plot(
        edges, series, p, "reconstructed mass rec_m [GeV]",
        f"events per {round(1e3 * (edges[1] - edges[0]), 9):g} MeV",
        f"{name}: reconstructed mass (true {m_true:g} GeV; {what})")
    pngs.append(str(p))

    steps = step_flags(col, meta.get("channel"))
    rows = cutflow({f"cut_{s}": f for s, _, f in steps})
    p = out / "cutflow.png"
    note = any(lab.endswith("*") for _, lab, _ in steps)
    cutflow_plot([lab for _, lab, _ in steps], [r[1] for r in rows], n, [r[2] for r in rows],
                 [r[3] for r in rows], p,
                 title=f"{name}: cutflow", note=TRUE_POINT_NOTE if note else None)
    pngs.append(str(p))

    lo, hi = _range(col["llp_dr"], hi_q=99.0)
    edges = round_edges(0.0, hi, 40)
    curves = efficiency_series(col["llp_dr"], [(lab, f) for _, lab, f in steps], edges)
    p = out / "efficiency_vs_r.png"
    binned_efficiency_plot(edges, curves, p, "true transverse decay radius r [cm]",
                           f"{name}: efficiency vs decay radius ({what})"
                           + (f"\n{TRUE_POINT_NOTE}" if note else ""))
    pngs.append(str(p))
    return pngs
