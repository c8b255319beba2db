"""The drive model calibrated on the log, against machines simulated with a known slope.

Truth: the same machine integrated in time by scipy's ``solve_ivp`` (tests/calibsim.py),
the added inertia for a target Cs found by bisection on that true machine. Scenario and
machines are invented (Brindlemoor Works).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from calibsim import COMPRESSOR, ENGINE, PRESS, simulate_log, true_added_inertia
from click.testing import CliRunner

from torqlog.cli import cli
from torqlog.signal.cycles import analyse_cycles, options_from_profile
from torqlog.sizing.calibrate import (
    DriveModel,
    copper_loss_change,
    cycle_energy_swing,
    simulate_after,
)
from torqlog.sizing.drive import MotorModel
from torqlog.sizing.inertia import size_from_cycles

TARGETS = {COMPRESSOR.name: 0.01, PRESS.name: 0.05, ENGINE.name: 0.005}


def run(*args):
    return CliRunner().invoke(cli, [str(a) for a in args])


def size_sim(machine, path, *, motor=None, existing=None, target=None, **sim):
    simulate_log(machine, path, **sim)
    res = analyse_cycles(path, options_from_profile(None, revs_per_cycle=machine.revs,
                                                    torque_role=machine.role))
    return size_from_cycles(res.table, res.mean_cycle,
                            target_cs=target or TARGETS[machine.name],
                            revs_per_cycle=machine.revs, torque_role=machine.role,
                            motor=motor, existing_inertia=existing, n_boot=300)


@pytest.mark.parametrize("machine", [COMPRESSOR, PRESS, ENGINE], ids=lambda m: m.name[:5])
def test_calibrated_model_recovers_slope_cs_and_added_inertia(machine, tmp_path):
    res = size_sim(machine, tmp_path / "log.csv")
    d = res.to_dict()
    assert d["model"] == "calibrated drive"
    # slope within 2 % of the simulated one
    assert d["drive_slope_Nms_per_rad"] == pytest.approx(machine.slope, rel=0.02)
    # the model's Cs at the existing inertia within 3 % of the measured median Cs
    assert abs(d["cs_model_existing"] / d["cs_measured"] - 1) < 0.03
    # added inertia within 5 % of bisection on the true machine (independent solve_ivp)
    truth = true_added_inertia(machine, TARGETS[machine.name])
    assert d["added_inertia_kgm2"] == pytest.approx(truth, rel=0.05)
    lo, hi = d["ci95_kgm2"]
    assert lo <= d["required_inertia_kgm2"] <= hi
    assert set(d["ci95_parts_kgm2"]) == {"cycle_scatter_kgm2", "drive_slope_kgm2",
                                         "model_error_kgm2"}


def test_wrong_nameplate_does_not_move_the_answer(tmp_path):
    plain = size_sim(COMPRESSOR, tmp_path / "a.csv")
    # a nameplate whose slope at the shaft is 60 % steeper than the machine's (120)
    n = 2.45
    ws, wr = 1500 * math.pi / 30, 1465 * math.pi / 30
    power = 1.6 * COMPRESSOR.slope * (ws - wr) / n ** 2 * wr
    wrong = MotorModel(power=power, sync_speed=ws, rated_speed=wr, speed_ratio=n)
    assert wrong.slope == pytest.approx(1.6 * COMPRESSOR.slope)
    res = size_sim(COMPRESSOR, tmp_path / "b.csv", motor=wrong)
    assert res.model == "calibrated drive"
    assert res.added_inertia == pytest.approx(plain.added_inertia, rel=1e-9)
    note = next(m for m in res.messages if m.startswith("the nameplate motor's slope"))
    assert "disagrees with the log's 120" in note
    assert note.endswith("(+60%); the log's slope is used")


@pytest.mark.parametrize(("kw", "text"), [
    ({"speed_lowpass_hz": 5.0}, "no drive model explains the log"),
    ({"unlogged": (2.0, 800.0)}, "no drive model explains the log"),
])
def test_log_the_model_cannot_explain_is_said(kw, text, tmp_path):
    # the logger low-passes the speed (first order, 5 Hz against a 10 Hz cycle), or a
    # 2 kg m² motor sits behind a soft coupling the log does not see
    res = size_sim(COMPRESSOR, tmp_path / "n.csv", existing=4.0, **kw)
    d = res.to_dict()
    assert d["model"] == "constant drive"
    assert d["model_reason"].startswith(text)
    assert "the logger's filtering of the speed channel" in d["model_reason"]
    assert d["model_reason"].endswith("so this is an upper bound")
    assert d["required_inertia_kgm2"] == d["bound_constant_drive_required_inertia_kgm2"]
    # the identified inertia is not trusted: the given one sizes the bound
    assert d["existing_inertia_kgm2"] == 4.0


def test_validation_failure_names_the_reasons(tmp_path):
    # a nameplate far from the machine and no way to calibrate: the check fails
    table = pd.DataFrame({"cycle": range(30), "speed_mean_rpm": 600.0, "speed_min_rpm": 590.0,
                          "speed_max_rpm": 610.0, "torque_mean_Nm": 150.0,
                          "energy_swing_J": 300.0, "cs": 0.2, "flag": ""})
    angle = np.linspace(0, 2 * math.pi, 360, endpoint=False)
    mc = pd.DataFrame({"angle": angle, "torque_mean": 150 + 150 * np.sin(angle)})
    motor = MotorModel(power=11000, sync_speed=157.08, rated_speed=153.4, speed_ratio=2.45)
    res = size_from_cycles(table, mc, target_cs=0.02, motor=motor, existing_inertia=4.0,
                           n_boot=200)
    d = res.to_dict()
    assert d["model"] == "constant drive"
    assert d["cs_model_of"] == "nameplate drive"
    assert d["cs_model_error_rel"] < -0.5
    assert d["model_reason"].startswith("the drive model predicts less speed fluctuation "
                                        "than the log measures (")
    assert "belt slip" in d["model_reason"]


def test_bound_is_shigley_16_62_exactly():
    # Budynas & Nisbett, Shigley's Mechanical Engineering Design, 10th ed., eq. 16-62:
    # I = ΔE / (Cs·ω̄²) with ΔE the design swing and ω̄ the mean speed
    w = 600 * math.pi / 30
    table = pd.DataFrame({"cycle": range(25), "speed_mean_rpm": 600.0, "speed_min_rpm": 590.0,
                          "speed_max_rpm": 610.0, "torque_mean_Nm": 150.0,
                          "energy_swing_J": np.linspace(300, 400, 25), "cs": 0.033,
                          "flag": ""})
    res = size_from_cycles(table, target_cs=0.02, n_boot=100, quantile="max")
    # exact to the rounding of the rpm -> rad/s conversion
    assert res.to_dict()["bound_constant_drive_required_inertia_kgm2"] == \
        pytest.approx(400.0 / (0.02 * w * w), rel=1e-14)
    assert res.bound_required_inertia == pytest.approx(5.066059182116889, rel=1e-14)


def test_simulate_after_energy_and_copper_loss():
    # a drive model run by hand: the simulated drive work equals the load work over a
    # cycle (energy balance, Norton's equation of motion), and Cs falls with inertia
    angle = np.linspace(0, 2 * math.pi, 360, endpoint=False)
    torque = 150 + 170 * np.sin(angle) + 70 * np.sin(2 * angle + 0.7)
    model = DriveModel(name="calibrated drive", inertia=4.0, slope=120.0,
                       no_load_speed=62.83 + 150 / 120, speed_mean=62.83)
    now = simulate_after(model, 0.0, angle, torque)
    after = simulate_after(model, 4.0, angle, torque)
    assert now.motor_work == pytest.approx(now.load_work, rel=1e-6)
    assert after.cs < now.cs
    assert cycle_energy_swing(angle, torque) == pytest.approx(
        2 * 170 * 1.05, rel=0.15)  # order-of-magnitude check of ΔE for a mostly 1st harmonic
    # copper loss ∝ T² (Chapman, linear slip region): halving the RMS torque takes 75 % off
    motor = MotorModel(power=11000, sync_speed=157.08, rated_speed=153.4, speed_ratio=2.45)
    c = copper_loss_change(motor.rated_torque, 0.5 * motor.rated_torque, motor,
                           hours_per_year=1000)
    assert c["copper_loss_change_rel"] == pytest.approx(-0.75)
    slip = 1 - 153.4 / 157.08
    assert c["copper_loss_change_W"] == pytest.approx(-0.75 * 2 * slip / (1 - slip) * 11000)
    assert c["copper_loss_change_kWh_per_year"] == pytest.approx(c["copper_loss_change_W"])


# ------------------------------------------------------------------ CLI, bad input
@pytest.fixture(scope="module")
def comp_log(tmp_path_factory):
    path = tmp_path_factory.mktemp("k7") / "k7.csv"
    simulate_log(COMPRESSOR, path)
    return path


def test_cli_conflicting_inertia_says_which_is_used(comp_log):
    res = run("size", comp_log, "--target-cs", "0.01", "--inertia", "6", "--format", "json")
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert d["existing_inertia_kgm2"] == pytest.approx(4.0, rel=0.02)
    assert any(m.startswith("the given inertia 6 kg m^2 and the inertia identified on the "
                            "log 4") and m.endswith("are 33% apart: the identified value is "
                                                    "used, because the log is evidence of what "
                                                    "turns with the shaft; check what the given "
                                                    "figure includes")
               for m in d["messages"])


def test_cli_target_above_measured_cs_nothing_to_add(comp_log):
    res = run("size", comp_log, "--target-cs", "0.05")
    assert res.exit_code == 0, res.output
    assert "added inertia         0 kg·m²" in res.stdout
    assert "note: nothing to add: the machine already meets Cs ≤ 0.05 with its existing " \
           "inertia" in res.stdout
    # the required inertia is what the machine needs, below what it has
    import re
    req, have = map(float, re.search(r"\(required ([\d.]+) kg m\^2, existing ([\d.]+) kg m\^2",
                                     res.stdout).groups())
    assert req < 0.9 * have


def test_cli_torque_only_without_speed_or_inertia(comp_log, tmp_path):
    frame = pd.read_csv(comp_log)[["time_s", "torque_Nm"]]
    path = tmp_path / "torque_only.csv"
    frame.to_csv(path, index=False)
    res = run("size", path, "--target-cs", "0.01", "--format", "json")
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert d["model"] == "constant drive" and d["added_inertia_kgm2"] is None
    assert d["model_reason"].startswith(
        "the log shows no speed within the cycle (no speed or angle channel), so no drive "
        "model can be calibrated on it or checked against a measured Cs, and no nameplate "
        "motor was given; the constant-drive bound leads")
    assert ("no existing inertia given or identified: the required inertia is the total at "
            "the logged shaft, existing parts included") in d["messages"]


# ------------------------------------------------------------------ several logs, retrofit
def test_cli_size_on_worst_and_first(comp_log, tmp_path):
    import dataclasses

    heavy = dataclasses.replace(COMPRESSOR, harmonics=((1, 221.0, 0.0), (2, 91.0, 0.7)))
    path = tmp_path / "k7_heavy.csv"
    simulate_log(heavy, path, seed=4)
    res = run("size", comp_log, path, "--target-cs", "0.01", "--format", "json")
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    # the fluctuation is 1.3 × larger, so its swing and its need are 1.3 × larger
    assert d["size_on"]["sized_on"] == "k7_heavy.csv"
    assert d["size_on"]["why"].startswith("the log that needs the most inertia (design swing "
                                          "/ mean speed², 1.3")
    assert d["source"].endswith("k7_heavy.csv")
    assert [r["log"] for r in d["size_on"]["logs"]] == ["k7.csv", "k7_heavy.csv"]
    from torqlog.errors import UsageError
    from torqlog.sizing.logchoice import choose_log
    with pytest.raises(UsageError) as exc:
        choose_log([], "biggest")
    assert str(exc.value) == "unknown --size-on 'biggest'; valid choices: worst, latest, first"


def test_cli_after_log_checks_the_prediction(comp_log, tmp_path):
    import dataclasses

    # the retrofit added 4.5 kg m² on the true machine; the before-model predicts its Cs
    after = tmp_path / "k7_after.csv"
    simulate_log(dataclasses.replace(COMPRESSOR, inertia=8.5), after, seed=3)
    res = run("size", comp_log, "--target-cs", "0.01", "--after", after, "--format", "json")
    assert res.exit_code == 0, res.output
    rf = json.loads(res.stdout)["retrofit"]
    assert rf["added_identified_kgm2"] == pytest.approx(4.5, rel=0.03)
    assert abs(rf["cs_after_error_rel"]) < 0.03
    # truth: the true machine at 8.5 kg m² (bisection helper's steady-state solver)
    from calibsim import steady_cs
    assert rf["cs_after_measured"] == pytest.approx(
        steady_cs(COMPRESSOR, 8.5), rel=0.03)
    assert rf["prediction_within_tolerance"] is True
    assert any(m.endswith("the prediction held") for m in rf["messages"])
