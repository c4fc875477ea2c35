"""Default names of command outputs, built from the input's file name."""

from pathlib import Path

__all__ = ("default_output",)


def default_output(prefix, source):
    """``<prefix>_<stem of source>``, or the stem alone if it already names the command.

    ``default_output("reach", "configs/reach_dark_photon.toml")`` is
    ``"reach_dark_photon"`` (not ``reach_reach_dark_photon``);
    ``default_output("reach", "configs/darkphoton_mumu.toml")`` is
    ``"reach_darkphoton_mumu"``.  The name is relative: outputs land in the
    current folder, next to nothing of the input's folder.
    """
    stem = Path(str(source)).stem or "toymc"
    words = stem.lower().replace("-", "_").split("_")
    if prefix.lower() in (words[0], words[-1]):
        return stem
    return f"{prefix}_{stem}"
