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
    """A table whose JSON cannot be written leaves no CSV temporaries behind."""
    from toymc.cli.tune import write_table

    (tmp_path / "t.json").mkdir()  # a folder where the JSON file should go
    with pytest.raises(OutputError, match="t.json"):
        write_table([], tmp_path / "t")
    assert not [n for n in os.listdir(tmp_path) if n.startswith(".")]
