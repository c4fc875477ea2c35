"""Output safety and configs as data.

* never overwrite without --force; with --force the file is replaced;
* atomic writes: a failure (or an interrupt) part-way through leaves neither a
  file under the final name nor a temporary file, and an existing file that
  was to be replaced keeps its bytes;
* nothing in a config is evaluated: code-like strings in any key are just
  invalid (or plain string) values, and ``eval``/``exec``/``compile`` are never
  called while a config is loaded.
"""

import builtins
import errno
import tomllib
from pathlib import Path

import pytest
from _demo import GEOMETRY, ROOT
from hypothesis import given, settings
from hypothesis import strategies as st

import toymc

# modules a config load imports late, imported before eval/exec/compile are trapped
import toymc.detector.geometry
import toymc.engine.generator
import toymc.physics.models.point
from toymc.cli import main as cli
from toymc.config.loader import from_dict, loads
from toymc.config.schema import SCHEMA
from toymc.config.toml import dumps
from toymc.engine.rng import BLOCK_SIZE
from toymc.errors import ConfigError, ToymcError
from toymc.io.ntuple import NtupleWriter


def config(name="darkphoton_mumu", events=2000, detector=True):
    data = tomllib.loads((ROOT / "configs" / f"{name}.toml").read_text())
    data["run"]["events"] = events
    if detector:
        data["detector"]["geometry"] = str(GEOMETRY)
    else:
        data.pop("detector")
        data.pop("selection")
    return data


def listing(folder):
    return sorted(p.name for p in Path(folder).iterdir())


def test_force_overwrites_and_no_force_refuses(tmp_path, capsys):
    out = tmp_path / "out.root"
    cfg = from_dict(config(events=500))
    toymc.run(cfg, output=out)
    first = out.read_bytes()
    with pytest.raises(ToymcError, match="--force"):
        toymc.run(cfg, output=out, seed=5)
    assert out.read_bytes() == first
    toymc.run(cfg, output=out, seed=5, force=True)
    assert out.read_bytes() != first
    assert listing(tmp_path) == ["out.root"]


def _fail_after_first(exc):
    """A replacement for NtupleWriter.write: the first chunk is written, the next raises.

    Returns (function, calls) where calls[0] counts the calls."""
    orig, calls = NtupleWriter.write, [0]

    def write(writer, block):
        calls[0] += 1
        if calls[0] > 1:
            raise exc
        return orig(writer, block)

    return write, calls


@pytest.mark.parametrize("existing", [False, True])
def test_failure_mid_write_leaves_no_file(tmp_path, monkeypatch, existing):
    """Two chunks (two blocks, one block per chunk); OSError after the first chunk."""
    out = tmp_path / "out.root"
    if existing:
        out.write_bytes(b"the previous result")
    fail, calls = _fail_after_first(OSError(errno.ENOSPC, "No space left on device"))
    monkeypatch.setattr(NtupleWriter, "write", fail)
    cfg = from_dict(config(events=BLOCK_SIZE + 10, detector=False))
    with pytest.raises(OSError):
        toymc.run(cfg, output=out, force=existing)
    assert calls[0] == 2
    if existing:
        assert out.read_bytes() == b"the previous result"
        assert listing(tmp_path) == ["out.root"]
    else:
        assert listing(tmp_path) == []


def test_disk_full_inside_writer_is_one_line(tmp_path, monkeypatch, capsys):
    """The second TTree.extend fails with ENOSPC: exit 2, one line, no file left."""
    import uproot.writing.writable as w

    orig, calls = w.WritableTree.extend, [0]

    def extend(self, data):
        calls[0] += 1
        if calls[0] > 1:
            raise OSError(errno.ENOSPC, "No space left on device")
        return orig(self, data)

    monkeypatch.setattr(w.WritableTree, "extend", extend)
    monkeypatch.chdir(tmp_path)
    cfg = tmp_path / "run.toml"
    data = config(events=BLOCK_SIZE + 10, detector=False)
    data["run"]["output"] = "out.root"
    cfg.write_text(dumps(data))
    capsys.readouterr()
    code = cli.main(["generate", str(cfg), "-q"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2
    assert len(err) == 1 and "No space left" in err[0] and "out.root" in err[0]
    assert listing(tmp_path) == ["run.toml"]


def test_interrupt_mid_write_leaves_no_file(tmp_path, monkeypatch, capsys):
    out = tmp_path / "out.root"
    monkeypatch.setattr(NtupleWriter, "write", _fail_after_first(KeyboardInterrupt())[0])
    cfg = tmp_path / "run.toml"
    cfg.write_text(dumps(config(events=BLOCK_SIZE + 10, detector=False)))
    code = cli.main(["generate", str(cfg), "-o", str(out), "-q"])
    assert code == 130
    assert listing(tmp_path) == ["run.toml"]




# ------------------------------------------------------------------ configs are data
CODE = st.sampled_from([
    "__import__('os').system('touch PWNED')",
    "exec('open(\"PWNED\", \"w\")')",
    "eval('1+1')",
    "${HOME}",
    "$(touch PWNED)",
    "`touch PWNED`",
    "{{7*7}}",
    "1e3 * 2",
    "lambda: 0",
    "open('PWNED', 'w')",
    "15 cm; import os",
])

KEYS = [(sec, key) for sec in ("run", "beams", "production", "llp") for key in SCHEMA[sec]]
KEYS += [("selection", k) for k in ("r_min", "r_max", "min_hits", "min_pt", "photon_min_e")]


@pytest.fixture
def trap(monkeypatch):
    """eval, exec and compile raise while active."""
    def boom(*a, **k):
        raise AssertionError("a config value was evaluated")

    for name in ("eval", "exec", "compile"):
        monkeypatch.setattr(builtins, name, boom)


@settings(max_examples=40, derandomize=True, deadline=None, database=None)
@given(where=st.sampled_from(KEYS), code=CODE)
def test_code_in_any_key_is_just_a_value(where, code):
    """Every key of [run], [beams], [production], [llp] and the selection cuts."""
    data = config(events=100)
    data.setdefault(where[0], {})[where[1]] = code
    text = dumps(data)
    saved = {n: getattr(builtins, n) for n in ("eval", "exec", "compile")}

    def boom(*a, **k):
        raise AssertionError("a config value was evaluated")

    try:
        for n in saved:
            setattr(builtins, n, boom)
        try:
            cfg = loads(text)
        except ConfigError as exc:
            assert exc.key.endswith(where[1]) or where[1] in str(exc)
            cfg = None
    finally:
        for n, f in saved.items():
            setattr(builtins, n, f)
    if cfg is not None:  # a free string key (run.output): the text is kept as it is
        assert where == ("run", "output")
        assert cfg.run.output == code
    assert not Path("PWNED").exists()


def test_code_in_geometry_is_just_a_value(tmp_path, trap):
    from toymc.config.geometry import load_geometry

    text = GEOMETRY.read_text().replace('field = "1.5 T"', "field = \"__import__('os')\"")
    g = tmp_path / "g.toml"
    g.write_text(text)
    with pytest.raises(ConfigError, match="field"):
        load_geometry(g)
