"""``toymc bench``: events per second on one core against the RNG floor."""

from toymc.cli import args as A

__all__ = ("cmd_bench", "register")


def cmd_bench(args):
    """Time the demo cases and print one line each."""
    from toymc.engine.bench import run_bench

    print(f"toymc bench: {args.events} events per case, one core, best of {args.repeat}")
    print(f"{'case':40s} {'events/s':>12s} {'randoms/ev':>11s} {'RNG floor s':>12s} "
          f"{'gen s':>8s} {'ratio':>7s}")
    for name, r in run_bench(args.events, with_detector=args.detector, repeat=args.repeat):
        per = (r["uniforms"] + r["normals"] + r["exponentials"]) / r["events"]
        print(f"{name:40s} {r['rate']:12.4g} {per:11.1f} {r['floor_seconds']:12.4f} "
              f"{r['seconds']:8.3f} {r['ratio']:7.2f}")
    return 0


def register(subparsers):
    """Add ``bench`` to the toymc sub-parsers; returns its parser."""
    b = subparsers.add_parser(
        "bench", help="events per second on one core against the RNG floor",
        description="Time the demo cases on one core and compare with the time "
                    "numpy needs to draw the same random numbers.")
    b.add_argument("--events", "-n", type=A.EVENTS, default=1_000_000,
                   help="events per case (default 1e6)")
    b.add_argument("--detector", action="store_true", help="include the detector response")
    b.add_argument("--repeat", type=A.REPEAT, default=3,
                   help="runs per case; the best time of each is reported (default 3)")
    b.set_defaults(func=cmd_bench)
    return b
