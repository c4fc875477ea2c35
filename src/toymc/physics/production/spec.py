"""What a production process declares: :class:`Process` (the table is toymc.physics.processes).

A process is one module with a ``generate`` function and a ``PROCESS = Process(...)`` line;
one ``processes.register(...)`` call makes it a choice of ``production.process``.  The
functions a process declares receive the validated run config (``cfg``, a
toymc.config.loader.RunConfig: ``cfg.beams``, ``cfg.llp.mass``, ``cfg.production``; the
values of the process's own keys are in ``cfg.production.options``) and never see a file.
"""

import numpy as np

from toymc.errors import ToymcError

__all__ = ("Process", "ProcessError", "ctau_values")


class ProcessError(ToymcError, ValueError):
    """A process description that toymc cannot use (raised at registration)."""


def ctau_values(cfg):
    """The c*tau of the run, or the values of its mixture (cm)."""
    mix = cfg.llp.ctau_mixture
    return np.array(mix if mix else [cfg.llp.ctau], dtype=np.float64)


class Process:
    """A production process.

    Parameters
    ----------
    name : str
        The value of ``production.process``.
    generate : callable
        ``generate(rng, n, beams, mass, options) -> ((E, IE, R, IR), counter)``: fills, for
        every one of the n events, the per-event rows of toymc.physics.layout that describe
        the production (``PV_*``, ``PAR_*``, ``RCL_*``, ``LLP_PX..LLP_E``, ``LLP_VX..LLP_VZ``
        of ``E``; ``PAR_PDG``, ``PAR_Q``, ``RCL_PDG``, ``RCL_Q`` of ``IE``) and the recoil
        daughters ``R``, ``IR`` (arrays of ``layout.allocate(n, 0, k_recoil)``); ``counter``
        (int64[3]) counts the uniform, normal and exponential numbers drawn.  The generator
        then draws the LLP's c*tau, decay point and daughters (toymc.physics.generic_decay).
        Random numbers only from ``rng`` (a numpy Generator); numba kernels over arrays.
    keys : dict
        The process's keys in ``[production]``: name -> the keyword arguments of
        toymc.config.ranges.spec (``kind``, ``default``, ``doc``, ``lo``, ``hi``, ``dim``,
        ``choices``, ...), or None for a key declared in the config schema itself (the built-in
        processes).  A key of another process is refused in a config.
    limit : callable
        ``limit(cfg) -> float``: the largest LLP mass (GeV) the process can make.
    limit_note : callable or str
        What the limit is, shown after it in the error message (e.g. " (sqrt(s))").
    normalisation : callable
        ``normalisation(cfg) -> dict``: cross-section bookkeeping for the metadata; must hold
        ``"process"``.
    spins : tuple of int
        LLP spins the process can make.
    polarisation : callable or int
        Code of a spin-1 LLP's polarisation (toymc.physics.decays docstring): 0 none,
        1 helicity 0 about the parent (``PAR_*`` rows), 2 the spin correlation with the beams.
    check : callable or None
        ``check(cfg)``: raises toymc.errors.ConfigError for configs the process cannot run.
    run : callable or None
        Built-in processes only: ``run(cfg, rng, n, channel) -> ((E, IE, D, R, IR), counter)``,
        production and LLP decay in one compiled kernel for the built-in channels.
    models : bool
        Whether a ``[model]`` section may give the rate (the models know the built-in
        processes only).
    """

    def __init__(self, name, generate=None, keys=None, limit=None, limit_note="",
                 normalisation=None, spins=(0, 1), polarisation=0, check=None, run=None,
                 models=False):
        if not name or not isinstance(name, str):
            raise ProcessError(f"process name {name!r}: a non-empty string")
        if generate is None and run is None:
            raise ProcessError(f"process {name}: give generate(rng, n, beams, mass, options)")
        if not callable(limit):
            raise ProcessError(f"process {name}: give limit(cfg) -> largest LLP mass (GeV)")
        if not callable(normalisation):
            raise ProcessError(f"process {name}: give normalisation(cfg) -> dict")
        if not set(spins) <= {0, 1} or not spins:
            raise ProcessError(f"process {name}: spins {spins!r}: a subset of (0, 1)")
        self.name, self.generate, self.keys = name, generate, dict(keys or {})
        self.limit, self.normalisation, self.spins = limit, normalisation, tuple(spins)
        self._limit_note, self._pol, self.check = limit_note, polarisation, check
        self.run, self.models = run, models

    def note(self, cfg):
        """The text shown after the production limit."""
        return self._limit_note(cfg) if callable(self._limit_note) else self._limit_note

    def polarisation(self, cfg):
        """Polarisation code of a spin-1 LLP in this config."""
        return int(self._pol(cfg) if callable(self._pol) else self._pol)
