"""The ``torqlog flywheel`` command: options, files, output formats and exit codes.

Physics is checked in test_flywheel.py; here the numbers are checked against the closed
forms (Timoshenko & Goodier sec. 32; I = pi rho b (R^4 - r^4) / 2) to show the options
reach the library in SI.
"""

import json
import math

import pytest
from click.testing import CliRunner

from torqlog.cli import cli
from torqlog.rotor.materials import get_material

OPTS = {"--inertia": "310 kg*m**2", "--speed-rpm": "450", "--material": "ductile-iron",
        "--outer-diameter": "1400 mm", "--bore": "160 mm"}


def base(**changes):
    """The base command line, with ``speed_rpm="600"``-style changes."""
    opts = dict(OPTS)
    opts.update({"--" + k.replace("_", "-"): v for k, v in changes.items()})
    return ["flywheel"] + [x for kv in opts.items() for x in kv]


BASE = base()
RHO_DI = get_material("ductile-iron").density


def run(args):
    return CliRunner().invoke(cli, args)


def test_json_contract_and_solved_width():
    res = run([*BASE, "--max-width", "0.35", "--slowdown", "0.1", "--interference", "0.12 mm",
               "--format", "json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    # width from I = pi rho b (R^4 - r^4) / 2
    assert d["width_m"] == pytest.approx(2 * 310 / (math.pi * RHO_DI * (0.7**4 - 0.08**4)),
                                         rel=1e-12)
    assert d["speed_rpm"] == pytest.approx(450.0)
    assert d["options"]["interference_m"] == pytest.approx(0.12e-3)
    assert d["options"]["overspeed"] == 1.2
    assert d["verdict"] == "pass"
    assert d["fit_loosening_rpm"] > 540.0
    assert len(d["cautions"]) == 5
    w = 450 * math.pi / 30
    bore = (3 + 0.275) / 4 * RHO_DI * w**2 * (0.49 + (1 - 0.275) / 3.275 * 0.0064)  # [TG]
    assert d["stress_tangential_bore_MPa"] == pytest.approx(bore / 1e6, rel=1e-3)


def test_table_prints_two_columns_checks_and_cautions():
    res = run(BASE)
    assert res.exit_code == 0
    out = res.stdout
    assert out.startswith("Flywheel check: PASS\n")
    assert "  material                       ductile-iron\n" in out
    assert "  ok    stress_safety_factor" in out
    assert "Cautions:\n  - Burst hazard: a flywheel stores kinetic energy" in out
    assert "approved by a qualified, licensed engineer." in " ".join(out.split())


def test_failing_design_exits_0_and_3_with_strict():
    fail = base(material="grey-iron-200", speed_rpm="600")  # 44 m/s rim on grey iron
    res = run(fail)
    assert res.exit_code == 0
    assert res.stdout.startswith("Flywheel check: FAIL (failed: rim_speed_m_s)\n")
    assert "  FAIL  rim_speed_m_s              value 43.98, limit 30" in res.stdout
    res = run([*fail, "--strict"])
    assert res.exit_code == 3
    assert res.stdout.startswith("Flywheel check: FAIL")
    assert res.stderr == "Error: flywheel check failed: rim_speed_m_s\n"
    res = run([*fail, "--strict", "--format", "json"])
    assert res.exit_code == 3
    assert json.loads(res.stdout)["failed"] == ["rim_speed_m_s"]
    assert res.stderr == ("flywheel check: FAIL (rim_speed_m_s)\n"
                          "Error: flywheel check failed: rim_speed_m_s\n")


def test_unknown_material_exit_2():
    res = run(base(material="unobtainium"))
    assert res.exit_code == 2
    assert res.stderr == ("Error: unknown material 'unobtainium'; known: grey-iron-200, "
                          "grey-iron-250, ductile-iron, steel-c45, steel-s355, steel\n")


def test_envelope_exit_1_says_what_it_needs():
    res = run([*base(inertia="3100", material="grey-iron-200"), "--max-width", "350 mm"])
    assert res.exit_code == 1
    assert res.stderr == ("Error: a 1.4 m annular-disc in grey-iron-200 holding 3100 kg*m^2 "
                          "needs a width of 1.15 m; the envelope allows 0.35 m\n")


def test_bad_geometry_and_speed_exit_2():
    res = run(base(bore="1.5 m"))
    assert res.exit_code == 2
    assert res.stderr == "Error: bore (1.5 m) must be smaller than the outer diameter (1.4 m)\n"
    res = run(base(speed_rpm="-600"))
    assert res.exit_code == 2
    assert res.stderr.endswith("Error: Invalid value for '--speed-rpm': '-600' must be "
                               "greater than zero\n")
    res = run(base(outer_diameter="1.4 kg"))
    assert res.exit_code == 2
    assert ("Invalid value for '--outer-diameter': unit 'kg' is not a "
            "length unit") in res.stderr
    res = run(["flywheel", "--material", "steel", "--outer-diameter", "1.4"])
    assert res.exit_code == 2
    assert res.stderr == ("Error: give --speed-rpm (or a --profile with [machine] speed_rpm, "
                          "or --from-size)\n")


def test_material_overrides_make_a_custom_material():
    res = run([*BASE, "--yield", "300 MPa", "--density", "7000", "--format", "json"])
    d = json.loads(res.stdout)
    assert d["material"] == "ductile-iron+custom"
    assert d["strength_MPa"] == pytest.approx(300.0)
    assert d["width_m"] == pytest.approx(2 * 310 / (math.pi * 7000 * (0.7**4 - 0.08**4)))


def test_profile_and_option_override(tmp_path):
    prof = tmp_path / "press4.toml"
    prof.write_text(
        '[machine]\nname = "Press 4, Brindlemoor Works"\nspeed_rpm = 45.0\n'
        'flywheel_speed_ratio = 10.0\n'
        '[flywheel]\nshape = "annular-disc"\nmaterial = "ductile-iron"\n'
        'outer_diameter_m = 1.4\nbore_m = 0.16\nmax_width_m = 0.35\n'
        'interference_m = 0.00012\n', encoding="utf-8")
    res = run(["flywheel", "--inertia", "310", "--profile", str(prof), "--format", "json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert d["speed_rpm"] == pytest.approx(450.0)  # 45 rpm x ratio 10
    assert d["options"]["interference_m"] == pytest.approx(0.00012)
    assert d["options"]["max_width_m"] == pytest.approx(0.35)
    assert d["options"]["profile"] == str(prof)
    res = run(["flywheel", "--inertia", "310", "--profile", str(prof), "--outer-diameter",
               "1.2", "--speed-rpm", "300", "--format", "json"])
    d = json.loads(res.stdout)
    assert (d["outer_diameter_m"], d["speed_rpm"]) == (pytest.approx(1.2), pytest.approx(300))


def test_from_size_json(tmp_path):
    size = tmp_path / "size.json"
    size.write_text(json.dumps({"added_inertia_kgm2": 310.0, "speed_mean_rpm": 45.0,
                                "flywheel_speed_ratio": 10.0}), encoding="utf-8")
    res = run(["flywheel", "--from-size", str(size), "--material", "steel-s355",
               "--outer-diameter", "1.0", "--bore", "0.1", "--format", "json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert d["inertia_kgm2"] == pytest.approx(3.10)  # 310 / 10^2 at the flywheel shaft
    assert d["speed_rpm"] == pytest.approx(450.0)
    assert d["options"]["inertia_key"] == "added_inertia_kgm2"
    bad = tmp_path / "bad.json"
    bad.write_text("{not json", encoding="utf-8")
    res = run(["flywheel", "--from-size", str(bad), "--material", "steel",
               "--outer-diameter", "1.0", "--bore", "0.1"])
    assert res.exit_code == 1
    assert res.stderr.startswith(f"Error: {bad}: not a JSON file from 'torqlog size "
                                 "--format json'")


def test_check_a_given_flywheel_without_inertia_and_plot(tmp_path):
    png = tmp_path / "stress.png"
    res = run(["flywheel", "--speed-rpm", "450", "--material", "steel", "--shape", "rim",
               "--outer-diameter", "1.4", "--bore", "0.16", "--width", "0.25",
               "--rim-inner-diameter", "1.1", "--web-width", "0.05", "--plot", str(png),
               "--format", "csv"])
    assert res.exit_code == 0, res.output
    header, row = res.stdout.splitlines()[:2]
    assert header.split(",")[:3] == ["shape", "material", "material_designation"]
    assert row.startswith("rim,steel-c45,")
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert res.stderr == f"wrote {png}\n"
    res = run(["flywheel", "--speed-rpm", "450", "--material", "steel", "--outer-diameter",
               "1.4", "--bore", "0.16"])
    assert res.exit_code == 2
    assert res.stderr == ("Error: give --inertia or --from-size to size a flywheel, or both "
                          "--outer-diameter and --width to check a given one\n")
