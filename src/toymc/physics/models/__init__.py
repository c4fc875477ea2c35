"""Physics models: couplings -> partial widths, branching fractions, c*tau, production rates.

Modules (pure functions of numbers, numpy-vectorised in the mass):

* :mod:`toymc.physics.models.alp` -- photon- and gluon-coupled axion-like particles.
* :mod:`toymc.physics.models.vector_boson` -- dark photon, B-L, L_i - L_j, protophobic and
  user-defined vector bosons; e+e- -> gamma V.
* :mod:`toymc.physics.models.b_to_k` -- B -> K a, B -> K* a from a b -> s coupling.

``CHANNELS`` lists the decay-channel names used as keys of every width and
branching-fraction dict in toymc.
"""

from toymc.physics.models._common import CHANNELS

__all__ = ("CHANNELS",)

from toymc._lazy import submodules as _submodules

__getattr__ = _submodules(__name__)
