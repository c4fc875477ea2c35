"""The one table of decay channels: every channel name toymc knows, built in or registered.

A channel is a :class:`Channel`: its name, the LLP spin, the stored daughters (PDG ids,
charges, status, mother indices) and how its kinematics are drawn (``family``: two-body or
three-body, with the direct daughters' masses from `particle`).  Names that only serve as
keys of the models' partial-width tables (``tau_tau``, ``nu_nu``, ``hadrons``, ``other``)
are entries without kinematics (``generated`` False): they have widths but toymc cannot
generate them.

Built-in channels carry a kernel ``code``: the production kernels compile their own fast
code for them (toymc.physics.decays).  A channel registered from user code has no code; the
generator then decays the LLP with the generic kernels of toymc.physics.generic_decay,
which read the daughters' masses from arrays:

    from toymc.physics import channels
    channels.register(channels.Channel.from_daughters("k_k", spin=1, daughters=(321, -321)))

A neutral pion among the direct daughters is stored with status 2 and followed by its two
photons (pi0 -> gamma gamma, isotropic; the pi0 lives 25 nm, PDG, so the photons start at
the LLP decay point), as in the built-in channels.
"""

import numpy as np

from toymc.errors import ToymcError
from toymc.physics import constants as C

__all__ = (
    "Channel", "CHANNELS", "ChannelError", "register", "unregister", "get", "names",
    "threshold", "GG", "PIPIPI0", "PI0PI0PI0", "EE", "MUMU", "PIPI", "TWO_BODY", "THREE_BODY",
    "MATRIX_ELEMENTS", "Names",
)

# kernel codes of the built-in channels (toymc.physics.decays compiles code for each)
GG, PIPIPI0, PI0PI0PI0, EE, MUMU, PIPI = 0, 1, 2, 3, 4, 5

#: kinematics families of the generic kernels
TWO_BODY, THREE_BODY = "two_body", "three_body"
#: three-body matrix elements (toymc.physics.kinematics.threebody codes)
MATRIX_ELEMENTS = {"flat": 0, "chiral": 1}
#: angular laws of a spin-1 LLP's two-body decay (toymc.physics.decays docstring):
#: "fermion" (spin-1/2 pair), "scalar" (spin-0 pair), "isotropic"
ANGULAR = ("fermion", "scalar", "isotropic")


class ChannelError(ToymcError, ValueError):
    """A channel description that toymc cannot generate (raised at registration)."""


def _mass(pdg):
    """Mass (GeV) of a daughter; photons and neutrinos massless."""
    return 0.0 if abs(pdg) == 22 else C.mass(int(abs(pdg)))


class Channel:
    """Static description of a decay channel (name, spin, stored daughters, kinematics).

    Parameters
    ----------
    name : str
    code : int or None
        Kernel code of a built-in channel; None for a channel decayed by the generic kernels.
    spin : int or None
        LLP spin (0 or 1); None for a width-only name.
    pdg, q, status, mother : sequences of int
        Stored daughters in order (status 2: decayed further; mother -1: direct daughter).
    family : {"two_body", "three_body"} or None
        Kinematics; None: not generated (a width-table name only).
    angular : str
        Spin-1 two-body law: "fermion", "scalar" or "isotropic" (the daughters of a spin-0 LLP
        are isotropic in its rest frame whatever this says).
    matrix_elements : tuple of str
        Values of ``llp.matrix_element`` the channel accepts (three-body: "flat" phase space,
        "chiral" for pi+ pi- pi0).
    """

    def __init__(self, name, code, spin, pdg=(), q=(), status=(), mother=(), family=None,
                 angular="isotropic", matrix_elements=("flat",)):
        self.name, self.code, self.spin = name, code, spin
        self.pdg = np.asarray(pdg, dtype=np.int32)
        self.q = np.asarray(q, dtype=np.int32)
        self.status = np.asarray(status, dtype=np.int32)
        self.mother = np.asarray(mother, dtype=np.int32)
        self.k = len(pdg)
        self.family, self.angular = family, angular
        self.matrix_elements = tuple(matrix_elements)

    @classmethod
    def from_daughters(cls, name, spin, daughters, angular=None, matrix_elements=("flat",),
                       code=None):
        """A channel from its direct daughters' PDG ids (2 or 3), charges from `particle`.

        Each pi0 (111) is stored with status 2 and followed, after the direct daughters, by
        its two photons.  ``angular`` (spin-1 two-body only) defaults to "fermion" for a
        spin-1/2 particle-antiparticle pair, "scalar" for a spin-0 pair and "isotropic"
        otherwise.
        """
        d = [int(p) for p in daughters]
        if not name or not isinstance(name, str):
            raise ChannelError(f"channel name {name!r}: a non-empty string")
        if spin not in (0, 1):
            raise ChannelError(f"channel {name}: spin {spin!r}: 0 or 1")
        if len(d) not in (2, 3):
            raise ChannelError(f"channel {name}: {len(d)} daughters: 2 or 3")
        for p in d:
            try:
                _mass(p)
            except Exception:
                raise ChannelError(f"channel {name}: daughter {p}: a PDG id known to "
                                   "`particle`") from None
        q = [0 if abs(p) == 22 else int(round(C.charge(abs(p)) * (1 if p > 0 else -1)))
             for p in d]
        if sum(q) != 0:
            raise ChannelError(f"channel {name}: daughters {d} carry charge {sum(q)}: a neutral"
                               " LLP needs a neutral final state")
        family = TWO_BODY if len(d) == 2 else THREE_BODY
        for me in matrix_elements:
            if me not in MATRIX_ELEMENTS or (me != "flat" and family != THREE_BODY):
                raise ChannelError(f"channel {name}: matrix element {me!r}: 'flat' (or "
                                   "'chiral' for three-body channels)")
        if angular is None:
            angular = "isotropic"
            if family == TWO_BODY and d[0] == -d[1] and _mass(d[0]) > 0:
                twice_j = _spin2(d[0])
                angular = {1: "fermion", 0: "scalar"}.get(twice_j, "isotropic")
        if angular not in ANGULAR:
            raise ChannelError(f"channel {name}: angular {angular!r}: one of {ANGULAR}")
        if angular != "isotropic" and (family != TWO_BODY or _mass(d[0]) != _mass(d[1])):
            raise ChannelError(f"channel {name}: the vector laws need two daughters of one mass")
        pdg, qs, status, mother = list(d), list(q), [1] * len(d), [-1] * len(d)
        for j, p in enumerate(d):
            if p == 111:
                status[j] = 2
                pdg += [22, 22]
                qs += [0, 0]
                status += [1, 1]
                mother += [j, j]
        return cls(name, code, spin, pdg, qs, status, mother, family, angular,
                   matrix_elements)

    @property
    def generated(self):
        """True if toymc can generate this channel (False for width-table names)."""
        return self.family is not None

    @property
    def direct(self):
        """PDG ids of the direct daughters."""
        return self.pdg[self.mother == -1]

    @property
    def final_masses(self):
        """Masses (GeV) of the direct daughters, for the threshold."""
        return [_mass(int(p)) for p in self.direct]

    @property
    def forced_br(self):
        """Branching fraction of the sub-decays the generator forces: BR(pi0 -> gamma gamma)
        per pi0 among the direct daughters (1 for a channel without pi0).  The yield of the
        generated final state is BR(LLP -> channel) times this."""
        return C.BR_PI0_GG ** len(self.pi0_slots)

    @property
    def pi0_slots(self):
        """Indices of the direct daughters that are pi0 (each followed by two photons)."""
        return [j for j, p in enumerate(self.direct) if p == 111]


def _spin2(pdg):
    """2J of a particle from `particle` (None if unknown)."""
    from particle import Particle

    try:
        j = Particle.from_pdgid(abs(int(pdg))).J
    except Exception:
        return None
    return None if j is None else int(round(2 * j))


class Names:
    """Live, ordered view of a registry's names (config choices consult it at check time)."""

    def __init__(self, table):
        self._table = table

    def __iter__(self):
        return iter(tuple(self._table))

    def __contains__(self, x):
        return x in self._table

    def __len__(self):
        return len(self._table)

    def __getitem__(self, i):
        return tuple(self._table)[i]

    def __repr__(self):
        return repr(tuple(self._table))


#: every channel name (generated or width-table only), in registration order
_ALL = {}
#: the channels toymc can generate: name -> Channel (a live table: registration adds to it)
CHANNELS = {}
#: live view of the generated channels' names (the config's choices)
CHOICES = Names(CHANNELS)


def register(ch, replace=False):
    """Add channel `ch` (a :class:`Channel`) to the table; returns it.

    A name already in the table is refused unless ``replace`` (built-in channels are never
    replaced).
    """
    if not isinstance(ch, Channel):
        raise ChannelError(f"register: a Channel, not {type(ch).__name__}")
    old = _ALL.get(ch.name)
    if old is not None and (not replace or old.code is not None):
        raise ChannelError(f"channel {ch.name!r} exists already")
    _ALL[ch.name] = ch
    if ch.generated:
        CHANNELS[ch.name] = ch
    return ch


def unregister(name):
    """Remove a registered (not built-in) channel."""
    ch = _ALL.get(name)
    if ch is None or ch.code is not None or not ch.generated:
        raise ChannelError(f"channel {name!r}: not a registered user channel")
    del _ALL[name]
    del CHANNELS[name]


def get(name):
    """The :class:`Channel` called `name` (KeyError if unknown or not generated)."""
    return CHANNELS[name]


def names():
    """Every channel name, generated or width-table only (the models' width keys)."""
    return tuple(_ALL)


def threshold(name):
    """Lowest LLP mass (GeV) for which channel `name` is open."""
    return float(sum(CHANNELS[name].final_masses))


# built-in channels, in the order of the width tables (toymc.physics.models)
register(Channel.from_daughters("gamma_gamma", 0, (22, 22), code=GG))
register(Channel.from_daughters("pi_pi_pi0", 0, (211, -211, 111), code=PIPIPI0,
                                matrix_elements=("flat", "chiral")))
register(Channel.from_daughters("pi0_pi0_pi0", 0, (111, 111, 111), code=PI0PI0PI0))
register(Channel.from_daughters("e_e", 1, (11, -11), code=EE))
register(Channel.from_daughters("mu_mu", 1, (13, -13), code=MUMU))
register(Channel("tau_tau", None, 1))
register(Channel.from_daughters("pi_pi", 1, (211, -211), code=PIPI))
for _name in ("nu_nu", "hadrons", "other"):
    register(Channel(_name, None, None))
del _name
