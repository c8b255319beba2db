"""`torqlog shaft` command: contract, options and exact error messages.

Frequencies checked here come from published formulas: the two-inertia torsional
frequency f = (1/2 pi) sqrt(k (J1 + J2) / (J1 J2)) (Den Hartog, Mechanical Vibrations, from
memory) and the simply supported beam with a central mass, k = 48 E I / L^3 (Roark's
Formulas for Stress and Strain, Table 8.1).
"""

import json
import math
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from torqlog.cli import cli

DATA = Path(__file__).parent / "data"
PROFILE = DATA / "shaft_profile.toml"


def _two_disc_rig(name, speed_rpm, diameter, part, stiffness):
    """Profile of a 1 m steel shaft on two end bearings with a 50 kg part at mid-span,
    and a two-disc torsional chain (motor and part, 2 kg*m^2 each)."""
    return f"""\
[machine]
name = "{name}"
speed_rpm = {speed_rpm!r}

[shaft]
bearings_m = [0.0, 1.0]
segments = [ {{ length_m = 1.0, diameter_m = {diameter!r} }} ]
masses = [ {{ name = "{part}", mass_kg = 50.0, at_m = 0.5 }} ]

[torsional]
names = ["motor", "{part}"]
inertias_kgm2 = [2.0, 2.0]
stiffness_Nm_per_rad = [{stiffness!r}]
"""


SIMPLE = _two_disc_rig("Test rig 2, Brindlemoor Works", 300.0, 0.05, "disc", 1.0e5)


def _run(*args):
    return CliRunner().invoke(cli, ["shaft", *map(str, args)])


def _write(tmp_path, text, name="p.toml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_json_contract_and_values(tmp_path):
    res = _run("--profile", PROFILE, "--add-mass", 600, "--add-inertia", 150,
               "--format", "json")
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert set(d) == {"before", "after", "lateral", "torsional", "verdict", "failed",
                      "cautions", "options", "forced_response", "strength",
                      "fatigue_safety_factor", "governing_section",
                      "governing_check", "marginal"}
    assert d["options"]["speed_rpm"] == pytest.approx(45.0)
    assert d["options"]["add_mass_at_m"] == 1.40
    assert d["after"]["lateral"]["fe_hz"][0] < d["before"]["lateral"]["fe_hz"][0]
    assert d["torsional"]["rigid_body"] == [True, False, False]
    assert d["lateral"]["verdict"] == "pass"


def test_simple_rig_against_formulas(tmp_path):
    p = _write(tmp_path, SIMPLE)
    res = _run("--profile", p, "--format", "json")
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    # torsional: Den Hartog two-disc formula
    f_t = math.sqrt(1e5 * 4.0 / 4.0) / (2 * math.pi)
    assert d["torsional"]["modes_hz"][1] == pytest.approx(f_t, rel=1e-3)
    # lateral: massless-shaft estimates equal sqrt(k/m), k = 48 E I / L^3 (Roark)
    from torqlog.rotor.materials import get_material

    e, i = get_material("steel").modulus, math.pi * 0.05**4 / 64
    f_l = math.sqrt(48 * e * i / 50.0) / (2 * math.pi)
    assert d["lateral"]["rayleigh_hz"] == pytest.approx(f_l, rel=1e-3)
    assert d["lateral"]["dunkerley_hz"] == pytest.approx(f_l, rel=1e-3)
    # 300 rpm = 5 Hz: lateral forcing 1x and 2x the shaft speed, not the torque orders
    assert d["lateral"]["forcing_hz"] == pytest.approx(5.0)
    assert d["lateral"]["forcing_2x_hz"] == pytest.approx(10.0)


def test_speed_option_overrides_profile_and_flags_order(tmp_path):
    p = _write(tmp_path, SIMPLE)
    f_t = math.sqrt(1e5) / (2 * math.pi)  # 50.33 Hz, Den Hartog
    # order 5 at 600 rpm = 50 Hz, within 10 % of the mode
    res = _run("--profile", p, "--speed-rpm", "600 rpm", "--format", "json")
    assert res.exit_code == 0, res.output
    tor = json.loads(res.stdout)["torsional"]
    assert tor["verdict"] == "fail"
    hit = [h for h in tor["near_orders"] if h["order"] == 5.0][0]
    assert hit["detune"] == pytest.approx(f_t / 50.0 - 1, rel=1e-3)
    assert hit["share"] is None


def test_table_text_and_csv(tmp_path):
    res = _run("--profile", PROFILE)
    assert res.exit_code == 0, res.output
    assert res.stdout.startswith("Shaft check: Press 7, Brindlemoor Works, line C  (running "
                                 "speed 45.0 rpm = 0.750 Hz;")
    assert "qualified, licensed engineer" in res.stdout
    assert "torsional: modes 0 (rigid body), " in res.stdout
    res = _run("--profile", PROFILE, "--format", "csv")
    lines = res.stdout.splitlines()
    assert lines[0] == "state,check,estimate,frequency_Hz"
    assert len(lines) == 1 + 8  # Rayleigh, Dunkerley, 3 FE, 3 torsional


def test_from_flywheel_and_plot(tmp_path):
    fw = tmp_path / "fw.json"
    fw.write_text(json.dumps({"mass_kg": 600.0, "inertia_kgm2": 150.0}), encoding="utf-8")
    png = tmp_path / "shaft.png"
    res = _run("--profile", PROFILE, "--from-flywheel", fw, "--plot", png, "--format", "json")
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert d["options"]["add_mass_kg"] == 600.0
    assert d["options"]["add_inertia_kgm2"] == 150.0
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    res = _run("--profile", PROFILE, "--from-flywheel", fw, "--add-mass", 10)
    assert res.exit_code == 2
    assert res.stderr == ("Error: give either --from-flywheel or --add-mass/--add-inertia, "
                          "not both\n")
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps({"mass_kg": 600.0}), encoding="utf-8")
    res = _run("--profile", PROFILE, "--from-flywheel", bad)
    assert res.exit_code == 1
    assert res.stderr == (f"Error: {bad}: needs positive numbers mass_kg and inertia_kgm2 "
                          f"(the JSON of 'torqlog flywheel --format json')\n")


def test_no_shaft_section(tmp_path):
    p = _write(tmp_path, '[machine]\nspeed_rpm = 45.0\n')
    res = _run("--profile", p)
    assert res.exit_code == 1
    assert res.stderr == (f"Error: {p}: no [shaft] section; add one with bearings_m, "
                          f"segments and masses to check the shaft\n")


def test_mass_outside_shaft_in_profile(tmp_path):
    p = _write(tmp_path, SIMPLE.replace("at_m = 0.5", "at_m = 1.8"))
    res = _run("--profile", p)
    assert res.exit_code == 1
    assert res.stderr == (f"Error: {p}: [shaft] mass 'disc' at 1.8 m is outside the shaft "
                          f"(0 to 1 m); at_m must lie within the segments\n")


def test_added_mass_outside_shaft(tmp_path):
    res = _run("--profile", PROFILE, "--add-mass", 100, "--at", "2000 mm")
    assert res.exit_code == 2
    assert res.stderr == ("Error: added mass at 2 m is outside the shaft (0 to 1.5 m); "
                          "give --at within the shaft\n")


def test_bearing_not_on_shaft(tmp_path):
    p = _write(tmp_path, SIMPLE.replace("bearings_m = [0.0, 1.0]", "bearings_m = [0.0, 1.3]"))
    res = _run("--profile", p)
    assert res.exit_code == 1
    assert res.stderr == (f"Error: {p}: [shaft] bearing at 1.3 m is not on the shaft "
                          f"(0 to 1 m); bearings_m must lie within the segments\n")


def test_unknown_key_reported_by_profile_loader(tmp_path):
    p = _write(tmp_path, SIMPLE.replace("diameter_m = 0.05", "diameter = 0.05"))
    res = _run("--profile", p)
    assert res.exit_code == 1
    assert res.stderr == (f"Error: {p}: unknown key 'diameter' in [shaft] segments[0]; "
                          f"did you mean 'diameter_m'? "
                          f"valid keys: bore_m, diameter_m, fillet_m, length_m, material\n")


def test_no_speed(tmp_path):
    p = _write(tmp_path, SIMPLE.replace("speed_rpm = 300.0\n", ""))
    res = _run("--profile", p)
    assert res.exit_code == 2
    assert res.stderr == ("Error: no running speed: give --speed-rpm or set speed_rpm in "
                          "the profile's [machine] section\n")


def test_unknown_inertia_element():
    res = _run("--profile", PROFILE, "--add-inertia", 10, "--add-inertia-at", "rim")
    assert res.exit_code == 2
    assert res.stderr == ("Error: no element 'rim' in the torsional chain; valid: motor, "
                          "flywheel, crank\n")


# ----------------------------------------------------------------- --log
def _rig(stiffness):
    return _two_disc_rig("Compressor 3, Brindlemoor Works", 450.0, 0.1, "flywheel",
                         float(stiffness))


def _write_log(path, rpm=600.0, rate=3600.0, seconds=2.0, torque=True):
    """A constant-speed log whose torque holds orders 1 and 3 strongly and 7 weakly."""
    t = np.arange(int(rate * seconds)) / rate
    theta = 2 * np.pi * rpm / 60 * t
    cols = {"time_s": t}
    if torque:
        cols["torque_Nm"] = (1000 + 300 * np.cos(theta) + 200 * np.cos(3 * theta + 0.4)
                             + 10 * np.cos(7 * theta))
    cols["speed_rpm"] = np.full_like(t, rpm)
    np.savetxt(path, np.column_stack(list(cols.values())), delimiter=",",
               header=",".join(cols), comments="", fmt="%.6f")
    return path


def test_log_orders_flag_the_torsional_mode_on_order_3(tmp_path):
    # Two equal discs: f = (1/2 pi) sqrt(k (J1 + J2) / (J1 J2)) (Den Hartog, Mechanical
    # Vibrations, from memory); k is chosen to put the mode 3 % above order 3 of 600 rpm
    # (30 Hz). The order shares are the written amplitudes over their root-sum-square
    # (single-sided DFT amplitudes, Brigham 1988): order 7 (share 0.028) is below 0.05.
    f_mode = 1.03 * 30.0
    k = (2 * math.pi * f_mode) ** 2 * (2.0 * 2.0) / (2.0 + 2.0)
    prof = _write(tmp_path, _rig(k))
    log = _write_log(tmp_path / "log.csv")
    png = tmp_path / "shaft.png"
    res = _run("--profile", prof, "--log", log, "--plot", png, "--format", "json")
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    rss = math.sqrt(300**2 + 200**2 + 10**2)
    assert d["options"]["speed_rpm"] == pytest.approx(600.0, rel=1e-6)  # the log's, not 450
    assert d["options"]["orders_source"] == "spectrum"
    assert d["torsional"]["orders_checked"] == [1.0, 3.0]
    near = d["torsional"]["near_orders"]
    assert len(near) == 1
    assert near[0] == {"mode_hz": pytest.approx(f_mode, rel=1e-9), "order": 3.0,
                       "order_hz": pytest.approx(30.0, rel=1e-6),
                       "share": pytest.approx(200 / rss, rel=1e-3),
                       "detune": pytest.approx(0.03, abs=1e-6)}
    assert (d["verdict"], d["failed"]) == ("fail", ["torsional"])
    # lateral forcing: 1x the shaft speed (10 Hz); order 3 stays torsional
    assert d["lateral"]["forcing_hz"] == pytest.approx(10.0, rel=1e-6)
    assert d["log"]["running_speed_from"] == "log mean"
    assert d["log"]["orders"]["order"] == [1.0, 3.0]
    np.testing.assert_allclose(d["log"]["orders"]["amplitude_Nm"], [300.0, 200.0], rtol=1e-3)
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    # --speed-rpm overrides the log's mean speed: at 450 rpm order 3 is 22.5 Hz, and order
    # 3 no longer lies within 10 % of the mode
    res = _run("--profile", prof, "--log", log, "--speed-rpm", 450, "--format", "json")
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert d["options"]["speed_rpm"] == pytest.approx(450.0, rel=1e-12)
    assert d["log"]["running_speed_from"] == "--speed-rpm"
    assert d["torsional"]["near_orders"] == []


def test_log_table_text(tmp_path):
    prof = _write(tmp_path, _rig(1.0e5))
    log = _write_log(tmp_path / "log.csv")
    res = _run("--profile", prof, "--log", log)
    assert res.exit_code == 0, res.output
    assert (f"Orders from {log}: mean of 19 clean cycles (cycle source speed, 1 rev/cycle); "
            f"running speed from log mean; significant orders (share ≥ 0.05): 1 (0.83), "
            f"3 (0.55)\n") in res.stdout


def test_log_without_torque(tmp_path):
    prof = _write(tmp_path, _rig(1.0e5))
    log = _write_log(tmp_path / "speed_only.csv", torque=False)
    res = _run("--profile", prof, "--log", log)
    assert res.exit_code == 1
    assert res.stderr == (f"Error: {log}: no torque channel, so no order spectrum of the "
                          f"torque; name the torque column with --torque COL, or leave out "
                          f"--log to assume every order significant\n")


def test_log_options_need_a_log():
    res = _run("--profile", PROFILE, "--cycle-source", "speed")
    assert res.exit_code == 2
    assert res.stderr == ("Error: --cycle-source only applies with --log: it says how to "
                          "read a log and find its cycles\n")
    res = _run("--profile", PROFILE, "--torque", "T", "--no-despike")
    assert res.exit_code == 2
    assert res.stderr == ("Error: --torque, --no-despike only apply with --log: they say how "
                          "to read a log and find its cycles\n")


# ----------------------------------------------------------------- --strict
def test_strict_passes_with_exit_0():
    res = _run("--profile", PROFILE, "--strict")
    assert res.exit_code == 0, res.output
    assert "\nVerdict (current): pass\n" in res.stdout


def test_strict_fails_with_exit_3_naming_the_check(tmp_path):
    # A stiff shaft (d = 0.2 m) keeps the lateral check clear; the two-disc torsional mode
    # sqrt(1e5) / (2 pi) = 50.33 Hz (Den Hartog, from memory) lies 0.7 % above order 10 of
    # 300 rpm (50 Hz), within the +-10 % band (common practice).
    p = _write(tmp_path, SIMPLE.replace("diameter_m = 0.05", "diameter_m = 0.2"))
    res = _run("--profile", p)
    assert res.exit_code == 0, res.output
    assert "\nVerdict (current): fail (failed: torsional)\n" in res.stdout
    res = _run("--profile", p, "--strict")
    assert res.exit_code == 3
    assert res.stdout.startswith("Shaft check: Test rig 2, Brindlemoor Works")
    assert res.stderr == ("Error: shaft check failed (torsional): torsional mode 50.3 Hz lies "
                          "within 0.7 % of order 10 (50.00 Hz); band ±10 %\n")


def test_strict_names_both_failed_checks(tmp_path):
    # at 1000 rpm (16.7 Hz) the thin SIMPLE shaft fails both: first lateral mode near
    # 40 Hz is under 3x the shaft speed, the torsional mode (50.3 Hz) is 1 % off order 3
    p = _write(tmp_path, SIMPLE)
    d = json.loads(_run("--profile", p, "--speed-rpm", 1000, "--format", "json").stdout)
    assert d["failed"] == ["lateral", "torsional"]
    res = _run("--profile", p, "--speed-rpm", 1000, "--strict", "--format", "json")
    assert res.exit_code == 3
    lat = d["lateral"]["margin_text"].removesuffix(": fail")
    tor = d["torsional"]["margin_text"].removesuffix(": fail")
    assert res.stderr == f"Error: shaft check failed (lateral, torsional): {lat}; {tor}\n"


def test_shaft_figure_torque_order_legend_sits_below_its_axis(monkeypatch, tmp_path):
    # the legend of the torque-order panel stays clear of the plot, its y label and top tick:
    # below the axis (and its x label), inside the figure
    from torqlog.present import plots

    seen = []
    monkeypatch.setattr(plots, "save", lambda fig, path: seen.append(fig) or Path(path))
    root = Path(__file__).resolve().parents[1] / "sample_data"
    res = CliRunner().invoke(cli, ["shaft", "--profile", str(root / "engine.toml"), "--log",
                                   str(root / "engine_preamble.txt"), "--plot",
                                   str(tmp_path / "s.png")])
    assert res.exit_code in (0, 3), res.output
    fig = seen[0]
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    ax = fig.axes[2]
    leg = ax.get_legend().get_window_extent(r)
    assert ax.get_ylabel().startswith("torque amplitude [")
    assert leg.y1 <= ax.xaxis.label.get_window_extent(r).y0 + 1.0  # under the x label
    assert leg.y1 < ax.bbox.y0  # not over the plot
    box = fig.bbox
    assert leg.x0 >= box.x0 - 1.0 and leg.x1 <= box.x1 + 1.0 and leg.y0 >= box.y0 - 1.0
