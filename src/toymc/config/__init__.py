"""The config layer: the schema of every section, the validator, the loader and unit parsing.

Reads TOML run configs and geometry files and turns them into frozen dataclasses with every
value in internal units (GeV, cm, ns, T).  Nothing here runs a kernel or writes a file.

- :mod:`~toymc.config.schema`: every section and key of a run config and of a geometry file
  (type, unit, default, range, meaning); the README's config reference is generated from it;
- :mod:`~toymc.config.ranges`: the range check of one value, the toy bounds, the closest-name
  hint; :mod:`~toymc.config.units`: ``"15 cm"`` -> 15.0 (the only unit parser);
- :mod:`~toymc.config.toml`: the one reader of TOML files (and the writer of resolved configs);
- :mod:`~toymc.config.loader`: the one table validator and the run-config loader (RunConfig);
- :mod:`~toymc.config.kinematics`: the checks of a run against physics (thresholds, limits);
- :mod:`~toymc.config.geometry` (geometry file, [selection]), :mod:`~toymc.config.scan`,
  :mod:`~toymc.config.reach`, :mod:`~toymc.config.tuning`, :mod:`~toymc.config.backgrounds`:
  the readers of the other sections.
"""

from toymc._lazy import submodules as _submodules

__all__ = ()  # the room's modules are its public names, imported on first access

__getattr__ = _submodules(__name__)
