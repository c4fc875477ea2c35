"""Signals stop every writing command cleanly: real signals sent to real processes.

SIGINT, SIGTERM and SIGHUP end a command with exactly one line
``toymc: interrupted (SIG...)`` on stderr, exit status 128 + the signal
number (130, 143, 129), no traceback, no temporary file and no output file.
The signal is sent when the process is observed in the phase under test
(polling, with generous deadlines; no timing assumptions):

* during start-up and numba's compile/cache loading: as soon as the
  process's signal mask (``/proc/PID/status``, ``SigCgt``) shows toymc's own
  handler, then at a few later moments;
* mid-write: once the temporary file exists and has grown;
* merge and export: once their temporary file exists;
* a scan with two worker processes: once both workers write their samples.
"""

import json
import os
import signal
import time
from pathlib import Path

import pytest
from _outputs import toymc_process, write_config

pytestmark = pytest.mark.skipif(not Path("/proc/self/status").exists(),
                                reason="needs /proc to observe the process")

DEADLINE = 300.0  # seconds: generous on a loaded 2-core machine


def _wait_for(cond, proc, what):
    t0 = time.monotonic()
    while not cond():
        if proc.poll() is not None:
            pytest.fail(f"the process ended (status {proc.returncode}) before {what}: "
                        f"{proc.stderr.read()}")
        if time.monotonic() - t0 > DEADLINE:
            proc.kill()
            proc.communicate()
            pytest.fail(f"no {what} within {DEADLINE} s")
        time.sleep(0.01)


def _handles_sigterm(pid):
    """True once the process catches SIGTERM (toymc's handler is installed)."""
    try:
        with open(f"/proc/{pid}/status") as fh:
            for line in fh:
                if line.startswith("SigCgt:"):
                    return bool(int(line.split()[1], 16) >> (signal.SIGTERM - 1) & 1)
    except OSError:
        return False
    return False


def _temporaries(folder):
    return [p for p in Path(folder).rglob(".*tmp*")]


def _stopped(proc, sig):
    """Send `sig`; check the exit status and the one line."""
    proc.send_signal(sig)
    err = proc.communicate(timeout=DEADLINE)[1]
    assert proc.returncode == 128 + sig, (proc.returncode, err)
    assert "Traceback" not in err and "Exception" not in err, err
    assert err.strip().splitlines() == [f"toymc: interrupted ({signal.Signals(sig).name})"], err


@pytest.fixture(scope="module")
def config(tmp_path_factory):
    return write_config(tmp_path_factory.mktemp("sig_cfg"), "darkphoton_mumu")


def _generate(config, folder, events=3_000_000):
    return toymc_process(["generate", config, "-n", events, "--chunk-blocks", 1, "-o",
                          folder / "out.root", "-q"])


@pytest.mark.parametrize("sig", [signal.SIGINT, signal.SIGTERM, signal.SIGHUP],
                         ids=lambda s: s.name)
def test_generate_mid_write(sig, config, tmp_path):
    proc = _generate(config, tmp_path)

    def grown():
        return any(p.stat().st_size > 2_000_000 for p in _temporaries(tmp_path)
                   if p.exists())

    _wait_for(grown, proc, "a growing temporary file")
    _stopped(proc, sig)
    assert os.listdir(tmp_path) == []


@pytest.mark.parametrize("delay", [0.0, 0.2, 0.5, 1.0])
@pytest.mark.parametrize("sig", [signal.SIGINT, signal.SIGTERM], ids=lambda s: s.name)
def test_generate_while_starting(sig, delay, config, tmp_path):
    """Start-up: imports, numba's compile or cache loading, the first blocks."""
    proc = _generate(config, tmp_path)
    _wait_for(lambda: _handles_sigterm(proc.pid), proc, "a signal handler")
    time.sleep(delay)
    if proc.poll() is not None:
        pytest.fail(f"the run ended before the signal: {proc.communicate()}")
    _stopped(proc, sig)
    assert os.listdir(tmp_path) == []


@pytest.fixture(scope="module")
def big_inputs(tmp_path_factory):
    """Two truth-only files of 200k events (about 60 MB each) to merge and export."""
    from toymc.io.run import run

    d = tmp_path_factory.mktemp("sig_inputs")
    cfg = write_config(d, "darkphoton_mumu")
    text = cfg.read_text()
    cfg.write_text(text[:text.index("[detector]")])
    run(cfg, output=d / "a.root", events=200_000, seed=1)
    run(cfg, output=d / "b.root", events=200_000, seed=2)
    return d / "a.root", d / "b.root"


@pytest.mark.parametrize("command", ["merge", "export"])
def test_merge_and_export(command, big_inputs, tmp_path):
    a, b = big_inputs
    if command == "merge":
        proc = toymc_process(["merge", tmp_path / "m.root", a, b])
        sig = signal.SIGTERM
    else:
        proc = toymc_process(["export", a, "-o", tmp_path / "e.parquet"])
        sig = signal.SIGHUP
    _wait_for(lambda: bool(_temporaries(tmp_path)), proc, "a temporary file")
    _stopped(proc, sig)
    assert os.listdir(tmp_path) == []


def _pids_with(text):
    out = []
    for d in Path("/proc").iterdir():
        if d.name.isdigit():
            try:
                if text in (d / "cmdline").read_bytes().decode(errors="replace"):
                    out.append(int(d.name))
            except OSError:
                pass
    return out


def test_scan_with_workers(tmp_path):
    """The parent stops its two workers; each removes its temporary sample file."""
    extra = ('\n[scan]\nmasses = [0.4, 0.8, 1.2]\nctau_min = "1 cm"\nctau_max = "100 cm"\n'
             'ctau_points = 3\nevents_per_mass = 400000\n')
    cfg = write_config(tmp_path, "darkphoton_mumu", extra=extra, file="scan_sig.toml")
    out = tmp_path / "scan_out_sig"
    proc = toymc_process(["scan", cfg, "-o", out, "-j", 2, "-q"])
    _wait_for(lambda: len(_temporaries(out / "points")) >= 2 if (out / "points").exists()
              else False, proc, "two workers writing")
    workers = [p for p in _pids_with(str(out)) if p != proc.pid]
    _stopped(proc, signal.SIGINT)
    assert _temporaries(out) == []
    assert list((out / "points").glob("*.root")) == [] or json.loads(
        (out / "index.json").read_text())["points"]
    json.loads((out / "index.json").read_text())  # whole
    t0 = time.monotonic()
    while any(Path(f"/proc/{p}").exists() for p in workers) and time.monotonic() - t0 < 60:
        time.sleep(0.05)
    alive = []
    for p in workers:
        try:
            state = Path(f"/proc/{p}/status").read_text()
        except OSError:
            continue
        if "State:\tZ" not in state:
            alive.append(p)
    assert alive == []
