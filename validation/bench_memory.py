"""Peak memory of one grid point against its number of events.

Runs `toymc generate` (truth + detector when the config names a geometry) in a
fresh process for each event count and reports the peak resident set size
(ru_maxrss of the child).  Events stream to disk in chunks, so the peak should
not grow with the number of events: the target is peak(1e7) <= 1.5 peak(1e6).

    python validation/bench_memory.py [CONFIG] [--events 1000000 10000000]
"""

import argparse
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent


def peak_rss_mb(config, events):
    with tempfile.TemporaryDirectory() as d:
        out = Path(d) / "point.root"
        t0 = time.perf_counter()
        proc = subprocess.run([sys.executable, "-m", "toymc", "generate", str(config), "-q",
                               "--events", str(events), "--output", str(out)],
                              capture_output=True, text=True)
        dt = time.perf_counter() - t0
        if proc.returncode != 0:
            sys.exit(proc.stderr)
        size = out.stat().st_size / 1e6
    # children's peak RSS: ru_maxrss is the largest of the children waited for so far,
    # so each count runs in its own python to read a clean number
    return dt, size


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("config", nargs="?", default=str(HERE.parent / "configs" / "alp_3pi_bka.toml"))
    ap.add_argument("--events", type=int, nargs="+", default=[1_000_000, 10_000_000])
    args = ap.parse_args()
    if os.environ.get("_TOYMC_MEM_CHILD"):
        dt, size = peak_rss_mb(args.config, args.events[0])
        rss = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
        print(f"{args.events[0]} {rss:.1f} {dt:.1f} {size:.1f}")
        return
    rows = []
    for n in args.events:
        env = dict(os.environ, _TOYMC_MEM_CHILD="1")
        p = subprocess.run([sys.executable, __file__, args.config, "--events", str(n)],
                           capture_output=True, text=True, env=env)
        if p.returncode != 0:
            sys.exit(p.stderr)
        rows.append([float(x) for x in p.stdout.split()])
    print(f"{'events':>10s} {'peak RSS MB':>12s} {'seconds':>9s} {'file MB':>9s}")
    for n, rss, dt, size in rows:
        print(f"{int(n):10d} {rss:12.1f} {dt:9.1f} {size:9.1f}")
    if len(rows) >= 2:
        ratio = rows[-1][1] / rows[0][1]
        print(f"peak RSS ratio {int(rows[-1][0])}/{int(rows[0][0])} events: {ratio:.2f} "
              f"(target <= 1.5): {'PASS' if ratio <= 1.5 else 'FAIL'}")


if __name__ == "__main__":
    main()
