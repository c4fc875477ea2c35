"""Command-line subcommands ``fold``, ``validate`` and ``report``.

:func:`register` adds them to the ``toymc`` parser's sub-parsers; each sets
``func(args) -> int`` (exit status).  User mistakes are raised as
:class:`toymc.errors.ToymcError`, which ``toymc.cli.main.main`` prints as one line
with exit status 2.
"""

import sys as _sys

from toymc.cli.args import SAMPLE_EVENTS as _sample_events
from toymc.cli.args import SEED as _seed
from toymc.cli.args import Parser as _Parser

__all__ = ("cmd_fold", "cmd_report", "cmd_validate", "main_validate", "register")


def cmd_fold(args):
    """``toymc fold``: analytic fold curve of a config's truth sample."""
    from toymc.analysis.fold_sample import parse_ctau_grid, run_fold

    grid = parse_ctau_grid(args.ctau)
    r = run_fold(args.config, grid, events=args.events, output_dir=args.output_dir,
                 seed=args.seed, force=args.force)
    print(f"# analytic fold of {args.config} ({r['label']}): {r['events']} truth events")
    print(f"{'ctau_cm':>12s} {'efficiency':>12s} {'error':>10s}")
    for c, e, s in zip(r["ctau"], r["eff"], r["err"]):
        print(f"{c:12.5g} {e:12.6g} {s:10.3g}")
    print(f"toymc: wrote {r['csv']} and {r['png']}")
    return 0


def cmd_validate(args):
    """``toymc validate``: run the validation suite; exit 1 if a check fails."""
    from toymc.analysis.validate import run_validation

    r = run_validation(args.output_dir, quick=args.quick, events=args.events, seed=args.seed,
                       progress=None if args.quiet else print, force=args.force)
    for name, res in r["results"].items():
        state = "PASS" if res["passed"] else "FAIL"
        print(f"{name:10s} {state}  N = {res['n']:3d}  chi2/ndf = {res['chi2']:.1f}/{res['ndf']}  "
              f"p = {res['p_chi2']:.3g}  max pull = {res['max_pull']:+.2f} (limit {res['z_limit']:.2f})")
    print(f"toymc: validation {'passed' if r['passed'] else 'FAILED'} in {r['seconds']:.0f} s; "
          f"summary in {r['summary']}")
    return 0 if r["passed"] else 1


def cmd_report(args):
    """``toymc report``: standard plots of one ntuple."""
    from toymc.analysis.report import make_report
    from toymc.io.names import default_output

    out = make_report(args.file, args.output_dir, force=args.force)
    folder = args.output_dir or default_output("report", args.file)
    print(f"toymc: wrote {len(out)} plots to {folder}:")
    for p in out:
        print(f"  {p}")
    return 0


def _add_validate_args(v):
    v.add_argument("--output-dir", "-o", default="validation_out",
                   help="folder for the PNGs and summary.md (default ./validation_out)")
    v.add_argument("--events", "-n", type=_sample_events,
                   help="events of each reference sample (others scale with it; at most 2 x 10^6)")
    v.add_argument("--quick", action="store_true",
                   help="small samples: about 10-30 s once the kernels are compiled")
    v.add_argument("--seed", type=_seed, default=12345, help="master seed (default 12345)")
    v.add_argument("--quiet", "-q", action="store_true", help="no progress lines")
    v.add_argument("--force", action="store_true",
                   help="replace the files of an earlier validation in the folder")


def register(subparsers):
    """Add ``fold``, ``validate`` and ``report`` to the toymc sub-parsers."""
    f = subparsers.add_parser(
        "fold", help="analytic fold: efficiency vs c*tau from a config's truth kinematics",
        description="Generate a truth sample of CONFIG, fold each event's decay-length "
                    "distribution with the [selection] window and profile at log-spaced c*tau, "
                    "print the curve and write fold_<config name>.csv and .png.")
    f.add_argument("config", help="TOML config naming a geometry with a [selection]")
    f.add_argument("--ctau", required=True, metavar="CTAU|MIN:MAX:N",
                   help="one c*tau in cm, or N log-spaced c*tau values from MIN to MAX cm "
                        "(N >= 2)")
    f.add_argument("--events", "-n", type=_sample_events,
                   help="truth events ([run] events; at most 2 x 10^6)")
    f.add_argument("--seed", type=_seed, help="seed ([run] seed)")
    f.add_argument("--output-dir", "-o", default=".", help="folder for CSV and PNG (default .)")
    f.add_argument("--force", action="store_true", help="replace an existing CSV and PNG")
    f.set_defaults(func=cmd_fold)

    v = subparsers.add_parser(
        "validate", help="validation suite: MC vs fold, reweighting, vertices, masses",
        description="Check the generator and detector on the demo detector: MC efficiency vs "
                    "the analytic fold, lifetime reweighting vs direct generation, found-vertex "
                    "radii, mass resolution, di-photon mass bias; PNGs and summary.md. Exit "
                    "status 1 if a check fails.")
    _add_validate_args(v)
    v.set_defaults(func=cmd_validate)

    r = subparsers.add_parser(
        "report", help="standard plots of one ntuple (vertex, mass, cutflow, efficiency vs r)",
        description="Plot vertex r and z (reco and truth), reconstructed mass, the cutflow and "
                    "the efficiency vs decay radius of FILE (needs the reco columns).")
    r.add_argument("file", help="ROOT file written by toymc generate with a geometry")
    r.add_argument("--output-dir", "-o",
                   help="folder (default: report_<file name> in the current folder)")
    r.add_argument("--force", action="store_true", help="replace the plots of an earlier report")
    r.set_defaults(func=cmd_report)


def main_validate(argv=None):
    """Stand-alone entry of ``validation/run_validation.py`` (errors as one line, exit 2;
    signals as in ``toymc``: one line, exit 128 + the signal number)."""
    from toymc.errors import ToymcError
    from toymc.io.files import remove_temporaries
    from toymc.io.signals import handled

    p = _Parser(prog="run_validation.py", description="toymc validation suite")
    _add_validate_args(p)
    args = p.parse_args(argv)
    with handled():
        try:
            return cmd_validate(args)
        except ToymcError as exc:
            print(f"toymc: error: {exc}", file=_sys.stderr)
            return 2
        finally:
            remove_temporaries()
