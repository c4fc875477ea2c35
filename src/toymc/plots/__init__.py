"""Every figure (matplotlib, loaded through :mod:`toymc.extras`)."""

from toymc._lazy import submodules as _submodules

__getattr__ = _submodules(__name__)
