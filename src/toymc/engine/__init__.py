"""The engine: the Block, the random streams of a run, the generator that turns a run config
into kernel arguments, and the in-memory Python API."""

from toymc._lazy import submodules as _submodules

__all__ = ()  # the room's modules are its public names, imported on first access

__getattr__ = _submodules(__name__)
