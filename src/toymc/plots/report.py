"""The figures of ``toymc report`` from the data of :mod:`toymc.analysis.report`."""

from pathlib import Path as _Path

from toymc.plots import figures as _fig

__all__ = ("draw_report", "point_text")


def point_text(meta):
    """The physics point of a file's metadata for titles: channel, mass and c*tau."""
    return (f"{meta.get('channel', '?')}, m = {meta.get('mass_gev', float('nan')):g} GeV, "
            f"c$\\tau$ = {meta.get('ctau_cm', float('nan')):g} cm")


def _vertex(h, key, label, path, name, what):
    series = [{"label": "truth decay point, all events", "counts": h["truth"]},
              {"label": "truth decay point, found vertex (cut_vertex)",
               "counts": h["truth_found"]}]
    if h["reco"] is not None:
        series += [{"label": "reconstructed vertex, all candidates", "counts": h["reco"]},
                   {"label": "reconstructed vertex, found (cut_vertex)",
                    "counts": h["reco_found"]}]
    title = f"{name}: vertex {key} ({what})"
    if h["reco"] is None:
        title += "\nno reconstructed vertex (photon-only decay): truth only"
    edges = h["edges"]
    _fig.histogram_plot(edges, series, path, f"decay vertex {label}",
                   f"events per {edges[1] - edges[0]:g} cm", title, logy=True)


def _mass(h, path, name, what):
    edges = h["edges"]
    if h["selected"] is None:  # no mass window: one histogram, not two on top
        series = [{"label": "all daughters found (cut_photons = cut_mass: no mass window)",
                   "counts": h["found"]}]
    else:
        series = [{"label": "all daughters found (cut_photons)", "counts": h["found"]},
                  {"label": "full selection (cut_mass)", "counts": h["selected"]}]
    _fig.histogram_plot(
        edges, series, path, "reconstructed mass rec_m [GeV]",
        f"events per {round(1e3 * (edges[1] - edges[0]), 9):g} MeV",
        f"{name}: reconstructed mass (true {h['m_true']:g} GeV; {what})")


def draw_report(source, meta, n, vertex, mass, cutflow, efficiency, out):
    """Draw the report PNGs into the folder `out`; returns their paths (str) in the order
    of :data:`toymc.analysis.report.REPORT_FILES`.

    Parameters
    ----------
    source : str or Path
        The ntuple (its name goes into the titles).
    meta : dict
        Its metadata (the physics point of the titles).
    n : int
        Its number of events.
    vertex, mass : dict
        :func:`toymc.analysis.report.vertex_histograms`, :func:`~toymc.analysis.report.mass_histograms`.
    cutflow : tuple
        :func:`toymc.analysis.report.cutflow_steps`.
    efficiency : tuple
        :func:`toymc.analysis.report.efficiency_vs_radius`.
    out : Path
    """
    from toymc.analysis.cutflow import TRUE_POINT_NOTE

    name = _Path(source).name
    what = point_text(meta)
    pngs = []
    for key, label in (("r", "transverse radius r [cm]"), ("z", "z [cm]")):
        p = out / f"vertex_{key}.png"
        _vertex(vertex[key], key, label, p, name, what)
        pngs.append(str(p))
    p = out / "mass.png"
    _mass(mass, p, name, what)
    pngs.append(str(p))

    steps, rows, note = cutflow
    p = out / "cutflow.png"
    _fig.cutflow_plot([lab for _, lab, _ in steps], [r[1] for r in rows], n, [r[2] for r in rows],
                 [r[3] for r in rows], p,
                 title=f"{name}: cutflow", note=TRUE_POINT_NOTE if note else None)
    pngs.append(str(p))

    edges, curves = efficiency
    p = out / "efficiency_vs_r.png"
    _fig.binned_efficiency_plot(edges, curves, p, "true transverse decay radius r [cm]",
                           f"{name}: efficiency vs decay radius ({what})"
                           + (f"\n{TRUE_POINT_NOTE}" if note else ""))
    pngs.append(str(p))
    return pngs
