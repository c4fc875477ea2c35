"""Shared by the output-policy, damaged-input and signal tests: demo configs with the
demo geometry by absolute path, a folder snapshot that also records special files, the
command line run in this process, and special file nodes made inside a test folder."""

import os
import socket
import stat
import subprocess
import sys
from pathlib import Path

from toymc.cli import main as cli

ROOT = Path(__file__).resolve().parents[1]
GEOMETRY = ROOT / "geometries" / "demo.toml"


def config_text(name, extra=""):
    """A demo config's text with the demo geometry by absolute path (and `extra` appended)."""
    text = (ROOT / "configs" / f"{name}.toml").read_text()
    return text.replace('"../geometries/demo.toml"', f'"{GEOMETRY}"') + extra


def write_config(folder, name, extra="", file=None):
    p = Path(folder) / (file or f"{name}.toml")
    p.write_text(config_text(name, extra))
    return p


def snapshot(folder):
    """{relative path: description} of everything under `folder`: bytes of regular files,
    the target of symbolic links, the kind (and device number) of other nodes."""
    out = {}
    for dirpath, dirnames, filenames in os.walk(folder, followlinks=False):
        for name in dirnames + filenames:
            p = Path(dirpath) / name
            st = os.lstat(p)
            rel = str(p.relative_to(folder))
            if stat.S_ISLNK(st.st_mode):
                out[rel] = ("link", os.readlink(p))
            elif stat.S_ISDIR(st.st_mode):
                out[rel] = ("dir",)
            elif stat.S_ISREG(st.st_mode):
                out[rel] = ("file", p.read_bytes())
            else:
                out[rel] = ("node", stat.S_IFMT(st.st_mode), st.st_rdev)
    return out


def run_cli(argv):
    """Exit status of ``toymc argv`` in this process (argparse exits are caught)."""
    try:
        return cli.main([str(a) for a in argv])
    except SystemExit as exc:
        return exc.code


def one_line(err):
    """The single ``toymc: error:`` line of stderr (fails on anything else)."""
    lines = err.strip().splitlines()
    assert "Traceback" not in err, err
    assert len(lines) == 1, err
    assert lines[0].startswith("toymc: error: "), err
    return lines[0]


def make_node(path, kind):
    """Make a node of `kind` at `path` (inside a test folder; never a system path).

    Kinds: fifo, socket, chardev (a null device node made with mknod: needs the
    privilege; returns None where it is refused), folder, symlink (to a regular
    file beside it), dangling (a symbolic link to nothing).  Returns what keeps the
    node alive (the bound socket) or True.
    """
    path = Path(path)
    if kind == "fifo":
        os.mkfifo(path)
    elif kind == "socket":
        s = socket.socket(socket.AF_UNIX)
        s.bind(str(path))
        return s
    elif kind == "chardev":
        try:
            os.mknod(path, stat.S_IFCHR | 0o600, os.makedev(1, 3))
        except (PermissionError, OSError):
            return None
    elif kind == "folder":
        path.mkdir()
    elif kind == "symlink":
        target = path.with_name(path.name + ".target")
        target.write_bytes(b"the link's target\n")
        os.symlink(target.name, path)
    elif kind == "dangling":
        os.symlink(path.name + ".nowhere", path)
    else:
        raise ValueError(kind)
    return True


NODE_KINDS = ("fifo", "socket", "chardev", "folder", "symlink", "dangling")


def toymc_process(args, **kw):
    """``python -m toymc args`` as a subprocess of the worktree (stdout discarded)."""
    env = dict(os.environ, PYTHONPATH=str(ROOT / "src"))
    return subprocess.Popen([sys.executable, "-m", "toymc", *map(str, args)], cwd=ROOT, env=env,
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True, **kw)
