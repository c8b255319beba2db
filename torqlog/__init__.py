"""torqlog: cyclic-machine logs to energy swing, flywheel sizing and shaft checks.

SI units everywhere inside the library; units are converted once, at the edges.
"""

from torqlog._version import __version__
from torqlog.errors import DataError, TorqlogError, UsageError

__all__ = ["__version__", "TorqlogError", "DataError", "UsageError"]
