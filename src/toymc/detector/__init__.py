"""Parametric cylindrical detector: geometry, tracking, calorimeter, vertexing.

Public entry points (see each module's docstring for the model):

- :class:`Geometry`, :class:`Selection`, :class:`Profile` (the vertex-finding efficiency of a
  selection; :mod:`toymc.detector.fold` integrates it along flight lines), built from a
  geometry file and the [selection] section by :mod:`toymc.config.geometry`,
- :func:`respond` (truth block -> reco columns, in place), :data:`RECO_COLUMNS`,
  :func:`cutflow`,
"""

from toymc.detector.geometry import (
    Geometry,
    Selection,
)
from toymc.detector.profile import Profile
from toymc.detector.response import CUT_STEPS, RECO_COLUMNS, cutflow, respond

__all__ = (
    "CUT_STEPS",
    "RECO_COLUMNS",
    "Geometry",
    "Profile",
    "Selection",
    "cutflow",
    "respond",
)

from toymc._lazy import submodules as _submodules

__getattr__ = _submodules(__name__)
