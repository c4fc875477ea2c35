"""``toymc reach``: expected yields on a (mass, coupling) grid, written as reach.csv,
reach.json and reach.png (registered into toymc.cli.main by :func:`register`)."""

import time as _time

from toymc.cli.args import int_type
from toymc.config.ranges import MAX_SAMPLE_EVENTS

__all__ = ("cmd_reach", "register", "write_reach")


def _bar(total):
    from tqdm import tqdm

    return tqdm(total=total, unit="mass", desc="reach", leave=False)


def write_reach(config, efficiency=None, map_path=None, output_dir=None, events_per_mass=None,
                force=False, plot=True, progress=False):
    """Compute the reach of a config (:mod:`toymc.analysis.reach`) and write its files.

    Parameters
    ----------
    config : str or Path
        TOML config with [model], [reach] and what the efficiency source needs.
    efficiency, map_path, events_per_mass
        Overrides of ``reach.efficiency``, ``reach.map``, ``reach.events_per_mass``.
    output_dir : str or Path, optional
        Output folder (default ``reach_<config stem>``, the stem alone if it starts
        with ``reach``: :func:`toymc.io.names.default_output`).
    force : bool
        Overwrite existing outputs.
    plot : bool
        Draw reach.png.
    progress : bool
        A progress bar on stderr, one step per mass.

    Returns
    -------
    toymc.analysis.reach.ReachResult
        With ``files`` (csv, json and png paths) and ``seconds``.
    """
    from toymc.analysis import reach
    from toymc.io.files import check_output_dir, make_dir, replacing
    from toymc.io.names import default_output
    from toymc.io.tables import write_csv, write_json

    t0 = _time.perf_counter()
    plan = reach.prepare_reach(config, efficiency, map_path, events_per_mass)
    out = check_output_dir(output_dir or default_output("reach", plan.path),
                           reach.output_names(plot), force=force,
                           inputs=[plan.path, plan.grid.map_path])
    res = reach.compute_reach(plan, _bar if progress else None)
    make_dir(out)
    with replacing(force):
        write_csv(out / "reach.csv", reach.REACH_COLUMNS, reach.reach_rows(res))
        if plot:
            from toymc.plots.reach import plot_reach

            plot_reach(res, out / "reach.png")
            res.files["png"] = str(out / "reach.png")
        res.files["csv"] = str(out / "reach.csv")
        res.seconds = _time.perf_counter() - t0
        res.files["json"] = str(out / "reach.json")
        write_json(out / "reach.json", reach.reach_summary(res))
    return res


def cmd_reach(args):
    """``toymc reach``: write the reach of ``args.config``; returns the exit status."""
    res = write_reach(args.config, efficiency=args.efficiency, map_path=args.map,
                      output_dir=args.output_dir, events_per_mass=args.events_per_mass,
                      force=args.force, plot=not args.no_plot, progress=not args.quiet)
    n_pts = res.masses.size * res.couplings.size
    print(f"toymc reach: {n_pts} grid points ({res.masses.size} masses x "
          f"{res.couplings.size} couplings), efficiency from {res.grid.efficiency}; "
          f"N_up = {res.n_up:.4g} events ({100 * res.grid.cl:g}% CL, b = "
          f"{res.grid.background:g}); {int(res.excluded.sum())} points above it; "
          f"{res.seconds:.1f} s")
    for key in ("csv", "png", "json"):
        if key in res.files:
            print(f"  {res.files[key]}")
    return 0


def register(subparsers):
    """Add the ``reach`` subcommand to an argparse subparsers object.

    Parameters
    ----------
    subparsers : argparse._SubParsersAction
        From ``ArgumentParser.add_subparsers``.

    Returns
    -------
    argparse.ArgumentParser
        The new subparser (its ``func`` default is :func:`cmd_reach`).
    """
    from toymc.analysis.reach import EFFICIENCY_SOURCES

    r = subparsers.add_parser(
        "reach", help="expected signal yield on a (mass, coupling) grid against a Poisson limit",
        description="Scan the [reach] grid of CONFIG: N = L_int x sigma x BR(production) x "
                    "BR(decay) x efficiency at every (mass, coupling); write reach.csv, "
                    "reach.json and reach.png (the region where N exceeds the expected "
                    "Poisson upper limit for the [reach] background, with lines of constant "
                    "c*tau).")
    r.add_argument("config", help="TOML config with [model], [selection] and [reach] sections")
    r.add_argument("--efficiency", choices=EFFICIENCY_SOURCES,
                   help="efficiency source (default: [reach] efficiency): fold = analytic fold "
                        "of a truth sample per mass; mc = detector samples with lifetime "
                        "reweighting; map = interpolate an efficiency map of 'toymc scan'")
    r.add_argument("--map", metavar="FILE", help="efficiency_map.csv for --efficiency map")
    r.add_argument("--output-dir", "-o", metavar="DIR",
                   help="output folder (default: reach_<config name>, or the config name "
                        "if it starts with reach_)")
    r.add_argument("--events-per-mass", type=int_type(2, MAX_SAMPLE_EVENTS, "events"),
                   metavar="N", help="events per sample and mass ([reach] events_per_mass; 2 "
                                     "to 2 x 10^6)")
    r.add_argument("--force", action="store_true", help="overwrite existing outputs")
    r.add_argument("--no-plot", action="store_true", help="do not draw reach.png")
    r.add_argument("--quiet", "-q", action="store_true", help="no progress bar")
    r.set_defaults(func=cmd_reach)
    return r
