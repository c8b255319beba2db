"""Machine profile: one TOML file that describes a machine so nobody retypes it.

Keys carry their unit as a suffix (``speed_rpm``, ``inertia_kgm2``); every section is
optional; an unknown section or key is an error that names it. Values are converted to
SI here, once, and the rest of torqlog sees SI only.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from torqlog.errors import DataError, UsageError

# section -> key -> (type, factor to SI or None for non-numeric)
_RPM = 2.0 * math.pi / 60.0
_SCHEMA: dict[str, dict[str, tuple[type | tuple[type, ...], float | None]]] = {
    "machine": {
        "name": (str, None),
        "revs_per_cycle": (int, None),
        "speed_rpm": ((int, float), _RPM),
        "inertia_kgm2": ((int, float), 1.0),
        "target_cs": ((int, float), 1.0),
        "flywheel_speed_ratio": ((int, float), 1.0),
        "torque_role": (str, None),
    },
    "motor": {
        "power_kW": ((int, float), 1e3),
        "sync_rpm": ((int, float), _RPM),
        "rated_rpm": ((int, float), _RPM),
        "speed_ratio": ((int, float), 1.0),
        "rotor_inertia_kgm2": ((int, float), 1.0),
    },
    "flywheel": {
        "shape": (str, None),
        "material": ((str, dict), None),
        "outer_diameter_m": ((int, float), 1.0),
        "bore_m": ((int, float), 1.0),
        "max_width_m": ((int, float), 1.0),
        "width_m": ((int, float), 1.0),
        "interference_m": ((int, float), 1.0),
        "overspeed": ((int, float), 1.0),
    },
    "shaft": {
        "material": ((str, dict), None),
        "bearings_m": (list, None),
        "segments": (list, None),
        "masses": (list, None),
        "required_ratio": ((int, float), 1.0),
        "separation_margin": ((int, float), 1.0),
        "self_weight": (bool, None),
        "surface": (str, None),
        "ultimate_strength_MPa": ((int, float), 1e6),
        "yield_strength_MPa": ((int, float), 1e6),
        "reliability": ((int, float), 1.0),
        "temperature_C": ((int, float), 1.0),
        "service_factor": ((int, float), 1.0),
        "bearing_ratings_N": (list, None),
        "bearing_type": (str, None),
        "fatigue_method": (str, None),
    },
    "torsional": {
        "names": (list, None),
        "inertias_kgm2": (list, None),
        "stiffness_Nm_per_rad": (list, None),
        "band": ((int, float), 1.0),
        "min_share": ((int, float), 1.0),
        "damping_ratio": ((int, float), 1.0),
        "excitation_at": (str, None),
    },
    "output": {
        "units": (str, None),
    },
    "shifts": {
        "starts": (list, None),
        "names": (list, None),
        "timezone": (str, None),
    },
}

#: Numeric keys for which zero makes sense (a solid disc has no bore); every other
#: numeric key must be positive.
_ZERO_OK = frozenset({"bore_m", "interference_m"})
#: Numeric keys of any sign (a temperature in degrees Celsius).
_ANY_SIGN = frozenset({"temperature_C"})

_SEGMENT_KEYS = {"length_m", "diameter_m", "bore_m", "material", "fillet_m"}
_MASS_KEYS = {"name", "mass_kg", "at_m", "inertia_kgm2", "seat", "hub_length_m",
              "key_width_m", "key_height_m", "key_length_m"}


@dataclass(frozen=True)
class MachineProfile:
    """A machine profile, converted to SI.

    Attributes
    ----------
    source : str
        Path of the TOML file ("" when built in code).
    machine, motor, flywheel, shaft, torsional, shifts, output : dict
        One dict per section. Numeric values are SI and the keys lose their unit
        suffix (``speed_rpm`` becomes ``speed`` [rad/s], ``inertia_kgm2`` becomes
        ``inertia`` [kg*m^2], ``power_kW`` becomes ``power`` [W]); lists and text keep
        their key. ``raw`` keeps the file's own keys and values for reports.
    """

    source: str = ""
    machine: dict[str, Any] = field(default_factory=dict)
    motor: dict[str, Any] = field(default_factory=dict)
    flywheel: dict[str, Any] = field(default_factory=dict)
    shaft: dict[str, Any] = field(default_factory=dict)
    torsional: dict[str, Any] = field(default_factory=dict)
    shifts: dict[str, Any] = field(default_factory=dict)
    output: dict[str, Any] = field(default_factory=dict)
    raw: dict[str, Any] = field(default_factory=dict)


_SUFFIXES = ("_rpm", "_kgm2", "_kW", "_m", "_kg", "_Nm_per_rad")


def _plain(key: str) -> str:
    for suf in _SUFFIXES:
        if key.endswith(suf):
            return key[: -len(suf)]
    return key


def _with_unit(text: str, key: str, sec: str, source: str) -> float:
    """A number written with its unit (``outer_diameter_m = "55 in"``) in the key's unit.

    A rotational speed written as a frequency is revolutions per unit time
    (``speed_rpm = "0.75 Hz"`` is 45 rpm; :func:`torqlog.io.units.quantity_in`).
    """
    from torqlog.io.units import KEY_UNITS, quantity_in

    suffix = next((s for s in sorted(KEY_UNITS, key=len, reverse=True)
                   if key.endswith(s)), None)
    unit = KEY_UNITS[suffix][1] if suffix else ""
    try:
        return quantity_in(text, unit)
    except Exception:  # noqa: BLE001 - pint raises several types for bad text
        raise DataError(f"{source}: [{sec}] {key} = {text!r}: give a number in "
                        f"{unit or 'no unit'}, or a number with a unit of that kind "
                        f"(e.g. \"1.2 {unit}\")") from None


def _did_you_mean(word: str, valid: Any) -> str:
    """``"did you mean 'target_cs'? "`` for the closest valid name (difflib), else ``""``.

    Examples
    --------
    >>> _did_you_mean("taget_cs", ["name", "target_cs"])
    "did you mean 'target_cs'? "
    """
    import difflib

    near = difflib.get_close_matches(str(word), [str(v) for v in valid], n=1)
    return f"did you mean {near[0]!r}? " if near else ""


def _check_table(items: list, allowed: set[str], where: str, path: str) -> None:
    for i, item in enumerate(items):
        if not isinstance(item, dict):
            raise DataError(f"{path}: {where}[{i}] must be a table like {{ length_m = 0.3 }}")
        unknown = set(item) - allowed
        if unknown:
            raise DataError(
                f"{path}: unknown key {sorted(unknown)[0]!r} in {where}[{i}]; "
                f"{_did_you_mean(sorted(unknown)[0], allowed)}"
                f"valid keys: {', '.join(sorted(allowed))}"
            )


def parse_profile(data: dict[str, Any], source: str = "<profile>") -> MachineProfile:
    """Validate a profile dict (as read from TOML) and convert it to SI.

    Raises
    ------
    DataError
        Naming the first unknown section or key, or a value of the wrong type.
    """
    sections: dict[str, dict[str, Any]] = {}
    for sec, body in data.items():
        if sec not in _SCHEMA:
            raise DataError(f"{source}: unknown section [{sec}]; "
                            f"{_did_you_mean(sec, _SCHEMA)}valid sections: "
                            f"{', '.join(_SCHEMA)}")
        if not isinstance(body, dict):
            raise DataError(f"{source}: [{sec}] must be a table of keys")
        out: dict[str, Any] = {}
        for key, value in body.items():
            if key not in _SCHEMA[sec]:
                raise DataError(f"{source}: unknown key {key!r} in [{sec}]; "
                                f"{_did_you_mean(key, _SCHEMA[sec])}valid keys: "
                                f"{', '.join(_SCHEMA[sec])}")
            typ, factor = _SCHEMA[sec][key]
            if isinstance(value, str) and typ == (int, float) and factor is not None:
                value = _with_unit(value, key, sec, source)
            if typ in ((int, float), int) and isinstance(value, bool):
                raise DataError(f"{source}: [{sec}] {key} must be a number, not {value!r}")
            if not isinstance(value, typ):
                raise DataError(f"{source}: [{sec}] {key} has the wrong type "
                                f"({type(value).__name__}); give a "
                                f"{'number' if factor is not None else typ.__name__}")
            if factor is not None:
                least = "zero or more" if key in _ZERO_OK else "greater than zero"
                if not math.isfinite(value) or (key not in _ANY_SIGN and (
                        value < 0 or (value == 0 and key not in _ZERO_OK))):
                    raise DataError(f"{source}: [{sec}] {key} must be {least}, got {value!r}; "
                                    "fix the profile")
                out[_plain(key)] = float(value) * factor
            else:
                out[key] = value
        sections[sec] = out
    if "segments" in sections.get("shaft", {}):
        _check_table(sections["shaft"]["segments"], _SEGMENT_KEYS, "[shaft] segments", source)
    if "masses" in sections.get("shaft", {}):
        _check_table(sections["shaft"]["masses"], _MASS_KEYS, "[shaft] masses", source)
    role = sections.get("machine", {}).get("torque_role")
    if role is not None and role not in ("load", "drive"):
        raise DataError(f"{source}: [machine] torque_role must be \"load\" or \"drive\", "
                        f"got {role!r}")
    units = sections.get("output", {}).get("units")
    if units is not None and units not in ("si", "us"):
        raise DataError(f"{source}: [output] units must be \"si\" or \"us\", got {units!r}")
    rpc = sections.get("machine", {}).get("revs_per_cycle")
    if rpc is not None and rpc < 1:
        raise DataError(f"{source}: [machine] revs_per_cycle must be 1 or more, got {rpc}")
    return MachineProfile(source=source, raw=data, **sections)


def load_profile(path: str | Path) -> MachineProfile:
    """Read and validate a machine profile TOML file.

    Parameters
    ----------
    path : str or Path
        The TOML file.

    Returns
    -------
    MachineProfile
        The profile in SI.
    """
    p = Path(path)
    if not p.exists():
        raise UsageError(f"{p}: profile file does not exist")
    if p.is_dir():
        raise UsageError(f"{p}: is a directory; give a .toml profile file")
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise DataError(f"{p}: not a valid TOML profile ({exc})") from None
    return parse_profile(data, str(p))
