"""Command-line interface: a thin click layer over the library.

``base`` holds the group, the shared options and the output helpers; the commands live
in ``logs`` (inspect, cycles, size, trend), ``design`` (flywheel, shaft) and ``tools``
(simulate, report, demo). Importing this package registers every command on ``cli``.
"""

from torqlog.cli import design, life, logs, tools, watch  # noqa: F401  (registers the commands)
from torqlog.cli.base import cli, main

__all__ = ["cli", "main"]
