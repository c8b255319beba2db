"""The installed torqlog version (one place, importable from every package)."""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("torqlog")
except PackageNotFoundError:  # running from a source tree
    __version__ = "0.0.0+src"
