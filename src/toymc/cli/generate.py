"""``toymc generate``: events from a TOML config into a ROOT ntuple."""

from toymc.cli import args as A

__all__ = ("cmd_generate", "register")


def cmd_generate(args):
    """Write the events of ``args.config``; print a one-line summary."""
    from toymc.io.run import run

    s = run(args.config, output=args.output, events=args.events, seed=args.seed,
            force=args.force, progress=not args.quiet, chunk_blocks=args.chunk_blocks)
    extra = ""
    if args.compile_watch.compiled:
        extra = f"; {args.compile_watch.seconds:.1f} s compiling before, not counted"
    print(f"toymc: wrote {s['events']} events to {s['output']} in {s['seconds']:.2f} s "
          f"({s['rate']:.3g} events/s{extra})")
    return 0


def register(subparsers):
    """Add ``generate`` to the toymc sub-parsers; returns its parser."""
    g = subparsers.add_parser(
        "generate", help="generate events from a TOML config into a ROOT ntuple",
        description="Generate events from CONFIG and write a ROOT file with one "
                    "TTree 'events' (columns in the README) and metadata.")
    g.add_argument("config", help="TOML run config (see configs/)")
    g.add_argument("--events", "-n", type=A.EVENTS,
                   help="number of events ([run] events; at most 10^12)")
    g.add_argument("--seed", type=A.SEED, help="master seed ([run] seed; 0 to 2^128 - 1)")
    g.add_argument("--output", "-o", help="output ROOT file ([run] output)")
    g.add_argument("--chunk-blocks", type=A.CHUNK_BLOCKS,
                   help="blocks of 65536 events per write chunk (does not change the events; "
                        f"at most {A.R.MAX_CHUNK_BLOCKS})")
    g.add_argument("--force", action="store_true", help="overwrite an existing output file")
    g.add_argument("--quiet", "-q", action="store_true", help="no progress bar")
    g.set_defaults(func=cmd_generate)
    return g
