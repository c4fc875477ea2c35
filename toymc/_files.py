"""Private: writing files through a temporary name (no partial output)."""

import os
from pathlib import Path

from .errors import OutputError

__all__ = ("atomic_write",)


def _tmp_name(path, keep_suffix=False):
    """Hidden temporary name beside `path`: ``.NAME.PID.tmp``, or ``.STEM.PID.tmp.SUFFIX``
    with `keep_suffix` (plot writers choose the format by the suffix).  Without it a
    temporary left by a killed process never matches a ``*.root``-style pattern."""
    path = Path(path)
    if keep_suffix:
        return path.with_name(f".{path.stem}.{os.getpid()}.tmp{path.suffix}")
    return path.with_name(f".{path.name}.{os.getpid()}.tmp")


def atomic_write(path, write, keep_suffix=False):
    """Write `path` through a temporary name: ``write(tmp)``, then rename onto `path`.

    A reader never sees a half-written file and a failed write leaves any old
    file untouched: the temporary is removed and OutputError names `path`.
    """
    path = Path(path)
    tmp = _tmp_name(path, keep_suffix)
    try:
        write(tmp)
        os.replace(tmp, path)
    except OSError as exc:
        raise OutputError(f"{path}: cannot write ({exc.strerror or exc})") from None
    finally:
        if tmp.exists():
            tmp.unlink()
