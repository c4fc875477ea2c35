"""The output policy (toymc.io.files) holds for every command that writes.

Classes of cases, each through the real command line (in this process) and
each checking exit status 2, exactly one ``toymc: error:`` line naming the
path, and the test folder byte for byte (and node for node) as before:

* a FIFO, a socket, a character device, a folder, a symbolic link and a
  dangling symbolic link where an output goes, with and without --force, for
  every writer (generate, merge, export, draw-geometry, report, fold,
  validate, reach, tune-cuts, scan);
* an existing regular file without --force (nothing overwritten), and with
  --force replaced (cheap writers);
* an output that is one of the command's inputs (also through a hard link);
* paths the file system refuses: a 300-byte name, a name under a regular
  file, a trailing '/' on an output or an input; names long enough that only
  the temporary name would be too long still work;
* OSError while committing (a full or read-only disk) is one line, no
  temporary left;
* the scan folder: damaged or foreign index structures on --resume, a
  missing folder, leftovers of another scan; nothing is created before all
  checks pass;
* races: two real processes writing the same file at the same moment: one
  wins, the other exits 2 with one line, the file is whole.
"""

import errno
import json
import os
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

import pytest
from _outputs import (
    GEOMETRY,
    NODE_KINDS,
    ROOT,
    config_text,
    make_node,
    one_line,
    run_cli,
    snapshot,
    write_config,
)

IS_ROOT = hasattr(os, "geteuid") and os.geteuid() == 0
SCAN = ('\n[scan]\nmasses = [0.4, 0.8]\nctau_min = "1 cm"\nctau_max = "100 cm"\n'
        'ctau_points = 2\nevents_per_mass = 2000\n')


@pytest.fixture(scope="module")
def inputs(tmp_path_factory):
    """Two good reco files, the configs of every writer, a finished tiny scan."""
    from toymc.io.run import run

    d = tmp_path_factory.mktemp("policy_inputs")
    cfg = write_config(d, "darkphoton_mumu")
    run(cfg, output=d / "a.root", events=1000, seed=1)
    run(cfg, output=d / "b.root", events=1000, seed=2)
    scan_cfg = write_config(d, "darkphoton_mumu", extra=SCAN, file="scan.toml")
    assert run_cli(["scan", scan_cfg, "-o", d / "scan", "-q", "-j", "1"]) == 0
    return {"cfg": cfg, "a": d / "a.root", "b": d / "b.root", "scan_cfg": scan_cfg,
            "scan": d / "scan", "reach_cfg": write_config(d, "reach_dark_photon"),
            "tune_cfg": write_config(d, "tune_darkphoton_ee")}


@pytest.fixture
def short_tmp():
    """A folder with a short path (an AF_UNIX socket path holds at most 107 bytes)."""
    d = Path(tempfile.mkdtemp(prefix="tp", dir="/tmp"))
    try:
        yield d
    finally:
        shutil.rmtree(d, ignore_errors=True)


# ----------------------------------------------------------------- the writers
def _w_generate(i, d):
    t = d / "out.root"
    return ["generate", i["cfg"], "-n", 300, "-o", t, "-q"], t


def _w_merge(i, d):
    t = d / "m.root"
    return ["merge", t, i["a"], i["b"]], t


def _w_export(i, d):
    t = d / "e.parquet"
    return ["export", i["a"], "-o", t], t


def _w_draw(i, d):
    t = d / "g.png"
    return ["draw-geometry", GEOMETRY, "-o", t], t


def _w_report(i, d):
    (d / "rep").mkdir()
    return ["report", i["a"], "-o", d / "rep"], d / "rep" / "mass.png"


def _w_fold(i, d):
    (d / "fo").mkdir()
    return (["fold", i["cfg"], "--ctau", "1:10:3", "-n", 200, "-o", d / "fo"],
            d / "fo" / "fold_darkphoton_mumu.png")


def _w_validate(i, d):
    (d / "va").mkdir()
    return ["validate", "--quick", "-n", 100, "-q", "-o", d / "va"], d / "va" / "summary.md"


def _w_reach(i, d):
    (d / "re").mkdir()
    return ["reach", i["reach_cfg"], "-o", d / "re", "-q", "--no-plot"], d / "re" / "reach.json"


def _w_tune(i, d):
    return ["tune-cuts", i["tune_cfg"], "-o", d / "tuned", "-q"], d / "tuned.png"


def _w_scan(i, d):
    (d / "sc").mkdir()
    return (["scan", i["scan_cfg"], "-o", d / "sc", "--resume", "-q", "-j", "1"],
            d / "sc" / "index.json")


#: name -> builder(inputs, folder) -> (argv, the output path the case puts a node at)
WRITERS = {"generate": _w_generate, "merge": _w_merge, "export": _w_export,
           "draw-geometry": _w_draw, "report": _w_report, "fold": _w_fold,
           "validate": _w_validate, "reach": _w_reach, "tune-cuts": _w_tune, "scan": _w_scan}


def _refused(argv, folder, capsys, phrase=None):
    """Run; expect exit 2, one line (containing `phrase`), the folder unchanged."""
    capsys.readouterr()
    before = snapshot(folder)
    code = run_cli(argv)
    err = capsys.readouterr().err
    assert code == 2, (code, err)
    line = one_line(err)
    if phrase is not None:
        assert phrase.lower() in line.lower(), line
    assert snapshot(folder) == before
    return line


@pytest.mark.parametrize("force", [False, True], ids=["no-force", "force"])
@pytest.mark.parametrize("kind", NODE_KINDS)
@pytest.mark.parametrize("writer", sorted(WRITERS))
def test_only_regular_files_are_replaced(writer, kind, force, inputs, short_tmp, capsys,
                                         monkeypatch):
    """A device, FIFO, socket, folder or symbolic link at an output is never written
    through or replaced, with or without --force."""
    monkeypatch.chdir(short_tmp)
    argv, target = WRITERS[writer](inputs, short_tmp)
    keep = make_node(target, kind)
    if keep is None:
        pytest.skip("mknod of a character device is not permitted here")
    if force and writer != "scan":  # scan has no --force; --resume rewrites its own files
        argv.append("--force")
    if not force and writer == "scan":  # a new scan where a scan's index is
        argv.remove("--resume")
    try:
        line = _refused(argv, short_tmp, capsys)
    finally:
        if hasattr(keep, "close"):
            keep.close()
    assert target.name in line, line


@pytest.mark.parametrize("writer", sorted(WRITERS))
def test_existing_file_is_kept_without_force(writer, inputs, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    argv, target = WRITERS[writer](inputs, tmp_path)
    target.write_bytes(b"precious\x00bytes")
    if writer == "scan":  # a fresh scan into a folder holding an index
        argv.remove("--resume")
        line = _refused(argv, tmp_path, capsys, "--resume")
    else:
        line = _refused(argv, tmp_path, capsys, "--force")
        assert target.name in line


@pytest.mark.parametrize("writer", ["generate", "merge", "export", "draw-geometry", "report"])
def test_force_replaces_a_regular_file(writer, inputs, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    argv, target = WRITERS[writer](inputs, tmp_path)
    target.write_bytes(b"old bytes")
    assert run_cli(argv + ["--force"]) == 0, capsys.readouterr().err
    assert target.is_file() and target.read_bytes() != b"old bytes"
    assert not [p for p in tmp_path.rglob(".*tmp*")]


def _own_input_cases():
    def gen_config(i, d):
        cfg = d / "run.toml"
        cfg.write_text(config_text("darkphoton_mumu"))
        return ["generate", cfg, "-n", 300, "-o", cfg, "--force", "-q"]

    def gen_geometry(i, d):
        geo = d / "geo.toml"
        shutil.copyfile(GEOMETRY, geo)
        cfg = d / "run.toml"
        cfg.write_text(config_text("darkphoton_mumu").replace(str(GEOMETRY), str(geo)))
        return ["generate", cfg, "-n", 300, "-o", geo, "--force", "-q"]

    def gen_hardlink(i, d):
        cfg = d / "run.toml"
        cfg.write_text(config_text("darkphoton_mumu"))
        os.link(cfg, d / "out.root")
        return ["generate", cfg, "-n", 300, "-o", d / "out.root", "--force", "-q"]

    def merge_first(i, d):
        a, b = shutil.copy(i["a"], d), shutil.copy(i["b"], d)
        return ["merge", a, a, b, "--force"]

    def merge_hardlink(i, d):
        a, b = shutil.copy(i["a"], d), shutil.copy(i["b"], d)
        os.link(b, d / "m.root")
        return ["merge", d / "m.root", a, b, "--force"]

    def export_self(i, d):
        a = shutil.copy(i["a"], d)
        return ["export", a, "-o", a, "--force"]

    def draw_self(i, d):
        g = d / "g.png"  # a geometry TOML under a picture name
        shutil.copyfile(GEOMETRY, g)
        return ["draw-geometry", g, "-o", g, "--force"]

    def report_self(i, d):
        (d / "rep").mkdir()
        shutil.copyfile(i["a"], d / "rep" / "mass.png")
        return ["report", d / "rep" / "mass.png", "-o", d / "rep", "--force"]

    def reach_map(i, d):
        (d / "re").mkdir()
        (d / "re" / "reach.csv").write_text("mass_gev,ctau_cm,efficiency,error,method,events\n")
        return ["reach", i["reach_cfg"], "--efficiency", "map", "--map", d / "re" / "reach.csv",
                "-o", d / "re", "-q", "--no-plot", "--force"]

    def tune_config(i, d):
        cfg = d / "tuned.json"  # the config under the name of an output
        cfg.write_text(config_text("tune_darkphoton_ee"))
        return ["tune-cuts", cfg, "-o", d / "tuned", "-q", "--force"]

    return {f.__name__: f for f in (gen_config, gen_geometry, gen_hardlink, merge_first,
                                    merge_hardlink, export_self, draw_self, report_self,
                                    reach_map, tune_config)}


OWN_INPUT = _own_input_cases()


@pytest.mark.parametrize("case", sorted(OWN_INPUT))
def test_an_input_is_never_an_output(case, inputs, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    argv = OWN_INPUT[case](inputs, tmp_path)
    _refused(argv, tmp_path, capsys, "input")


# ------------------------------------------------------------- path errors
LONG = "x" * 300


def _long_cases():
    return {
        "generate": lambda i, d: ["generate", i["cfg"], "-n", 300, "-o", d / (LONG + ".root"), "-q"],
        "merge": lambda i, d: ["merge", d / (LONG + ".root"), i["a"], i["b"]],
        "export": lambda i, d: ["export", i["a"], "-o", d / (LONG + ".parquet")],
        "draw-geometry": lambda i, d: ["draw-geometry", GEOMETRY, "-o", d / (LONG + ".png")],
        "report": lambda i, d: ["report", i["a"], "-o", d / LONG],
        "fold": lambda i, d: ["fold", i["cfg"], "--ctau", "1:10:3", "-n", 200, "-o", d / LONG],
        "validate": lambda i, d: ["validate", "--quick", "-n", 100, "-q", "-o", d / LONG],
        "reach": lambda i, d: ["reach", i["reach_cfg"], "-o", d / LONG, "-q", "--no-plot"],
        "tune-cuts": lambda i, d: ["tune-cuts", i["tune_cfg"], "-o", d / LONG, "-q"],
        "scan": lambda i, d: ["scan", i["scan_cfg"], "-o", d / LONG, "-q", "-j", "1"],
    }


LONG_CASES = _long_cases()


@pytest.mark.parametrize("writer", sorted(LONG_CASES))
def test_name_too_long_is_one_line(writer, inputs, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    _refused(LONG_CASES[writer](inputs, tmp_path), tmp_path, capsys, "too long")


@pytest.mark.parametrize("suffix", [".root", ".png"])
def test_names_near_the_limit_still_work(suffix, inputs, tmp_path, capsys, monkeypatch):
    """A 250-byte name is allowed; its temporary name (longer) is shortened to fit."""
    monkeypatch.chdir(tmp_path)
    name = "n" * (250 - len(suffix)) + suffix
    if suffix == ".root":
        argv = ["generate", inputs["cfg"], "-n", 300, "-o", tmp_path / name, "-q"]
    else:
        argv = ["draw-geometry", GEOMETRY, "-o", tmp_path / name]
    assert run_cli(argv) == 0, capsys.readouterr().err
    assert os.listdir(tmp_path) == [name]


def _under_file(i, d):
    (d / "plainfile").write_text("a file, not a folder\n")
    return d / "plainfile" / "sub"


SLASH_OUTPUTS = {
    "generate": lambda i, d: ["generate", i["cfg"], "-n", 300, "-o", f"{d}/out.root/", "-q"],
    "merge": lambda i, d: ["merge", f"{d}/m.root/", i["a"], i["b"]],
    "export": lambda i, d: ["export", i["a"], "-o", f"{d}/e.parquet/"],
    "draw-geometry": lambda i, d: ["draw-geometry", GEOMETRY, "-o", f"{d}/g.png/"],
    "generate under a file": lambda i, d: ["generate", i["cfg"], "-n", 300, "-o",
                                           _under_file(i, d) / "o.root", "-q"],
    "draw-geometry under a file": lambda i, d: ["draw-geometry", GEOMETRY, "-o",
                                                _under_file(i, d) / "g.png"],
    "merge under a file": lambda i, d: ["merge", _under_file(i, d) / "m.root", i["a"], i["b"]],
    "scan under a file": lambda i, d: ["scan", i["scan_cfg"], "-o", _under_file(i, d), "-q"],
}


@pytest.mark.parametrize("case", sorted(SLASH_OUTPUTS))
def test_output_path_that_names_no_file(case, inputs, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    line = _refused(SLASH_OUTPUTS[case](inputs, tmp_path), tmp_path, capsys)
    assert ("plainfile" in line) if "under" in case else ("'/'" in line), line


def _slash(p):
    return f"{p}/"


SLASH_INPUTS = {
    "generate": lambda i, d: ["generate", _slash(i["cfg"]), "-n", 300, "-o", d / "o.root", "-q"],
    "info": lambda i, d: ["info", _slash(i["a"])],
    "cutflow": lambda i, d: ["cutflow", _slash(i["a"])],
    "merge": lambda i, d: ["merge", d / "m.root", i["a"], _slash(i["b"])],
    "export": lambda i, d: ["export", _slash(i["a"]), "-o", d / "e.parquet"],
    "report": lambda i, d: ["report", _slash(i["a"]), "-o", d / "rep"],
    "draw-geometry": lambda i, d: ["draw-geometry", _slash(GEOMETRY), "-o", d / "g.png"],
    "fold": lambda i, d: ["fold", _slash(i["cfg"]), "--ctau", "1:10:3", "-o", d / "fo"],
    "reach": lambda i, d: ["reach", _slash(i["reach_cfg"]), "-o", d / "re", "-q"],
    "tune-cuts": lambda i, d: ["tune-cuts", _slash(i["tune_cfg"]), "-o", d / "t", "-q"],
    "scan": lambda i, d: ["scan", _slash(i["scan_cfg"]), "-o", d / "sc", "-q"],
}


@pytest.mark.parametrize("command", sorted(SLASH_INPUTS))
def test_input_with_trailing_slash_is_refused(command, inputs, tmp_path, capsys, monkeypatch):
    """pathlib drops a trailing '/', so 'x.toml/' would silently read x.toml."""
    monkeypatch.chdir(tmp_path)
    _refused(SLASH_INPUTS[command](inputs, tmp_path), tmp_path, capsys, "ends with '/'")


@pytest.mark.parametrize("code", [errno.ENOSPC, errno.EROFS, errno.EACCES, errno.EIO])
@pytest.mark.parametrize("writer", ["generate", "draw-geometry", "export"])
def test_oserror_at_commit_is_one_line(writer, code, inputs, tmp_path, capsys, monkeypatch):
    """The last step of every write fails as a full, read-only or broken disk would."""
    import toymc.io.files as files

    def failing(src, dst):
        raise OSError(code, os.strerror(code), str(dst))

    monkeypatch.setattr(files, "_rename_noreplace", failing)
    monkeypatch.chdir(tmp_path)
    argv, target = WRITERS[writer](inputs, tmp_path)
    line = _refused(argv, tmp_path, capsys, os.strerror(code))
    assert target.name in line


@pytest.mark.skipif(IS_ROOT, reason="running as root: a read-only folder does not block writing")
def test_read_only_folder(inputs, tmp_path, capsys):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o500)
    try:
        _refused(["generate", inputs["cfg"], "-n", 300, "-o", ro / "o.root", "-q"], tmp_path,
                 capsys, "ro")
    finally:
        ro.chmod(0o700)


# ------------------------------------------------------------ the scan folder
def _index_cases():
    def text(content):
        def prep(i, sc):
            shutil.copytree(i["scan"], sc)
            (sc / "index.json").write_text(content)
        return prep

    def edit(change):
        def prep(i, sc):
            shutil.copytree(i["scan"], sc)
            idx = json.loads((sc / "index.json").read_text())
            change(idx)
            (sc / "index.json").write_text(json.dumps(idx))
        return prep

    def node(kind):
        def prep(i, sc):
            shutil.copytree(i["scan"], sc)
            (sc / "index.json").unlink()
            make_node(sc / "index.json", kind)
        return prep

    def row(key, value):
        return edit(lambda idx: idx["points"][0].__setitem__(key, value))

    return {
        "index []": (text("[]"), "damaged scan index"),
        "index {}": (text("{}"), "damaged scan index"),
        "index null": (text("null"), "damaged scan index"),
        "index config = 1": (text('{"config": 1, "grid": {}, "points": []}'), "config"),
        "index points = {}": (edit(lambda idx: idx.__setitem__("points", {})), "points"),
        "index points hold a string": (edit(lambda idx: idx["points"].append("row")), "points"),
        "index row without status": (edit(lambda idx: idx["points"][0].pop("status")), "status"),
        "index row mass_index = 'a'": (row("mass_index", "a"), "mass_index"),
        "index row efficiency = null": (row("efficiency", None), "efficiency"),
        "index row outside the grid": (row("mass_index", 99), "outside"),
        "index: a done mass lacks a c*tau": (edit(lambda idx: idx["points"].pop(0)), "done"),
        "index truncated JSON": (text('{"config": "x", "gri'), "damaged scan index"),
        "index binary garbage": (text(bytes(range(256)).decode("latin-1")), "damaged scan index"),
        "index.json is a folder": (node("folder"), "index.json"),
        "index.json is a FIFO": (node("fifo"), "index.json"),
        "index.json is a symbolic link": (node("symlink"), "index.json"),
    }


INDEX_CASES = _index_cases()


@pytest.mark.parametrize("case", sorted(INDEX_CASES))
def test_resume_with_a_bad_index_creates_nothing(case, inputs, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    prep, phrase = INDEX_CASES[case]
    sc = tmp_path / "sc"
    prep(inputs, sc)
    shutil.rmtree(sc / "points")  # must not be made again by a refused resume
    _refused(["scan", inputs["scan_cfg"], "-o", sc, "--resume", "-q", "-j", "1"], tmp_path,
             capsys, phrase)
    assert not (sc / "points").exists()


def _folder_cases():
    def leftovers(name, content=b"x"):
        def prep(sc):
            sc.mkdir()
            p = sc / name
            p.parent.mkdir(exist_ok=True)
            p.write_bytes(content)
        return prep

    return {
        "--resume into a missing folder": (lambda sc: None, ("--resume",), "does not exist"),
        "--resume into an empty folder": (lambda sc: sc.mkdir(), ("--resume",), "no index.json"),
        "--resume: the folder is a file": (lambda sc: sc.write_text("x"), ("--resume",), "sc"),
        "new scan over an efficiency map": (leftovers("efficiency_map.csv"), (), "efficiency_map"),
        "new scan over sample files": (leftovers("points/m0.4_ref.root"), (), "points"),
        "points is a regular file": (leftovers("points"), (), "points"),
        "points is a regular file, --resume": (leftovers("points"), ("--resume",), "points"),
    }


FOLDER_CASES = _folder_cases()


@pytest.mark.parametrize("case", sorted(FOLDER_CASES))
def test_scan_folder_checks(case, inputs, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    prep, extra, phrase = FOLDER_CASES[case]
    sc = tmp_path / "sc"
    prep(sc)
    _refused(["scan", inputs["scan_cfg"], "-o", sc, "-q", "-j", "1", *extra], tmp_path, capsys,
             phrase)


def test_resume_of_a_finished_scan_rewrites_only_its_files(inputs, tmp_path, capsys):
    sc = tmp_path / "sc"
    shutil.copytree(inputs["scan"], sc)
    before = {p.name: p.read_bytes() for p in (sc / "points").iterdir()}
    assert run_cli(["scan", inputs["scan_cfg"], "-o", sc, "--resume", "-q", "-j", "1"]) == 0
    assert {p.name: p.read_bytes() for p in (sc / "points").iterdir()} == before
    assert json.loads((sc / "index.json").read_text())["points"]


@pytest.mark.parametrize("kind", NODE_KINDS)
def test_node_appearing_while_writing(kind, short_tmp):
    """The check before the work passed; a node appears at the output before the final
    rename: the rename refuses it (with force too) and removes the temporary."""
    from toymc.errors import OutputError
    from toymc.io.files import check_output, commit, temporary

    out = check_output(short_tmp / "o.dat", force=True)
    tmp = temporary(out)
    tmp.write_bytes(b"new")
    keep = make_node(out, kind)
    if keep is None:
        pytest.skip("mknod of a character device is not permitted here")
    before = snapshot(short_tmp)
    del before[tmp.name]
    try:
        with pytest.raises(OutputError, match="o.dat"):
            commit(tmp, out, force=True)
    finally:
        if hasattr(keep, "close"):
            keep.close()
    assert snapshot(short_tmp) == before


# ------------------------------------------------------------------- races
WRITER = r"""
import os, sys, time
from toymc.io.files import check_output, commit, temporary
from toymc.errors import OutputError
import toymc.io.files as files
barrier, me, out, force, path = sys.argv[1], sys.argv[2], sys.argv[3], sys.argv[4] == "1", sys.argv[5]
if path == "link":
    files._RENAMEAT2[:] = [None]  # no renameat2: the hard-link way
try:
    p = check_output(out, force=force)
    tmp = temporary(p)
    tmp.write_bytes(me.encode() * 2_000_000)
    open(os.path.join(barrier, me), "w").close()
    deadline = time.monotonic() + 120
    while len(os.listdir(barrier)) < 2 and time.monotonic() < deadline:
        time.sleep(0.005)
    commit(tmp, p, force)
except OutputError as exc:
    print(f"toymc: error: {exc}", file=sys.stderr)
    sys.exit(2)
"""

#: runs the real command line with every commit held until both processes are ready
RACER = r"""
import os, sys, time
import toymc.io.files as files
barrier, me = sys.argv[1], sys.argv[2]
real = files.commit
def commit(tmp, path, force=False):
    open(os.path.join(barrier, me), "w").close()
    deadline = time.monotonic() + 300
    while len(os.listdir(barrier)) < 2 and time.monotonic() < deadline:
        time.sleep(0.005)
    return real(tmp, path, force)
files.commit = commit
from toymc.cli.main import main
sys.exit(main(sys.argv[3:]))
"""


def _two(cmds, timeout=600):
    env = dict(os.environ, PYTHONPATH=str(ROOT / "src"))
    procs = [subprocess.Popen(c, cwd=ROOT, env=env, stdout=subprocess.DEVNULL,
                              stderr=subprocess.PIPE, text=True) for c in cmds]
    out = []
    for p in procs:
        err = p.communicate(timeout=timeout)[1]
        out.append((p.returncode, err))
    return out


def _one_winner(results):
    codes = sorted(c for c, _ in results)
    assert codes == [0, 2], results
    loser = [e for c, e in results if c == 2][0]
    return one_line(loser)


@pytest.mark.parametrize("path", ["renameat2", "link"])
def test_race_of_two_writers(path, tmp_path):
    bar = tmp_path / "barrier"
    bar.mkdir()
    out = tmp_path / "same.bin"
    line = _one_winner(_two([[sys.executable, "-c", WRITER, bar, me, out, "0", path]
                             for me in ("A", "B")]))
    assert "exists" in line and "same.bin" in line
    data = out.read_bytes()
    assert data in (b"A" * 2_000_000, b"B" * 2_000_000)
    assert sorted(os.listdir(tmp_path)) == ["barrier", "same.bin"]


def test_race_of_two_writers_with_force(tmp_path):
    bar = tmp_path / "barrier"
    bar.mkdir()
    out = tmp_path / "same.bin"
    results = _two([[sys.executable, "-c", WRITER, bar, me, out, "1", "renameat2"]
                    for me in ("A", "B")])
    assert [c for c, _ in results] == [0, 0], results
    assert out.read_bytes() in (b"A" * 2_000_000, b"B" * 2_000_000)
    assert sorted(os.listdir(tmp_path)) == ["barrier", "same.bin"]


def _race_cmds(tmp_path, argv):
    bar = tmp_path / "barrier"
    bar.mkdir()
    return [[sys.executable, "-c", RACER, bar, me, *map(str, argv)] for me in ("A", "B")]


def test_race_of_two_generate_runs(inputs, tmp_path):
    from toymc.io.verify import check_file

    out = tmp_path / "same.root"
    line = _one_winner(_two(_race_cmds(tmp_path, ["generate", inputs["cfg"], "-n", 3000, "-o",
                                                  out, "-q"])))
    assert "same.root" in line and "exists" in line
    assert check_file(out)["events"] == 3000
    assert sorted(os.listdir(tmp_path)) == ["barrier", "same.root"]


def test_race_of_two_merges(inputs, tmp_path):
    from toymc.io.verify import check_file

    out = tmp_path / "same.root"
    line = _one_winner(_two(_race_cmds(tmp_path, ["merge", out, inputs["a"], inputs["b"]])))
    assert "same.root" in line
    assert check_file(out)["events"] == 2000
    assert sorted(os.listdir(tmp_path)) == ["barrier", "same.root"]


def test_two_generate_runs_started_together(inputs, tmp_path):
    """Without any synchronisation: whichever step refuses (the check before the work or
    the final rename), exactly one run writes the file."""
    from toymc.io.verify import check_file

    out = tmp_path / "same.root"
    cmd = [sys.executable, "-m", "toymc", "generate", str(inputs["cfg"]), "-n", "20000", "-o",
           str(out), "-q"]
    line = _one_winner(_two([cmd, cmd]))
    assert "same.root" in line
    assert check_file(out)["events"] == 20000
    assert os.listdir(tmp_path) == ["same.root"]


SCAN_RACER = r"""
import os, sys, time
import toymc.io.tables as tables
barrier, me = sys.argv[1], sys.argv[2]
real = tables.atomic_write
def held(path, write, keep_suffix=False, force=None):
    if str(path).endswith("index.json") and force is False:  # a new scan's first index
        open(os.path.join(barrier, me), "w").close()
        deadline = time.monotonic() + 300
        while len(os.listdir(barrier)) < 2 and time.monotonic() < deadline:
            time.sleep(0.005)
    return real(path, write, keep_suffix, force)
tables.atomic_write = held
from toymc.cli.main import main
sys.exit(main(sys.argv[3:]))
"""


def test_two_new_scans_into_one_folder(inputs, tmp_path):
    """The first index of a new scan is written without replacing: one scan stops."""
    sc = tmp_path / "sc"
    bar = tmp_path / "barrier"
    bar.mkdir()
    cmds = [[sys.executable, "-c", SCAN_RACER, bar, me, "scan", inputs["scan_cfg"], "-o", sc,
             "-q", "-j", "1"] for me in ("A", "B")]
    line = _one_winner(_two(cmds))
    assert "index.json" in line and "exists" in line
    idx = json.loads((sc / "index.json").read_text())
    assert len(idx["points"]) == 4
    assert not list(sc.rglob(".*tmp*"))
