"""``toymc scan``: the mass x c*tau efficiency grid of a config's [scan] section."""

from toymc.cli import args as A

__all__ = ("cmd_scan", "register")


def cmd_scan(args):
    """Run or resume the scan, draw its efficiency map and print a few of its points."""
    from toymc.analysis import scan
    from toymc.io.files import replacing
    from toymc.io.names import default_output

    out = args.output_dir or default_output("scan", args.config)
    idx = scan.run_scan(args.config, out, workers=args.workers, scheduler=args.scheduler,
                        resume=args.resume, progress=not args.quiet,
                        events_per_mass=args.events_per_mass)
    from pathlib import Path

    from toymc.plots.scan import draw_map

    with replacing(True):  # the map belongs to the scan: a resumed scan replaces it
        draw_map(idx, Path(out) / "efficiency_map.png")
    pts = idx["points"]
    n_direct = sum(p["method"] == "direct" for p in pts)
    print(f"{'mass GeV':>9s} {'ctau cm':>10s} {'efficiency':>11s} {'error':>9s} {'method':>9s}")
    step = max(1, len(idx["grid"]["ctaus"]) // 5)
    for p in pts:
        if p["ctau_index"] % step == 0:
            print(f"{p['mass']:9.4g} {p['ctau']:10.4g} {p['efficiency']:11.4g} {p['error']:9.2g} "
                  f"{p['method']:>9s}")
    print(f"toymc: scan of {len(pts)} points ({n_direct} generated directly) in "
          f"{idx['seconds']:.1f} s; index, efficiency_map.csv and .png in {out}")
    return 0


def register(subparsers):
    """Add ``scan`` to the toymc sub-parsers; returns its parser."""
    s = subparsers.add_parser(
        "scan", help="mass x c*tau efficiency grid (local processes or Dask)",
        description="Run the [scan] grid of CONFIG: one reference sample per mass "
                    "with lifetime reweighting, direct generation where the "
                    "effective sample size is too small. Writes index.json, "
                    "points/*.root, efficiency_map.csv and efficiency_map.png.")
    s.add_argument("config", help="TOML config with [scan] and a detector geometry")
    s.add_argument("--output-dir", "-o",
                   help="scan folder (default: scan_<config name> in the current folder)")
    s.add_argument("--workers", "-j", type=A.WORKERS,
                   help=f"local worker processes (default: all cores; at most {A.R.MAX_WORKERS})")
    s.add_argument("--scheduler", metavar="ADDRESS",
                   help="dask.distributed scheduler address (e.g. tcp://host:8786)")
    s.add_argument("--resume", action="store_true",
                   help="continue the scan in --output-dir: skip finished masses")
    s.add_argument("--events-per-mass", type=A.EVENTS,
                   help="events of each mass's reference sample ([scan] events_per_mass)")
    s.add_argument("--quiet", "-q", action="store_true", help="no progress bar")
    s.set_defaults(func=cmd_scan)
    return s
