"""Unit conversion at the edges, against published conversion factors.

[NIST] A. Thompson and B. N. Taylor, *Guide for the Use of the International System of
Units (SI)*, NIST Special Publication 811 (2008), Appendix B.8/B.9, factors given to
seven significant digits:
    pound-force foot (lbf·ft)       -> N·m    1.355818 E+00
    pound-force inch (lbf·in)       -> N·m    1.129848 E-01
    kilogram-force meter (kgf·m)    -> N·m    9.80665  E+00  (exact)
    revolution per minute (rpm)     -> rad/s  1.047198 E-01  (= 2π/60 exactly)
    degree (°)                      -> rad    1.745329 E-02  (= π/180 exactly)
SI prefixes (k = 1e3, m = 1e-3) are exact by definition (NIST SP 811 sec. 4.3).
"""

import json
import math

import pytest

from torqlog.errors import UsageError
from torqlog.io.units import parse_quantity, si_factor

# Seven significant digits in [NIST]: a relative tolerance of 5e-7 covers the rounding.
NIST_REL = 5e-7

LBF_FT = 1.355818  # [NIST] App. B
LBF_IN = 0.1129848  # [NIST] App. B
KGF_M = 9.80665  # [NIST] App. B (exact)
RPM = 0.1047198  # [NIST] App. B; 2π/60
DEG = 0.01745329  # [NIST] App. B; π/180


@pytest.mark.parametrize("text", ["lbf*ft", "lbf·ft", "lbf ft", "ft*lbf", "lbfft", "lbft",
                                  "ftlb"])
def test_pound_force_foot(text):
    assert si_factor(text, "torque") == pytest.approx(LBF_FT, rel=NIST_REL)


@pytest.mark.parametrize("text", ["lbf*in", "lbf·in", "in*lbf", "lbfin", "inlb"])
def test_pound_force_inch(text):
    assert si_factor(text, "torque") == pytest.approx(LBF_IN, rel=NIST_REL)


@pytest.mark.parametrize("text", ["kgf*m", "kgf·m", "kgfm"])
def test_kilogram_force_metre(text):
    # [NIST] App. B: 1 kgf·m = 9.806650 N·m, exact (standard gravity 9.80665 m/s²)
    assert si_factor(text, "torque") == pytest.approx(KGF_M, rel=1e-12)


@pytest.mark.parametrize("text", ["rpm", "RPM", "1/min", "r/min", "U/min", "min^-1", "min-1"])
def test_revolution_per_minute(text):
    assert si_factor(text, "speed") == pytest.approx(RPM, rel=NIST_REL)
    # the exact value behind the tabulated one: 2π rad per revolution / 60 s per minute
    assert si_factor(text, "speed") == pytest.approx(2 * math.pi / 60, rel=1e-12)


@pytest.mark.parametrize("text", ["deg", "degree", "°", "DEG"])
def test_degree(text):
    assert si_factor(text, "angle") == pytest.approx(DEG, rel=NIST_REL)
    assert si_factor(text, "angle") == pytest.approx(math.pi / 180, rel=1e-12)


@pytest.mark.parametrize(("text", "kind", "factor"), [
    ("kN·m", "torque", 1e3),      # SI prefix kilo [NIST] sec. 4.3
    ("kN*m", "torque", 1e3),
    ("kNm", "torque", 1e3),
    ("Nm", "torque", 1.0),        # newton metre, not nanometre
    ("N·m", "torque", 1.0),
    ("N.m", "torque", 1.0),
    ("mN*m", "torque", 1e-3),
    ("ms", "time", 1e-3),         # SI prefix milli
    ("s", "time", 1.0),
    ("min", "time", 60.0),        # [NIST] App. B: 1 min = 60 s
    ("rad/s", "speed", 1.0),
    ("rad", "angle", 1.0),
    ("", "torque", 1.0),          # no unit: the SI unit itself
    ("kHz", "frequency", 1e3),
])
def test_si_and_prefixed_units(text, kind, factor):
    assert si_factor(text, kind) == pytest.approx(factor, rel=1e-12)


def test_unknown_unit_is_named():
    with pytest.raises(UsageError) as err:
        si_factor("blorp", "torque")
    assert str(err.value) == "unknown unit 'blorp' for torque; write it as e.g. 'kN*m'"


def test_unit_of_the_wrong_kind_is_named():
    with pytest.raises(UsageError) as err:
        si_factor("rpm", "torque")
    assert str(err.value) == ("unit 'rpm' is not a torque unit (expected something "
                              "convertible to N*m)")
    with pytest.raises(UsageError) as err:
        si_factor("furlong", "speed")
    assert str(err.value) == ("unit 'furlong' is not a speed unit (expected something "
                              "convertible to rad/s)")


def test_unknown_kind_lists_the_valid_ones():
    with pytest.raises(UsageError) as err:
        si_factor("m", "volume")
    assert str(err.value).startswith("unknown quantity kind 'volume'; valid: time, torque, "
                                     "speed, angle, inertia, length,")


@pytest.mark.parametrize(("value", "default", "kind", "expected"), [
    ("900 mm", "m", "length", 0.9),                    # SI prefix milli
    (1.2, "m", "length", 1.2),                         # bare number: default unit
    ("600", "rpm", "speed", 600 * RPM),                # [NIST] App. B
    ("600 rpm", "rad/s", "speed", 600 * RPM),
    ("250 lbf*ft", "N*m", "torque", 250 * LBF_FT),     # [NIST] App. B
    ("3 kgf·m", "N*m", "torque", 3 * KGF_M),           # [NIST] App. B
    ("90 deg", "rad", "angle", 90 * DEG),              # [NIST] App. B
    ("-1.5e3 N*m", "kN*m", "torque", -1500.0),
    ("5 kHz", "Hz", "frequency", 5000.0),
])
def test_parse_quantity(value, default, kind, expected):
    assert parse_quantity(value, default, kind) == pytest.approx(expected, rel=NIST_REL)


def test_parse_quantity_errors_name_the_option():
    with pytest.raises(UsageError) as err:
        parse_quantity("fast", "rpm", "speed", name="--speed-rpm")
    assert str(err.value) == ("--speed-rpm: cannot read 'fast' as a number with an optional "
                              "unit (e.g. '1.2' or '1.2 rpm')")
    with pytest.raises(UsageError) as err:
        parse_quantity("12 blorp", "rpm", "speed", name="--speed-rpm")
    assert str(err.value) == ("--speed-rpm: unknown unit 'blorp' for speed; write it as "
                              "e.g. 'rpm'")


# A rotational speed written as a frequency. ISO 80000-3:2019 (item 3-17.2, from memory)
# gives rotational frequency n in s^-1 as revolutions per unit time, so 1 Hz = 1 r/s = 60
# r/min; pint alone counts the radian as 1 and would read 1 Hz as 1 rad/s (9.55 r/min).
@pytest.mark.parametrize(("text", "rpm"), [("0.75 Hz", 45.0), ("0.75 1/s", 45.0),
                                           ("0.05 kHz", 3000.0), ("45 rpm", 45.0),
                                           ("4.712388980384690 rad/s", 45.0),
                                           ("270 deg/s", 45.0)])
def test_rotational_speed_given_as_a_frequency_is_revolutions_per_time(text, rpm):
    assert parse_quantity(text, "rpm", "speed", "--speed-rpm") == pytest.approx(
        rpm * 2 * math.pi / 60, rel=1e-12)


def test_speed_in_rpm_read_as_a_frequency_is_revolutions_per_second():
    # the other way: 3000 r/min is 50 r/s, i.e. 50 Hz (the same rule)
    assert si_factor("rpm", "frequency") == pytest.approx(1 / 60, rel=1e-12)
    assert si_factor("rad/s", "frequency") == pytest.approx(1 / (2 * math.pi), rel=1e-12)
    assert si_factor("kHz", "frequency") == 1e3


def test_profile_speed_in_hz_and_the_speed_option_agree(tmp_path):
    from click.testing import CliRunner

    from torqlog.cli import cli
    from torqlog.io.profile import parse_profile

    prof = parse_profile({"machine": {"speed_rpm": "0.75 Hz"},
                          "motor": {"sync_rpm": "25 Hz", "rated_rpm": "1440 rpm"}})
    assert prof.machine["speed"] == pytest.approx(45 * 2 * math.pi / 60, rel=1e-12)
    assert prof.motor["sync"] == pytest.approx(1500 * 2 * math.pi / 60, rel=1e-12)
    res = CliRunner().invoke(cli, ["flywheel", "--inertia", "310", "--speed-rpm", "0.75 Hz",
                                   "--material", "ductile-iron", "--outer-diameter", "1.4",
                                   "--shape", "solid-disc", "--format", "json"])
    assert res.exit_code == 0, res.output
    assert json.loads(res.output)["speed_rpm"] == pytest.approx(45.0, rel=1e-12)
