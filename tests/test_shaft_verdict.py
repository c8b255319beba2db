"""The shaft's overall verdict is its worst check (fail > marginal > pass), in the JSON,
the CLI text, --strict and the report's page one.

A check is marginal when its safety factor is at least 1 but below the required one
(1.5 by default, common practice); the fatigue safety factor is DE-Goodman (Shigley 10th
ed. eq. 7-8).
"""

import json

import numpy as np
import pytest
from click.testing import CliRunner

from torqlog.cli import cli

_PROFILE = '''[machine]
name = "Test rig, Brindlemoor Works"
speed_rpm = 600.0
[shaft]
material = "steel"
ultimate_strength_MPa = 630.0
yield_strength_MPa = 530.0
bearings_m = [0.0, 0.8]
segments = [ { length_m = 0.8, diameter_m = 0.04 } ]
masses = [ { name = "flywheel", mass_kg = 50.0, at_m = 0.4 } ]
'''


def _files(tmp_path, torque_mean=1700.0):
    prof = tmp_path / "rig.toml"
    prof.write_text(_PROFILE, encoding="utf-8")
    rate, rpm = 3600.0, 600.0
    t = np.arange(int(rate * 2.0)) / rate
    theta = 2 * np.pi * rpm / 60 * t
    torque = torque_mean * (1 + 0.3 * np.cos(theta))
    log = tmp_path / "log.csv"
    np.savetxt(log, np.column_stack([t, torque, np.full_like(t, rpm)]), delimiter=",",
               header="time_s,torque_Nm,speed_rpm", comments="", fmt="%.6f")
    return str(prof), str(log)


def _run(*args):
    return CliRunner().invoke(cli, ["shaft", *map(str, args)])


def test_marginal_fatigue_makes_the_shaft_verdict_marginal(tmp_path):
    prof, log = _files(tmp_path)
    res = _run("--profile", prof, "--log", log, "--format", "json")
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    n = d["fatigue_safety_factor"]
    assert 1.0 <= n < 1.5  # between 1 and the required factor
    assert d["lateral"]["verdict"] == "pass"
    assert d["strength"]["verdict"] == "marginal"
    assert (d["verdict"], d["failed"], d["marginal"]) == ("marginal", [], ["strength"])
    assert d["governing_check"] == d["strength"]["governing_check"] == \
        "fatigue at plain, largest moment at 0.400 m"
    text = _run("--profile", prof, "--log", log)
    assert text.exit_code == 0, text.output
    assert ("\nVerdict (current): marginal (marginal: strength)\nGoverning check: fatigue at "
            "plain, largest moment at 0.400 m\n") in text.stdout
    # the strength line names the mid-range torque, not a "mean" (Shigley eq. 6-36)
    assert "shaft torque mid-range (max+min)/2 1700, alternating 510, peak 2210 N·m" \
        in text.stdout
    strict = _run("--profile", prof, "--log", log, "--strict")
    assert strict.exit_code == 3
    assert strict.stderr == (f"Error: shaft check marginal (strength): fatigue safety factor "
                             f"{n:.2f} at plain, largest moment at 0.400 m (required 1.5): "
                             "marginal\n")


def test_a_passing_shaft_passes_strict(tmp_path):
    prof, log = _files(tmp_path, torque_mean=300.0)
    res = _run("--profile", prof, "--log", log, "--strict", "--format", "json")
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert (d["verdict"], d["marginal"]) == ("pass", [])
    assert d["strength"]["torque"]["torque_midrange_Nm"] == pytest.approx(300.0, rel=1e-3)
