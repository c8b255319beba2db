"""torqlog: cyclic-machine logs to energy swing, flywheel sizing and shaft checks.

SI units everywhere inside the library; units are converted once, at the edges.
"""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("torqlog")
except PackageNotFoundError:  # running from a source tree
    __version__ = "0.0.0+src"

from torqlog.errors import DataError, TorqlogError, UsageError  # noqa: E402

__all__ = ["__version__", "TorqlogError", "DataError", "UsageError"]
