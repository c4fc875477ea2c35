"""``toymc export``: a toymc file's events in another format (Parquet)."""

__all__ = ("cmd_export", "register")


def cmd_export(args):
    """``toymc export``: write a file's events in another format."""
    from toymc.io.export import export

    s = export(args.file, output=args.output, format=args.format, force=args.force)
    print(f"toymc: exported {s['events']} events to {s['output']} ({s['format']})")
    return 0


def register(subparsers):
    """Add ``export`` to the toymc sub-parsers; returns its parser."""
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
    return e
