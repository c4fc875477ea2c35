"""Every figure toymc draws (matplotlib imported lazily through toymc.extras)."""

import os
from pathlib import Path

import numpy as np

from .extras import matplotlib_pyplot

__all__ = ("efficiency_heatmap", "save")


def save(fig, path):
    """Save atomically (temporary name in the same folder, then rename) and close."""
    path = Path(path)
    tmp = path.with_name(f".{path.stem}.{os.getpid()}.tmp{path.suffix}")
    fig.savefig(tmp, dpi=120, bbox_inches="tight")
    os.replace(tmp, path)
    matplotlib_pyplot().close(fig)


def efficiency_heatmap(masses, ctaus, eff, path, title="signal efficiency"):
    """Heat map of eff[mass, ctau] with a log c*tau axis."""
    plt = matplotlib_pyplot()
    fig, ax = plt.subplots(figsize=(7, 4.5))
    m = np.asarray(masses)
    c = np.asarray(ctaus)

    def edges(v, log):
        v = np.log10(v) if log else v
        mid = 0.5 * (v[1:] + v[:-1])
        e = np.concatenate([[v[0] - (mid[0] - v[0])], mid, [v[-1] + (v[-1] - mid[-1])]])
        return 10**e if log else e

    pc = ax.pcolormesh(edges(c, True), edges(m, False), np.asarray(eff), shading="flat",
                       cmap="viridis", vmin=0)
    ax.set_xscale("log")
    ax.set_xlabel(r"proper decay length $c\tau$ [cm]")
    ax.set_ylabel("LLP mass [GeV]")
    ax.set_title(title)
    fig.colorbar(pc, ax=ax, label="efficiency")
    save(fig, path)
