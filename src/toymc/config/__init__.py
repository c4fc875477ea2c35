"""The config layer: the schema of every section, the validator, the loader and unit parsing.

Reads TOML run configs and geometry files and turns them into frozen dataclasses with every
value in internal units (GeV, cm, ns, T). Nothing here runs a kernel or writes a file.
"""

from toymc._lazy import submodules as _submodules

__getattr__ = _submodules(__name__)
