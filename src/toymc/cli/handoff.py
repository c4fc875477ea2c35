"""Command-line subcommands for handing ntuples to an analysis: info, merge, export.

:func:`register` adds them to the ``toymc`` parser's sub-parsers; each sets
``func(args) -> int`` (exit status).  Errors are raised as
:class:`toymc.errors.ToymcError`, which ``toymc.cli.main.main`` prints as one line
with exit status 2.
"""

import json

from toymc.cli import args as A

__all__ = ("cmd_export", "cmd_info", "cmd_merge", "register")


_fraction = A.FRACTION
_positive = A.EPS
_cross_section = A.CROSS_SECTION


def _overrides(args):
    return {k: getattr(args, k) for k in ("br_production", "br_decay", "eps", "sigma_times_br_fb")
            if getattr(args, k, None) is not None}


def cmd_info(args):
    """``toymc info``: print what each file holds."""
    from toymc.io.info import format_summary, summary

    out = [summary(f, lumi_fb=args.lumi, **_overrides(args)) for f in args.files]
    if args.json:
        print(json.dumps(out, indent=1, sort_keys=True))
    else:
        print("\n\n".join(format_summary(s, columns=not args.no_columns) for s in out))
    return 0


def cmd_merge(args):
    """``toymc merge``: merge files into one."""
    from toymc.io.merge import merge

    s = merge(args.output, args.files, force=args.force, allow_mixed=args.allow_mixed,
              compression=args.compression)
    kind = "different physics points, per-event weight w_xsec" if s["mixed"] else "one sample"
    print(f"toymc: merged {s['inputs']} files ({s['events']} events, {kind}) into {s['output']}")
    return 0


def cmd_export(args):
    """``toymc export``: write a file's events in another format."""
    from toymc.io.export import export

    s = export(args.file, output=args.output, format=args.format, force=args.force)
    print(f"toymc: exported {s['events']} events to {s['output']} ({s['format']})")
    return 0


def _add_normalisation(p):
    g = p.add_argument_group(
        "normalisation overrides",
        "used where the file's metadata lacks them (a sample made without a model) and "
        "taking precedence over stored values")
    g.add_argument("--br-production", type=_fraction, metavar="BR",
                   help="BR(B -> K(*) X), used for charged and neutral B alike (b_meson); "
                        "production BR for radiative (default 1)")
    g.add_argument("--br-decay", type=_fraction, metavar="BR", help="BR(X -> channel)")
    g.add_argument("--eps", type=_positive, metavar="EPS",
                   help="kinetic-mixing coupling eps of radiative production "
                        "(sigma = sigma_per_eps2 * eps^2; 0 < eps <= 1)")
    g.add_argument("--sigma-times-br", dest="sigma_times_br_fb", type=_cross_section,
                   metavar="XS", help="the whole sigma x BR, a number in fb or e.g. '2.5 ab' "
                                      "(replaces every factor)")


def register(subparsers):
    """Add the subcommands info, merge and export to an argparse sub-parsers object.

    Parameters
    ----------
    subparsers : argparse._SubParsersAction
        From ``parser.add_subparsers()``.
    """
    i = subparsers.add_parser(
        "info", help="show what toymc files hold (physics point, normalisation, columns)",
        description="Show for each FILE: process, channel, mass, c*tau, couplings, events, seed "
                    "and random blocks, versions, cross-section x branching fractions, geometry "
                    "and selection, and the column table (name, unit, meaning). With --lumi also "
                    "the per-event luminosity weight w = L * sigma x BR / N and the expected "
                    "number of decays before any selection.",
        epilog="example: toymc info darkphoton_mumu.root --lumi '1 ab-1' --eps 1e-3 --br-decay 0.3")
    i.add_argument("files", nargs="+", metavar="FILE", help="toymc ROOT files")
    i.add_argument("--json", action="store_true",
                   help="print a JSON list with one object per file instead of text")
    i.add_argument("--lumi", metavar="L",
                   help="integrated luminosity: a number in fb^-1 or e.g. '1 ab-1', '500 fb-1'")
    i.add_argument("--no-columns", action="store_true", help="leave out the column table")
    _add_normalisation(i)
    i.set_defaults(func=cmd_info)

    m = subparsers.add_parser(
        "merge", help="merge toymc files of one sample (or, with --allow-mixed, of several)",
        description="Merge FILEs into OUTPUT, chunk by chunk. Files of one physics point "
                    "(same beams, production, LLP and normalisation; any seeds, distinct random "
                    "blocks) form one sample: events add and the luminosity weight becomes "
                    "L * sigma x BR / N_total. Refused: other schema versions, columns, geometry "
                    "or selection, and files holding the same random blocks. The output is "
                    "written atomically; on any error no output file is left.",
        epilog="example: toymc merge all.root part0.root part1.root")
    m.add_argument("output", metavar="OUTPUT", help="merged ROOT file to write")
    m.add_argument("files", nargs="+", metavar="FILE", help="toymc ROOT files, merged in order")
    m.add_argument("--allow-mixed", action="store_true",
                   help="allow different physics points: every event gets w_xsec = "
                        "sigma x BR / N of its point (fb; weight w_lumi = L * w_xsec); needs a "
                        "known sigma x BR for every input")
    m.add_argument("--compression", choices=("lz4", "zlib", "zstd", "none"), default="lz4",
                   help="ROOT compression of the output (default lz4)")
    m.add_argument("--force", action="store_true", help="overwrite an existing OUTPUT")
    m.set_defaults(func=cmd_merge)

    e = subparsers.add_parser(
        "export", help="export a toymc file to Parquet",
        description="Write FILE's events to another format with the same column names, types "
                    "and units; the metadata goes into the Parquet key-value metadata "
                    "(key AWKWARD_ATTRS, {\"toymc_meta\": ...}). Needs pyarrow: "
                    "pip install \"toymc[parquet]\".",
        epilog="example: toymc export darkphoton_mumu.root --output dp.parquet")
    e.add_argument("file", metavar="FILE", help="toymc ROOT file")
    e.add_argument("--format", choices=("parquet",), default="parquet",
                   help="output format (default parquet)")
    e.add_argument("--output", "-o", metavar="OUT",
                   help="output file (default: FILE with the format's suffix)")
    e.add_argument("--force", action="store_true", help="overwrite an existing OUT")
    e.set_defaults(func=cmd_export)
    return subparsers
