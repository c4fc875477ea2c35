"""Every figure (matplotlib, loaded through :mod:`toymc.extras`)."""

from toymc._lazy import submodules as _submodules

__all__ = ()  # the room's modules are its public names, imported on first access

__getattr__ = _submodules(__name__)
