"""`torqlog shaft` command: contract, options and exact error messages.

Frequencies checked here come from published formulas: the two-inertia torsional
frequency f = (1/2 pi) sqrt(k (J1 + J2) / (J1 J2)) (Den Hartog, Mechanical Vibrations, from
memory) and the simply supported beam with a central mass, k = 48 E I / L^3 (Roark's
Formulas for Stress and Strain, Table 8.1).
"""

import json
import math
from pathlib import Path

import pytest
from click.testing import CliRunner

from torqlog.cli import cli

DATA = Path(__file__).parent / "data"
PROFILE = DATA / "shaft_profile.toml"

SIMPLE = """\
[machine]
name = "Test rig 2, Brindlemoor Works"
speed_rpm = 300.0

[shaft]
bearings_m = [0.0, 1.0]
segments = [ { length_m = 1.0, diameter_m = 0.05 } ]
masses = [ { name = "disc", mass_kg = 50.0, at_m = 0.5 } ]

[torsional]
names = ["motor", "disc"]
inertias_kgm2 = [2.0, 2.0]
stiffness_Nm_per_rad = [1.0e5]
"""


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
    assert set(d) == {"before", "after", "lateral", "torsional", "cautions", "options"}
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
    from torqlog.materials import get_material

    e, i = get_material("steel").modulus, math.pi * 0.05**4 / 64
    f_l = math.sqrt(48 * e * i / 50.0) / (2 * math.pi)
    assert d["lateral"]["rayleigh_hz"] == pytest.approx(f_l, rel=1e-3)
    assert d["lateral"]["dunkerley_hz"] == pytest.approx(f_l, rel=1e-3)
    # 300 rpm = 5 Hz; ten assumed orders: 50 Hz highest forcing
    assert d["lateral"]["forcing_hz"] == pytest.approx(50.0)


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
                          f"valid keys: bore_m, diameter_m, length_m, material\n")


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
