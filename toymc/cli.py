"""The ``toymc`` command line: one function per subcommand, errors as one line.

Every :class:`toymc.errors.ToymcError` (a user's mistake) is printed as a
single line ``toymc: error: ...`` on stderr with exit status 2; ``--debug``
shows the traceback instead.
"""

import argparse
import sys

from . import __version__
from .errors import ToymcError

__all__ = ("main", "build_parser")


def _positive_int(text):
    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not an integer") from None
    if v <= 0:
        raise argparse.ArgumentTypeError(f"{text!r} must be a positive integer")
    return v


def _nonneg_int(text):
    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not an integer") from None
    if v < 0:
        raise argparse.ArgumentTypeError(f"{text!r} must be >= 0")
    return v


def cmd_generate(args):
    from .api import run

    s = run(args.config, output=args.output, events=args.events, seed=args.seed,
            force=args.force, progress=not args.quiet, chunk_blocks=args.chunk_blocks)
    print(f"toymc: wrote {s['events']} events to {s['output']} in {s['seconds']:.2f} s "
          f"({s['rate']:.3g} events/s)")
    return 0


def cmd_bench(args):
    from .bench import run_bench

    print(f"toymc bench: {args.events} events per case, one core")
    print(f"{'case':40s} {'events/s':>12s} {'randoms/ev':>11s} {'RNG floor s':>12s} "
          f"{'gen s':>8s} {'ratio':>7s}")
    for name, r in run_bench(args.events, with_detector=args.detector):
        per = (r["uniforms"] + r["normals"]) / r["events"]
        print(f"{name:40s} {r['rate']:12.4g} {per:11.1f} {r['floor_seconds']:12.4f} "
              f"{r['seconds']:8.3f} {r['ratio']:7.2f}")
    return 0


def build_parser():
    p = argparse.ArgumentParser(
        prog="toymc",
        description="Fast toy Monte Carlo for displaced decays of light long-lived particles "
                    "at an e+e- collider near the Upsilon(4S). A parametric toy: its efficiencies "
                    "are estimates, not a substitute for a full detector simulation.",
    )
    p.add_argument("--version", action="version", version=f"toymc {__version__}")
    p.add_argument("--debug", action="store_true", help="show tracebacks for errors")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")

    g = sub.add_parser("generate", help="generate events from a TOML config into a ROOT ntuple",
                       description="Generate events from CONFIG and write a ROOT file with one "
                                   "TTree 'events' (columns in the README) and metadata.")
    g.add_argument("config", help="TOML run config (see configs/)")
    g.add_argument("--events", "-n", type=_positive_int, help="number of events ([run] events)")
    g.add_argument("--seed", type=_nonneg_int, help="master seed ([run] seed)")
    g.add_argument("--output", "-o", help="output ROOT file ([run] output)")
    g.add_argument("--chunk-blocks", type=_positive_int,
                   help="blocks of 65536 events per write chunk (does not change the events)")
    g.add_argument("--force", action="store_true", help="overwrite an existing output file")
    g.add_argument("--quiet", "-q", action="store_true", help="no progress bar")
    g.set_defaults(func=cmd_generate)

    b = sub.add_parser("bench", help="events per second on one core against the RNG floor",
                       description="Time the demo cases on one core and compare with the time "
                                   "numpy needs to draw the same random numbers.")
    b.add_argument("--events", "-n", type=_positive_int, default=1_000_000,
                   help="events per case (default 1e6)")
    b.add_argument("--detector", action="store_true", help="include the detector response")
    b.set_defaults(func=cmd_bench)
    return p


def main(argv=None):
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help()
        return 2
    try:
        return args.func(args)
    except ToymcError as exc:
        if args.debug:
            raise
        print(f"toymc: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("toymc: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
