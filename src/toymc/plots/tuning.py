"""The figure of the cut tuning: optimal radial window and mass window versus mass."""

import numpy as np

from toymc.extras import matplotlib_pyplot
from toymc.plots.figures import save

__all__ = ("plot_windows",)


def plot_windows(rows, path, title=None, min_mc=None):
    """PNG of the optimal radial window and mass window versus mass, from the rows of
    :func:`toymc.analysis.tuning.tune`.

    Points flagged ``low_mc`` are marked; `min_mc` (the threshold) goes into
    the legend.
    """
    plt = matplotlib_pyplot()
    ok = [r for r in rows if not r["signal_too_few"]]
    m = np.array([r["mass"] for r in ok])
    fig, (ax1, ax2) = plt.subplots(2, 1, figsize=(7, 6.5), sharex=True,
                                   gridspec_kw={"height_ratios": [3, 2]})
    rmin = np.array([r["r_min"] for r in ok])
    rmax = np.array([r["r_max"] for r in ok])
    ax1.fill_between(m, rmin, rmax, step=None, alpha=0.25, color="C0",
                     label=r"accepted $r_{\min} \leq r_{\rm vtx} < r_{\max}$")
    ax1.plot(m, rmin, "o-", color="C0", label=r"optimal $r_{\min}$")
    ax1.plot(m, rmax, "s-", color="C1", label=r"optimal $r_{\max}$")
    low = np.array([bool(r["low_mc"]) for r in ok])
    if low.any():
        ax1.plot(m[low], rmin[low], "x", color="k", ms=9,
                 label="background estimate from < "
                 + (f"{min_mc}" if min_mc is not None else "min_mc_events") + " MC events")
    ax1.set_ylabel("vertex radius [cm]")
    ax1.set_yscale("log")
    ax1.legend(fontsize=8, loc="best")
    if title:
        ax1.set_title(title)
    half = np.array([0.5 * (r["m_high"] - r["m_low"]) for r in ok]) * 1e3
    sig = np.array([r["sigma_m"] for r in ok]) * 1e3
    ax2.plot(m, half, "o-", color="C2", label="optimal window half-width")
    ax2.plot(m, sig, "--", color="C3", label=r"measured resolution $\sigma_m$")
    ax2.set_xlabel("signal mass [GeV]")
    ax2.set_ylabel("mass [MeV]")
    ax2.legend(fontsize=8, loc="best")
    save(fig, path)
    return path
