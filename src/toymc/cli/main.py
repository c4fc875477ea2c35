"""The ``toymc`` command line: one function per subcommand, errors as one line.

Every :class:`toymc.errors.ToymcError` (a user's mistake) is printed as a
single line ``toymc: error: ...`` on stderr with exit status 2; ``--debug``
shows the traceback instead.
"""

import os
import sys
from pathlib import Path

from toymc import __version__
from toymc.cli import args as A
from toymc.errors import OutputError, ToymcError

__all__ = ("main", "build_parser")


# kept for other modules; new options use the bounded types of toymc.cli.args
_positive_int = A.int_type(1, A.R.MAX_EVENTS, "_positive_int")
_nonneg_int = A.SEED


def cmd_generate(args):
    from toymc.engine.api import run

    s = run(args.config, output=args.output, events=args.events, seed=args.seed,
            force=args.force, progress=not args.quiet, chunk_blocks=args.chunk_blocks)
    extra = ""
    if args.compile_watch.compiled:
        extra = f"; {args.compile_watch.seconds:.1f} s compiling before, not counted"
    print(f"toymc: wrote {s['events']} events to {s['output']} in {s['seconds']:.2f} s "
          f"({s['rate']:.3g} events/s{extra})")
    return 0


def cmd_bench(args):
    from toymc.engine.bench import run_bench

    print(f"toymc bench: {args.events} events per case, one core, best of {args.repeat}")
    print(f"{'case':40s} {'events/s':>12s} {'randoms/ev':>11s} {'RNG floor s':>12s} "
          f"{'gen s':>8s} {'ratio':>7s}")
    for name, r in run_bench(args.events, with_detector=args.detector, repeat=args.repeat):
        per = (r["uniforms"] + r["normals"] + r["exponentials"]) / r["events"]
        print(f"{name:40s} {r['rate']:12.4g} {per:11.1f} {r['floor_seconds']:12.4f} "
              f"{r['seconds']:8.3f} {r['ratio']:7.2f}")
    return 0


def cmd_scan(args):
    from toymc.analysis.scan import run_scan
    from toymc.io.names import default_output

    out = args.output_dir or default_output("scan", args.config)
    idx = run_scan(args.config, out, workers=args.workers, scheduler=args.scheduler,
                   resume=args.resume, progress=not args.quiet,
                   events_per_mass=args.events_per_mass)
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


def cmd_cutflow(args):
    from toymc.analysis.cutflow import cutflow_table

    print(cutflow_table(args.file))
    return 0


def cmd_draw_geometry(args):
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


def build_parser():
    p = A.Parser(
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

    b = sub.add_parser("bench", help="events per second on one core against the RNG floor",
                       description="Time the demo cases on one core and compare with the time "
                                   "numpy needs to draw the same random numbers.")
    b.add_argument("--events", "-n", type=A.EVENTS, default=1_000_000,
                   help="events per case (default 1e6)")
    b.add_argument("--detector", action="store_true", help="include the detector response")
    b.add_argument("--repeat", type=A.REPEAT, default=3,
                   help="runs per case; the best time of each is reported (default 3)")
    b.set_defaults(func=cmd_bench)

    s = sub.add_parser("scan", help="mass x c*tau efficiency grid (local processes or Dask)",
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

    c = sub.add_parser("cutflow", help="cutflow table of a ntuple with reco columns",
                       description="Print the events passing each selection step of FILE, "
                                   "with step and cumulative efficiencies and binomial errors.")
    c.add_argument("file", help="ROOT file written by toymc generate with a geometry")
    c.set_defaults(func=cmd_cutflow)

    d = sub.add_parser("draw-geometry", help="draw a detector geometry (r-z and x-y views)",
                       description="Draw GEOMETRY (a geometries/*.toml file) to a PNG.")
    d.add_argument("geometry", help="geometry TOML file")
    d.add_argument("--output", "-o",
                   help="PNG file (default: geometry_<geometry file name>.png)")
    d.add_argument("--force", action="store_true", help="overwrite an existing output file")
    d.set_defaults(func=cmd_draw_geometry)

    from toymc.cli.handoff import register as register_handoff

    register_handoff(sub)
    from toymc.cli.reach import register as register_reach

    register_reach(sub)
    from toymc.cli.tune import register as register_tuning

    register_tuning(sub)
    from toymc.cli.validate import register as register_validate

    register_validate(sub)
    return p


#: argument names that hold input files (a trailing '/' is refused: it names a folder)
_INPUT_ARGS = ("config", "file", "files", "geometry", "map")


def _check_paths(args):
    """An empty output file or folder is a user mistake: it would silently mean the current
    folder (or the command's default).  An input file name ending with '/' names a folder
    (pathlib would drop the '/').  Raises a ToymcError (one line, exit 2)."""
    from toymc.errors import InputFileError
    from toymc.io.files import check_input_name

    for name in ("output", "output_dir"):
        value = getattr(args, name, None)
        if isinstance(value, str) and not value.strip():
            raise InputFileError(f"output path {value!r}: an empty path; give a file or "
                                 "folder name")
    for name in _INPUT_ARGS:
        value = getattr(args, name, None)
        for v in (value if isinstance(value, list) else [value]):
            if isinstance(v, str):
                check_input_name(v)


def _stdio_broken(streams=None):
    """True if the reader of stdout or stderr has gone (a pipe closed by ``head``); the
    broken ones are pointed at the null device for later writes and the exit flush."""
    import select

    broken = False
    for stream in streams or (sys.stdout, sys.stderr):
        try:
            fd = stream.fileno()
            poll = select.poll()
            poll.register(fd, select.POLLOUT)
            events = poll.poll(0)
        except (AttributeError, OSError, ValueError):
            continue  # not a real file (tests capturing output) or no poll on this system
        if any(ev & select.POLLERR for _, ev in events):
            broken = True
            os.dup2(os.open(os.devnull, os.O_WRONLY), fd)  # later writes and the exit flush
    return broken


def _show_warning(message, category, filename, lineno, file=None, line=None):
    """Warnings for a command-line user: one line, without the Python source location."""
    text = " ".join(str(message).split())
    print(f"toymc: warning: {text}", file=sys.stderr if file is None else file)


def _main(argv):
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help()
        return 2
    import warnings

    shown = warnings.showwarning
    if not args.debug:  # --debug keeps Python's format: category, file and line
        warnings.showwarning = _show_warning
    try:
        return _run(args)
    finally:
        warnings.showwarning = shown


def _run(args):
    from toymc.cli.compiling import NOTICE, CompileWatch

    try:
        _check_paths(args)
        with CompileWatch(notice=None if getattr(args, "quiet", False) else NOTICE) as watch:
            args.compile_watch = watch
            return args.func(args)
    except ToymcError as exc:
        if args.debug:
            raise
        print(f"toymc: error: {exc}", file=sys.stderr)
        return 2
    except OSError as exc:
        # a path the user gave that the system refuses (name too long, no permission, read-only
        # or full disk, a file where a folder is needed): one line naming it
        if args.debug or exc.filename is None or isinstance(exc, BrokenPipeError):
            raise
        print(f"toymc: error: {exc.filename}: {exc.strerror or exc}", file=sys.stderr)
        return 2


def main(argv=None):
    """Run the command line; returns the exit status.

    SIGINT, SIGTERM and SIGHUP stop any command at any moment with one line
    ``toymc: interrupted (SIG...)`` and exit status 128 + the signal number,
    leaving no temporary file (toymc.io.signals).

    A closed stdout (``toymc info --json f.root | head -1``) ends the command quietly with
    status 141, the status of a program killed by SIGPIPE, as standard tools end in a pipe
    whose reader has gone, so that ``set -o pipefail`` scripts see the same for toymc as for
    ``cat``.  The default SIGPIPE action is not restored instead: it would also kill toymc
    when a Dask scheduler or a worker process drops its connection.
    """
    from toymc.io.files import remove_temporaries
    from toymc.io.signals import handled

    with handled():
        try:
            try:
                rc = _main(argv)
            except SystemExit as exc:  # argparse's --help and usage errors
                sys.stdout.flush()
                if exc.code in (0, None) and _stdio_broken([sys.stdout]):
                    return 141  # --help into a closed pipe (argparse ignores the write error)
                raise
            sys.stdout.flush()
            return rc
        except BrokenPipeError:
            if not _stdio_broken():
                raise  # another pipe or socket: a bug, keep its traceback
            return 141
        except KeyboardInterrupt:  # raised by other code than the handler
            print("toymc: interrupted", file=sys.stderr)
            return 130
        finally:
            remove_temporaries()


if __name__ == "__main__":
    sys.exit(main())
