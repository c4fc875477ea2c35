"""Physics: kinematics, production processes, decays, models and PDG constants.

Kernels and formulas only: they take arrays, plain numbers and a ``numpy.random.Generator``
and never see a config or a file.
"""

from toymc._lazy import submodules as _submodules

__all__ = ()  # the room's modules are its public names, imported on first access

__getattr__ = _submodules(__name__)
