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
    import pandas as pd
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
    "velocity": "m/s",
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
        f = _to_unit(q, SI_UNITS[kind]) if SI_UNITS[kind] else q.to("").magnitude
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


def _has_angle(units: object) -> bool:
    """Whether a pint unit carries an angle (rad, degree, revolution) in its root units."""
    return "radian" in str(registry().get_root_units(units)[1])


def _to_unit(q: pint.Quantity, unit: str) -> float:
    """Magnitude of ``q`` in ``unit``, with a rotational speed and a frequency told apart.

    pint counts the radian as a pure number, so it reads 1 Hz as 1 rad/s. For a machine
    a *rotational speed* written as a frequency (``Hz``, ``1/s``, ``kHz``) means
    revolutions per unit time (1 Hz = 1 rev/s = 60 rpm), as ``1/min`` means rev/min;
    and a speed in rpm asked for as a frequency gives revolutions per second. So when
    one side carries an angle and the other is a bare rate (both ``1/[time]``), the
    bare rate is read as revolutions per unit time.

    Examples
    --------
    >>> q = registry().Quantity(0.75, "Hz")
    >>> round(_to_unit(q, "rpm"), 9)
    45.0
    """
    ureg = registry()
    target = ureg.Unit(unit)
    if q.dimensionality == {"[time]": -1} and target.dimensionality == {"[time]": -1}:
        from_angle, to_angle = _has_angle(q.units), _has_angle(target)
        if to_angle and not from_angle:
            q = q * ureg.revolution
        elif from_angle and not to_angle:
            q = q / ureg.revolution
    return float(q.to(target).magnitude)


def quantity_in(text: str, unit: str) -> float:
    """A quantity written as text (``"55 in"``, ``"0.75 Hz"``) in ``unit`` (pint text).

    The rule of :func:`_to_unit` holds: a frequency given for a rotational speed is
    revolutions per unit time. Raises whatever pint raises for text it cannot read or a
    unit of another kind (callers word the message).

    Examples
    --------
    >>> quantity_in("0.75 Hz", "rpm"), quantity_in("55 in", "m")
    (45.0, 1.397)
    """
    ureg = registry()
    m = _NUMBER.match(str(text))
    if m and m.group(2):
        q = ureg.Quantity(float(m.group(1)), _normalise(m.group(2)))
    else:
        q = ureg.Quantity(text)
    return _to_unit(q, unit)


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


# --------------------------------------------------------------------------- output units
#: Unit of an output key by its suffix: suffix -> (unit as shown, unit as pint reads it).
#: Longest suffixes first, so ``rim_speed_m_s`` is m/s, not s.
KEY_UNITS: dict[str, tuple[str, str]] = {
    "_Nm_s_per_rad": ("N·m·s/rad", "N*m*s/rad"),
    "_Nms_per_rad": ("N·m·s/rad", "N*m*s/rad"),
    "_Nm_per_rad": ("N·m/rad", "N*m/rad"),
    "_kg_per_m3": ("kg/m³", "kg/m**3"),
    "_per_min": ("1/min", "1/min"),
    "_rad_s": ("rad/s", "rad/s"),
    "_kgm2": ("kg·m²", "kg*m**2"),
    "_m_s": ("m/s", "m/s"),
    "_MPa": ("MPa", "MPa"),
    "_GPa": ("GPa", "GPa"),
    "_rpm": ("rpm", "rpm"),
    "_deg": ("°", "degree"),
    "_rad": ("rad", "rad"),
    "_Nm": ("N·m", "N*m"),
    "_kW": ("kW", "kW"),
    "_Hz": ("Hz", "Hz"),
    "_Pa": ("Pa", "Pa"),
    "_mm": ("mm", "mm"),
    "_kg": ("kg", "kg"),
    "_N": ("N", "N"),
    "_J": ("J", "J"),
    "_W": ("W", "W"),
    "_m": ("m", "m"),
    "_s": ("s", "s"),
}

#: US customary output units: SI key suffix -> (US suffix, unit as shown, pint unit).
#: Rotational speed (rpm), frequency, time and angle stay as they are.
US_UNITS: dict[str, tuple[str, str, str]] = {
    "_Nm_s_per_rad": ("_lbfft_s_per_rad", "lbf·ft·s/rad", "lbf*ft*s/rad"),
    "_Nms_per_rad": ("_lbffts_per_rad", "lbf·ft·s/rad", "lbf*ft*s/rad"),
    "_Nm_per_rad": ("_lbfft_per_rad", "lbf·ft/rad", "lbf*ft/rad"),
    "_kg_per_m3": ("_lb_per_in3", "lb/in³", "lb/inch**3"),
    "_kgm2": ("_lbft2", "lb·ft²", "lb*ft**2"),
    "_m_s": ("_ft_s", "ft/s", "ft/s"),
    "_MPa": ("_ksi", "ksi", "ksi"),
    "_GPa": ("_Mpsi", "Mpsi", "megapsi"),
    "_Nm": ("_lbfft", "lbf·ft", "lbf*ft"),
    "_kW": ("_khp", "1000 hp", "kilohp"),
    "_Pa": ("_psi", "psi", "psi"),
    "_mm": ("_mil", "mil", "thou"),
    "_kg": ("_lb", "lb", "lb"),
    "_N": ("_lbf", "lbf", "lbf"),
    "_J": ("_ftlbf", "ft·lbf", "ft*lbf"),
    "_W": ("_hp", "hp", "hp"),
    "_m": ("_in", "in", "inch"),
}

UNIT_SYSTEMS = ("si", "us")
_US_BACK = {us: si for si, (us, _, _) in US_UNITS.items()}


#: Tails a key may carry after its unit suffix: a statistic of the figure
#: (``torque_peak_Nm_p99``, ``energy_swing_J_median``, ``work_J_mean``).
_STAT_TAIL = re.compile(r"_(?:p\d+(?:\.\d+)?|mean|median|max|min|std|sd|rms)$")


def _split(key: str, table: dict) -> tuple[str, str, str] | None:
    """``(stem, suffix, tail)`` of a key whose unit suffix is in ``table``, or None.

    The unit suffix ends the key, or comes just before a statistic tail (``_p99``).
    """
    tail_match = _STAT_TAIL.search(key)
    candidates = [(key, "")]
    if tail_match:
        candidates.append((key[: tail_match.start()], key[tail_match.start():]))
    for body, tail in candidates:
        for suf in sorted(table, key=len, reverse=True):
            if body.endswith(suf) and len(body) > len(suf):
                return body[: -len(suf)], suf, tail
    return None


def _suffix(key: str, table: dict) -> str | None:
    parts = _split(key, table)
    return parts[1] if parts else None


def key_unit(key: str, system: str = "si") -> str:
    """The unit an output key carries, as shown in a units row (``""`` when none).

    Parameters
    ----------
    key : str
        An output column name or JSON key (``energy_swing_J``, ``inertia_lbft2``).
    system : str
        ``"si"`` or ``"us"`` (which suffixes to read).

    Examples
    --------
    >>> key_unit("inertia_kgm2"), key_unit("rim_speed_m_s"), key_unit("cs")
    ('kg·m²', 'm/s', '')
    >>> key_unit("energy_swing_ftlbf", "us")
    'ft·lbf'
    """
    if system == "us":
        suf = _suffix(key, _US_BACK)
        if suf is not None:
            return next(v[1] for v in US_UNITS.values() if v[0] == suf)
        if _suffix(key, US_UNITS) is not None:  # an SI key the US system does not change
            return ""
    suf = _suffix(key, KEY_UNITS)
    return KEY_UNITS[suf][0] if suf else ""


@functools.lru_cache(maxsize=64)
def us_factor(si_suffix: str) -> float:
    """Factor from the SI unit of ``si_suffix`` to its US customary unit (by pint).

    Examples
    --------
    >>> round(1 / us_factor("_J"), 6)  # NIST SP 811 B.9: 1 ft*lbf = 1.355818 J
    1.355818
    """
    return float(registry().Quantity(1.0, KEY_UNITS[si_suffix][1])
                 .to(US_UNITS[si_suffix][2]).magnitude)


def us_key(key: str) -> tuple[str, float]:
    """The US customary name of an SI output key and the factor to its value.

    Returns ``(key, 1.0)`` for keys whose unit stays (rpm, s, Hz, dimensionless).
    """
    parts = _split(key, US_UNITS)
    if parts is None:
        return key, 1.0
    stem, suf, tail = parts
    return stem + US_UNITS[suf][0] + tail, us_factor(suf)


def si_key(key: str) -> tuple[str, float]:
    """Inverse of :func:`us_key`: the SI name of a US key and the factor back to SI."""
    parts = _split(key, _US_BACK)
    if parts is None:
        return key, 1.0
    stem, suf, tail = parts
    si = _US_BACK[suf]
    return stem + si + tail, 1.0 / us_factor(si)


def _scale(value: object, factor: float) -> object:
    if factor == 1.0 or isinstance(value, bool):
        return value
    if isinstance(value, int | float):
        return value * factor
    if isinstance(value, list | tuple):
        return [_scale(v, factor) for v in value]
    if hasattr(value, "dtype") and getattr(value.dtype, "kind", "") in "fiu":
        return value * factor
    return value


def _is_stats(value: object) -> bool:
    """A dict of statistics of one figure (``{"median": .., "p95": .., "max": ..}``)."""
    return (isinstance(value, dict) and bool(value)
            and all(isinstance(x, int | float) or x is None for x in value.values())
            and all(_STAT_TAIL.fullmatch("_" + str(s)) for s in value))


def _is_check(value: object) -> bool:
    """A check record whose ``name`` is the key of its ``value`` and ``limit``."""
    return (isinstance(value, dict) and isinstance(value.get("name"), str)
            and "value" in value and "limit" in value)


def convert_keys(data: object, system: str, *, back: bool = False) -> object:
    """Convert a result dict (keys carry SI units) to another unit system, keys renamed.

    Parameters
    ----------
    data : dict, list or value
        A JSON contract (:meth:`to_dict`); nested dicts and lists are walked.
    system : str
        ``"si"`` (returned as is) or ``"us"``: lbf·ft, ft·lbf, lb·ft², in, mil, ksi,
        psi, lb, hp, ft/s; rpm, s, Hz and angles stay.
    back : bool
        Read US keys and return SI (the inverse).

    Returns
    -------
    The converted copy; ``inertia_kgm2`` becomes ``inertia_lbft2`` and so on. A check
    record ``{"name": "rim_speed_m_s", "value": .., "limit": ..}`` is converted by its
    name (``rim_speed_ft_s``, value and limit in ft/s).

    References
    ----------
    NIST Special Publication 811 (2008), Appendix B.9 (factors, here computed by pint).
    """
    if system not in UNIT_SYSTEMS:
        raise UsageError(f"unknown unit system {system!r}; valid: {', '.join(UNIT_SYSTEMS)}")
    if system == "si":
        return data
    rename = si_key if back else us_key
    if _is_check(data):  # {"name": "rim_speed_m_s", "value": .., "limit": ..}: by its name
        new, factor = rename(data["name"])
        return {**data, "name": new, "value": _scale(data["value"], factor),
                "limit": _scale(data["limit"], factor)}
    if isinstance(data, dict):
        out = {}
        for k, v in data.items():
            if _is_stats(v):  # energy_swing_J: {median, p95, max} -> one unit for all
                new, factor = rename(str(k))
                out[new] = {s: _scale(x, factor) for s, x in v.items()}
                continue
            if isinstance(v, dict | list) and not (isinstance(v, list) and v
                                                   and isinstance(v[0], int | float)):
                out[k] = convert_keys(v, system, back=back)
                continue
            new, factor = rename(str(k))
            out[new] = _scale(v, factor)
        return out
    if isinstance(data, list):
        return [convert_keys(v, system, back=back) for v in data]
    return data


def convert_frame(frame: pd.DataFrame, system: str) -> pd.DataFrame:
    """Convert a result table (SI column names) to ``system``; a copy, columns renamed."""
    if system == "si" or frame is None:
        return frame
    convert_keys({}, system)  # validates the name
    out = frame.copy()
    names = {}
    for col in frame.columns:
        new, factor = us_key(str(col))
        if factor != 1.0 and frame[col].dtype.kind in "fiu":
            out[col] = frame[col] * factor
        names[col] = new
    return out.rename(columns=names)
