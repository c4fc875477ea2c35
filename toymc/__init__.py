"""toymc: a fast toy Monte Carlo for light long-lived particles at an e+e- collider.

Python API
----------
``toymc.generate(config, events=None, seed=None)``  events in memory (awkward)
``toymc.run(config, output=None, ...)``             events to a ROOT file
``toymc.read(paths, columns=None, cut=None, ...)``  files back, with vector behaviours
"""

__version__ = "0.1.0"

from .api import generate, run  # noqa: E402
from .reader import iterate, read  # noqa: E402

__all__ = ("__version__", "generate", "iterate", "read", "run")
