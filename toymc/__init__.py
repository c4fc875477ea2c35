"""toymc: a fast toy Monte Carlo for light long-lived particles at an e+e- collider.

Python API
----------
``toymc.generate(config, events=None, seed=None)``  events in memory (awkward)
``toymc.run(config, output=None, ...)``             events to a ROOT file
``toymc.read(paths, columns=None, cut=None, ...)``  files back, with vector behaviours
"""

__version__ = "0.1.0"

__all__ = ("__version__", "generate", "iterate", "read", "run")

#: the API functions, imported on first use: ``import toymc`` (and the command line's
#: start, before its signal handlers are installed) stays light; numba loads later
_LAZY = {"generate": "api", "run": "api", "iterate": "reader", "read": "reader"}


def __getattr__(name):
    if name in _LAZY:
        import importlib

        value = getattr(importlib.import_module(f".{_LAZY[name]}", __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(_LAZY))
