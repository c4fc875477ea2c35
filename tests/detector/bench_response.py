"""Speed benchmark of the detector response (not collected by pytest).

Run from the project root:  python3 tests/detector/bench_response.py
Times respond() on blocks of 2^16 a -> pi+ pi- pi0 (pi0 -> gamma gamma) events
(m = 0.6 GeV, |p| = 2 GeV, decay radius uniform in 0.5-60 cm) through the demo
geometry, single thread, after one warm-up call (numba compilation), and prints
the best and the median rate over the repetitions, by wall clock and by
process CPU time (the latter is less sensitive to other jobs on the machine).
"""

import copy
import pathlib
import sys
import time

import numpy as np

sys.path.insert(0, str(pathlib.Path(__file__).parent))
sys.path.insert(0, str(pathlib.Path(__file__).parents[2] / "src"))

from detector_synth import make_block

from toymc.config.geometry import load_geometry, parse_selection
from toymc.detector.response import respond


def main(reps=9):
    geom = load_geometry(pathlib.Path(__file__).parents[2] / "geometries" / "demo.toml")
    sel = parse_selection({"r_min": 1, "r_max": 80, "z_min": -60, "z_max": 140,
                           "profile": {"kind": "flat", "eps0": 0.9}}, None, geom)
    block = make_block(np.random.default_rng(1), 1 << 16, "pipipi0", 0.6, 2.0,
                       r_range=(0.5, 60))
    respond(copy.deepcopy(block), geom, sel, np.random.default_rng(2))
    wall, cpu = [], []
    for i in range(reps):
        b = copy.deepcopy(block)
        t0, c0 = time.perf_counter(), time.process_time()
        respond(b, geom, sel, np.random.default_rng(3 + i))
        wall.append(time.perf_counter() - t0)
        cpu.append(time.process_time() - c0)
    wall, cpu = np.array(wall), np.array(cpu)
    print(f"{block.n} events/block, wall clock: best {block.n / wall.min():.3g} ev/s, "
          f"median {block.n / np.median(wall):.3g} ev/s; CPU time: best "
          f"{block.n / cpu.min():.3g} ev/s, median {block.n / np.median(cpu):.3g} ev/s")


if __name__ == "__main__":
    main()
