"""``toymc validate``: the validation suite (checks in :mod:`toymc.analysis.validate`),
its PNGs and ``summary.md``; :func:`main_validate` is the entry of the stand-alone script
``validation/run_validation.py``.

User mistakes are raised as :class:`toymc.errors.ToymcError`, which ``toymc.cli.main.main``
(or :func:`main_validate`) prints as one line with exit status 2.
"""

import sys as _sys
import time as _time

from toymc.cli.args import SAMPLE_EVENTS as _sample_events
from toymc.cli.args import SEED as _seed
from toymc.cli.args import Parser as _Parser

__all__ = ("cmd_validate", "main_validate", "register", "run_validation")


def run_validation(output_dir="validation_out", quick=False, events=None, seed=12345,
                   progress=print, force=False):
    """Run every check, write the PNGs and ``summary.md``.

    Parameters
    ----------
    output_dir : str or Path
        Created if missing.
    quick : bool
        Smaller samples and fewer c*tau points (about 10-30 s on 2 cores once the
        kernels are compiled).
    events : int, optional
        Events of each reference (reco) sample, overriding the mode's default;
        the other sample sizes scale with it.
    seed : int
        Master seed; every sample has its own stream derived from it.
    progress : callable or None
        Called with one line per finished step.
    force : bool
        Replace files of an earlier validation in `output_dir` (otherwise
        OutputError naming the first one, before any work).

    Returns
    -------
    dict
        ``passed`` (bool), ``results`` (per check, ``pngs`` the written paths),
        ``summary`` (path), ``seconds``.
    """
    from toymc.analysis import validate
    from toymc.io.files import atomic_write, check_output_dir, make_dir, replacing
    from toymc.plots.validation import draw_check

    t0 = _time.perf_counter()
    mode = "quick" if quick else "full"
    st = validate.settings(quick, events)
    out = make_dir(check_output_dir(output_dir, validate.output_names(), force=force))
    with replacing(force):
        results = validate.run_checks(st, seed, progress, t0)
        for res in results.values():
            res["pngs"] = draw_check(res, out)
        seconds = _time.perf_counter() - t0
        text = validate.summary(results, st, mode, seconds, seed)
        path = out / "summary.md"
        atomic_write(path, lambda tmp: tmp.write_text(text))
    return {"passed": all(r["passed"] for r in results.values()), "results": results,
            "summary": str(path), "seconds": seconds}


def cmd_validate(args):
    """``toymc validate``: run the validation suite; exit 1 if a check fails."""
    r = run_validation(args.output_dir, quick=args.quick, events=args.events, seed=args.seed,
                       progress=None if args.quiet else print, force=args.force)
    for name, res in r["results"].items():
        state = "PASS" if res["passed"] else "FAIL"
        print(f"{name:10s} {state}  N = {res['n']:3d}  chi2/ndf = {res['chi2']:.1f}/{res['ndf']}  "
              f"p = {res['p_chi2']:.3g}  max pull = {res['max_pull']:+.2f} (limit {res['z_limit']:.2f})")
    print(f"toymc: validation {'passed' if r['passed'] else 'FAILED'} in {r['seconds']:.0f} s; "
          f"summary in {r['summary']}")
    return 0 if r["passed"] else 1


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
    """Add ``validate`` to the toymc sub-parsers; returns its parser."""
    v = subparsers.add_parser(
        "validate", help="validation suite: MC vs fold, reweighting, vertices, masses",
        description="Check the generator and detector on the demo detector: MC efficiency vs "
                    "the analytic fold, lifetime reweighting vs direct generation, found-vertex "
                    "radii, mass resolution, di-photon mass bias; PNGs and summary.md. Exit "
                    "status 1 if a check fails.")
    _add_validate_args(v)
    v.set_defaults(func=cmd_validate)
    return v


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
