"""Unit handling at the edges of the program (ingest and command-line options).

Inside torqlog every array is SI. This module turns unit text as people write it in
logger headers and options (``kN·m``, ``lbf*ft``, ``rpm``, ``deg``, ``"900 mm"``) into SI
factors with :mod:`pint`, and refuses units of the wrong kind or unknown units with a
message that names them.

References
----------
.. [1] A. Thompson and B. N. Taylor, *Guide for the Use of the International System of
   Units (SI)*, NIST Special Publication 811, 2008, Appendix B (conversion factors).
"""

from __future__ import annotations

import functools
import math
import re
from typing import TYPE_CHECKING

from torqlog.errors import UsageError

if TYPE_CHECKING:
    import pint

#: SI unit of each physical kind used in torqlog, as pint understands it.
SI_UNITS: dict[str, str] = {
    "time": "s",
    "torque": "N*m",
    "speed": "rad/s",
    "angle": "rad",
    "inertia": "kg*m**2",
    "length": "m",
    "mass": "kg",
    "stress": "Pa",
    "density": "kg/m**3",
    "power": "W",
    "energy": "J",
    "frequency": "Hz",
    "stiffness_torsional": "N*m/rad",
    "dimensionless": "",
}

# Spellings seen in logger exports that pint does not read as meant.
_ALIASES: dict[str, str] = {
    "nm": "N*m",
    "knm": "kN*m",
    "mnm": "mN*m",
    "n.m": "N*m",
    "kn.m": "kN*m",
    "lbfft": "lbf*ft",
    "lbft": "lbf*ft",
    "ftlb": "ft*lbf",
    "ftlbf": "ft*lbf",
    "lbfin": "lbf*in",
    "inlb": "in*lbf",
    "kgfm": "kgf*m",
    "rpm": "rpm",
    "1/min": "rpm",
    "u/min": "rpm",
    "r/min": "rpm",
    "min-1": "rpm",
    "min^-1": "rpm",
    "rad/s": "rad/s",
    "deg": "degree",
    "°": "degree",
    "grad": "degree",
    "ms": "ms",
    "us": "us",
    "µs": "us",
    "kgm2": "kg*m**2",
    "kgm^2": "kg*m**2",
    "": "",
}


@functools.lru_cache(maxsize=1)
def registry() -> pint.UnitRegistry:
    """Return the (cached, read-only in use) pint unit registry torqlog uses."""
    import pint

    try:  # pint's own definition cache makes start-up ~15x faster after the first run
        ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True, cache_folder=":auto:")
    except Exception:  # noqa: BLE001 - an unwritable cache folder must not stop us
        ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    ureg.define("kilogram_force_meter = kilogram_force * meter = kgfm")
    return ureg


def _normalise(text: str) -> str:
    t = text.strip()
    t = t.replace("·", "*").replace("⋅", "*").replace("×", "*").replace("²", "**2")
    t = t.replace("^", "**")
    key = t.lower().replace(" ", "").replace("*", "")
    if key in _ALIASES:
        return _ALIASES[key]
    if t.lower() in _ALIASES:
        return _ALIASES[t.lower()]
    return t


# SI factors of the spellings nearly every logger export uses, so reading a log does not
# have to load pint's unit definitions (~0.3 s of start-up). They are the values pint
# gives (tests/test_units.py checks every entry against pint); any other unit goes to pint.
_COMMON: dict[tuple[str, str], float] = {
    ("s", "time"): 1.0,
    ("ms", "time"): 1e-3,
    ("us", "time"): 1e-6,
    ("N*m", "torque"): 1.0,
    ("kN*m", "torque"): 1e3,
    ("rpm", "speed"): 2.0 * math.pi / 60.0,
    ("rad/s", "speed"): 1.0,
    ("degree", "angle"): math.pi / 180.0,
    ("rad", "angle"): 1.0,
}


@functools.lru_cache(maxsize=256)
def si_factor(unit: str, kind: str) -> float:
    """Factor that converts a value in ``unit`` to the SI unit of ``kind``.

    Parameters
    ----------
    unit : str
        Unit text as written (``"kN·m"``, ``"lbf*ft"``, ``"rpm"``, ``"deg"``, ``"ms"``).
        An empty string means the SI unit itself.
    kind : str
        One of the keys of :data:`SI_UNITS` (``"torque"``, ``"speed"``, ...).

    Returns
    -------
    float
        Multiply a value in ``unit`` by this to get SI.

    Raises
    ------
    UsageError
        If the unit is unknown or of the wrong kind; the message names the unit.

    Examples
    --------
    >>> round(si_factor("lbf*ft", "torque"), 6)
    1.355818
    >>> round(si_factor("rpm", "speed"), 8)
    0.10471976
    """
    if kind not in SI_UNITS:
        raise UsageError(f"unknown quantity kind {kind!r}; valid: {', '.join(SI_UNITS)}")
    norm = _normalise(unit)
    if norm == "":
        return 1.0
    if (norm, kind) in _COMMON:
        return _COMMON[(norm, kind)]
    import pint

    ureg = registry()
    try:
        q = ureg.Quantity(1.0, norm)
        f = q.to(SI_UNITS[kind]).magnitude if SI_UNITS[kind] else q.to("").magnitude
    except pint.errors.DimensionalityError:
        raise UsageError(
            f"unit {unit!r} is not a {kind} unit (expected something convertible to "
            f"{SI_UNITS[kind] or 'a pure number'})"
        ) from None
    except Exception:  # pint raises several types for text it cannot parse
        raise UsageError(f"unknown unit {unit!r} for {kind}; write it as e.g. "
                         f"{_EXAMPLES.get(kind, SI_UNITS[kind])!r}") from None
    if not math.isfinite(f) or f == 0:
        raise UsageError(f"unit {unit!r} has no usable conversion to {SI_UNITS[kind]}")
    return float(f)


@functools.lru_cache(maxsize=256)
def is_unit(text: str) -> bool:
    """Whether pint reads ``text`` as a unit of any kind (``"kg"``, ``"furlong"``: yes;
    ``"motor"``: no). Used to tell a unit suffix of a column name from a word.

    Examples
    --------
    >>> is_unit("furlong"), is_unit("crank")
    (True, False)
    """
    norm = _normalise(text)
    if norm == "" or any((norm, k) in _COMMON for k in SI_UNITS):
        return norm != ""
    ureg = registry()
    try:
        ureg.Quantity(1.0, norm)
    except Exception:  # noqa: BLE001 - pint raises several types for text it cannot parse
        return False
    return True


#: Kinds whose unit may begin with a unit of another kind: a torque unit with a force
#: unit (kN·m), a speed unit with an angle unit (rad/s, deg/s).
_LEADING_KINDS: dict[str, tuple[str, ...]] = {
    "torque": ("torque", "force"),
    "speed": ("speed", "angle"),
}
_FORCE_AND_ANGLE = {"force": "N", "angle": "rad"}


def looks_like_unit_of(text: str, kind: str) -> bool:
    """Whether ``text``, which is not a unit, begins with a unit that fits ``kind``.

    ``"kNx"`` begins with ``kN`` (a force, as a torque unit does) and is taken for a
    misspelt torque unit; ``"motor"`` is not. Used to refuse unit suffixes of column
    names that torqlog cannot read instead of assuming SI.

    Examples
    --------
    >>> looks_like_unit_of("kNx", "torque"), looks_like_unit_of("motor", "speed")
    (True, False)
    """
    if kind not in ("torque", "speed", "angle"):
        return False
    kinds = _LEADING_KINDS.get(kind, (kind,))
    for n in range(len(text) - 1, 1, -1):
        head = text[:n]
        if not is_unit(head):
            continue
        for k in kinds:
            unit = _FORCE_AND_ANGLE.get(k) or SI_UNITS[k]
            try:
                registry().Quantity(1.0, _normalise(head)).to(unit)
                return True
            except Exception:  # noqa: BLE001 - not this kind
                continue
    return False


_EXAMPLES = {
    "torque": "kN*m",
    "speed": "rpm",
    "angle": "deg",
    "time": "ms",
    "length": "mm",
    "stress": "MPa",
    "inertia": "kg*m**2",
}

_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")


def parse_quantity(value: str | float | int, default_unit: str, kind: str,
                   name: str = "value") -> float:
    """Parse a command-line quantity to SI.

    Parameters
    ----------
    value : str or float
        A bare number (taken in ``default_unit``) or a number followed by a unit
        (``"900 mm"``, ``"250 MPa"``, ``"600 rpm"``).
    default_unit : str
        Unit of a bare number.
    kind : str
        Quantity kind, a key of :data:`SI_UNITS`.
    name : str
        Option name used in error messages.

    Returns
    -------
    float
        The value in SI units.

    Examples
    --------
    >>> parse_quantity("900 mm", "m", "length")
    0.9
    >>> parse_quantity(1.2, "m", "length")
    1.2
    """
    if isinstance(value, int | float):
        return float(value) * si_factor(default_unit, kind)
    m = _NUMBER.match(str(value))
    if not m:
        raise UsageError(f"{name}: cannot read {value!r} as a number with an optional unit "
                         f"(e.g. '1.2' or '1.2 {_EXAMPLES.get(kind, default_unit)}')")
    number = float(m.group(1))
    unit = m.group(2) or default_unit
    try:
        return number * si_factor(unit, kind)
    except UsageError as exc:
        raise UsageError(f"{name}: {exc}") from None
