"""Writing through a temporary name: no partial output, old files kept on failure."""

import os

import pytest

from toymc.errors import OutputError
from toymc.io.files import atomic_write


def test_success_replaces_and_leaves_no_temporary(tmp_path):
    out = tmp_path / "table.csv"
    out.write_text("old")
    atomic_write(out, lambda tmp: tmp.write_text("new"), force=True)
    assert out.read_text() == "new"
    assert sorted(os.listdir(tmp_path)) == ["table.csv"]


def test_without_force_an_existing_file_is_kept(tmp_path):
    out = tmp_path / "table.csv"
    out.write_text("old")
    with pytest.raises(OutputError, match="table.csv: exists"):
        atomic_write(out, lambda tmp: tmp.write_text("new"))
    assert out.read_text() == "old"
    assert sorted(os.listdir(tmp_path)) == ["table.csv"]


def test_failed_write_keeps_old_file_and_removes_temporary(tmp_path):
    out = tmp_path / "table.csv"
    out.write_text("old")

    def half(tmp):
        tmp.write_text("partial")
        raise OSError(28, "No space left on device")

    with pytest.raises(OutputError, match="table.csv: cannot write"):
        atomic_write(out, half)
    assert out.read_text() == "old"
    assert sorted(os.listdir(tmp_path)) == ["table.csv"]


def test_plot_temporaries_keep_the_suffix(tmp_path):
    seen = []
    atomic_write(tmp_path / "p.png", lambda tmp: (seen.append(tmp.name), tmp.write_bytes(b"x")),
                 keep_suffix=True)
    assert seen[0].startswith(".p.") and seen[0].endswith(".tmp.png")
    seen.clear()
    atomic_write(tmp_path / "f.root", lambda tmp: (seen.append(tmp.name), tmp.write_bytes(b"x")))
    assert seen[0].startswith(".f.root.") and seen[0].endswith(".tmp")


def test_tuning_table_is_written_atomically(tmp_path):
    """The CSV and JSON of a tuning table are one output: when the JSON cannot be written,
    neither file appears (no leftover CSV, no temporary); an old CSV stays byte for byte; on
    success both files are complete and nothing else is left."""
    import csv
    import json

    from toymc.analysis.tuning import TABLE_COLUMNS
    from toymc.cli.tune import write_table

    (tmp_path / "t.json").mkdir()  # a folder where the JSON file should go
    with pytest.raises(OutputError, match="t.json"):
        write_table([], tmp_path / "t")
    assert sorted(os.listdir(tmp_path)) == ["t.json"]
    assert os.listdir(tmp_path / "t.json") == []

    (tmp_path / "t.csv").write_bytes(b"old table\n")
    with pytest.raises(OutputError):
        write_table([], tmp_path / "t")
    assert (tmp_path / "t.csv").read_bytes() == b"old table\n"
    assert sorted(os.listdir(tmp_path)) == ["t.csv", "t.json"]

    out = tmp_path / "ok"
    out.mkdir()
    csv_path, json_path = write_table([], out / "u", meta={"config": "x.toml"})
    assert sorted(os.listdir(out)) == ["u.csv", "u.json"]
    with open(csv_path) as fh:
        assert next(csv.reader(fh)) == [c[0] for c in TABLE_COLUMNS]
    assert json.loads(json_path.read_text())["meta"] == {"config": "x.toml"}


def test_write_all_leaves_nothing_when_one_write_fails(tmp_path):
    """io.files.atomic_write_all: if any of the writes fails, no file of the set is renamed
    into place and no temporary remains."""
    from toymc.io.files import atomic_write_all

    def broken(tmp):
        tmp.write_text("partial")
        raise OSError(28, "No space left on device")

    with pytest.raises(OutputError, match="b.txt: cannot write"):
        atomic_write_all([(tmp_path / "a.txt", lambda tmp: tmp.write_text("a")),
                          (tmp_path / "b.txt", broken)])
    assert os.listdir(tmp_path) == []
    atomic_write_all([(tmp_path / "a.txt", lambda tmp: tmp.write_text("a")),
                      (tmp_path / "b.txt", lambda tmp: tmp.write_text("b"))])
    assert sorted(os.listdir(tmp_path)) == ["a.txt", "b.txt"]
    assert (tmp_path / "b.txt").read_text() == "b"
