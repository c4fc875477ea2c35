"""Damaged toymc files are refused by every command that reads them (toymc.io.verify).

Each damage is made from a good file (cut at several points, a changed byte
inside a basket or the metadata, a foreign tree under copied metadata,
metadata lacking a field or promising another event count or other columns),
then fed to every reading command: ``cutflow``, ``info``, ``report``,
``export``, ``merge`` (as its second input) and ``toymc.read``.  Expected:
exit status 2 with exactly one ``toymc: error:`` line naming the file, and no
output written (the folder unchanged).
"""

import json
import shutil

import numpy as np
import pytest
import uproot
from _outputs import one_line, run_cli, snapshot, write_config

from toymc.errors import InputFileError
from toymc.io.verify import check_file, meta_text


@pytest.fixture(scope="module")
def good(tmp_path_factory):
    """Two good reco files of one point (seeds 1 and 2)."""
    from toymc.io.run import run

    d = tmp_path_factory.mktemp("damage_good")
    cfg = write_config(d, "darkphoton_mumu")
    run(cfg, output=d / "good.root", events=2000, seed=1, chunk_blocks=1)
    run(cfg, output=d / "other.root", events=2000, seed=2)
    return {"file": d / "good.root", "other": d / "other.root"}


def _meta(path):
    with uproot.open(path) as f:
        return json.loads(str(f["toymc_meta"]))


def _basket(path, column):
    """(seek, bytes) of the first basket of `column`."""
    with uproot.open(path) as f:
        br = f["events"][column]
        return int(br.member("fBasketSeek")[0]), int(br.member("fBasketBytes")[0])


# ----------------------------------------------------------------- damages
def cut(n):
    def make(src, dst):
        data = src.read_bytes()
        dst.write_bytes(data[:-n])
    return make


def cut_to(fraction):
    def make(src, dst):
        data = src.read_bytes()
        dst.write_bytes(data[: int(len(data) * fraction)])
    return make


def splice(src, dst):
    """1000 bytes taken out of the middle (the rest shifted)."""
    data = src.read_bytes()
    mid = len(data) // 2
    dst.write_bytes(data[:mid] + data[mid + 1000:])


def flip_in(column, where=0.5, at=None):
    """One bit changed in the first basket of `column`: at a fraction `where` of it, or
    `at` bytes from its start (the basket's key: its sizes, version, names)."""
    def make(src, dst):
        data = bytearray(src.read_bytes())
        seek, size = _basket(src, column)
        data[seek + (int(size * where) if at is None else at)] ^= 0x01
        dst.write_bytes(bytes(data))
    return make


def flip_meta(src, dst):
    """A byte changed in the stored metadata record (its compressed payload)."""
    data = bytearray(src.read_bytes())
    with uproot.open(src) as f:
        key = f.key("toymc_meta")
        start, n = key.fSeekKey + key.fKeylen, key.fNbytes - key.fKeylen
    data[start + n // 2] ^= 0x01
    dst.write_bytes(bytes(data))


def with_meta(change, checksum=True):
    """A copy whose metadata is replaced by change(meta) (a new metadata record)."""
    def make(src, dst):
        shutil.copyfile(src, dst)
        meta = _meta(src)
        change(meta)
        text = meta_text(meta) if checksum else json.dumps(meta, sort_keys=True)
        with uproot.update(dst) as f:
            f["toymc_meta"] = text
    return make


def raw_meta(text):
    def make(src, dst):
        shutil.copyfile(src, dst)
        with uproot.update(dst) as f:
            f["toymc_meta"] = text
    return make


def foreign_tree(src, dst):
    """A foreign 'events' tree (one int8 column, as many entries) under copied metadata."""
    meta = _meta(src)
    with uproot.recreate(dst) as f:
        f.mktree("events", {"x": np.int8})
        f["events"].extend({"x": np.zeros(meta["events"], dtype=np.int8)})
        f["toymc_meta"] = meta_text(meta)


def foreign_ntuple(src, dst):
    """'events' written as another kind of object (an RNTuple) under copied metadata."""
    meta = _meta(src)
    with uproot.recreate(dst) as f:
        f["events"] = {"x": np.zeros(meta["events"], dtype=np.int8)}
        f["toymc_meta"] = meta_text(meta)


def same_names_other_types(src, dst):
    """Every per-event column of the file, all stored as 32-bit floats, with copied metadata
    restricted to them."""
    meta = _meta(src)
    with uproot.open(src) as f:
        tree = f["events"]
        flat = [b.name for b in tree.branches if b.typename in ("double", "int32_t", "bool")
                and b.name not in {f"n{g}" for g in ("dau", "rcld", "trk", "clu")}]
        arrays = tree.arrays(flat, library="np")
    meta["columns"] = [c for c in meta["columns"] if c[0] in flat]
    with uproot.recreate(dst) as f:
        f.mktree("events", {k: np.float32 for k in arrays})
        f["events"].extend({k: v.astype(np.float32) for k, v in arrays.items()})
        f["toymc_meta"] = meta_text(meta)


def drop_key(key):
    return with_meta(lambda m: m.pop(key))


def stale_checksum(src, dst):
    """A value changed after the metadata checksum was made."""
    return with_meta(lambda m: m.update(mass_gev=m["mass_gev"] * 2), checksum=False)(src, dst)


def _legacy(meta):
    meta.pop("column_crc32", None)
    meta.pop("meta_crc32", None)


def legacy_flip(src, dst):
    """A file without checksums (older writer) with a changed byte in a compressed basket:
    the basket's own lz4 checksum finds it."""
    with_meta(_legacy, checksum=False)(src, dst)
    with uproot.open(src) as f:
        for b in f["events"].branches:
            bk = b.basket(0)
            if bk.compressed_bytes < bk.uncompressed_bytes:
                column = b.name
                break
    data = bytearray(dst.read_bytes())
    seek, size = _basket(dst, column)
    data[seek + size - 20] ^= 0x01
    dst.write_bytes(bytes(data))


def empty(src, dst):
    dst.write_bytes(b"")


#: name -> (make(src, dst), phrase expected in the error line)
DAMAGES = {
    "last 1 byte cut": (cut(1), "truncated"),
    "last 100 bytes cut": (cut(100), "truncated"),
    "last 10000 bytes cut": (cut(10000), "truncated"),
    "cut in the middle": (cut_to(0.5), ""),
    "cut at 90 %": (cut_to(0.9), ""),
    "1000 bytes taken out of the middle": (splice, ""),
    "byte changed in a float basket": (flip_in("dau_px"), "dau_px"),
    "byte changed in a bool basket": (flip_in("cut_mass"), "cut_mass"),
    "byte changed near a basket's end": (flip_in("llp_m", 0.97), "llp_m"),
    "byte changed early in a basket": (flip_in("llp_dr", 0.05), "llp_dr"),
    "byte changed in a basket's size field": (flip_in("llp_dz", at=2), ""),
    "byte changed in a basket's name field": (flip_in("llp_dx", at=40), ""),
    "byte changed in the metadata": (flip_meta, "metadata"),
    "foreign tree under copied metadata": (foreign_tree, "column"),
    "toymc names with other types": (same_names_other_types, "type"),
    "'events' is not a tree": (foreign_ntuple, "not a toymc file"),
    "metadata lacks events": (drop_key("events"), "events"),
    "metadata lacks columns": (drop_key("columns"), "columns"),
    "metadata lacks config_toml": (drop_key("config_toml"), "config_toml"),
    "metadata lacks schema_version": (drop_key("schema_version"), "schema_version"),
    "metadata: events + 1": (with_meta(lambda m: m.update(events=m["events"] + 1)), "events"),
    "metadata: events - 1": (with_meta(lambda m: m.update(events=m["events"] - 1)), "events"),
    "metadata: events = 'many'": (with_meta(lambda m: m.update(events="many")), "events"),
    "metadata: columns = 'all'": (with_meta(lambda m: m.update(columns="all")), "columns"),
    "metadata promises a column not stored": (
        with_meta(lambda m: m["columns"].append(["llp_xyz", "cm", "?"])), "llp_xyz"),
    "metadata lacks a stored column": (
        with_meta(lambda m: m.update(columns=[c for c in m["columns"] if c[0] != "llp_l"])),
        "llp_l"),
    "metadata checksum stale": (stale_checksum, "checksum"),
    "metadata: a column checksum changed": (
        with_meta(lambda m: m["column_crc32"].update(llp_m=m["column_crc32"]["llp_m"] ^ 1)),
        "llp_m"),
    "metadata is not JSON": (raw_meta("{not json"), "metadata"),
    "metadata is a JSON list": (raw_meta("[1, 2]"), "metadata"),
    "no checksums, byte changed in a compressed basket": (legacy_flip, "basket"),
    "empty file": (empty, ""),
}

COMMANDS = ("cutflow", "info", "report", "export", "merge")


def _argv(command, bad, good_other, folder):
    if command == "cutflow":
        return ["cutflow", bad]
    if command == "info":
        return ["info", bad]
    if command == "report":
        return ["report", bad, "-o", folder / "rep"]
    if command == "export":
        return ["export", bad, "-o", folder / "out.parquet"]
    return ["merge", folder / "merged.root", good_other, bad]


@pytest.fixture(scope="module")
def damaged(good, tmp_path_factory):
    """Every damaged file, made once."""
    d = tmp_path_factory.mktemp("damaged")
    out = {}
    for i, (name, (make, _)) in enumerate(DAMAGES.items()):
        p = d / f"bad{i:02d}.root"
        make(good["file"], p)
        out[name] = p
    return out


@pytest.mark.parametrize("command", COMMANDS)
@pytest.mark.parametrize("damage", list(DAMAGES))
def test_damaged_file_is_refused(damage, command, good, damaged, tmp_path, capsys,
                                 monkeypatch):
    monkeypatch.chdir(tmp_path)
    bad = tmp_path / "input.root"
    shutil.copyfile(damaged[damage], bad)
    other = tmp_path / "other.root"
    shutil.copyfile(good["other"], other)
    argv = _argv(command, bad, other, tmp_path)
    capsys.readouterr()
    before = snapshot(tmp_path)
    code = run_cli(argv)
    err = capsys.readouterr().err
    assert code == 2, (code, err)
    line = one_line(err)
    assert "input.root" in line, line
    assert DAMAGES[damage][1].lower() in line.lower(), line
    assert snapshot(tmp_path) == before


@pytest.mark.parametrize("damage", list(DAMAGES))
def test_damaged_file_is_refused_by_read(damage, damaged):
    import toymc

    with pytest.raises(InputFileError) as err:
        toymc.read(damaged[damage])
    assert "\n" not in str(err.value) and str(damaged[damage]) in str(err.value)


def test_good_files_pass(good, tmp_path):
    """The check accepts what toymc writes: a run, a merge (also of two points), an
    export's source, a file of an older writer without checksums."""
    assert check_file(good["file"])["events"] == 2000
    merged = tmp_path / "m.root"
    assert run_cli(["merge", merged, good["file"], good["other"]]) == 0
    meta = check_file(merged)
    assert meta["events"] == 4000 and "column_crc32" in meta
    assert "column_crc32" not in meta["inputs"][0]
    legacy = tmp_path / "legacy.root"
    with_meta(_legacy, checksum=False)(good["file"], legacy)
    assert check_file(legacy)["events"] == 2000


def test_every_written_column_has_the_tabled_type(good, tmp_path):
    """Every branch written by a reco run, a truth-only run and a run with decay weights
    has the type of toymc.io.columns.branch_type (the table the check compares against)."""
    from toymc.io.columns import branch_type, groups
    from toymc.io.run import run

    truth = write_config(tmp_path, "alp_gg_bksta")
    text = truth.read_text()
    start = text.index("[detector]")
    truth.write_text(text[:start])
    run(truth, output=tmp_path / "t.root", events=300)
    weighted = write_config(tmp_path, "darkphoton_mumu")
    weighted.write_text(weighted.read_text().replace("[run]\n", "[run]\ndecay_weights = true\n"))
    run(weighted, output=tmp_path / "w.root", events=300)
    for path in (good["file"], tmp_path / "t.root", tmp_path / "w.root"):
        with uproot.open(path) as f:
            tree = f["events"]
            names = [b.name for b in tree.branches]
            grouped = {f"{g}_{x}" for g, xs in groups(names).items() for x in xs}
            for b in tree.branches:
                assert b.typename == branch_type(b.name, b.name in grouped), (path, b.name)
        meta = check_file(path)
        assert sorted(c[0] for c in meta["columns"]) == sorted(names)


def test_input_that_is_not_a_regular_file(good, tmp_path, capsys):
    """A FIFO as input is refused at once (never opened: reading it would wait forever)."""
    import os

    os.mkfifo(tmp_path / "pipe.root")
    (tmp_path / "folder.root").mkdir()
    for name in ("pipe.root", "folder.root"):
        for command in ("info", "cutflow"):
            capsys.readouterr()
            assert run_cli([command, tmp_path / name]) == 2
            assert name in one_line(capsys.readouterr().err)
