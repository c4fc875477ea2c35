"""Drawing of a detector geometry (r-z and x-y views).

matplotlib is imported inside :func:`draw_geometry` (its ``Figure`` class, no
pyplot state or backend switch), so importing this module costs nothing when
no figure is made.
"""

import math as _math

__all__ = ("draw_geometry",)


def _figure_class():
    try:
        from matplotlib.figure import Figure
    except ModuleNotFoundError:  # pragma: no cover - depends on the installation
        raise ModuleNotFoundError(
            "drawing needs matplotlib (a dependency of toymc): pip install matplotlib"
        ) from None
    return Figure


def draw_geometry(geometry, path):
    """Draw the geometry in r-z and x-y views and save the figure.

    Parameters
    ----------
    geometry : toymc.detector.geometry.Geometry
    path : str or pathlib.Path
        Output file; the format follows the suffix (png, pdf, svg).

    Returns
    -------
    pathlib.Path
        The written file.
    """
    from pathlib import Path

    from toymc.io.files import atomic_write

    g = geometry
    ch = g.chamber
    cal = g.calorimeter
    fig = _figure_class()(figsize=(12, 5.5))
    ax_rz, ax_xy = fig.subplots(1, 2, gridspec_kw={"width_ratios": [1.6, 1.0]})

    # r-z view (upper half, r >= 0)
    ax_rz.plot([ch.z_min, ch.z_max], [g.beampipe_radius] * 2, color="0.3", lw=1.5,
               label="beam pipe")
    for i, lay in enumerate(g.vertex_layers):
        ax_rz.plot([lay.z_min, lay.z_max], [lay.radius] * 2, color="tab:blue", lw=1.2,
                   label="vertex layers" if i == 0 else None)
    for i, r in enumerate(ch.radii):
        ax_rz.plot([ch.z_min, ch.z_max], [r] * 2, color="tab:green", lw=0.4, alpha=0.6,
                   label="chamber sense layers" if i == 0 else None)
    ax_rz.plot([ch.z_min, ch.z_max, ch.z_max, ch.z_min, ch.z_min],
               [ch.r_inner, ch.r_inner, ch.r_outer, ch.r_outer, ch.r_inner],
               color="darkgreen", lw=1.0, label="chamber walls")
    ax_rz.plot([cal.z_min, cal.z_max], [cal.radius] * 2, color="tab:red", lw=3,
               label="calorimeter face")
    for ec in (cal.forward, cal.backward):
        ax_rz.plot([ec.z, ec.z], [ec.r_inner, ec.r_outer], color="tab:red", lw=3)
    ax_rz.axhline(0.0, color="k", lw=0.5)
    ax_rz.plot([0.0], [0.0], marker="+", color="k", ms=10, label="nominal interaction point")
    ax_rz.set_xlim(min(cal.backward.z, cal.z_min) * 1.05, max(cal.forward.z, cal.z_max) * 1.05)
    ax_rz.set_ylim(0.0, cal.radius * 1.1)
    ax_rz.set_xlabel("z [cm]")
    ax_rz.set_ylabel("r [cm]")
    ax_rz.set_title(f"{g.name}: r-z view, B = {g.field:g} T")
    ax_rz.legend(loc="center", fontsize=8)

    # x-y view
    ts = [2.0 * _math.pi * k / 360 for k in range(361)]

    def circle(r, **kw):
        ax_xy.plot([r * _math.cos(t) for t in ts], [r * _math.sin(t) for t in ts], **kw)

    circle(g.beampipe_radius, color="0.3", lw=1.5, label="beam pipe")
    for i, lay in enumerate(g.vertex_layers):
        circle(lay.radius, color="tab:blue", lw=1.0, label="vertex layers" if i == 0 else None)
    for i, r in enumerate(ch.radii):
        circle(r, color="tab:green", lw=0.3, alpha=0.6,
               label="chamber sense layers" if i == 0 else None)
    circle(ch.r_inner, color="darkgreen", lw=1.0, label="chamber walls")
    circle(ch.r_outer, color="darkgreen", lw=1.0)
    circle(cal.radius, color="tab:red", lw=3, label="calorimeter face")
    lim = cal.radius * 1.1
    ax_xy.set_xlim(-lim, lim)
    ax_xy.set_ylim(-lim, lim)
    ax_xy.set_aspect("equal")
    ax_xy.set_xlabel("x [cm]")
    ax_xy.set_ylabel("y [cm]")
    ax_xy.set_title("x-y view")
    ax_xy.legend(loc="upper right", fontsize=8)

    fig.tight_layout()
    out = Path(path)
    atomic_write(out, fig.savefig, keep_suffix=True)
    return out
