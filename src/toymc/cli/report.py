"""``toymc report``: the standard plots of one ntuple (vertex r and z, reconstructed mass,
cutflow, efficiency vs decay radius)."""

__all__ = ("cmd_report", "make_report", "register")


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
    from toymc.analysis import report
    from toymc.io.files import check_output_dir, make_dir, replacing
    from toymc.io.info import load_meta
    from toymc.io.names import default_output
    from toymc.plots.report import draw_report

    meta = load_meta(path)
    out = check_output_dir(output_dir or default_output("report", path), report.REPORT_FILES,
                           force=force, inputs=[path])
    col, n = report.read_columns(path, meta)
    vertex = report.vertex_histograms(col)
    mass = report.mass_histograms(col)
    cutflow = report.cutflow_steps(col, meta.get("channel"))
    efficiency = report.efficiency_vs_radius(col, cutflow[0])
    make_dir(out)
    with replacing(force):
        return draw_report(path, meta, n, vertex, mass, cutflow, efficiency, out)


def cmd_report(args):
    """``toymc report``: standard plots of one ntuple."""
    from toymc.io.names import default_output

    out = make_report(args.file, args.output_dir, force=args.force)
    folder = args.output_dir or default_output("report", args.file)
    print(f"toymc: wrote {len(out)} plots to {folder}:")
    for p in out:
        print(f"  {p}")
    return 0


def register(subparsers):
    """Add ``report`` to the toymc sub-parsers; returns its parser."""
    r = subparsers.add_parser(
        "report", help="standard plots of one ntuple (vertex, mass, cutflow, efficiency vs r)",
        description="Plot vertex r and z (reco and truth), reconstructed mass, the cutflow and "
                    "the efficiency vs decay radius of FILE (needs the reco columns).")
    r.add_argument("file", help="ROOT file written by toymc generate with a geometry")
    r.add_argument("--output-dir", "-o",
                   help="folder (default: report_<file name> in the current folder)")
    r.add_argument("--force", action="store_true", help="replace the plots of an earlier report")
    r.set_defaults(func=cmd_report)
    return r
