"""Private: tell a command-line user when numba compiles kernels, and time it.

numba compiles a kernel the first time it runs with a new signature and stores the
machine code in its cache (``__pycache__`` beside the source); later runs load it in
milliseconds.  A cache load does not fire numba's ``numba:compile`` event, a real
compilation does: :class:`CompileWatch` listens for it, prints one line on the first
one, and adds up the time numba spent compiling (outermost compilations only).
"""

import sys
import time

__all__ = ("CompileWatch",)

NOTICE = ("toymc: compiling the numba kernels this run needs, for first use "
          "(cached afterwards; up to a minute)")


class CompileWatch:
    """Context manager: one line on `stream` at the first numba compilation; `.seconds`
    is the wall time numba spent compiling while it was active, `.compiled` the count."""

    def __init__(self, stream=None, notice=NOTICE):
        self.stream = sys.stderr if stream is None else stream
        self.notice = notice
        self.seconds = 0.0
        self.compiled = 0
        self._depth = 0
        self._t0 = 0.0
        self._listener = None

    def __enter__(self):
        from numba.core import event

        watch = self

        class _Listener(event.Listener):
            def on_start(self, ev):
                if watch._depth == 0:
                    watch._t0 = time.perf_counter()
                    if watch.compiled == 0 and watch.notice:
                        watch._say(watch.notice)
                watch._depth += 1

            def on_end(self, ev):
                watch._depth -= 1
                if watch._depth == 0:
                    watch.seconds += time.perf_counter() - watch._t0
                    watch.compiled += 1

        self._listener = _Listener()
        event.register("numba:compile", self._listener)
        return self

    def __exit__(self, *exc):
        from numba.core import event

        event.unregister("numba:compile", self._listener)
        return False

    def _say(self, text):
        try:  # above a progress bar, if one is drawn
            from tqdm import tqdm

            tqdm.write(text, file=self.stream)
        except ImportError:  # pragma: no cover - tqdm is a dependency
            print(text, file=self.stream, flush=True)
