"""The error messages the README's Troubleshooting section quotes are the program's own.

Every inline code span of that section that reads like a message (words, no placeholder
in angle brackets, not a command, option or value) is produced here through the command
line and compared with what the program prints; ``...`` in a quoted message stands for
the rest of the line.  A quoted ``<key or file>: <message>`` is a whole message, the end
of the program's line; a quote without a colon is a phrase of one.
"""

import re

import pytest
from _demo import CONFIGS, ROOT

from toymc.cli.main import main

README = (ROOT / "README.md").read_text()
SECTION = README[README.index("## Troubleshooting"):]
SECTION = SECTION[:SECTION.index("\n## ", 1)] if "\n## " in SECTION[1:] else SECTION


def _is_message(span):
    # not a command or the message template (toymc ...), a quoted value or an option
    return " " in span and not span.startswith(('"', "-", "toymc"))


QUOTED = [q for q in (" ".join(s.split()) for s in re.findall(r"`([^`]+)`", SECTION))
          if _is_message(q)]


def _config(tmp_path, demo, *edits, folder=None, absolute_geometry=True):
    text = (CONFIGS / demo).read_text()
    for old, new in edits:
        assert old in text, old
        text = text.replace(old, new, 1)
    if absolute_geometry:
        text = text.replace('"../geometries/', f'"{ROOT}/geometries/')
    d = folder or tmp_path
    d.mkdir(parents=True, exist_ok=True)
    p = d / demo
    p.write_text(text)
    return p


def _error_line(argv, capsys):
    rc = main([str(a) for a in argv])
    err = capsys.readouterr().err
    assert rc == 2, err
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("toymc: error: "), err
    return lines[0]


def _misspelt_key(tmp_path, capsys):
    cfg = _config(tmp_path, "darkphoton_mumu.toml", ("[run]", "[run]\nevnets = 2000"))
    return _error_line(["generate", cfg, "-o", tmp_path / "x.root"], capsys)


def _wrong_unit(tmp_path, capsys):
    cfg = _config(tmp_path, "darkphoton_mumu.toml", ('ctau = "10 cm"', 'ctau = "10 GeV"'))
    return _error_line(["generate", cfg, "-o", tmp_path / "x.root"], capsys)


def _below_threshold(tmp_path, capsys):
    cfg = _config(tmp_path, "darkphoton_mumu.toml", ('mass = "0.8 GeV"', "mass = 0.2"))
    return _error_line(["generate", cfg, "-o", tmp_path / "x.root"], capsys)


def _above_limit(tmp_path, capsys):
    cfg = _config(tmp_path, "alp_3pi_bka.toml", ('mass = "0.6 GeV"', "mass = 4.9"))
    return _error_line(["generate", cfg, "-o", tmp_path / "x.root"], capsys)


def _geometry_not_found(tmp_path, capsys):
    # a config in <run>/configs naming "../geometries/demo.toml", with no <run>/geometries
    run = tmp_path / "run"
    cfg = _config(tmp_path, "darkphoton_mumu.toml", folder=run / "configs",
                  absolute_geometry=False)
    line = _error_line(["generate", cfg, "-o", tmp_path / "x.root"], capsys)
    return line.replace(str(run.resolve()), "/home/me/run")


def _output_exists(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "darkphoton_mumu.root").write_bytes(b"")
    return _error_line(["generate", CONFIGS / "darkphoton_mumu.toml", "-n", "10"], capsys)


def _scan_exists(tmp_path, capsys):
    (tmp_path / "s").mkdir()
    (tmp_path / "s" / "index.json").write_text("{}")
    return _error_line(["scan", CONFIGS / "scan_demo.toml", "-o", tmp_path / "s"], capsys)


def _unreadable(tmp_path, capsys):
    (tmp_path / "empty.root").write_bytes(b"")
    return _error_line(["info", tmp_path / "empty.root"], capsys)


def _foreign(tmp_path, capsys):
    import uproot

    with uproot.recreate(tmp_path / "other.root") as f:
        f["events"] = {"x": [1.0, 2.0]}
    return _error_line(["info", tmp_path / "other.root"], capsys)


def _no_scheduler(tmp_path, capsys):
    return _error_line(["scan", CONFIGS / "scan_demo.toml", "-o", tmp_path / "s",
                        "--scheduler", "tcp://127.0.0.1:1"], capsys)


def _gen_to(tmp_path, capsys, out, force=True):
    argv = ["generate", CONFIGS / "darkphoton_mumu.toml", "-n", "10", "-o", out, "-q"]
    return _error_line(argv + (["--force"] if force else []), capsys)


def _symlink(tmp_path, capsys):
    (tmp_path / "t.root").write_bytes(b"")
    (tmp_path / "l.root").symlink_to(tmp_path / "t.root")
    return _gen_to(tmp_path, capsys, tmp_path / "l.root")


def _fifo(tmp_path, capsys):
    import os

    os.mkfifo(tmp_path / "f.root")
    return _gen_to(tmp_path, capsys, tmp_path / "f.root")


def _folder(tmp_path, capsys):
    (tmp_path / "d.root").mkdir()
    return _gen_to(tmp_path, capsys, tmp_path / "d.root")


def _own_input(tmp_path, capsys):
    cfg = _config(tmp_path, "darkphoton_mumu.toml")
    return _error_line(["generate", cfg, "-n", "10", "-o", cfg, "--force", "-q"], capsys)


def _too_long(tmp_path, capsys):
    return _gen_to(tmp_path, capsys, tmp_path / ("a" * 300 + ".root"), force=False)


def _slash(tmp_path, capsys):
    return _gen_to(tmp_path, capsys, str(tmp_path / "x.root") + "/", force=False)


def _no_resume(tmp_path, capsys):
    return _error_line(["scan", CONFIGS / "scan_demo.toml", "-o", tmp_path / "nosuch",
                        "--resume"], capsys)


def _good_file(tmp_path, capsys):
    out = tmp_path / "good.root"
    assert main(["generate", str(CONFIGS / "darkphoton_mumu.toml"), "-n", "2000", "-o",
                 str(out), "-q"]) == 0
    capsys.readouterr()
    return out.read_bytes()


def _truncated(tmp_path, capsys):
    (tmp_path / "t.root").write_bytes(_good_file(tmp_path, capsys)[:-100])
    return _error_line(["info", tmp_path / "t.root"], capsys)


def _damaged_column(tmp_path, capsys):
    b = bytearray(_good_file(tmp_path, capsys))
    b[len(b) // 2] ^= 0xFF  # a byte inside a basket
    (tmp_path / "d.root").write_bytes(bytes(b))
    return _error_line(["info", tmp_path / "d.root"], capsys)


def _damaged_meta(tmp_path, capsys):
    b = _good_file(tmp_path, capsys)
    assert b'"block_size": 65536' in b
    (tmp_path / "m.root").write_bytes(b.replace(b'"block_size": 65536', b'"block_size": 65537'))
    return _error_line(["info", tmp_path / "m.root"], capsys)


#: a distinctive part of each quoted message -> how to make the program say it
PRODUCERS = {
    "run.evnets = 2000": _misspelt_key,
    "llp.ctau = '10 GeV'": _wrong_unit,
    "llp.mass = 0.2": _below_threshold,
    "llp.mass = 4.9": _above_limit,
    "geometry file not found": _geometry_not_found,
    "exists; use --force": _output_exists,
    "holds a scan already": _scan_exists,
    "not a readable ROOT file": _unreadable,
    "not a toymc file": _foreign,
    "cannot reach the Dask scheduler": _no_scheduler,
    "is a symbolic link": _symlink,
    "is a FIFO": _fifo,
    "an existing folder": _folder,
    "is also an input of this command": _own_input,
    "File name too long": _too_long,
    "ends with '/'": _slash,
    "no scan to resume": _no_resume,
    "its header says": _truncated,
    "differ from those written": _damaged_column,
    "damaged toymc metadata": _damaged_meta,
}


def _producer(quoted):
    keys = [k for k in PRODUCERS if k in quoted]
    assert len(keys) == 1, f"README quotes {quoted!r}: add a producer to PRODUCERS"
    return PRODUCERS[keys[0]]


def test_readme_quotes_messages():
    assert len(QUOTED) >= len(PRODUCERS), QUOTED
    for q in QUOTED:
        _producer(q)


@pytest.mark.parametrize("quoted", QUOTED, ids=[q[:32] for q in QUOTED])
def test_quoted_message_is_what_the_program_says(quoted, tmp_path, capsys, monkeypatch):
    fn = _producer(quoted)
    kw = {"monkeypatch": monkeypatch} if "monkeypatch" in fn.__code__.co_varnames else {}
    line = fn(tmp_path, capsys, **kw)
    pattern = ".*".join(re.escape(part.strip()) for part in quoted.split("...")) \
        if "..." in quoted else re.escape(quoted)
    assert re.search(pattern, line), f"README: {quoted}\nprogram: {line}"
    if "..." not in quoted and ": " in quoted:  # a whole message: the line ends with it
        assert line.endswith(quoted), f"README: {quoted}\nprogram: {line}"
