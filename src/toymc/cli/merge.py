"""``toymc merge``: combine toymc files of one sample (or, with --allow-mixed, of several)."""

__all__ = ("cmd_merge", "register")


def cmd_merge(args):
    """``toymc merge``: merge files into one."""
    from toymc.io.merge import merge

    s = merge(args.output, args.files, force=args.force, allow_mixed=args.allow_mixed,
              compression=args.compression)
    kind = "different physics points, per-event weight w_xsec" if s["mixed"] else "one sample"
    print(f"toymc: merged {s['inputs']} files ({s['events']} events, {kind}) into {s['output']}")
    return 0


def register(subparsers):
    """Add ``merge`` to the toymc sub-parsers; returns its parser."""
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
    return m
