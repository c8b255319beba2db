"""torqlog: cyclic-machine logs to energy swing, flywheel sizing and shaft checks.

SI units everywhere inside the library; units are converted once, at the edges.

The package is laid out by stage of the one-way data flow::

    io  ->  signal  ->  sizing / rotor / shaft  ->  fleet  ->  present  ->  demo, cli

(each package may import only the ones to its left). The main functions are one import
away, re-exported here and loaded on first use so that ``import torqlog`` stays cheap:

>>> import torqlog
>>> torqlog.required_inertia(1000.0, 0.05, 10.0)   # I = dE / (Cs w^2)  [kg*m^2]
200.0
"""

from __future__ import annotations

import importlib
from typing import Any

from torqlog._version import __version__
from torqlog.errors import DataError, TorqlogError, UsageError

#: Public name -> "module:attribute" it is loaded from on first use.
_API = {
    "read_log": "torqlog.io.ingest:read_log",
    "load_profile": "torqlog.io.profile:load_profile",
    "survey_log": "torqlog.signal.survey:survey_log",
    "analyse_cycles": "torqlog.signal.cycles:analyse_cycles",
    "cycles": "torqlog.signal.cycles:analyse_cycles",
    "CycleOptions": "torqlog.signal.cycles:CycleOptions",
    "energy_swing": "torqlog.signal.energy:energy_swing",
    "order_spectrum": "torqlog.signal.spectrum:order_spectrum",
    "required_inertia": "torqlog.sizing.inertia:required_inertia",
    "size_log": "torqlog.sizing.inertia:size_log",
    "size": "torqlog.sizing.inertia:size_log",
    "get_material": "torqlog.rotor.materials:get_material",
    "design_flywheel": "torqlog.rotor.flywheel:design_flywheel",
    "check_flywheel": "torqlog.rotor.flywheel:check_flywheel",
    "check_shaft": "torqlog.shaft.check:check_shaft",
    "torsional_modes": "torqlog.shaft.torsion:torsional_modes",
    "run_trend": "torqlog.fleet.trend:run_trend",
    "build_report": "torqlog.present.report:build_report",
    "simulate": "torqlog.demo.simulate:simulate",
}

__all__ = ["__version__", "TorqlogError", "DataError", "UsageError", *_API]


def __getattr__(name: str) -> Any:
    """Load a public function from its stage package on first use (PEP 562)."""
    target = _API.get(name)
    if target is None:
        raise AttributeError(f"module 'torqlog' has no attribute {name!r}")
    module, _, attr = target.partition(":")
    value = getattr(importlib.import_module(module), attr)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_API))
