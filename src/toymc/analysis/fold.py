"""The analytic fold, for analysis code: :mod:`toymc.detector.fold` and the profile type.

The fold integrates the exponential decay-length density with the vertex-efficiency
profile along each LLP's flight line; it lives with the detector (the engine's
per-event decay weights use it).  This module names the same functions for the
analysis commands (reach, fold curves).
"""

from toymc.detector.fold import (
    check_window,
    fold_efficiency,
    fold_probability,
    line_window,
    profile_nodes,
)
from toymc.detector.profile import PROFILE_KINDS, Profile, profile_efficiency

__all__ = (
    "PROFILE_KINDS",
    "Profile",
    "check_window",
    "fold_efficiency",
    "fold_probability",
    "line_window",
    "profile_efficiency",
    "profile_nodes",
)
