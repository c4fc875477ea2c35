"""The figures toymc draws from plain arrays (matplotlib imported lazily through
toymc.extras); histogram edges come from :func:`toymc.analysis.binning.round_edges`."""

import numpy as np

from toymc.extras import matplotlib_pyplot

__all__ = (
    "binned_efficiency_plot",
    "compare_pull_plot",
    "cutflow_plot",
    "efficiency_heatmap",
    "fold_curve_plot",
    "heatmap_floor",
    "histogram_plot",
    "save",
)

def save(fig, path):
    """Save atomically (temporary name in the same folder, then rename) and close."""
    from toymc.io.files import atomic_write

    try:
        atomic_write(path, lambda tmp: fig.savefig(tmp, dpi=120, bbox_inches="tight"),
                     keep_suffix=True)
    finally:
        matplotlib_pyplot().close(fig)


def heatmap_floor(eff, dynamic_range=1e4):
    """Lowest efficiency of the log colour scale: ``dynamic_range`` below the largest,
    or the smallest positive value if that is higher; None without a positive value."""
    e = np.asarray(eff, dtype=float)
    pos = e[np.isfinite(e) & (e > 0)]
    if pos.size == 0:
        return None
    return float(max(pos.max() / dynamic_range, pos.min()))


def efficiency_heatmap(masses, ctaus, eff, path, title="signal efficiency"):
    """Heat map of eff[mass, ctau] with a log c*tau axis and a log colour scale.

    The colour scale spans :func:`heatmap_floor` to the largest efficiency, so that the
    small efficiencies at long and short c*tau stay visible; lower values (zero
    included) are grey, missing points white.
    """
    import matplotlib.colors as mcolors

    plt = matplotlib_pyplot()
    fig, ax = plt.subplots(figsize=(7.5, 5))
    m = np.asarray(masses)
    c = np.asarray(ctaus)

    def edges(v, log):
        v = np.log10(v) if log else v
        mid = 0.5 * (v[1:] + v[:-1])
        e = np.concatenate([[v[0] - (mid[0] - v[0])], mid, [v[-1] + (v[-1] - mid[-1])]])
        return 10**e if log else e

    e = np.asarray(eff, dtype=float)
    floor = heatmap_floor(e)
    cmap = plt.get_cmap("viridis").with_extremes(under="0.8", bad="white")
    if floor is not None and floor < np.nanmax(e):
        norm = mcolors.LogNorm(vmin=floor, vmax=float(np.nanmax(e)))
        extend = "min" if np.nanmin(e) < floor else "neither"
        label = f"efficiency (log scale; grey: below {floor:.1g})" if extend == "min" \
            else "efficiency (log scale)"
    else:
        norm, extend, label = mcolors.Normalize(vmin=0.0), "neither", "efficiency"
    pc = ax.pcolormesh(edges(c, True), edges(m, False), np.ma.masked_invalid(e),
                       shading="flat", cmap=cmap, norm=norm)
    ax.set_xscale("log")
    ax.set_xlabel(r"proper decay length $c\tau$ [cm]")
    ax.set_ylabel("LLP mass [GeV]")
    ax.set_title(title, fontsize=9)
    fig.colorbar(pc, ax=ax, label=label, extend=extend)
    save(fig, path)


# ------------------------------------------------------------------ fold, validation, report
# (functions below: fold_curve_plot, compare_pull_plot, histogram_plot, cutflow_plot)

_CTAU_LABEL = r"proper decay length $c\tau$ [cm]"


def fold_curve_plot(ctau, curves, path, title="analytic fold"):
    """Efficiency vs c*tau (log axis) of one or more fold curves with error bands.

    Parameters
    ----------
    ctau : array_like
        c*tau grid, cm.
    curves : list of (label, eff, err)
    path : str or Path
        PNG file.
    """
    plt = matplotlib_pyplot()
    fig, ax = plt.subplots(figsize=(7, 4.5))
    c = np.asarray(ctau)
    for label, eff, err in curves:
        eff, err = np.asarray(eff), np.asarray(err)
        (line,) = ax.plot(c, eff, marker="." if c.size > 1 else "o", label=label)
        ax.fill_between(c, eff - err, eff + err, color=line.get_color(), alpha=0.25, lw=0)
    ax.set_xscale("log")
    ax.set_xlabel(_CTAU_LABEL)
    ax.set_ylabel("efficiency (window x profile)")
    ax.set_ylim(bottom=0)
    ax.grid(alpha=0.3, which="both")
    ax.set_title(title, fontsize=10)
    ax.legend(fontsize=9)
    save(fig, path)


def compare_pull_plot(x, points, curve, pulls, path, xlabel, ylabel, title, logx=True,
                      z_limit=None):
    """Measured points against a reference curve, with a pull panel below.

    Parameters
    ----------
    x : array_like
        Abscissa of points and curve.
    points : list of (label, y, yerr)
        Measurements with error bars.
    curve : (label, y, yerr) or None
        Reference, drawn as a line with a band.
    pulls : array_like
        (measured - reference)/sigma per x.
    z_limit : float, optional
        Pass threshold drawn as dashed lines in the pull panel.
    """
    plt = matplotlib_pyplot()
    fig, (ax, axp) = plt.subplots(2, 1, figsize=(7, 6), sharex=True,
                                  gridspec_kw={"height_ratios": [3, 1.3], "hspace": 0.05})
    x = np.asarray(x, dtype=float)
    if curve is not None:
        lab, y, e = curve
        y, e = np.asarray(y), np.asarray(e)
        (_line,) = ax.plot(x, y, color="k", lw=1.2, label=lab)
        ax.fill_between(x, y - e, y + e, color="0.6", alpha=0.4, lw=0)
    for j, (lab, y, e) in enumerate(points):
        ax.errorbar(x, y, yerr=e, fmt="os^"[j % 3], ms=4 + 1.5 * j, capsize=2, label=lab,
                    mfc="none" if j else None)
    p = np.asarray(pulls, dtype=float)
    axp.axhline(0, color="k", lw=0.8)
    if z_limit is not None:
        for s in (-1, 1):
            axp.axhline(s * z_limit, color="r", ls="--", lw=0.8)
        axp.plot([], [], color="r", ls="--", lw=0.8, label=f"|pull| limit {z_limit:.2f}")
        axp.legend(fontsize=8, loc="upper right")
    ok = np.isfinite(p)
    axp.plot(x[ok], p[ok], "o", ms=3.5, color="C0")
    lim = max(3.0, float(np.nanmax(np.abs(p))) * 1.15 if ok.any() else 3.0,
              (z_limit or 0) * 1.15)
    axp.set_ylim(-lim, lim)
    axp.set_ylabel("pull [sigma]")
    axp.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    if logx:
        ax.set_xscale("log")
        from matplotlib.ticker import NullFormatter

        axp.xaxis.set_minor_formatter(NullFormatter())
    ax.grid(alpha=0.3, which="both")
    axp.grid(alpha=0.3, which="both")
    ax.set_title(title, fontsize=10)
    ax.legend(fontsize=9)
    save(fig, path)


def histogram_plot(edges, series, path, xlabel, ylabel, title, logy=False, pulls=None,
                   z_limit=None):
    """Histograms on common bin edges; optional pull panel.

    Parameters
    ----------
    edges : array_like
        Bin edges (units in `xlabel`).
    series : list of dict
        ``label``, ``counts`` and optional ``errors`` (drawn as points with error
        bars) or ``step=True`` (drawn as a step line).
    pulls : array_like, optional
        One pull per bin for a lower panel.
    """
    plt = matplotlib_pyplot()
    edges = np.asarray(edges, dtype=float)
    mid = 0.5 * (edges[1:] + edges[:-1])
    if pulls is not None:
        fig, (ax, axp) = plt.subplots(2, 1, figsize=(7, 6), sharex=True,
                                      gridspec_kw={"height_ratios": [3, 1.3], "hspace": 0.05})
    else:
        fig, ax = plt.subplots(figsize=(7, 4.5))
        axp = None
    styles = ("-", "--", ":", "-.")
    n_line = 0
    for s in series:
        cnt = np.asarray(s["counts"], dtype=float)
        if s.get("errors") is not None:
            ax.errorbar(mid, cnt, yerr=np.asarray(s["errors"]), fmt="o", ms=3, capsize=1.5,
                        label=s["label"])
        else:
            ax.stairs(cnt, edges, label=s["label"], lw=1.6, ls=styles[n_line % len(styles)])
            n_line += 1
    if logy:
        ax.set_yscale("log")
        lo, hi = ax.get_ylim()
        ax.set_ylim(lo, hi * 8)
    else:
        ax.set_ylim(0, ax.get_ylim()[1] * 1.25)
    ax.set_ylabel(ylabel)
    ax.set_title(title, fontsize=10)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=9)
    if axp is not None:
        p = np.asarray(pulls, dtype=float)
        axp.axhline(0, color="k", lw=0.8)
        if z_limit is not None:
            for sgn in (-1, 1):
                axp.axhline(sgn * z_limit, color="r", ls="--", lw=0.8)
        axp.plot(mid, p, "o", ms=3)
        fin = p[np.isfinite(p)]
        lim = max(3.0, float(np.abs(fin).max()) * 1.15 if fin.size else 3.0,
                  (z_limit or 0) * 1.15)
        axp.set_ylim(-lim, lim)
        axp.set_ylabel("pull [sigma]")
        axp.set_xlabel(xlabel)
        axp.grid(alpha=0.3)
    else:
        ax.set_xlabel(xlabel)
    save(fig, path)


def cutflow_plot(steps, n_pass, n_total, step_eff, step_err, path, title="cutflow", note=None):
    """Bar chart of events passing each step, annotated with step efficiencies; `note`
    (a line under the title) explains marked steps."""
    plt = matplotlib_pyplot()
    fig, ax = plt.subplots(figsize=(7, 4.5))
    labels = ["generated"] + list(steps)
    vals = [n_total] + list(n_pass)
    bars = ax.bar(range(len(vals)), vals, color=["0.6"] + ["C0"] * len(steps))
    for i, b in enumerate(bars):
        if i == 0:
            txt = "100 %"
        else:
            txt = (f"{100 * step_eff[i - 1]:.1f} $\\pm$ {100 * step_err[i - 1]:.1f} %\n"
                   f"(cum. {100 * vals[i] / n_total:.1f} %)" if n_total else "")
        ax.text(b.get_x() + b.get_width() / 2, b.get_height(), txt, ha="center", va="bottom",
                fontsize=8)
    ax.set_xticks(range(len(vals)), labels)
    ax.set_ylabel("events passing")
    ax.set_xlabel("selection step (each includes the previous ones)")
    ax.set_ylim(0, max(vals) * 1.2 if max(vals) > 0 else 1)
    ax.set_title(title + " (step efficiency relative to the previous step)"
                 + (f"\n{note}" if note else ""), fontsize=10)
    save(fig, path)


def binned_efficiency_plot(edges, curves, path, xlabel, title):
    """Efficiency per bin with binomial error bars.

    Parameters
    ----------
    edges : array_like
        Bin edges (units in `xlabel`).
    curves : list of (label, eff, err)
    """
    plt = matplotlib_pyplot()
    edges = np.asarray(edges, dtype=float)
    mid = 0.5 * (edges[1:] + edges[:-1])
    half = 0.5 * (edges[1:] - edges[:-1])
    fig, ax = plt.subplots(figsize=(7, 4.5))
    markers = ("o", "s", "^", "v", "D")
    for j, (label, eff, err) in enumerate(curves):
        ax.errorbar(mid, eff, xerr=half, yerr=err, fmt=markers[j % len(markers)], ms=3.5,
                    capsize=1.5, label=label, mfc="none" if j % 2 else None)
    ax.set_xlabel(xlabel)
    ax.set_ylabel("efficiency (fraction of events in the bin)")
    ax.set_ylim(0, 1.05)
    ax.grid(alpha=0.3)
    ax.set_title(title, fontsize=10)
    ax.legend(fontsize=9)
    save(fig, path)
