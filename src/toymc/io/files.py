"""Private: the output policy shared by every command that writes.

Rules (DEVELOPERS.md, "Outputs"):

* Before any work, every output is checked (:func:`check_output` for a file,
  :func:`check_output_dir` for a folder and the names a command writes into
  it): a non-empty name that is not a folder (no trailing ``/``), a parent
  folder that exists, a name the file system accepts, not one of the
  command's own inputs.  An existing output is refused without ``force``;
  with ``force`` only a regular file may be replaced, never a folder, a
  symbolic link (dangling or not), a device, a FIFO or a socket.
* A file is written under a hidden temporary name in its target folder
  (:func:`temporary`) and put in place by :func:`commit`: without ``force``
  by a no-clobber rename (``renameat2(RENAME_NOREPLACE)``, or ``link`` then
  ``unlink``), so of two processes writing the same name exactly one wins and
  the other gets :class:`OutputError`; with ``force`` by ``os.replace`` after
  checking that the target is (still) a regular file.
* Temporaries are tracked per process; :func:`remove_temporaries` deletes the
  ones still alive (the CLI calls it when a signal interrupts a command).
* ``OSError`` from a path becomes one :class:`OutputError` line naming it.

:func:`atomic_write` combines the last three for a write callable; its
``force`` defaults to the one set by :func:`replacing` for the current
command (False: never overwrite).
"""

import contextlib
import contextvars
import errno
import os
import stat
from pathlib import Path

from toymc.errors import InputFileError, OutputError

__all__ = ("atomic_write", "atomic_write_all", "check_input_name", "check_output",
           "check_output_dir", "commit", "discard", "make_dir", "path_error", "remove_temporaries", "replacing", "temporary")

#: temporaries of this process not yet renamed or removed: path -> pid that made it
_LIVE = {}
#: whether atomic_write may replace an existing regular file (set per command)
_REPLACE = contextvars.ContextVar("toymc_replace", default=False)

_KINDS = ((stat.S_ISREG, "a regular file"), (stat.S_ISDIR, "a folder"), (stat.S_ISLNK, "a symbolic link"), (stat.S_ISFIFO, "a FIFO"),
          (stat.S_ISSOCK, "a socket"), (stat.S_ISCHR, "a character device"),
          (stat.S_ISBLK, "a block device"))


def _kind(mode):
    for test, name in _KINDS:
        if test(mode):
            return name
    return "not a regular file"


def path_error(path, exc, what="cannot write"):
    """OutputError ``<path>: <what> (<reason>)`` for an OSError."""
    return OutputError(f"{path}: {what} ({exc.strerror or exc})")


def _name_max(folder):
    try:
        return os.pathconf(folder, "PC_NAME_MAX")
    except (OSError, ValueError):
        return 255


def _check_name_length(p):
    limit = _name_max(p.parent if str(p.parent) else ".")
    n = len(os.fsencode(p.name))
    if n > limit:
        raise OutputError(f"{p}: file name too long ({n} bytes; the file system allows {limit})")


def check_input_name(text):
    """Refuse an input file name ending with '/' (pathlib would silently drop it)."""
    text = os.fspath(text)
    if isinstance(text, str) and len(text) > 1 and text.endswith(("/", os.sep)):
        raise InputFileError(f"{text}: ends with '/', which names a folder; give the file name "
                             "without it")


def _check_parent(p):
    """The parent folder of `p` must exist and be a folder."""
    parent = p.parent
    try:
        st = os.stat(parent)
    except FileNotFoundError:
        _blocking_ancestor(parent, p)
        raise OutputError(f"{p}: folder {parent} does not exist") from None
    except NotADirectoryError:
        _blocking_ancestor(parent, p)
        raise OutputError(f"{p}: {parent} is not a folder") from None
    except OSError as exc:
        raise path_error(p, exc) from None
    if not stat.S_ISDIR(st.st_mode):
        raise OutputError(f"{p}: {parent} is {_kind(st.st_mode)}, not a folder")


def _blocking_ancestor(folder, p, lead=""):
    """Name the first ancestor of a missing `folder` that exists but is not a folder."""
    for a in (folder, *folder.parents):
        try:
            st = os.stat(a)
        except (FileNotFoundError, NotADirectoryError):
            continue
        except OSError:
            return
        if not stat.S_ISDIR(st.st_mode):
            raise OutputError(f"{p}: {lead}{a} is {_kind(st.st_mode)}, not a folder")
        return


def _inode(path, follow):
    try:
        st = os.stat(path) if follow else os.lstat(path)
    except (OSError, ValueError):
        return None
    return st.st_dev, st.st_ino


def _check_existing(p, force, inputs, st):
    """An existing `p` (lstat result `st`): refuse unless it is a regular file and `force`."""
    mode = st.st_mode
    if stat.S_ISDIR(mode):
        raise OutputError(f"{p}: not a file name: an existing folder")
    if not stat.S_ISREG(mode):
        raise OutputError(f"{p}: is {_kind(mode)}; toymc replaces only regular files, "
                          "even with --force")
    here = (st.st_dev, st.st_ino)
    for src in inputs:
        if src is not None and _inode(src, follow=True) == here:
            raise OutputError(f"{p}: is also an input of this command (it is the input file "
                              f"{src}); write to another file")
    if not force:
        raise OutputError(f"{p}: exists; use --force to overwrite")


def check_output(path, force=False, inputs=()):
    """Check an output file before any work; returns it as a Path.

    Parameters
    ----------
    path : str or Path
    force : bool
        An existing regular file may be replaced.
    inputs : iterable of paths
        The command's input files: the output may not be one of them (also
        not through a hard link).

    Raises
    ------
    OutputError
        One line naming the path and what is wrong.
    """
    text = os.fspath(path)
    if not str(text).strip():
        raise OutputError(f"output path {text!r}: an empty path; give a file name")
    p = Path(text)
    if str(text).endswith(("/", os.sep)) or p.name in ("", ".", ".."):
        raise OutputError(f"{str(text)!r}: not a file name (ends with '/', or names a folder)")
    _check_parent(p)
    try:
        st = os.lstat(p)
    except FileNotFoundError:
        st = None
    except OSError as exc:
        raise path_error(p, exc) from None
    if st is not None:
        _check_existing(p, force, inputs, st)
    _check_name_length(p)
    return p


def check_output_dir(folder, names=(), force=False, inputs=()):
    """Check an output folder and the files a command will write into it; returns it as a Path.

    The folder may exist (then it must be a folder) or be missing (its nearest
    existing ancestor must be a folder); each of `names` inside it follows
    :func:`check_output`'s rules for an existing file.  Nothing is created.
    """
    text = os.fspath(folder)
    if not str(text).strip():
        raise OutputError(f"output path {text!r}: an empty path; give a folder name")
    p = Path(text)
    for name in names:
        _check_name_length(p / name)
    try:
        st = os.stat(p)
    except FileNotFoundError:
        _blocking_ancestor(p, p, "cannot create the output folder: ")
        for part in (p, *p.parents):
            if part.name and len(os.fsencode(part.name)) > _name_max("."):
                raise OutputError(f"{p}: folder name {part.name[:40]}... too long "
                                  f"({len(os.fsencode(part.name))} bytes)")
        return p
    except NotADirectoryError:
        _blocking_ancestor(p, p, "cannot create the output folder: ")
        raise OutputError(f"{p}: cannot create the output folder") from None
    except OSError as exc:
        raise path_error(p, exc) from None
    if not stat.S_ISDIR(st.st_mode):
        raise OutputError(f"{p}: is {_kind(st.st_mode)}, not a folder")
    for name in names:
        q = p / name
        try:
            qst = os.lstat(q)
        except FileNotFoundError:
            continue
        except OSError as exc:
            raise path_error(q, exc) from None
        _check_existing(q, force, inputs, qst)
    return p


def make_dir(folder):
    """Create an output folder (and its parents) after all checks passed."""
    p = Path(folder)
    try:
        p.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"{p}: cannot create the output folder "
                          f"({exc.strerror or exc})") from None
    return p


def _tmp_name(path, keep_suffix=False):
    """Hidden temporary name beside `path`: ``.NAME.PID.tmp``, or ``.STEM.PID.tmp.SUFFIX``
    with `keep_suffix` (plot writers choose the format by the suffix).  Without it a
    temporary left by a killed process never matches a ``*.root``-style pattern.  The
    name part is shortened so that the temporary name fits the file system."""
    path = Path(path)
    stem, suffix = (path.stem, path.suffix) if keep_suffix else (path.name, "")
    tail = f".{os.getpid()}.tmp{suffix}"
    room = _name_max(path.parent if str(path.parent) else ".") - len(os.fsencode("." + tail))
    while stem and len(os.fsencode(stem)) > room:
        stem = stem[:-1]
    return path.with_name(f".{stem}{tail}")


def temporary(path, keep_suffix=False):
    """A tracked temporary name for writing `path` (see :func:`_tmp_name`)."""
    tmp = _tmp_name(path, keep_suffix)
    _LIVE[tmp] = os.getpid()
    return tmp


def discard(tmp):
    """Remove a temporary (if it still exists) and stop tracking it."""
    tmp = Path(tmp)
    try:
        tmp.unlink(missing_ok=True)
    except OSError:
        pass
    _LIVE.pop(tmp, None)


def remove_temporaries():
    """Remove every temporary this process made and has not yet renamed or removed."""
    me = os.getpid()
    for tmp, pid in list(_LIVE.items()):
        if pid == me:
            discard(tmp)


_AT_FDCWD = -100
_RENAME_NOREPLACE = 1
_RENAMEAT2 = []


def _renameat2():
    if not _RENAMEAT2:
        import ctypes

        fn = None
        try:
            fn = ctypes.CDLL(None, use_errno=True).renameat2
            fn.argtypes = (ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p,
                           ctypes.c_uint)
            fn.restype = ctypes.c_int
        except (OSError, AttributeError):
            fn = None
        _RENAMEAT2.append(fn)
    return _RENAMEAT2[0]


_UNSUPPORTED = {errno.EINVAL, errno.ENOSYS, getattr(errno, "ENOTSUP", errno.EINVAL),
                getattr(errno, "EOPNOTSUPP", errno.EINVAL)}


def _rename_noreplace(src, dst):
    """Rename `src` to `dst`, failing with FileExistsError if `dst` exists (atomically)."""
    fn = _renameat2()
    if fn is not None:
        if fn(_AT_FDCWD, os.fsencode(src), _AT_FDCWD, os.fsencode(dst), _RENAME_NOREPLACE) == 0:
            return
        import ctypes

        err = ctypes.get_errno()
        if err not in _UNSUPPORTED:
            raise OSError(err, os.strerror(err), os.fspath(dst))
    try:
        os.link(src, dst)  # fails with FileExistsError if dst exists
    except FileExistsError:
        raise
    except OSError as exc:
        if exc.errno not in _UNSUPPORTED | {errno.EPERM, errno.EXDEV, errno.EMLINK}:
            raise
        # a file system without hard links: check, then rename (not atomic)
        if os.path.lexists(dst):
            raise FileExistsError(errno.EEXIST, os.strerror(errno.EEXIST), os.fspath(dst)) from None
        os.rename(src, dst)
        return
    os.unlink(src)


def commit(tmp, path, force=False):
    """Put the finished temporary `tmp` in place as `path` (rules in the module docstring).

    The temporary is gone afterwards, whether the commit succeeded or not.
    """
    tmp, path = Path(tmp), Path(path)
    try:
        if force:
            try:
                st = os.lstat(path)
            except FileNotFoundError:
                st = None
            if st is not None and not stat.S_ISREG(st.st_mode):
                raise OutputError(f"{path}: is {_kind(st.st_mode)}; toymc replaces only regular "
                                  "files, even with --force")
            os.replace(tmp, path)
        else:
            _rename_noreplace(tmp, path)
    except FileExistsError:
        raise OutputError(f"{path}: exists (made by another process while this one was "
                          "writing); use --force to overwrite") from None
    except OSError as exc:
        raise path_error(path, exc) from None
    finally:
        discard(tmp)


@contextlib.contextmanager
def replacing(force):
    """Within the block, :func:`atomic_write` replaces existing regular files iff `force`."""
    token = _REPLACE.set(bool(force))
    try:
        yield
    finally:
        _REPLACE.reset(token)


def atomic_write(path, write, keep_suffix=False, force=None):
    """Write `path` through a temporary name: ``write(tmp)``, then :func:`commit`.

    A reader never sees a half-written file and a failed write leaves any old
    file untouched: the temporary is removed and OutputError names `path`.
    `force` (default: the one set by :func:`replacing`, else False) allows
    replacing an existing regular file.
    """
    force = _REPLACE.get() if force is None else force
    path = Path(path)
    tmp = temporary(path, keep_suffix)
    try:
        write(tmp)
        commit(tmp, path, force)
    except OSError as exc:
        raise path_error(path, exc) from None
    finally:
        discard(tmp)


def atomic_write_all(items, force=None):
    """Write several files as one output: every ``write(tmp)`` of ``items`` (pairs of path
    and write function) first, each to its temporary name, then every :func:`commit`.

    If any write fails, or any target could not be replaced (checked before the first
    rename), nothing is renamed: no file of the set appears and old files stay.  `force` as
    in :func:`atomic_write`.
    """
    force = _REPLACE.get() if force is None else force
    for path, _ in items:
        try:
            st = os.lstat(path)
        except FileNotFoundError:
            continue
        except OSError as exc:
            raise path_error(Path(path), exc) from None
        _check_existing(Path(path), force, (), st)
    done = []
    try:
        for path, write in items:
            path = Path(path)
            tmp = temporary(path)
            done.append((tmp, path))
            try:
                write(tmp)
            except OSError as exc:
                raise path_error(path, exc) from None
        for tmp, path in done:
            commit(tmp, path, force)
    finally:
        for tmp, _ in done:
            discard(tmp)
