"""The demo configs and detector geometries that travel with the package.

``configs/*.toml`` and ``geometries/*.toml`` in this folder are the canonical
copies.  They are package data (``[tool.setuptools.package-data]`` in
pyproject.toml), so every command that needs them (``toymc validate``) finds
them after a plain ``pip install``, from any folder.  The project's top-level
``configs/`` and ``geometries/`` folders are symbolic links to these folders:
the README's commands keep working from a source checkout, and there is one
copy of each file.  A config names its geometry relative to its own folder
(``"../geometries/demo.toml"``), which holds here as it does at the top level.
"""

from importlib import resources as _resources
from pathlib import Path as _Path

from ..errors import InputFileError as _InputFileError

__all__ = ("config_path", "configs_dir", "geometries_dir", "geometry_path")


def _folder(kind):
    root = _resources.files(__name__)
    if not isinstance(root, _Path):  # e.g. imported from a zip file
        raise _InputFileError(f"toymc's {kind} must be installed as files; this installation "
                              f"keeps them in {root}")
    return root / kind


def configs_dir():
    """Folder of the demo configs shipped with the package."""
    return _folder("configs")


def geometries_dir():
    """Folder of the demo detector geometries shipped with the package."""
    return _folder("geometries")


def _file(folder, name):
    p = folder / name
    if not p.is_file():
        have = ", ".join(sorted(q.name for q in folder.glob("*.toml")))
        raise _InputFileError(f"{name}: not among the files shipped in {folder} ({have})")
    return p


def config_path(name):
    """Path of the demo config `name` (e.g. ``"alp_3pi_bka.toml"``) inside the package."""
    return _file(configs_dir(), name)


def geometry_path(name):
    """Path of the demo geometry `name` (e.g. ``"demo.toml"``) inside the package."""
    return _file(geometries_dir(), name)
