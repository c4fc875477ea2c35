"""``toymc info``: what toymc files hold (physics point, normalisation, seed, versions,
geometry, selection, columns)."""

import json

from toymc.cli import args as A

__all__ = ("cmd_info", "register")


def _overrides(args):
    return {k: getattr(args, k) for k in ("br_production", "br_decay", "eps", "sigma_times_br_fb")
            if getattr(args, k, None) is not None}


def cmd_info(args):
    """``toymc info``: print what each file holds."""
    from toymc.io.summary import format_summary, summary

    out = [summary(f, lumi_fb=args.lumi, **_overrides(args)) for f in args.files]
    if args.json:
        print(json.dumps(out, indent=1, sort_keys=True))
    else:
        print("\n\n".join(format_summary(s, columns=not args.no_columns) for s in out))
    return 0


def _add_normalisation(p):
    g = p.add_argument_group(
        "normalisation overrides",
        "used where the file's metadata lacks them (a sample made without a model) and "
        "taking precedence over stored values")
    g.add_argument("--br-production", type=A.FRACTION, metavar="BR",
                   help="BR(B -> K(*) X), used for charged and neutral B alike (b_meson); "
                        "production BR for radiative (default 1)")
    g.add_argument("--br-decay", type=A.FRACTION, metavar="BR", help="BR(X -> channel)")
    g.add_argument("--eps", type=A.EPS, metavar="EPS",
                   help="kinetic-mixing coupling eps of radiative production "
                        "(sigma = sigma_per_eps2 * eps^2; 0 < eps <= 1)")
    g.add_argument("--sigma-times-br", dest="sigma_times_br_fb", type=A.CROSS_SECTION,
                   metavar="XS", help="the whole sigma x BR, a number in fb or e.g. '2.5 ab' "
                                      "(replaces every factor)")


def register(subparsers):
    """Add ``info`` to the toymc sub-parsers; returns its parser."""
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
    return i
