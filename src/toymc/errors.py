"""Exception classes for user mistakes.

Every error a user can cause (a bad config, a missing file, an impossible
mass) is raised as a subclass of :class:`ToymcError`.  The command-line
interface turns these, and only these, into a single line on stderr and exit
status 2; anything else is a bug and keeps its traceback.
"""

__all__ = ("ToymcError", "ConfigError", "InputFileError", "PhysicsRangeError", "OutputError")


class ToymcError(Exception):
    """Base class for errors caused by the user's input."""


class ConfigError(ToymcError):
    """A config or geometry value is missing, mistyped or out of range.

    Parameters
    ----------
    path : str or None
        The file the value came from.
    key : str
        Dotted key, e.g. ``"llp.ctau"``.
    value : object
        The offending value (``None`` if the key is missing).
    allowed : str
        What is allowed, in words.
    """

    def __init__(self, path, key, value, allowed):
        self.path, self.key, self.value, self.allowed = path, key, value, allowed
        where = f"{path}: " if path else ""
        shown = "missing" if value is None else f"= {value!r}"
        super().__init__(f"{where}{key} {shown}: {allowed}")


class InputFileError(ToymcError):
    """A file given to a command is missing, unreadable or not what it should be."""


class PhysicsRangeError(ToymcError):
    """A requested point lies outside the kinematic or model range."""


class OutputError(ToymcError):
    """An output cannot be written (exists without --force, not writable, disk full)."""
