"""Private: SIGINT, SIGTERM and SIGHUP end a command the same way.

:func:`handled` (used by ``toymc.cli.main``) installs one handler for the
three signals: the first signal raises :class:`Interrupted` (a
KeyboardInterrupt) in the main thread, so every ``finally`` and ``with``
block on the way out runs and removes its temporary file; further signals
are ignored while that cleanup runs.  The CLI then prints one line and
exits with status 128 + the signal number (130, 143, 129).

Worker processes of a scan use :func:`worker_init`: SIGINT is ignored there
(the parent process decides), SIGTERM and SIGHUP raise :class:`Interrupted`
while a task runs (:func:`busy`) and end an idle worker at once.
"""

import contextlib
import os
import signal
import threading

__all__ = ("SIGNALS", "Interrupted", "busy", "handled", "worker_init")

SIGNALS = tuple(getattr(signal, n) for n in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, n))


class Interrupted(KeyboardInterrupt):
    """A command was stopped by a signal; ``signum`` is its number."""

    def __init__(self, signum):
        self.signum = int(signum)
        super().__init__(signal.Signals(self.signum).name)

    @property
    def name(self):
        return signal.Signals(self.signum).name


_STATE = {"hit": None, "busy": False}


def _handler(signum, frame):
    if _STATE["hit"] is not None:
        return  # already unwinding: let the cleanup finish
    _STATE["hit"] = signum
    raise Interrupted(signum)


@contextlib.contextmanager
def handled():
    """Install the handler for the block (main thread only); restore the old ones after."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    old = {}
    _STATE["hit"] = None
    try:
        for s in SIGNALS:
            old[s] = signal.signal(s, _handler)
        yield
    finally:
        for s, h in old.items():
            signal.signal(s, h)


def _worker_handler(signum, frame):
    if not _STATE["busy"] or _STATE["hit"] is not None:
        os._exit(128 + signum)  # idle (or cleaning up already): nothing to remove
    _STATE["hit"] = signum
    raise Interrupted(signum)


def worker_init():
    """Initializer of worker processes (see the module docstring)."""
    _STATE["hit"] = None
    _STATE["busy"] = False
    for s in SIGNALS:
        signal.signal(s, signal.SIG_IGN if s == signal.SIGINT else _worker_handler)


@contextlib.contextmanager
def busy():
    """Mark a worker task as running: a signal now raises :class:`Interrupted`."""
    _STATE["busy"] = True
    try:
        yield
    finally:
        _STATE["busy"] = False
