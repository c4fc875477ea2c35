"""The reach figure: the region N > N_up in the (mass, coupling) plane with lines of
constant c*tau, titled with the model, channel, luminosity, background and efficiency
source (:func:`reach_title`)."""

import math as _math
from pathlib import Path as _Path

import numpy as _np

from toymc.analysis.reach import COUPLING_LABELS

__all__ = ("plot_reach", "reach_title")


def _fmt_lumi(fb):
    if fb >= 1e3:
        return f"{fb / 1e3:g} ab$^{{-1}}$"
    return f"{fb:g} fb$^{{-1}}$"


_CHANNEL_TEX = {"gamma_gamma": r"$\gamma\gamma$", "pi_pi_pi0": r"$\pi^+\pi^-\pi^0$",
                "pi0_pi0_pi0": r"$3\pi^0$", "e_e": r"$e^+e^-$", "mu_mu": r"$\mu^+\mu^-$",
                "pi_pi": r"$\pi^+\pi^-$"}


def _source_text(grid):
    if grid.efficiency == "fold":
        extra = f" x reco factor {grid.reco_factor:g}" if grid.reco_factor != 1.0 else ""
        return f"efficiency: fold of {grid.events_per_mass} truth events per mass{extra}"
    if grid.efficiency == "mc":
        return (f"efficiency: detector MC, {grid.events_per_mass} events per reference "
                f"c$\\tau$, step {grid.efficiency_step}")
    return f"efficiency: map {_Path(grid.map_path).name}"


def reach_title(res):
    """Title of the reach figure of a :class:`toymc.analysis.reach.ReachResult`: model,
    process and channel, luminosity, background and CL, what is held fixed, and where the
    efficiency comes from."""
    cfg, grid = res.config, res.grid
    m = cfg.model
    ch = _CHANNEL_TEX.get(cfg.llp.channel, cfg.llp.channel.replace("_", " "))
    t = (f"{m.name} ({cfg.production.process}), LLP $\\to$ {ch}: "
         f"$L_{{int}}$ = {_fmt_lumi(grid.lumi)}, b = {grid.background:g}, "
         f"{100 * grid.cl:g}% CL")
    if cfg.production.process == "b_meson":
        fixed = (f"$g_{{bs}}$ = {m.g_bs:.3g} GeV$^{{-1}}$" if m.g_bs is not None
                 else f"BR(B$\\to$K X) = {m.br_production:.3g}")
        t += f"\n{fixed} held fixed; {_source_text(grid)}"
    else:
        t += f"\n{_source_text(grid)}"
    return t


def plot_reach(res, path):
    """Draw the region N > N_up in (mass, coupling), log axes, with lines of constant c*tau.

    Parameters
    ----------
    res : toymc.analysis.reach.ReachResult
    path : str or Path
        PNG file (written atomically).
    """
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    from toymc.extras import matplotlib_pyplot
    from toymc.plots.figures import save

    plt = matplotlib_pyplot()
    fig, ax = plt.subplots(figsize=(7.5, 5.5))
    m, g = res.masses, res.couplings
    ratio = (res.yield_ / res.n_up).T  # rows: couplings
    handles = []
    if _np.nanmax(ratio) > 1.0:
        ax.contourf(m, g, ratio, levels=[1.0, _np.inf], colors=["tab:blue"], alpha=0.35)
        ax.contour(m, g, ratio, levels=[1.0], colors=["tab:blue"], linewidths=2)
        handles.append(Patch(facecolor="tab:blue", alpha=0.35, edgecolor="tab:blue",
                             label=f"N > {res.n_up:.3g} events (signal region)"))
    else:
        ax.text(0.5, 0.5, f"no grid point with N > {res.n_up:.3g}", transform=ax.transAxes,
                ha="center", va="center")
    lct = _np.log10(_np.where(_np.isfinite(res.ctau) & (res.ctau > 0), res.ctau, _np.nan)).T
    lo, hi = _np.nanmin(lct), _np.nanmax(lct)
    levels = _np.arange(_math.ceil(lo), _math.floor(hi) + 1)
    if levels.size > 7:
        step = _math.ceil(levels.size / 7)
        levels = levels[::step]
    if levels.size:
        cs = ax.contour(m, g, lct, levels=levels, colors="0.35", linestyles="dashed",
                        linewidths=1)

        def fmt(v):
            c = 10.0**v
            return (rf"$c\tau$ = {c:g} cm" if 1e-2 <= c <= 1e4
                    else rf"$c\tau = 10^{{{round(v)}}}$ cm")

        ax.clabel(cs, fmt=fmt, fontsize=8, inline=True)
        handles.append(Line2D([], [], color="0.35", ls="dashed", lw=1,
                              label=r"constant $c\tau$ (labelled)"))
    ax.set_xscale("log")
    ax.set_yscale("log")
    from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

    if m[-1] / m[0] < 1e3:  # up to 3 decades: plain numbers at 1, 2, 5 x 10^k (or 1..9)
        subs = (1.0, 2.0, 5.0) if m[-1] / m[0] > 4 else tuple(float(k) for k in range(1, 10))
        ax.xaxis.set_major_locator(LogLocator(subs=subs))
        ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
        ax.xaxis.set_minor_formatter(NullFormatter())
    ax.set_xlabel("LLP mass $m$ [GeV]")
    label, unit = COUPLING_LABELS.get(res.model, ("coupling $g$", ""))
    ax.set_ylabel(f"{label} [{unit}]" if unit else f"{label} (dimensionless)")
    ax.set_title(reach_title(res), fontsize=9)
    if handles:
        ax.legend(handles=handles, loc="best", fontsize=8, framealpha=0.9)
    save(fig, path)
