"""Mass x lifetime grid scans: one reference sample per mass, lifetime reweighting,
direct generation where reweighting is too weak, local processes or a Dask cluster.

Plan of a scan (``[scan]`` section of a config; its keys are in the README):

* grid: masses (explicit list, or mass_min..mass_max linear) times
  ctau_points values log-spaced in [ctau_min, ctau_max];
* for each mass one *task*: generate ``events_per_mass`` events through the
  detector, written to ``points/m<mass>_ref.root``, with proper decay lengths
  drawn from an equal-weight mixture of exponentials whose c*tau values are
  log-spaced over the grid range, neighbours at most ``mixture_ratio`` apart
  (``llp.ctau_mixture``).  Every grid c*tau_1 gets its efficiency from the
  weights w = f_1(t)/g(t), the exponential density at c*tau_1 over the
  mixture density g (for a single c*tau_0 this is the lifetime weight
  (tau0/tau1) exp(-t/tau1 + t/tau0) of toymc.analysis.reweight), accumulated chunk by
  chunk.  With a single exponential the weights have infinite variance for
  c*tau_1 > 2 c*tau_0 and an effective sample size ESS/N = rho(2 - rho),
  rho = c*tau_1/c*tau_0, so one c*tau_0 cannot serve a grid of many decades;
  the mixture keeps ESS/N of order 1/K over the whole range (K components).
  Where ESS/N < ``ess_min_fraction`` the point is generated directly at
  c*tau_1 (``points/m<mass>_ct<ctau>.root``);
* efficiency = weighted fraction of events passing the cutflow step
  ``efficiency_step`` (column ``cut_<step>``), with the ratio-estimator error
  (toymc.analysis.reweight.reweighted_efficiency; binomial for unit weights).

Seeds come from the grid coordinates, never from task order: the sample of mass
m (or of the point (m, c*tau)) uses the master seed combined with the bits of the
float values, so the same seed gives the same efficiency map whatever the number
of workers or the executor.  Tasks run inline (1 worker), in local worker
processes, or on a dask.distributed cluster (``scheduler``).

The scan keeps ``index.json`` in its folder (config, grid, and one row per point:
status, method, efficiency and error, events, ESS, file, seed), rewritten
atomically after each finished mass.  ``resume`` skips finished masses and
redoes unfinished ones; a resume against a scan made with another config is
refused, naming what differs.  Sample files are written atomically (temporary
name, then rename), so a killed scan leaves no truncated file under a final
name; stale temporary files are removed on resume.
"""

import csv
import json
import math
import os
import struct
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

from toymc.config import schema as _config
from toymc.config.scan import Grid, grid_from_config
from toymc.config.scan import point_data as _as_data
from toymc.errors import ConfigError, InputFileError, OutputError, ToymcError
from toymc.io.files import atomic_write as _atomic_write
from toymc.io.files import check_output_dir
from toymc.io.files import replacing as _replacing
from toymc.physics.kinematics.elementary import exp_array

__all__ = ("Grid", "grid_from_config", "load_index", "map_title", "point_seed", "run_mass_task",
           "run_scan", "write_map")

INDEX = "index.json"
#: largest weight table (c*tau values x events) computed at once, about 32 MB
_WEIGHT_CELLS = 1 << 22


def point_seed(seed, mass, ctau=None):
    """Seed of the sample of (mass[, ctau]) from the master seed and the float bits.

    Uses numpy's SeedSequence on (seed, tag, the IEEE-754 bits of mass and ctau),
    so it depends on the grid coordinates only.
    """
    words = [int(seed), 0 if ctau is None else 1]
    for v in (mass, ctau if ctau is not None else 0.0):
        hi, lo = struct.unpack("<II", struct.pack("<d", float(v)))
        words += [hi, lo]
    state = np.random.SeedSequence(words).generate_state(4, dtype=np.uint32)
    return int(sum(int(x) << (32 * i) for i, x in enumerate(state)))


def _sample_cfg(cfg, mass, ctau, events, seed, output):
    c = _config.from_dict(_as_data(cfg, mass, ctau), cfg.path)
    return replace(c, run=replace(c.run, events=events, seed=seed, output=str(output)),
                   path=cfg.path)


def _fname(mass, ctau=None):
    return f"m{mass:.6g}_ref.root" if ctau is None else f"m{mass:.6g}_ct{ctau:.6g}.root"


def _generate(cfg, step, ctaus, components):
    """Write cfg's sample; return (S_w, S_wp, S_w2, S_w2p) per target ctau.

    The sample's proper decay lengths follow the equal-weight mixture of
    exponentials with c*tau `components` (one value: a plain exponential); the
    weight to target c*tau_1 is its exponential density over the mixture's.
    """
    from toymc.engine.api import detector_for, metadata
    from toymc.engine.generator import iter_chunks, mixture_density
    from toymc.io.columns import all_columns
    from toymc.io.ntuple import NtupleWriter

    det = detector_for(cfg)
    if det is None:
        raise ConfigError(cfg.path, "detector.geometry", "", "a geometry: a scan needs the detector")
    meta = metadata(cfg)
    meta["columns"] = [list(c) for c in all_columns(with_reco=True)]
    ctaus = np.asarray(ctaus, dtype=float)
    sums = np.zeros((len(ctaus), 4))
    key = f"cut_{step}"
    with NtupleWriter(cfg.run.output, meta, force=True, compression=cfg.run.compression) as w:
        for chunk in iter_chunks(cfg, detector=det):
            if key not in chunk.event:
                raise ConfigError(cfg.path, "scan.efficiency_step", step,
                                  "a cutflow step: one of " + ", ".join(
                                      k[4:] for k in chunk.event if k.startswith("cut_")))
            ct = chunk.event["llp_ct"]
            ok = chunk.event[key].astype(bool)
            g = mixture_density(ct, components)
            # a few c*tau rows at a time: the weight table stays below _WEIGHT_CELLS numbers
            step = max(1, _WEIGHT_CELLS // max(ct.size, 1))
            for a in range(0, len(ctaus), step):
                c = ctaus[a:a + step, None]
                with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
                    wt = exp_array(-ct[None, :] / c) / c / g[None, :]
                wt = np.where(np.isfinite(wt), wt, 0.0)
                sums[a:a + step, 0] += wt.sum(axis=1)
                sums[a:a + step, 1] += (wt * ok).sum(axis=1)
                w2 = wt * wt
                sums[a:a + step, 2] += w2.sum(axis=1)
                sums[a:a + step, 3] += (w2 * ok).sum(axis=1)
            w.write(chunk)
    return sums


def _eff(sums):
    """(eff, err, ess) from S_w, S_wp, S_w2, S_w2p (ratio-estimator error, Kish ESS)."""
    sw, swp, sw2, sw2p = sums
    if not (sw > 0 and math.isfinite(sw) and math.isfinite(sw2)):
        return float("nan"), float("nan"), 0.0
    eff = swp / sw
    var = ((1 - eff) ** 2 * sw2p + eff**2 * (sw2 - sw2p)) / sw**2
    return float(eff), float(math.sqrt(max(var, 0.0))), float(sw * sw / sw2)


def run_mass_task(task):
    """One mass of a scan (runs in a worker): reference sample, reweighting, direct points.

    Parameters
    ----------
    task : dict
        cfg (RunConfig), grid (Grid), mass_index, outdir.

    Returns
    -------
    list of dict: the index rows of this mass.
    """
    cfg, grid, i, outdir = task["cfg"], task["grid"], task["mass_index"], Path(task["outdir"])
    mass = grid.masses[i]
    comps = grid.mixture
    seed = point_seed(cfg.run.seed, mass)
    ref = outdir / "points" / _fname(mass)
    rcfg = _sample_cfg(cfg, mass, comps if len(comps) > 1 else comps[0], grid.events_per_mass,
                       seed, ref)
    sums = _generate(rcfg, grid.efficiency_step, grid.ctaus, comps)
    rows = []
    for j, ctau in enumerate(grid.ctaus):
        eff, err, ess = _eff(sums[j])
        row = {"mass_index": i, "ctau_index": j, "mass": mass, "ctau": ctau, "status": "done",
               "method": "reweight", "efficiency": eff, "error": err,
               "events": grid.events_per_mass, "ess": ess, "file": str(ref.relative_to(outdir)),
               "seed": str(seed)}
        if not ess >= grid.ess_min_fraction * grid.events_per_mass:
            dseed = point_seed(cfg.run.seed, mass, ctau)
            dfile = outdir / "points" / _fname(mass, ctau)
            dcfg = _sample_cfg(cfg, mass, ctau, grid.events_direct, dseed, dfile)
            eff, err, ess = _eff(_generate(dcfg, grid.efficiency_step, [ctau], [ctau])[0])
            row.update(method="direct", efficiency=eff, error=err, events=grid.events_direct,
                       ess=ess, file=str(dfile.relative_to(outdir)), seed=str(dseed))
        rows.append(row)
    return rows


def _write_json_atomic(path, obj, force=True):
    # the scan's own index, rewritten after every mass
    _atomic_write(path, lambda tmp: tmp.write_text(json.dumps(obj, indent=1, sort_keys=True)),
                  force=force)


def _is_int(v):
    return isinstance(v, int) and not isinstance(v, bool)


def _is_number(v):
    return isinstance(v, (int, float)) and not isinstance(v, bool)


#: kinds of the fields of an index row (toymc.analysis.scan.run_mass_task)
_ROW_FIELDS = (("mass_index", _is_int, "an integer"), ("ctau_index", _is_int, "an integer"),
               ("mass", _is_number, "a number"), ("ctau", _is_number, "a number"),
               ("efficiency", _is_number, "a number"), ("error", _is_number, "a number"),
               ("events", _is_int, "an integer"), ("status", lambda v: isinstance(v, str), "text"),
               ("method", lambda v: isinstance(v, str), "text"),
               ("file", lambda v: isinstance(v, str), "text"))


def check_index(index, path):
    """Refuse an index that is not the structure :func:`run_scan` writes (InputFileError)."""
    def bad(what):
        raise InputFileError(f"{path}: damaged scan index ({what})")

    if not isinstance(index, dict):
        bad(f"a JSON object expected, found {type(index).__name__}")
    for key, kind in (("config", str), ("grid", dict), ("points", list)):
        if not isinstance(index.get(key), kind):
            bad(f"{key}: {kind.__name__} expected" if key in index else f"no {key}")
    for i, row in enumerate(index["points"]):
        if not isinstance(row, dict):
            bad(f"points[{i}] is not an object")
        for key, ok, what in _ROW_FIELDS:
            if not ok(row.get(key)):
                bad(f"points[{i}].{key} = {row.get(key)!r}: {what}")
    return index


def load_index(outdir):
    """The checked index of the scan in `outdir`, or None if it has none."""
    p = Path(outdir) / INDEX
    if not os.path.lexists(p):
        return None
    if not p.is_file():
        raise InputFileError(f"{p}: damaged scan index (not a regular file)")
    try:
        index = json.loads(p.read_text())
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputFileError(f"{p}: damaged scan index ({exc})") from None
    return check_index(index, p)


_MAP_FILES = ("efficiency_map.csv", "efficiency_map.png")


def _check_scan_dir(out, resume, grid):
    """Every check of the scan folder, before anything is created; returns the old index."""
    try:
        check_output_dir(out)  # a folder, or missing under a folder
    except OutputError as exc:
        raise OutputError(f"scan folder not writable: {exc}") from None
    exists = out.is_dir()
    points = out / "points"
    if os.path.lexists(points) and not points.is_dir():
        raise OutputError(f"{points}: not a folder (the scan keeps its samples there)")
    if not resume:
        if os.path.lexists(out / INDEX):
            raise OutputError(f"{out}: holds a scan already ({INDEX}); use --resume to continue "
                              "it or another folder")
        present = [n for n in _MAP_FILES if os.path.lexists(out / n)]
        if points.is_dir() and any(points.iterdir()):
            present.append("points/")
        if present:
            raise OutputError(f"{out}: holds scan outputs ({', '.join(present)}) but no "
                              f"{INDEX}; choose another folder")
        return None
    if not exists:
        raise OutputError(f"{out}: no scan to resume (the folder does not exist); run without "
                          "--resume to start one")
    # the files a resume rewrites must be regular files
    check_output_dir(out, (INDEX,) + _MAP_FILES, force=True)
    old = load_index(out)
    if old is None:
        raise OutputError(f"{out}: no scan to resume (no {INDEX}); run without --resume to "
                          "start one")
    return old


def _check_rows(old, grid, path):
    """Rows of a resumed index must fit the grid, and a finished mass must have every c*tau."""
    n_m, n_c = len(grid.masses), len(grid.ctaus)
    done = {}
    for i, r in enumerate(old["points"]):
        if not (0 <= r["mass_index"] < n_m and 0 <= r["ctau_index"] < n_c):
            raise InputFileError(f"{path}: damaged scan index (points[{i}] lies outside the "
                                 f"{n_m} x {n_c} grid)")
        if r["status"] == "done":
            done.setdefault(r["mass_index"], set()).add(r["ctau_index"])
    for m, cts in done.items():
        if cts != set(range(n_c)):
            raise InputFileError(f"{path}: damaged scan index (mass {m} is marked done with "
                                 f"{len(cts)} of {n_c} c*tau points)")


def _config_diff(a, b):
    la, lb = a.splitlines(), b.splitlines()
    sec, out = "", []
    da, db = {}, {}
    for lines, d in ((la, da), (lb, db)):
        sec = ""
        for line in lines:
            if line.startswith("["):
                sec = line.strip("[]")
            elif "=" in line and not line.startswith("#"):
                k, v = line.split("=", 1)
                d[f"{sec}.{k.strip()}"] = v.strip()
    for k in sorted(set(da) | set(db)):
        if da.get(k) != db.get(k):
            out.append(f"{k}: {db.get(k, '(absent)')} here vs {da.get(k, '(absent)')} in the scan")
    return out


def _scan_identity(cfg):
    """Config text that defines a scan's results (not its output name or chunking)."""
    return _config.to_toml(replace(cfg, run=replace(cfg.run, output="", chunk_blocks=1)))


def _executor(workers, scheduler, timeout=5.0):
    """(submit-all function, close function) for the chosen executor."""
    if scheduler:
        try:
            from distributed import Client, as_completed
        except ImportError:
            raise ToymcError('--scheduler needs dask.distributed: pip install "toymc[dist]"') from None
        try:
            client = Client(scheduler, timeout=f"{timeout}s")
        except (OSError, TimeoutError) as exc:
            raise ToymcError(f"cannot reach the Dask scheduler at {scheduler} within {timeout:g} s "
                             f"({type(exc).__name__})") from None
        except (ValueError, TypeError) as exc:
            raise ConfigError(None, "--scheduler", scheduler, "a scheduler address such as "
                              f"tcp://host:8786 ({exc})") from None

        def run_all(tasks):
            futs = client.map(run_mass_task, tasks, pure=False)
            for f in as_completed(futs):
                yield f.result()

        return run_all, lambda abort=False: client.close()
    if workers == 1:
        return (lambda tasks: (run_mass_task(t) for t in tasks)), (lambda abort=False: None)
    from concurrent.futures import ProcessPoolExecutor, as_completed
    from concurrent.futures.process import BrokenProcessPool

    from toymc.io.signals import on_stop, worker_init

    pool = ProcessPoolExecutor(max_workers=workers, initializer=worker_init)

    def run_all(tasks):
        futs = [pool.submit(run_mass_task, t) for t in tasks]
        for f in as_completed(futs):
            try:
                yield f.result()
            except BrokenProcessPool:
                raise ToymcError("scan: a worker process ended unexpectedly (killed, or out of "
                                 "memory); finished masses are kept in the index: continue "
                                 "with --resume") from None

    def stop_workers():
        # SIGTERM each worker: it removes its temporary file and exits (toymc.io.signals)
        procs = list((getattr(pool, "_processes", None) or {}).values())
        for proc in procs:
            if proc.is_alive():
                proc.terminate()
        for proc in procs:
            proc.join(timeout=60)
            if proc.is_alive():
                proc.kill()

    stop = on_stop(stop_workers)  # also when a signal stops this process
    stop.__enter__()

    def close(abort=False):
        try:
            if abort:
                stop_workers()
                pool.shutdown(wait=False, cancel_futures=True)
            else:
                pool.shutdown(cancel_futures=True)
        finally:
            stop.__exit__(None, None, None)

    return run_all, close


def run_scan(config, outdir, workers=None, scheduler=None, resume=False, progress=False,
             events_per_mass=None):
    """Run (or resume) a scan; returns the index dict.

    Parameters
    ----------
    config : str, Path or RunConfig
    outdir : str or Path
        Scan folder (created; must be writable).
    workers : int, optional
        Local worker processes (default: all cores); ignored with ``scheduler``.
    scheduler : str, optional
        Address of a dask.distributed scheduler.
    resume : bool
        Continue a scan in ``outdir`` made with the same config.
    """
    cfg = config if isinstance(config, _config.RunConfig) else _config.load(config)
    if events_per_mass is not None:
        cfg = replace(cfg, scan=dict(cfg.scan or {}, events_per_mass=events_per_mass))
    grid = grid_from_config(cfg)
    out = Path(outdir)
    # every check before anything is created: a refused resume leaves the folder as it was
    old = _check_scan_dir(out, resume, grid)
    ident = _scan_identity(cfg)
    if old is not None:
        if old["config"] != ident:
            diff = _config_diff(old["config"], ident)
            raise ConfigError(cfg.path, "scan", "--resume",
                              "refused: the scan in " + str(out) + " was made with another config ("
                              + "; ".join(diff[:5]) + ")")
        _check_rows(old, grid, out / INDEX)
    # connect to a Dask scheduler before anything is written: an unreachable address
    # then leaves no scan folder behind
    early = _executor(1, scheduler) if scheduler else None
    try:
        return _run_scan(cfg, grid, out, workers, scheduler, old, progress, early, ident)
    except BaseException:
        if early is not None:
            early[1]()
        raise


def _run_scan(cfg, grid, out, workers, scheduler, old, progress, early, ident):
    try:
        (out / "points").mkdir(parents=True, exist_ok=True)
        probe = out / f".write-test-{os.getpid()}"
        probe.write_text("")
        probe.unlink()
    except OSError as exc:
        raise OutputError(f"{out}: scan folder not writable ({exc.strerror or exc})") from None
    if old is not None:
        for stale in (out / "points").glob(".*.tmp"):
            stale.unlink()
    index = {"config": ident, "grid": grid.as_dict(), "toymc_seed": cfg.run.seed,
             "points": old["points"] if old else []}
    done = {r["mass_index"] for r in index["points"] if r["status"] == "done"}
    todo = [i for i in range(len(grid.masses)) if i not in done]
    index["points"] = [r for r in index["points"] if r["mass_index"] in done]
    # a new scan's first index is written without replacing: of two scans started into
    # the same folder at once, one stops here
    _write_json_atomic(out / INDEX, index, force=old is not None)
    tasks = [{"cfg": cfg, "grid": grid, "mass_index": i, "outdir": str(out)} for i in todo]
    workers = workers or os.cpu_count() or 1
    run_all, close = early or _executor(min(workers, max(len(tasks), 1)), scheduler)
    bar = None
    if progress:
        from tqdm import tqdm

        bar = tqdm(total=len(grid.masses) * len(grid.ctaus), initial=len(done) * len(grid.ctaus),
                   unit="pt", desc="scan", leave=False)
    t0 = time.perf_counter()
    finished = False
    try:
        for rows in run_all(tasks):
            index["points"].extend(rows)
            index["points"].sort(key=lambda r: (r["mass_index"], r["ctau_index"]))
            _write_json_atomic(out / INDEX, index)
            if bar is not None:
                bar.update(len(rows))
        finished = True
    finally:
        close(abort=not finished)  # on an error or a signal: stop the workers at once
        if bar is not None:
            bar.close()
    index["seconds"] = time.perf_counter() - t0
    write_map(index, out)
    return index


def efficiency_map(index):
    """(masses, ctaus, eff[m, ct], err[m, ct]) arrays from an index."""
    g = index["grid"]
    eff = np.full((len(g["masses"]), len(g["ctaus"])), np.nan)
    err = eff.copy()
    for r in index["points"]:
        eff[r["mass_index"], r["ctau_index"]] = r["efficiency"]
        err[r["mass_index"], r["ctau_index"]] = r["error"]
    return np.array(g["masses"]), np.array(g["ctaus"]), eff, err


def write_map(index, outdir):
    """efficiency_map.csv (mass, ctau, efficiency, error, method, events) and a heat map PNG."""
    out = Path(outdir)

    def write(tmp):
        with open(tmp, "w", newline="") as f:
            wr = csv.writer(f)
            wr.writerow(["mass_gev", "ctau_cm", "efficiency", "error", "method", "events"])
            for r in sorted(index["points"], key=lambda r: (r["mass_index"], r["ctau_index"])):
                wr.writerow([repr(r["mass"]), repr(r["ctau"]), repr(r["efficiency"]),
                             repr(r["error"]), r["method"], r["events"]])

    # the map belongs to the scan: a resumed scan replaces it
    _atomic_write(out / "efficiency_map.csv", write, force=True)
    try:
        from toymc.plots.figures import efficiency_heatmap
    except ImportError:
        return
    m, c, e, _ = efficiency_map(index)
    with _replacing(True):
        efficiency_heatmap(m, c, e, out / "efficiency_map.png", title=map_title(index))


#: channel names as the plots write them (matplotlib mathtext)
_CHANNEL_TEX = {"gamma_gamma": r"\gamma\gamma", "pi_pi_pi0": r"\pi^+\pi^-\pi^0",
                "pi0_pi0_pi0": r"3\pi^0", "e_e": r"e^+e^-", "mu_mu": r"\mu^+\mu^-",
                "pi_pi": r"\pi^+\pi^-"}


def map_title(index):
    """Title of a scan's efficiency map: process and channel, the efficiency's cutflow
    step and selection window, and how each mass was sampled."""
    import tomllib

    try:
        cfg = tomllib.loads(index.get("config", ""))
    except tomllib.TOMLDecodeError:
        cfg = {}
    g = index["grid"]
    prod, llp, sel = cfg.get("production", {}), cfg.get("llp", {}), cfg.get("selection", {})
    ch = llp.get("channel", "?")
    decay = f"X$\\to {_CHANNEL_TEX[ch]}$" if ch in _CHANNEL_TEX else f"X -> {ch}"
    if llp.get("matrix_element") == "chiral":
        decay += " (chiral)"
    if prod.get("process") == "b_meson":
        k = "K^*(892)" if prod.get("recoil") == "K*" else "K"
        head = f"$B \\to {k}$ X, {decay}"
    elif prod.get("process") == "radiative":
        head = f"$e^+e^- \\to \\gamma$ X, {decay}"
    else:
        head = decay

    def cm(v):
        return f"{v:g} cm" if isinstance(v, (int, float)) else str(v)

    window = ": none"
    if sel:
        window = (f": {cm(sel.get('r_min', '?'))} < r < {cm(sel.get('r_max', '?'))}, "
                  f"{cm(sel.get('z_min', '?'))} < z < {cm(sel.get('z_max', '?'))}")
        prof = sel.get("profile") or {}
        if prof.get("kind"):
            window += f", {prof['kind']} vertex profile"
        if sel.get("mass_window"):
            window += ", mass window " + " - ".join(str(v) for v in sel["mass_window"])
    mix = g.get("mixture") or []
    sampling = (f"{g['events_per_mass']} events per mass, c$\\tau$ mixture of {len(mix)} "
                f"exponentials, reweighted (direct where ESS/N < {g['ess_min_fraction']:g})")
    return (f"{head}: signal efficiency (events passing cut_{g['efficiency_step']})\n"
            f"selection{window}\n{sampling}")
