"""The ``toymc`` command line: the parser of every subcommand, errors as one line.

Each subcommand lives in its own module of :mod:`toymc.cli` (:data:`COMMANDS`), which
parses its arguments, calls the rooms below and prints; this module assembles the
parser and turns errors and signals into one line and an exit status.

Every :class:`toymc.errors.ToymcError` (a user's mistake) is printed as a
single line ``toymc: error: ...`` on stderr with exit status 2; ``--debug``
shows the traceback instead.
"""

import os
import sys

from toymc import __version__
from toymc.cli import args as A
from toymc.cli import (
    bench,
    cutflow,
    draw_geometry,
    export,
    fold,
    generate,
    info,
    merge,
    reach,
    report,
    scan,
    tune,
    validate,
)
from toymc.errors import ToymcError

__all__ = ("COMMANDS", "build_parser", "main")


#: the subcommands in the order of ``toymc --help``: modules of toymc.cli, each with
#: ``register(subparsers)`` adding its parser (``func(args)`` returns the exit status)
COMMANDS = (generate, bench, scan, cutflow, draw_geometry, info, merge, export, reach, tune,
            fold, validate, report)


def build_parser():
    """The ``toymc`` parser with every subcommand of :data:`COMMANDS`."""
    p = A.Parser(
        prog="toymc",
        description="Fast toy Monte Carlo for displaced decays of light long-lived particles "
                    "at an e+e- collider near the Upsilon(4S). A parametric toy: its efficiencies "
                    "are estimates, not a substitute for a full detector simulation.",
    )
    p.add_argument("--version", action="version", version=f"toymc {__version__}")
    p.add_argument("--debug", action="store_true", help="show tracebacks for errors")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    for command in COMMANDS:
        command.register(sub)
    return p


#: argument names that hold input files (a trailing '/' is refused: it names a folder)
_INPUT_ARGS = ("config", "file", "files", "geometry", "map")


def _check_paths(args):
    """An empty output file or folder is a user mistake: it would silently mean the current
    folder (or the command's default).  An input file name ending with '/' names a folder
    (pathlib would drop the '/').  Raises a ToymcError (one line, exit 2)."""
    from toymc.errors import InputFileError
    from toymc.io.files import check_input_name

    for name in ("output", "output_dir"):
        value = getattr(args, name, None)
        if isinstance(value, str) and not value.strip():
            raise InputFileError(f"output path {value!r}: an empty path; give a file or "
                                 "folder name")
    for name in _INPUT_ARGS:
        value = getattr(args, name, None)
        for v in (value if isinstance(value, list) else [value]):
            if isinstance(v, str):
                check_input_name(v)


def _stdio_broken(streams=None):
    """True if the reader of stdout or stderr has gone (a pipe closed by ``head``); the
    broken ones are pointed at the null device for later writes and the exit flush."""
    import select

    broken = False
    for stream in streams or (sys.stdout, sys.stderr):
        try:
            fd = stream.fileno()
            poll = select.poll()
            poll.register(fd, select.POLLOUT)
            events = poll.poll(0)
        except (AttributeError, OSError, ValueError):
            continue  # not a real file (tests capturing output) or no poll on this system
        if any(ev & select.POLLERR for _, ev in events):
            broken = True
            os.dup2(os.open(os.devnull, os.O_WRONLY), fd)  # later writes and the exit flush
    return broken


def _show_warning(message, category, filename, lineno, file=None, line=None):
    """Warnings for a command-line user: one line, without the Python source location."""
    text = " ".join(str(message).split())
    print(f"toymc: warning: {text}", file=sys.stderr if file is None else file)


def _main(argv):
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help()
        return 2
    import warnings

    shown = warnings.showwarning
    if not args.debug:  # --debug keeps Python's format: category, file and line
        warnings.showwarning = _show_warning
    try:
        return _run(args)
    finally:
        warnings.showwarning = shown


def _run(args):
    from toymc.cli.compiling import NOTICE, CompileWatch

    try:
        _check_paths(args)
        with CompileWatch(notice=None if getattr(args, "quiet", False) else NOTICE) as watch:
            args.compile_watch = watch
            return args.func(args)
    except ToymcError as exc:
        if args.debug:
            raise
        print(f"toymc: error: {exc}", file=sys.stderr)
        return 2
    except OSError as exc:
        # a path the user gave that the system refuses (name too long, no permission, read-only
        # or full disk, a file where a folder is needed): one line naming it
        if args.debug or exc.filename is None or isinstance(exc, BrokenPipeError):
            raise
        print(f"toymc: error: {exc.filename}: {exc.strerror or exc}", file=sys.stderr)
        return 2


def main(argv=None):
    """Run the command line; returns the exit status.

    SIGINT, SIGTERM and SIGHUP stop any command at any moment with one line
    ``toymc: interrupted (SIG...)`` and exit status 128 + the signal number,
    leaving no temporary file (toymc.io.signals).

    A closed stdout (``toymc info --json f.root | head -1``) ends the command quietly with
    status 141, the status of a program killed by SIGPIPE, as standard tools end in a pipe
    whose reader has gone, so that ``set -o pipefail`` scripts see the same for toymc as for
    ``cat``.  The default SIGPIPE action is not restored instead: it would also kill toymc
    when a Dask scheduler or a worker process drops its connection.
    """
    from toymc.io.files import remove_temporaries
    from toymc.io.signals import handled

    with handled():
        try:
            try:
                rc = _main(argv)
            except SystemExit as exc:  # argparse's --help and usage errors
                sys.stdout.flush()
                if exc.code in (0, None) and _stdio_broken([sys.stdout]):
                    return 141  # --help into a closed pipe (argparse ignores the write error)
                raise
            sys.stdout.flush()
            return rc
        except BrokenPipeError:
            if not _stdio_broken():
                raise  # another pipe or socket: a bug, keep its traceback
            return 141
        except KeyboardInterrupt:  # raised by other code than the handler
            print("toymc: interrupted", file=sys.stderr)
            return 130
        finally:
            remove_temporaries()


if __name__ == "__main__":
    sys.exit(main())
