"""Submodules as attributes of their package, imported on first access."""

import importlib
import importlib.util

__all__ = ("submodules",)


def submodules(package):
    """A module ``__getattr__`` for ``package``: ``toymc.analysis.reweight`` imports
    ``toymc.analysis.reweight`` on first access; anything else is an AttributeError."""

    def __getattr__(name):
        if not name.startswith("__"):
            full = f"{package}.{name}"
            if importlib.util.find_spec(full) is not None:
                return importlib.import_module(full)
        raise AttributeError(f"module {package!r} has no attribute {name!r}")

    return __getattr__
