"""Fixtures shared by every test folder (the one conftest of the suite).

The helper modules of this folder (``_demo``: paths and demo configs; ``_samples``: small
samples of the demo configs; ``_outputs``: the command-line runner and output snapshots)
are importable from every test folder because pytest puts this folder on ``sys.path``
when it loads this file.
"""

from pathlib import Path

import pytest
from _samples import CONFIGS, DEMOS, N_SMALL

import toymc


@pytest.fixture(scope="session")
def demo_files(tmp_path_factory):
    """name -> path of a 3000-event truth sample of each demo config (seed 11)."""
    d = tmp_path_factory.mktemp("demos")
    out = {}
    for name in DEMOS:
        out[name] = str(d / f"{name}.root")
        toymc.run(CONFIGS / f"{name}.toml", output=out[name], events=N_SMALL, seed=11)
    return out


@pytest.fixture(scope="session")
def bad_files(tmp_path_factory, demo_files):
    """name -> path of inputs that are not usable toymc files."""
    import uproot

    d = tmp_path_factory.mktemp("bad")
    good = Path(demo_files["alp_gg_bksta"]).read_bytes()
    out = {"text": d / "notes.root", "foreign": d / "foreign.root", "truncated": d / "cut.root",
           "damaged": d / "damaged.root", "missing": d / "absent.root"}
    out["text"].write_text("run 1: looks fine\n")
    with uproot.recreate(out["foreign"]) as f:
        f["events"] = {"x": [1.0, 2.0, 3.0]}
    out["truncated"].write_bytes(good[: len(good) // 2])
    # the baskets lie between the file header and the tree metadata at the end:
    # overwrite the middle of the file, keeping both ends intact
    mid = len(good) // 2
    out["damaged"].write_bytes(good[:mid] + b"\x00" * 200_000 + good[mid + 200_000:])
    return {k: str(v) for k, v in out.items()}


# pytest.approx(x, rel=r) still accepts any value within 1e-12 of x (its default absolute
# tolerance), which makes every comparison of a width in GeV (1e-20 .. 1e-12) pass. In this
# suite a relative tolerance means a relative tolerance: abs = 0 unless a test gives one.
_approx = pytest.approx


def _relative_approx(expected, rel=None, abs=None, nan_ok=False):  # noqa: A002 - pytest's names
    if rel is not None and abs is None:
        abs = 0.0  # noqa: A001
    return _approx(expected, rel=rel, abs=abs, nan_ok=nan_ok)


pytest.approx = _relative_approx
