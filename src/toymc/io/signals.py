"""Private: SIGINT, SIGTERM and SIGHUP end a command the same way, at any moment.

:func:`handled` (used by ``toymc.cli.main.main``) installs one handler for the
three signals.  It does not raise an exception into the interrupted code: a
signal can arrive while numba compiles or loads its cache, inside a compiled
function's dispatcher or inside a finaliser, where an exception turns into a
crash, a ``SystemError`` or an "Exception ignored" traceback and the command
carries on.  Instead the handler

1. runs the registered stop callbacks (:func:`on_stop`: a scan terminates its
   worker processes, which remove their own temporaries the same way),
2. removes every temporary file of this process (``toymc.io.files``),
3. writes one line ``toymc: interrupted (SIGTERM)`` to stderr and ends the
   process with status 128 + the signal number (130, 143, 129).

Complete outputs stay: every file is written under a temporary name and
renamed only when whole, so nothing partial remains.  Worker processes use
:func:`worker_init`: SIGINT is ignored there (the parent decides), SIGTERM
and SIGHUP remove the worker's temporaries and end it.
"""

import contextlib
import os
import signal
import threading

from toymc.io.files import remove_temporaries

__all__ = ("SIGNALS", "handled", "on_stop", "worker_init")

SIGNALS = tuple(getattr(signal, n) for n in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, n))

_STATE = {"stopping": False, "callbacks": []}


def _stop(signum, quiet):
    if _STATE["stopping"]:
        return  # a second signal while stopping: the first one finishes
    _STATE["stopping"] = True
    for cb in list(_STATE["callbacks"]):
        try:
            cb()
        except Exception:  # noqa: BLE001 - stopping anyway
            pass
    remove_temporaries()
    if not quiet:
        try:
            os.write(2, f"toymc: interrupted ({signal.Signals(signum).name})\n".encode())
        except OSError:
            pass
    os._exit(128 + signum)


def _handler(signum, frame):
    _stop(signum, quiet=False)


@contextlib.contextmanager
def handled():
    """Install the handler for the block (main thread only); restore the old ones after."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    old = {}
    _STATE["stopping"] = False
    try:
        for s in SIGNALS:
            old[s] = signal.signal(s, _handler)
        yield
    finally:
        for s, h in old.items():
            signal.signal(s, h)


@contextlib.contextmanager
def on_stop(callback):
    """Run ``callback()`` if a signal stops the process within the block."""
    _STATE["callbacks"].append(callback)
    try:
        yield
    finally:
        _STATE["callbacks"].remove(callback)


def _worker_handler(signum, frame):
    _stop(signum, quiet=True)


def worker_init():
    """Initializer of worker processes (see the module docstring)."""
    _STATE["stopping"] = False
    _STATE["callbacks"] = []
    for s in SIGNALS:
        signal.signal(s, signal.SIG_IGN if s == signal.SIGINT else _worker_handler)
