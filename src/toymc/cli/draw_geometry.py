"""``toymc draw-geometry``: r-z and x-y views of a detector geometry."""

from pathlib import Path

from toymc.errors import OutputError

__all__ = ("cmd_draw_geometry", "register")


def cmd_draw_geometry(args):
    """Draw ``args.geometry`` to a picture file."""
    from toymc.config.geometry import load_geometry
    from toymc.io.files import check_output, replacing
    from toymc.plots.geometry import draw_geometry

    geo = load_geometry(args.geometry)
    from toymc.io.names import default_output

    out = args.output or (default_output("geometry", args.geometry) + ".png")
    try:
        from matplotlib.backend_bases import FigureCanvasBase
    except ImportError:  # draw_geometry names the install command
        kinds = None
    else:
        kinds = FigureCanvasBase.get_supported_filetypes()
    if kinds is not None and Path(out).suffix.lstrip(".").lower() not in kinds:
        raise OutputError(f"{out}: unknown picture format; use a suffix among "
                          + ", ".join("." + k for k in sorted(kinds)))
    check_output(out, force=args.force, inputs=[args.geometry])
    try:
        with replacing(args.force):
            draw_geometry(geo, out)
    except OSError as exc:
        raise OutputError(f"{out}: cannot write: {exc.strerror or exc}") from None
    print(f"toymc: drew geometry '{geo.name}' to {out}")
    return 0


def register(subparsers):
    """Add ``draw-geometry`` to the toymc sub-parsers; returns its parser."""
    d = subparsers.add_parser(
        "draw-geometry", help="draw a detector geometry (r-z and x-y views)",
        description="Draw GEOMETRY (a geometries/*.toml file) to a PNG.")
    d.add_argument("geometry", help="geometry TOML file")
    d.add_argument("--output", "-o",
                   help="PNG file (default: geometry_<geometry file name>.png)")
    d.add_argument("--force", action="store_true", help="overwrite an existing output file")
    d.set_defaults(func=cmd_draw_geometry)
    return d
