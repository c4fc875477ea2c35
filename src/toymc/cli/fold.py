"""``toymc fold``: the analytic fold curve eps(c*tau) of a config's truth sample, printed
and written as ``fold_<config name>.csv`` and ``.png``."""

from toymc.cli.args import SAMPLE_EVENTS as _SAMPLE_EVENTS
from toymc.cli.args import SEED as _SEED

__all__ = ("cmd_fold", "register", "run_fold")


def run_fold(config, ctau_grid, events=None, output_dir=".", seed=None, force=False):
    """Fold a config's truth sample on a c*tau grid (:mod:`toymc.analysis.fold_sample`);
    write CSV and PNG.

    Parameters
    ----------
    config : str, Path or RunConfig
        Must name a detector geometry with a ``[selection]``.
    ctau_grid : array_like
        One or more increasing proper decay lengths, cm.
    events : int, optional
        Truth events to fold (default: ``[run] events``).
    output_dir : str or Path
        Folder for ``fold_<config stem>.csv`` and ``.png`` (created).
    seed : int, optional
        Overrides ``[run] seed``.
    force : bool
        Replace the CSV and PNG if they exist (otherwise OutputError before any work).

    Returns
    -------
    dict
        ``ctau``, ``eff``, ``err`` arrays, ``csv`` and ``png`` paths, ``events``, ``label``.
    """
    from toymc.analysis.fold_sample import fold_config, fold_setup
    from toymc.io.files import check_output_dir, make_dir, replacing
    from toymc.io.names import default_output
    from toymc.io.tables import write_csv
    from toymc.plots.figures import fold_curve_plot

    cfg, grid = fold_setup(config, ctau_grid)
    stem = default_output("fold", cfg.path or "config")
    names = (f"{stem}.csv", f"{stem}.png")
    out = check_output_dir(output_dir, names, force=force, inputs=[cfg.path])
    r = fold_config(cfg, grid, events, seed)
    make_dir(out)
    csv_path, png_path = out / names[0], out / names[1]
    label = f"{cfg.llp.channel}, m = {cfg.llp.mass:g} GeV"
    with replacing(force):
        write_csv(csv_path, ("ctau_cm", "efficiency", "error"),
                  ([repr(float(c)), repr(float(e)), repr(float(s))]
                   for c, e, s in zip(grid, r["eff"], r["err"])))
        fold_curve_plot(grid, [(label, r["eff"], r["err"])], png_path,
                        title=f"analytic fold ({r['events']} truth events, window and profile "
                              f"of [selection])")
    r.update(csv=str(csv_path), png=str(png_path), label=label)
    return r


def cmd_fold(args):
    """``toymc fold``: analytic fold curve of a config's truth sample."""
    from toymc.analysis.fold_sample import parse_ctau_grid

    grid = parse_ctau_grid(args.ctau)
    r = run_fold(args.config, grid, events=args.events, output_dir=args.output_dir,
                 seed=args.seed, force=args.force)
    print(f"# analytic fold of {args.config} ({r['label']}): {r['events']} truth events")
    print(f"{'ctau_cm':>12s} {'efficiency':>12s} {'error':>10s}")
    for c, e, s in zip(r["ctau"], r["eff"], r["err"]):
        print(f"{c:12.5g} {e:12.6g} {s:10.3g}")
    print(f"toymc: wrote {r['csv']} and {r['png']}")
    return 0


def register(subparsers):
    """Add ``fold`` to the toymc sub-parsers; returns its parser."""
    f = subparsers.add_parser(
        "fold", help="analytic fold: efficiency vs c*tau from a config's truth kinematics",
        description="Generate a truth sample of CONFIG, fold each event's decay-length "
                    "distribution with the [selection] window and profile at log-spaced c*tau, "
                    "print the curve and write fold_<config name>.csv and .png.")
    f.add_argument("config", help="TOML config naming a geometry with a [selection]")
    f.add_argument("--ctau", required=True, metavar="CTAU|MIN:MAX:N",
                   help="one c*tau in cm, or N log-spaced c*tau values from MIN to MAX cm "
                        "(N >= 2)")
    f.add_argument("--events", "-n", type=_SAMPLE_EVENTS,
                   help="truth events ([run] events; at most 2 x 10^6)")
    f.add_argument("--seed", type=_SEED, help="seed ([run] seed)")
    f.add_argument("--output-dir", "-o", default=".", help="folder for CSV and PNG (default .)")
    f.add_argument("--force", action="store_true", help="replace an existing CSV and PNG")
    f.set_defaults(func=cmd_fold)
    return f
