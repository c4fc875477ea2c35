"""toymc.io.rootfile.open_root: the one opener of input ROOT files, and its errors."""

import pytest

from toymc.errors import InputFileError
from toymc.io import ntuple
from toymc.io.reader import _open_tree
from toymc.io.rootfile import META, TREE, open_root
from toymc.io.verify import check_file


def test_opens_a_toymc_file(demo_files):
    path = demo_files["alp_gg_bksta"]
    with open_root(path) as f:
        assert TREE in f and META in f
    f, tree = _open_tree(path)
    with f:
        assert tree.num_entries == ntuple.read_meta(path)["events"]


@pytest.mark.parametrize("name, message", [
    ("missing", "file not found"),
    ("text", "not a readable ROOT file (")],
)
def test_unreadable(bad_files, name, message):
    path = bad_files[name]
    for opener in (open_root, _open_tree, ntuple.read_meta, check_file):
        with pytest.raises(InputFileError) as err:
            opener(path)
        assert str(err.value).startswith(f"{path}: ")
        assert message in str(err.value)


def test_foreign_root_file(bad_files):
    # a ROOT file with an events tree but no toymc metadata: refused unless asked only
    # for a readable ROOT file (the verifier checks the keys itself, with finer messages)
    path = bad_files["foreign"]
    with pytest.raises(InputFileError, match="not a toymc file"):
        open_root(path)
    with pytest.raises(InputFileError, match="not a toymc file"):
        _open_tree(path)
    with pytest.raises(InputFileError, match="not a toymc file"):
        check_file(path)
    with open_root(path, toymc=False) as f:
        assert TREE in f and META not in f
