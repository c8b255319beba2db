"""Human labels and meaningful digits: the one place that maps JSON keys to what people read.

The JSON contract keeps its keys (``added_inertia_at_flywheel_kgm2``); tables for people
-- the CLI's ``table`` format and the report -- show :func:`label` of the key ("Added
inertia at the flywheel shaft, kg·m²") and numbers through :func:`sig`, rounded to three
significant figures unless the key's :class:`Label` says otherwise. A key not listed here
still gets a readable label from its unit suffix (``speed_max_rpm`` → "Speed max, rpm").

Three significant figures is common practice for engineering results from field data: the
logged torque and speed rarely support more (a torque transducer of 0.1 % class on a cycle
whose swing is a tenth of its mean gives a swing good to about 1 %).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any


@dataclass(frozen=True)
class Label:
    """How one JSON key is shown to people.

    Attributes
    ----------
    text : str
        The label without the unit ("Added inertia at the flywheel shaft").
    unit : str
        The unit shown ("kg·m²"); "" for a dimensionless figure or text.
    scale : float
        Multiplies the JSON value (SI or the key's unit) into ``unit``.
    digits : int
        Significant figures shown.
    """

    text: str
    unit: str = ""
    scale: float = 1.0
    digits: int = 3

    @property
    def full(self) -> str:
        """``"text, unit"`` (or ``text`` alone when dimensionless)."""
        return f"{self.text}, {self.unit}" if self.unit else self.text


_L = Label
#: Known keys (the last part of a JSON path) and their labels.
LABELS: Mapping[str, Label] = MappingProxyType({
    # cycles
    "cycle": _L("Cycle"),
    "cycles": _L("Clean cycles", digits=9),
    "cycles_total": _L("Cycles in the log", digits=9),
    "cycles_used": _L("Cycles used", digits=9),
    "flagged": _L("Flagged cycles", digits=9),
    "cycle_rate_per_min": _L("Cycles per minute", "1/min"),
    "start_s": _L("Cycle start", "s", digits=6),
    "duration_s": _L("Duration", "s"),
    "speed_mean_rpm": _L("Mean speed", "rpm"),
    "speed_min_rpm": _L("Lowest speed", "rpm", digits=4),
    "speed_max_rpm": _L("Highest speed", "rpm", digits=4),
    "torque_mean_Nm": _L("Mean torque", "kN·m", 1e-3),
    "torque_midrange_Nm": _L("Mid-range torque (max+min)/2", "kN·m", 1e-3),
    "torque_peak_Nm": _L("Peak torque", "kN·m", 1e-3),
    "torque_peak_Nm_p99": _L("Peak torque (99th percentile)", "kN·m", 1e-3),
    "energy_swing_J": _L("Energy swing ΔE", "kJ", 1e-3),
    "design_energy_swing_J": _L("Design energy swing ΔE", "kJ", 1e-3),
    "work_J": _L("Work per cycle", "kJ", 1e-3),
    "work_J_mean": _L("Mean work per cycle", "kJ", 1e-3),
    "cs": _L("Speed fluctuation Cs"),
    "t_start_s": _L("Start time", "s", digits=6),
    "cs_constant_drive": _L("Cs with a constant drive torque"),
    "flag": _L("Flag"),
    # sizing
    "target_cs": _L("Target Cs"),
    "cs_measured": _L("Measured Cs (median cycle)"),
    "cs_model_existing": _L("Model Cs at the existing inertia"),
    "cs_model_error_rel": _L("Model error against the measured Cs", "%", 100.0, 2),
    "required_inertia_kgm2": _L("Required inertia at the logged shaft", "kg·m²"),
    "added_inertia_kgm2": _L("Added inertia at the logged shaft", "kg·m²"),
    "added_inertia_at_flywheel_kgm2": _L("Added inertia at the flywheel shaft", "kg·m²"),
    "existing_inertia_kgm2": _L("Existing inertia at the logged shaft", "kg·m²"),
    "bound_constant_drive_required_inertia_kgm2":
        _L("Constant-drive bound: required inertia", "kg·m²"),
    "bound_constant_drive_added_inertia_kgm2":
        _L("Constant-drive bound: added inertia", "kg·m²"),
    "inertia_kgm2": _L("Inertia", "kg·m²"),
    "drive_torque_rms_share_of_rated": _L("Motor RMS torque, share of rated", "%", 100.0),
    "drive_torque_peak_share_of_rated": _L("Motor peak torque, share of rated", "%", 100.0),
    "copper_loss_change_kWh_per_year": _L("Motor copper loss change per year", "kWh/a"),
    "motor_torque_peak_Nm": _L("Motor peak torque", "N·m"),
    "motor_torque_rms_Nm": _L("Motor RMS torque", "N·m"),
    # flywheel
    "outer_diameter_m": _L("Outer diameter", "mm", 1e3),
    "bore_m": _L("Bore", "mm", 1e3),
    "width_m": _L("Face width", "mm", 1e3),
    "mass_kg": _L("Mass", "kg"),
    "rim_speed_m_s": _L("Rim speed", "m/s"),
    "rim_speed_limit_m_s": _L("Rim speed limit", "m/s"),
    "stored_energy_J": _L("Stored energy at speed", "kJ", 1e-3),
    "stress_critical_MPa": _L("Largest stress", "MPa"),
    "strength_MPa": _L("Material strength", "MPa"),
    "stress_safety_factor": _L("Stress safety factor"),
    "speed_safety_factor": _L("Speed safety factor"),
    "yield_speed_rpm": _L("Speed at which yield begins", "rpm"),
    "fit_loosening_rpm": _L("Speed at which the shrink fit loosens", "rpm"),
    "fit_pressure_rest_MPa": _L("Fit pressure at rest", "MPa"),
    # materials (names of torqlog.rotor.materials)
    "grey-iron-200": _L("Grey iron 200"),
    "grey-iron-250": _L("Grey iron 250"),
    "ductile-iron": _L("Ductile iron"),
    "steel-c45": _L("Steel C45"),
    "steel-s355": _L("Steel S355"),
    "steel": _L("Steel"),
    # shaft
    "fe_hz": _L("Lateral natural frequencies", "Hz"),
    "modes_hz": _L("Torsional natural frequencies", "Hz"),
    "forcing_hz": _L("Highest forcing frequency", "Hz"),
    # trend
    "energy_swing_J_median": _L("Median energy swing ΔE", "kJ", 1e-3),
    "cs_median": _L("Median Cs"),
    "date": _L("Date"),
    "shift": _L("Shift"),
    "flags": _L("Control-chart signals"),
    # fleet (torqlog.fleet.compare.FLEET_COLUMNS)
    "rank": _L("Rank", digits=9),
    "machine": _L("Machine"),
    "logs": _L("Logs", digits=9),
    "last_log": _L("Last log"),
    "cs_p90": _L("Cs, worst tenth of cycles (p90)"),
    "cs_p90_over_target": _L("Cs p90 / target"),
    "status": _L("Status"),
    "motor_rms_load": _L("Motor RMS load, share of rated", "%", 100.0),
    "anomaly_rate": _L("Abnormal cycle shapes", "%", 100.0),
    "flagged_share": _L("Flagged cycles", "%", 100.0),
    "drift": _L("Drift"),
    # log facts
    "name": _L("Column"),
    "role": _L("Role"),
    "unit": _L("Unit"),
    "unit_source": _L("Unit from"),
    "si_factor": _L("SI factor", digits=6),
    "rows": _L("Rows", digits=12),
    "sample_rate_hz": _L("Sample rate", "Hz"),
})

# unit suffix of a key -> (unit shown, scale from the key's unit); longest first
_SUFFIX_UNITS: tuple[tuple[str, str, float], ...] = (
    ("_kWh_per_year", "kWh/a", 1.0), ("_Nm_per_rad", "N·m/rad", 1.0),
    ("_Nms_per_rad", "N·m·s/rad", 1.0), ("_kgm2", "kg·m²", 1.0), ("_m_s", "m/s", 1.0),
    ("_MPa", "MPa", 1.0), ("_rpm", "rpm", 1.0), ("_Nm", "N·m", 1.0), ("_kJ", "kJ", 1.0),
    ("_kW", "kW", 1.0), ("_Hz", "Hz", 1.0), ("_hz", "Hz", 1.0), ("_mm", "mm", 1.0),
    ("_kg", "kg", 1.0), ("_N", "N", 1.0), ("_J", "J", 1.0), ("_W", "W", 1.0),
    ("_s", "s", 1.0),
    ("_m", "m", 1.0), ("_rel", "%", 100.0), ("_share", "%", 100.0),
)


def label_of(key: str, system: str = "si") -> Label:
    """The :class:`Label` of a JSON key (its last dotted part); derived when not listed.

    Parameters
    ----------
    key : str
        A JSON key or dotted path. An SI key (``inertia_kgm2``) takes an SI value; a US
        customary key (``inertia_lbft2``, as ``--units us`` writes) takes a US value.
    system : str
        ``"si"`` or ``"us"``: the units people read. With ``"us"`` an SI key's label
        converts its SI value to US customary units (lbf·ft, ft·lbf, lb·ft², in, ksi, lb,
        hp; rpm, Hz, s and % stay) by the factors of :mod:`torqlog.io.units` -- the one
        conversion layer, so a US label shows what the US JSON holds.

    Examples
    --------
    >>> label_of("added_inertia_at_flywheel_kgm2").full
    'Added inertia at the flywheel shaft, kg·m²'
    >>> label_of("drive.existing.motor_speed_min_rpm").full
    'Motor speed min, rpm'
    >>> label_of("added_inertia_at_flywheel_kgm2", "us").full
    'Added inertia at the flywheel shaft, lb·ft²'
    >>> show("energy_swing_J", 8130.0, system="us")
    '6,000 ft·lbf'
    """
    from torqlog.io.units import UNIT_SYSTEMS, key_unit, si_key, us_key

    if system not in UNIT_SYSTEMS:
        from torqlog.errors import UsageError

        raise UsageError(f"unknown unit system {system!r}; valid: {', '.join(UNIT_SYSTEMS)}")
    leaf = str(key).rsplit(".", 1)[-1]
    si_leaf, back = si_key(leaf)
    if back != 1.0:  # a US key: its value is already US customary
        lab = _si_label(si_leaf)
        return Label(lab.text, key_unit(leaf, "us"), 1.0, lab.digits)
    lab = _si_label(leaf)
    if system == "us":
        us_leaf, factor = us_key(leaf)
        if factor != 1.0:
            return Label(lab.text, key_unit(us_leaf, "us"), factor, lab.digits)
    return lab


def _si_label(leaf: str) -> Label:
    """The SI label of a key's last part (listed, or derived from its unit suffix)."""
    if leaf in LABELS:
        return LABELS[leaf]
    for suffix, unit, scale in _SUFFIX_UNITS:
        if leaf.endswith(suffix) and len(leaf) > len(suffix):
            words = leaf[: -len(suffix)].replace("_", " ")
            return Label(words[:1].upper() + words[1:], unit, scale)
    words = leaf.replace("_", " ")
    return Label(words[:1].upper() + words[1:])


def label(key: str, system: str = "si") -> str:
    """``"Label, unit"`` of a JSON key in a unit system (see :func:`label_of`)."""
    return label_of(key, system).full


def sig(value: Any, digits: int = 3, scale: float = 1.0) -> str:
    """A number to ``digits`` significant figures, without float noise.

    Thousands are grouped with a thin comma (``12,300``); magnitudes beyond 1e9 or below
    1e-4 use an exponent; None, NaN and infinities become "–"; booleans "yes"/"no"; text
    passes through.

    Parameters
    ----------
    value : number, str, bool or None
    digits : int
        Significant figures (at least 1).
    scale : float
        Multiplies the value first (unit change).

    Returns
    -------
    str

    Examples
    --------
    >>> sig(26.5812345)
    '26.6'
    >>> sig(0.0378846)
    '0.0379'
    >>> sig(123456.0)
    '123,000'
    >>> sig(739.09, scale=1e-3)
    '0.739'
    """
    if value is None:
        return "–"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, str):
        return value
    if isinstance(value, int) and scale == 1.0 and abs(value) < 10 ** max(digits, 1):
        return f"{value:,d}"
    v = float(value) * scale
    if not math.isfinite(v):
        return "–"
    if v == 0.0:
        return "0"
    digits = max(int(digits), 1)
    mag = math.floor(math.log10(abs(v)))
    if mag >= 9 or mag < -4:
        return f"{v:.{digits - 1}e}"
    rounded = round(v, digits - 1 - mag)
    if rounded != 0 and math.floor(math.log10(abs(rounded))) > mag:  # 9.996 -> 10.0
        mag += 1
    decimals = max(digits - 1 - mag, 0)
    return f"{rounded:,.{decimals}f}"


def show(key: str, value: Any, unit: bool = True, system: str = "si") -> str:
    """A value of a JSON key as people read it: scaled, rounded and (optionally) with unit,
    in the unit system ``system`` (see :func:`label_of`).

    Examples
    --------
    >>> show("outer_diameter_m", 0.7512)
    '751 mm'
    >>> show("outer_diameter_m", 0.7512, system="us")
    '29.6 in'
    >>> show("cs", 0.0378846)
    '0.0379'
    """
    lab = label_of(key, system)
    if isinstance(value, list | tuple):
        text = ", ".join(sig(v, lab.digits, lab.scale) for v in value)
    else:
        text = sig(value, lab.digits, lab.scale)
    if unit and lab.unit and value is not None and text != "–":
        return f"{text} {lab.unit}" if lab.unit != "%" else f"{text} %"
    return text


def relabel_table(table: Any, system: str = "si") -> Any:
    """A copy of a pandas table for people: labelled columns, numbers as :func:`show`
    text without unit (the unit is in the column label). Columns named by US keys
    (``--units us``) are read as US values."""
    out = table.copy()
    for col in table.columns:
        lab = label_of(col, system)
        if out[col].dtype.kind in "fiu" and out[col].dtype.kind != "b":
            out[col] = [sig(v, lab.digits, lab.scale) for v in out[col].tolist()]
    out.columns = [label(c, system) for c in table.columns]
    return out


__all__ = ["LABELS", "Label", "label", "label_of", "relabel_table", "show", "sig"]
