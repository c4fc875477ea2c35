"""Optional dependencies, one function each: import or raise with the install command."""

from toymc.errors import ToymcError

__all__ = (
    "matplotlib_pyplot", "distributed", "pyarrow", "MissingExtra",
)


class MissingExtra(ToymcError):
    """An optional package needed by a command is not installed."""


def matplotlib_pyplot():
    """matplotlib.pyplot with the non-interactive Agg backend."""
    try:
        import matplotlib
    except ImportError:
        raise MissingExtra("plots need matplotlib (a dependency of toymc): "
                           "pip install matplotlib") from None
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def distributed():
    try:
        import distributed as d
    except ImportError:
        raise MissingExtra('--scheduler needs dask.distributed: pip install "toymc[dist]"') from None
    return d


def pyarrow():
    try:
        import pyarrow as pa
    except ImportError:
        raise MissingExtra('Parquet export needs pyarrow: pip install "toymc[parquet]"') from None
    return pa
