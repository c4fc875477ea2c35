"""Analysis: the analytic fold, per-event decay weights, lifetime reweighting, statistics,
cut flows, scans, reach, cut tuning and validation."""

from toymc._lazy import submodules as _submodules

__all__ = ()  # the room's modules are its public names, imported on first access

__getattr__ = _submodules(__name__)
