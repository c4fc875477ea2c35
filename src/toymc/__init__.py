"""toymc: a fast toy Monte Carlo for light long-lived particles at an e+e- collider.

Python API
----------
``toymc.generate(config, events=None, seed=None)``  events in memory (awkward)
``toymc.run(config, output=None, ...)``             events to a ROOT file
``toymc.read(paths, columns=None, cut=None, ...)``  files back, with vector behaviours

Every public module is an attribute (``toymc.analysis.reweight``, ``toymc.detector``), imported
on first use so that ``import toymc`` stays fast.
"""

__version__ = "0.1.0"

__all__ = ("__version__", "generate", "iterate", "read", "run")

#: public modules and subpackages, imported on first attribute access
_SUBMODULES = frozenset((
    "analysis", "cli", "config", "data", "detector", "engine", "errors", "extras", "io",
    "physics", "plots",
))
#: the API functions, imported on first use: ``import toymc`` (and the command line's
#: start, before its signal handlers are installed) stays light; numba loads later
_LAZY = {"generate": "engine.api", "run": "io.run", "iterate": "io.reader",
         "read": "io.reader"}


def __getattr__(name):
    import importlib

    if name in _LAZY:
        value = getattr(importlib.import_module(f".{_LAZY[name]}", __name__), name)
        globals()[name] = value
        return value
    if name in _SUBMODULES:
        return importlib.import_module(f"{__name__}.{name}")
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | _SUBMODULES | set(_LAZY))
