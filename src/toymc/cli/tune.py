"""The ``tune-cuts`` subcommand: per-mass radial-cut and mass-window tuning.

``register(subparsers)`` adds it to the main parser (toymc.cli.main); the
command reads a config with [tuning] and [backgrounds] sections, runs
:func:`toymc.analysis.tuning.tune` and writes ``<output>.csv``, ``<output>.json``
(:func:`write_table`) and ``<output>.png`` (:func:`toymc.plots.tuning.plot_windows`;
stem from ``tuning.output`` or ``--output``, relative to the working directory).
"""

import time as _time
from pathlib import Path as _Path

from toymc.cli.args import SEED

__all__ = ("cmd_tune_cuts", "register", "write_table")


def write_table(rows, stem, meta=None):
    """Write ``<stem>.csv`` and ``<stem>.json`` as one output (both written to temporary names,
    then both renamed: a failure leaves neither); return the paths.

    The CSV has the columns of :data:`toymc.analysis.tuning.TABLE_COLUMNS`; the JSON holds
    the rows (with per-species backgrounds), the column table and `meta`.
    """
    from toymc.analysis.tuning import TABLE_COLUMNS, table_document, table_rows
    from toymc.io.files import atomic_write_all
    from toymc.io.tables import csv_writer, json_writer

    stem = _Path(stem)
    stem.parent.mkdir(parents=True, exist_ok=True)
    csv_path, json_path = stem.with_suffix(".csv"), stem.with_suffix(".json")
    atomic_write_all([(csv_path, csv_writer([c[0] for c in TABLE_COLUMNS], table_rows(rows))),
                      (json_path, json_writer(table_document(rows, meta)))])
    return csv_path, json_path


def cmd_tune_cuts(args):
    """Run the tuning of ``args.config``; returns the exit status 0.

    Errors of the user (bad config, missing files) are raised as
    :class:`toymc.errors.ToymcError` subclasses for the CLI to report.
    """
    from dataclasses import replace

    from toymc.analysis import tuning
    from toymc.config.geometry import load_geometry, parse_selection
    from toymc.errors import ConfigError, OutputError
    from toymc.io.files import replacing
    from toymc.plots.tuning import plot_windows

    t0 = _time.perf_counter()
    cfg, tcfg, bcfg = tuning.load_tuning(args.config)
    if args.seed is not None:
        tcfg = replace(tcfg, seed=args.seed)
    if not cfg.geometry:
        raise ConfigError(cfg.path, "detector.geometry", None,
                          "a geometry file: tuning needs the detector response")
    geometry = load_geometry(cfg.geometry)
    if "selection" not in cfg.raw:
        raise ConfigError(cfg.path, "selection", None,
                          "a [selection] section (broad fiducial window, profile, track cuts)")
    selection = parse_selection(cfg.raw["selection"], cfg.path, geometry)
    stem = _check_outputs(args.output or tcfg.output, args.force, inputs=[cfg.path])
    say = (lambda msg: None) if args.quiet else (lambda msg: print("toymc tune-cuts: " + msg))
    info = {}
    rows = tuning.tune(cfg, tcfg, bcfg, geometry, selection, progress=say, info=info)
    meta = {"config": str(cfg.path), "seed": tcfg.seed, "fom": tcfg.fom,
            "punzi_a": tcfg.punzi_a, "cl": tcfg.cl, "lumi_fb-1": tcfg.lumi,
            "signal_events": tcfg.signal_events, "background_events": tcfg.background_events,
            "min_mc_events": tcfg.min_mc_events, "channel": cfg.llp.channel,
            "ctau_cm": cfg.llp.ctau, "backgrounds": info["species"], "b_floor": info["b_floor"]}
    try:
        with replacing(args.force):
            csv_path, json_path = write_table(rows, stem, meta)
            png = plot_windows(rows, str(csv_path.with_suffix(".png")),
                               title=f"{cfg.llp.channel}, c$\\tau$ = {cfg.llp.ctau:g} cm, "
                                     f"fom = {tcfg.fom}", min_mc=tcfg.min_mc_events)
    except OSError as exc:
        raise OutputError(f"{stem}: cannot write: {exc.strerror or exc}") from None
    dt = _time.perf_counter() - t0
    print(f"toymc tune-cuts: {len(rows)} masses in {dt:.1f} s; wrote {csv_path}, {json_path}, "
          f"{png}")
    return 0


def _check_outputs(stem, force, inputs=()):
    """Refuse, before any work, outputs that cannot be written or would be overwritten
    (the output policy of toymc.io.files, for the three files of the stem)."""
    from pathlib import Path

    from toymc.errors import OutputError
    from toymc.io.files import check_output_dir

    text = str(stem)
    p = Path(text)
    if not text.strip() or text.endswith("/") or p.name in ("", ".", "..") or p.is_dir():
        raise OutputError(f"{text!r}: not a file stem (empty, or names a folder)")
    # as write_table and the figure name them
    check_output_dir(p.parent, [p.with_suffix(s).name for s in (".csv", ".json", ".png")],
                     force=force, inputs=inputs)
    return stem


def register(subparsers):
    """Add the ``tune-cuts`` subcommand to an argparse subparsers object."""
    p = subparsers.add_parser(
        "tune-cuts", help="tune r_min, r_max and the mass window per mass against SM backgrounds",
        description="Scan the vertex-radius window and the mass window at each mass of "
                    "[tuning], maximising the chosen figure of merit; writes CSV, JSON, PNG.")
    p.add_argument("config", help="TOML config with [tuning] and [backgrounds]")
    p.add_argument("-o", "--output", default=None,
                   help="output file stem (default: tuning.output, else tune_<config name>)")
    p.add_argument("--seed", type=SEED, default=None, help="override tuning.seed")
    p.add_argument("--force", action="store_true", help="overwrite existing outputs")
    p.add_argument("-q", "--quiet", action="store_true", help="no progress lines")
    p.set_defaults(func=cmd_tune_cuts)
    return p
