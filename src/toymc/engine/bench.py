"""The benchmark behind ``toymc bench``: events per second against the RNG floor.

For each case the generator runs block by block in this process (one core;
numba kernels are single-threaded) after a warm-up block that triggers
compilation.  The kernels count the random numbers they draw (uniform,
normal and exponential); the RNG floor is the time numpy alone needs to draw
the same count of the same kinds into a preallocated buffer, measured in the
same run.
The ratio (generation time / floor) says how far the physics is from the
cost of its random numbers; with ``--detector`` the detector's draws (smearing,
accept flags) are counted too.  Both times are the best of ``repeat`` runs (the
minimum is the least disturbed by other work on the machine; common practice
for timing, as in the standard library's timeit).
"""

import time

import numpy as np

from toymc.config import loader as _config
from toymc.engine.generator import generate_block
from toymc.engine.rng import BLOCK_SIZE, n_blocks

__all__ = ("CASES", "bench_case", "rng_floor", "run_bench")

def _configs_dir():
    """The demo configs shipped with the package (any folder, any install)."""
    from toymc.data import configs_dir

    return configs_dir()


#: name -> demo config (relative to configs/) and whether the detector runs
CASES = {
    "a->gamma gamma (B -> K* a)": ("alp_gg_bksta.toml", False),
    "a->pi+pi-pi0 (B -> K a)": ("alp_3pi_bka.toml", False),
}

#: cases timed with the detector response too
DETECTOR_CASES = {"a->pi+pi-pi0 (B -> K a)": ("alp_3pi_bka.toml", True)}


def rng_floor(n_uniform, n_normal, n_exponential=0, seed=12345):
    """Seconds numpy needs to draw n_uniform uniforms, n_normal normals and n_exponential
    standard exponentials (PCG64)."""
    rng = np.random.Generator(np.random.PCG64(seed))
    buf = np.empty(1 << 20)
    rng.random(out=buf)  # warm the buffer
    t0 = time.perf_counter()
    for total, fill in ((n_uniform, rng.random), (n_normal, rng.standard_normal),
                        (n_exponential, rng.standard_exponential)):
        left = int(total)
        while left > 0:
            m = min(left, buf.size)
            fill(out=buf[:m])
            left -= m
    return time.perf_counter() - t0


def bench_case(cfg, events, detector=None, repeat=3):
    """Time `events` events of `cfg` (best of `repeat` runs); returns a dict of figures."""
    generate_block(cfg.with_run(events=1024), 0, 1024, detector)  # compile / load cache
    nb = n_blocks(events)
    dt = float("inf")
    for _ in range(repeat):
        counter = np.zeros(3, dtype=np.int64)
        t0 = time.perf_counter()
        done = 0
        for i in range(nb):
            n = min(BLOCK_SIZE, events - done)
            generate_block(cfg, i, n, detector, counter)
            done += n
        dt = min(dt, time.perf_counter() - t0)
    floor = min(rng_floor(counter[0], counter[1], counter[2]) for _ in range(repeat))
    return {"events": done, "seconds": dt, "rate": done / dt, "uniforms": int(counter[0]),
            "normals": int(counter[1]), "exponentials": int(counter[2]),
            "floor_seconds": floor, "ratio": dt / floor}


def run_bench(events=1_000_000, with_detector=False, cases=None, repeat=3):
    """Run every case; returns a list of (name, figures)."""
    from toymc.engine.api import detector_for

    out = []
    todo = list((cases or CASES).items())
    if with_detector and cases is None:
        todo += list(DETECTOR_CASES.items())
    for name, (fname, needs_det) in todo:
        cfg = _config.load(_configs_dir() / fname)
        det = None
        if needs_det:
            det = detector_for(cfg)
            name += " + detector"
        out.append((name, bench_case(cfg, events, det, repeat)))
    return out
