"""The table of production processes: the choices of ``production.process``.

Each process is a :class:`toymc.physics.production.spec.Process`, declared by its module
(``PROCESS = Process(...)``) and registered here with one line; user code registers its own
the same way, without editing toymc:

    from toymc.physics import processes
    processes.register(processes.Process("my_process", generate=..., keys=..., limit=...,
                                         normalisation=...))

The config validation (toymc.config.schema) and the generator (toymc.engine.generator)
consult this table.
"""

from toymc.physics.channels import Names
from toymc.physics.production import b_meson, radiative
from toymc.physics.production.spec import Process, ProcessError, ctau_values

__all__ = ("Process", "ProcessError", "PROCESSES", "CHOICES", "register", "unregister", "get",
           "ctau_values")

#: name -> Process (a live table: registration adds to it)
PROCESSES = {}
#: live view of the names (the config's choices)
CHOICES = Names(PROCESSES)
_BUILTIN = ("b_meson", "radiative")


def register(process, replace=False):
    """Add `process` (a :class:`Process`) to the table; returns it.

    A name already in the table is refused unless ``replace`` (never for a built-in one).
    """
    if not isinstance(process, Process):
        raise ProcessError(f"register: a Process, not {type(process).__name__}")
    if process.name in PROCESSES and (not replace or process.name in _BUILTIN):
        raise ProcessError(f"process {process.name!r} exists already")
    PROCESSES[process.name] = process
    return process


def unregister(name):
    """Remove a registered (not built-in) process."""
    if name in _BUILTIN or name not in PROCESSES:
        raise ProcessError(f"process {name!r}: not a registered user process")
    del PROCESSES[name]


def get(name):
    """The :class:`Process` called `name` (KeyError if unknown)."""
    return PROCESSES[name]


register(b_meson.PROCESS)
register(radiative.PROCESS)
