"""What the commands need travels with the package.

A non-editable install holds the Python files of the packages and the package
data declared in pyproject.toml, nothing else of the project folder.  These
tests check that the files ``toymc validate`` reads lie inside the package and
are covered by the package-data globs, and run the case loading of validate
from a copy of exactly those files, outside the project folder.
"""

import os
import shutil
import subprocess
import sys
import tomllib
from pathlib import Path

from _demo import ROOT

import toymc
from toymc.analysis import validate
from toymc.config import loader as config
from toymc.data import config_path, configs_dir, geometries_dir

PKG = Path(toymc.__file__).resolve().parent
PYPROJECT = tomllib.loads((ROOT / "pyproject.toml").read_text())


def _package_data():
    """{package folder relative to the project: [globs]} from pyproject.toml."""
    decl = PYPROJECT["tool"]["setuptools"]["package-data"]
    return {Path("src", *name.split(".")): globs for name, globs in decl.items()}


def _declared(path):
    """True if `path` (absolute) is matched by a package-data glob of its package
    (glob semantics, as setuptools applies them: ``*`` does not cross folders)."""
    return any(path.resolve() in {p.resolve() for p in (ROOT / folder).glob(g)}
               for folder, globs in _package_data().items() for g in globs)


def _validate_files():
    """Every config and geometry file validate's cases load (resolved paths)."""
    files = set()
    for case in validate.CASES:
        p = config_path(case[1]).resolve()
        files.add(p)
        files.add(Path(config.load(p).geometry).resolve())
    return files


def test_validate_reads_only_package_data():
    files = _validate_files()
    assert len(files) >= 4  # three configs and the demo geometry
    for f in files:
        assert f.is_relative_to(PKG), f"{f} lies outside the package {PKG}"
        assert _declared(f), f"{f} is not covered by [tool.setuptools.package-data]"


def test_package_data_globs_match_the_data_files():
    data = [p for p in (PKG / "data").rglob("*")
            if p.is_file() and p.suffix not in (".py", ".pyc") and "__pycache__" not in p.parts]
    assert data, "no package data found"
    for p in data:
        assert _declared(p), f"{p} is in the package folder but not declared as package data"
    for folder, globs in _package_data().items():
        for g in globs:
            assert list((ROOT / folder).glob(g)), f"package-data glob {folder}/{g} matches nothing"


def test_top_level_folders_are_the_package_copies():
    # one copy of each demo file: configs/ and geometries/ are links into the package
    assert (ROOT / "configs").resolve() == configs_dir().resolve()
    assert (ROOT / "geometries").resolve() == geometries_dir().resolve()
    for name in ("alp_3pi_bka.toml", "darkphoton_mumu.toml", "alp_gg_bksta.toml"):
        cfg = config.load(ROOT / "configs" / name)  # as the README uses them
        assert Path(cfg.geometry).resolve() == (geometries_dir() / "demo.toml").resolve()


def _wheel_like_copy(dest):
    """Copy what a wheel holds: the packages' .py files and the declared package data."""
    for src in PKG.rglob("*.py"):
        if "__pycache__" in src.parts:
            continue
        out = dest / "toymc" / src.relative_to(PKG)
        out.parent.mkdir(parents=True, exist_ok=True)
        shutil.copy2(src, out)
    for folder, globs in _package_data().items():
        for g in globs:
            for src in (ROOT / folder).glob(g):
                out = dest / src.relative_to(ROOT / "src")
                out.parent.mkdir(parents=True, exist_ok=True)
                shutil.copy2(src, out)


def test_validate_cases_load_from_an_installed_copy(tmp_path):
    site = tmp_path / "site"
    _wheel_like_copy(site)
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    code = ("import toymc, toymc.analysis.validate as v\n"
            "import toymc.analysis.validation_checks as checks\n"
            f"assert toymc.__file__.startswith({str(site)!r}), toymc.__file__\n"
            "for case in v.CASES:\n"
            "    cfg = checks.case_config(case, 1.0)\n"
            f"    assert cfg.geometry.startswith({str(site)!r}), cfg.geometry\n"
            "print('loaded', len(v.CASES))\n")
    env = dict(os.environ, PYTHONPATH=str(site), NUMBA_CACHE_DIR=str(tmp_path / "numba"))
    r = subprocess.run([sys.executable, "-c", code], cwd=elsewhere, env=env,
                       capture_output=True, text=True, timeout=300)
    assert r.returncode == 0, r.stderr
    assert r.stdout.strip() == f"loaded {len(validate.CASES)}"


def _public_modules():
    return sorted(p.stem if p.is_file() else p.name for p in PKG.iterdir()
                  if not p.name.startswith(("_", "."))
                  and ((p.is_file() and p.suffix == ".py")
                       or (p.is_dir() and (p / "__init__.py").is_file())))


def test_every_public_module_is_an_attribute_of_the_package():
    names = _public_modules()
    assert {"config", "physics", "detector", "engine", "io", "analysis", "plots", "cli",
            "data"} <= set(names)
    # a fresh interpreter: in this one the tests have imported most modules already
    code = ("import sys, types, toymc\n"
            "lazy = [n for n in sys.argv[1:] if 'toymc.' + n not in sys.modules]\n"
            "for n in sys.argv[1:]:\n"
            "    assert isinstance(getattr(toymc, n), types.ModuleType), n\n"
            "    assert n in dir(toymc), n\n"
            "print(' '.join(lazy))\n")
    r = subprocess.run([sys.executable, "-c", code, *names], cwd=ROOT, capture_output=True,
                       text=True, timeout=300)
    assert r.returncode == 0, r.stderr
    # they are imported on first use, not by ``import toymc``
    assert {"analysis", "plots", "cli", "io"} <= set(r.stdout.split())
