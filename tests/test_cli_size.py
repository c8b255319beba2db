"""`torqlog size` end to end on a sample log, and its bad-input messages."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from torqlog.cli import cli

ROOT = Path(__file__).resolve().parents[1]
PRESS = str(ROOT / "sample_data" / "press_comma.csv")
PROFILE = str(ROOT / "sample_data" / "press.toml")


def run(*args):
    return CliRunner().invoke(cli, [str(a) for a in args])


def test_size_json_contract_and_formula():
    res = run("size", PRESS, "--profile", PROFILE, "--format", "json")
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    for key in ("method", "target_cs", "speed_mean_rpm", "design_energy_swing_J", "quantile",
                "required_inertia_kgm2", "ci95_kgm2", "existing_inertia_kgm2",
                "added_inertia_kgm2", "identified", "drive", "cautions"):
        assert key in d
    # the bound is I = ΔE / (Cs·ω̄²) exactly (Shigley's Mechanical Engineering Design,
    # 10th ed., eq. 16-62)
    w = d["speed_mean_rpm"] * 2 * 3.141592653589793 / 60
    assert d["bound_constant_drive_required_inertia_kgm2"] == \
        d["design_energy_swing_J"] / (d["target_cs"] * w * w)
    # the headline comes from the calibrated model, which the demo press log validates
    assert d["model"] == "calibrated drive"
    assert abs(d["cs_model_error_rel"]) <= 0.10
    assert d["required_inertia_kgm2"] < d["bound_constant_drive_required_inertia_kgm2"]
    assert d["added_inertia_kgm2"] == pytest.approx(
        d["required_inertia_kgm2"] - d["existing_inertia_kgm2"], rel=1e-9)
    lo, hi = d["ci95_kgm2"]
    assert lo <= d["required_inertia_kgm2"] <= hi
    assert d["method"] == "torque" and d["target_cs"] == 0.1
    assert any("licensed engineer" in c for c in d["cautions"])


@pytest.mark.parametrize(("args", "code", "message"), [
    (("--target-cs", "0"), 2, "Error: target Cs must be between 0 and 1 (exclusive), got 0\n"),
    (("--target-cs", "1.5"), 2,
     "Error: target Cs must be between 0 and 1 (exclusive), got 1.5\n"),
    (("--target-cs", "0.05", "--quantile", "1.5"), 2,
     "Error: quantile must be in (0, 1] or 'max', got 1.5\n"),
    (("--target-cs", "0.05", "--quantile", "often"), 2,
     "Error: --quantile: 'often' is not a number in (0, 1] or 'max'\n"),
])
def test_bad_options(args, code, message):
    res = run("size", PRESS, *args)
    assert res.stderr == message
    assert res.exit_code == code


def test_unknown_machine_class_lists_the_valid_ones():
    res = run("size", PRESS, "--machine-class", "lathe")
    assert res.exit_code == 2
    assert res.stderr.startswith("Error: unknown machine class 'lathe'")
    assert "crushing" in res.stderr


def test_no_target(tmp_path):
    res = run("size", PRESS)
    assert res.exit_code == 2
    assert res.stderr == ("Error: give --target-cs X, --machine-class NAME or [machine] "
                          "target_cs in the profile\n")


def test_profile_key_that_does_not_exist(tmp_path):
    p = tmp_path / "p.toml"
    p.write_text("[machine]\nspeed_rmp = 45.0\n", encoding="utf-8")
    res = run("size", PRESS, "--profile", p, "--target-cs", "0.05")
    assert res.exit_code == 1
    assert res.stderr == (f"Error: {p}: unknown key 'speed_rmp' in [machine]; did you mean "
                          "'speed_rpm'? valid keys: "
                          "name, revs_per_cycle, speed_rpm, inertia_kgm2, target_cs, "
                          "flywheel_speed_ratio, torque_role\n")
    p.write_text("[machine]\ntaget_cs = 0.05\n", encoding="utf-8")
    res = run("size", PRESS, "--profile", p)
    assert res.exit_code == 1
    assert f"Error: {p}: unknown key 'taget_cs' in [machine]; did you mean 'target_cs'? " \
        "valid keys: name," in res.stderr
    p.write_text("[machin]\ntarget_cs = 0.05\n", encoding="utf-8")
    res = run("size", PRESS, "--profile", p)
    assert f"Error: {p}: unknown section [machin]; did you mean 'machine'? valid " in res.stderr
