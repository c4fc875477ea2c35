"""Same seed, same bits on any x86-64 CPU: the events must not depend on which variants of
the C library's and numpy's math routines the CPU selects.

The C library (glibc) picks implementations of exp, log, sin, cos, atan2, ... by the CPU's
instruction sets when a program starts, and numpy's vectorised math does the same; their
last bits differ (e.g. glibc's FMA and plain exp differ in about 1 value in 1000).  A run
here is compared with a run in a child process that is told to act like an older CPU:
``GLIBC_TUNABLES=glibc.cpu.hwcaps=-AVX2,-FMA,-AVX512F`` (glibc's documented tunable; it
makes glibc choose its non-FMA routines) and ``NPY_DISABLE_CPU_FEATURES`` naming every
optional instruction set numpy dispatches to on this machine (numpy's documented variable).
Where the machine has none of these (nothing to switch off) the two runs are trivially
equal, which is also the right answer there.
"""

import os
import platform
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from _demo import CONFIGS

CASES = ["alp_3pi_bka.toml", "alp_gg_bksta.toml", "darkphoton_mumu.toml"]
EVENTS = 20_000

_SCRIPT = """
import hashlib, sys
import numpy as np
import toymc
from toymc.engine.generator import iter_chunks
from toymc.engine.api import resolve, detector_for
from toymc.engine.block import concatenate

for path in sys.argv[1:]:
    cfg = resolve(path, events={events}, seed=11)
    b = concatenate(list(iter_chunks(cfg, detector=detector_for(cfg))))
    h = hashlib.sha256()
    for k in sorted(b.event):
        h.update(k.encode()); h.update(np.ascontiguousarray(b.event[k]).tobytes())
    for g in sorted(b.groups):
        counts, fields = b.groups[g]
        h.update(g.encode()); h.update(np.ascontiguousarray(counts).tobytes())
        for k in sorted(fields):
            h.update(k.encode()); h.update(np.ascontiguousarray(fields[k]).tobytes())
    w = toymc.analysis.reweight.weights(b.event["llp_ct"], cfg.llp.ctau, 3.0 * cfg.llp.ctau)
    h.update(np.ascontiguousarray(w).tobytes())
    print(h.hexdigest())
""".format(events=EVENTS)


def _numpy_dispatch_features():
    try:
        from numpy._core import _multiarray_umath as mu
    except ImportError:  # numpy < 2
        from numpy.core import _multiarray_umath as mu
    present = mu.__cpu_features__
    return [f for f in mu.__cpu_dispatch__ if present.get(f)]


def _run(env_extra):
    env = dict(os.environ, **env_extra)
    env["PYTHONPATH"] = str(Path(__file__).resolve().parents[2] / "src") + os.pathsep + env.get(
        "PYTHONPATH", "")
    out = subprocess.run([sys.executable, "-c", _SCRIPT] + [str(CONFIGS / c) for c in CASES],
                         env=env, capture_output=True, text=True, timeout=900)
    assert out.returncode == 0, out.stderr[-3000:]
    return out.stdout.split()


@pytest.mark.skipif(platform.system() != "Linux" or platform.machine() not in ("x86_64",
                                                                                "AMD64"),
                    reason="the glibc tunable and numpy's x86 dispatch exist on x86-64 Linux")
def test_events_do_not_depend_on_the_cpus_math_variants():
    if not platform.libc_ver()[0] == "glibc":
        pytest.skip("not glibc")
    plain = _run({})
    older = _run({"GLIBC_TUNABLES": "glibc.cpu.hwcaps=-AVX2,-FMA,-AVX512F",
                  "NPY_DISABLE_CPU_FEATURES": " ".join(_numpy_dispatch_features())})
    assert len(plain) == len(CASES)
    assert plain == older, "a libm or numpy math variant changed the events"


def test_the_tunable_really_switches_glibc_routines():
    # guards the test above against a tunable that silently does nothing: on a CPU with FMA,
    # glibc's exp gives other last bits for some inputs with and without it
    if platform.system() != "Linux" or platform.libc_ver()[0] != "glibc":
        pytest.skip("glibc only")
    flags = Path("/proc/cpuinfo").read_text() if Path("/proc/cpuinfo").exists() else ""
    if " fma " not in flags:
        pytest.skip("CPU without FMA: nothing to switch")
    code = ("import math, hashlib, numpy as np\n"
            "x = np.random.default_rng(5).uniform(-10, 10, 200000).tolist()\n"
            "print(hashlib.sha256(np.array([math.exp(v) for v in x]).tobytes()).hexdigest())")

    def h(extra):
        return subprocess.run([sys.executable, "-c", code], env=dict(os.environ, **extra),
                              capture_output=True, text=True, check=True).stdout

    assert h({}) != h({"GLIBC_TUNABLES": "glibc.cpu.hwcaps=-AVX2,-FMA,-AVX512F"})


def test_elementary_functions_against_an_extended_precision_reference():
    # numpy's long double (x87 80-bit on x86-64, computed by the C library's *l routines) as
    # reference: the deterministic functions are within a few ulp of the exact values
    from toymc.physics.kinematics import elementary as el

    if np.finfo(np.longdouble).nmant < 63:
        pytest.skip("no extended precision on this platform")
    rng = np.random.default_rng(1)
    x = np.concatenate([rng.uniform(-30, 30, 4000), rng.uniform(-700, 700, 1000),
                        rng.uniform(-1e-8, 1e-8, 200)])
    pos = np.abs(x) * np.exp2(rng.integers(-60, 60, x.size)) + 1e-300
    ang = np.concatenate([rng.uniform(-10, 10, 4000), rng.uniform(-1000, 1000, 1000)])
    yy, xx = rng.normal(size=4000), rng.normal(size=4000)
    cases = [  # (function, reference, arguments, bound in ulp: measured worst + margin)
        (el.exp_1, np.exp, (x,), 1.5), (el.log_1, np.log, (pos,), 2.0),
        (el.log1p_1, np.log1p, (rng.uniform(-0.9, 5, 4000),), 2.0),
        (el.expm1_1, np.expm1, (rng.uniform(-3, 3, 4000),), 4.0),
        (el.sin_1, np.sin, (ang,), 2.0), (el.cos_1, np.cos, (ang,), 2.0),
        (el.atan_1, np.arctan, (rng.uniform(-5, 5, 4000),), 2.0),
        (el.atan2_1, np.arctan2, (yy, xx), 2.0),
        (el.tanh_1, np.tanh, (rng.uniform(-5, 5, 4000),), 3.0),
        (el.atanh_1, np.arctanh, (rng.uniform(-0.999, 0.999, 4000),), 2.5),
    ]
    for fn, ref, args, bound in cases:
        got = np.array([fn(*a) for a in zip(*args)], dtype=np.longdouble)
        exact = ref(*[np.asarray(a, dtype=np.longdouble) for a in args])
        ulp = np.array([np.spacing(abs(float(v))) for v in exact])
        err = np.max(np.abs(got - exact) / ulp)
        assert err <= bound, (fn.__name__, float(err))


def test_elementary_special_values():
    import math

    from toymc.physics.kinematics import elementary as el

    assert el.exp_1(0.0) == 1.0 and el.exp_1(-math.inf) == 0.0 and el.exp_1(1000.0) == math.inf
    assert math.isnan(el.exp_1(math.nan))
    assert el.log_1(1.0) == 0.0 and el.log_1(0.0) == -math.inf and math.isnan(el.log_1(-1.0))
    assert el.sincos_1(0.0) == (0.0, 1.0)
    assert el.atan2_1(0.0, -1.0) == math.pi and el.atan2_1(-0.0, 1.0) == 0.0
    assert math.copysign(1.0, el.atan2_1(-0.0, 1.0)) == -1.0
    assert el.atan2_1(1.0, 0.0) == math.pi / 2 and el.atan2_1(-1.0, -math.inf) == -math.pi
    assert el.tanh_1(50.0) == 1.0 and el.atanh_1(1.0) == math.inf
    assert el.acos_1(-1.0) == math.pi
