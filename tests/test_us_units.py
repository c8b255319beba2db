"""US customary output: factors against NIST SP 811 (2008) Appendix B.9, and round trips."""

import json
import math

import pytest
from click.testing import CliRunner

from torqlog.cli import cli
from torqlog.io.units import convert_keys, key_unit, us_key
from torqlog.rotor.flywheel import flywheel_from_profile

# NIST SP 811 (2008), Appendix B.9 (factors to SI, 7 significant digits as printed there)
NIST = {
    "energy_swing_J": ("energy_swing_ftlbf", 1.355818),        # ft*lbf -> J
    "torque_mean_Nm": ("torque_mean_lbfft", 1.355818),         # lbf*ft -> N*m
    "inertia_kgm2": ("inertia_lbft2", 4.214011e-2),            # lb*ft^2 -> kg*m^2
    "bore_m": ("bore_in", 2.54e-2),                            # in -> m (exact)
    "strength_MPa": ("strength_ksi", 6.894757),                # ksi -> MPa
    "mass_kg": ("mass_lb", 4.535924e-1),                       # lb -> kg
    "power_W": ("power_hp", 7.456999e2),                       # hp (550 ft*lbf/s) -> W
    "rim_speed_m_s": ("rim_speed_ft_s", 3.048e-1),             # ft/s -> m/s (exact)
    "density_kg_per_m3": ("density_lb_per_in3", 2.767990e4),   # lb/in^3 -> kg/m^3
    "reaction_N": ("reaction_lbf", 4.448222),                  # lbf -> N
    "torque_peak_Nm_p99": ("torque_peak_lbfft_p99", 1.355818),  # a statistic after the unit
}


# NIST SP 811 (2008) Appendix B.8, to ten digits
LBF_FT = 1.3558179483   # N·m per lbf·ft
LB_FT2 = 0.0421401101   # kg·m² per lb·ft²
FT = 0.3048             # m per ft (exact)


@pytest.mark.parametrize("key", sorted(NIST))
def test_factors_against_nist_sp811(key):
    us, to_si = NIST[key]
    new, factor = us_key(key)
    assert new == us
    assert 1.0 / factor == pytest.approx(to_si, rel=5e-7)


def test_speed_and_dimensionless_stay():
    assert us_key("speed_mean_rpm") == ("speed_mean_rpm", 1.0)
    assert us_key("cs") == ("cs", 1.0)
    assert key_unit("inertia_lbft2", "us") == "lb·ft²"


def test_hand_conversion_of_energy_swing_and_inertia():
    # by hand: 8130 J / 1.355818 J per ft*lbf = 5996.3 ft*lbf;
    # 310 kg*m^2 / 0.04214011 kg*m^2 per lb*ft^2 = 7356.4 lb*ft^2
    d = convert_keys({"energy_swing_J": 8130.0, "inertia_kgm2": 310.0}, "us")
    assert d["energy_swing_ftlbf"] == pytest.approx(8130.0 / 1.355818, rel=1e-6)
    assert d["inertia_lbft2"] == pytest.approx(310.0 / 4.214011e-2, rel=1e-6)


def _walk(a, b, path=""):
    if isinstance(a, dict):
        assert set(a) == set(b), path
        for k in a:
            _walk(a[k], b[k], f"{path}.{k}")
    elif isinstance(a, list):
        assert len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            _walk(x, y, f"{path}[{i}]")
    elif isinstance(a, float) and not isinstance(a, bool):
        assert b == pytest.approx(a, rel=1e-12, abs=0), path
    else:
        assert a == b, path


def test_round_trip_si_us_si_of_a_whole_result():
    d = flywheel_from_profile(None, inertia=310.0, speed=450 * math.pi / 30,
                              material="ductile-iron", outer_diameter=1.4, bore=0.16,
                              interference=0.12e-3).to_dict()
    us = convert_keys(d, "us")
    assert "inertia_lbft2" in us and "inertia_kgm2" not in us
    assert "outer_diameter_in" in us
    assert us["options"]["interference_in"] == pytest.approx(0.12 / 25.4)
    _walk(d, convert_keys(us, "us", back=True))


def test_cli_units_us_json_and_profile_setting(tmp_path):
    args = ["flywheel", "--inertia", "310", "--speed-rpm", "450", "--material",
            "ductile-iron", "--outer-diameter", "1.4", "--bore", "0.16", "--format", "json"]
    si = json.loads(CliRunner().invoke(cli, args).stdout)
    us = json.loads(CliRunner().invoke(cli, [*args, "--units", "us"]).stdout)
    assert us["mass_lb"] == pytest.approx(si["mass_kg"] / 0.45359237, rel=1e-12)
    assert us["outer_diameter_in"] == pytest.approx(1.4 / 0.0254, rel=1e-12)
    prof = tmp_path / "p.toml"
    prof.write_text('[output]\nunits = "us"\n', encoding="utf-8")
    by_profile = json.loads(CliRunner().invoke(cli, [*args, "--profile", str(prof)]).stdout)
    assert by_profile["mass_lb"] == pytest.approx(us["mass_lb"], rel=1e-12)
    table = CliRunner().invoke(cli, [*args[:-2], "--units", "us"]).stdout
    assert "inertia_lbft2" in table and "stress_von_mises_max_ksi" in table


def test_profile_keys_take_numbers_with_units():
    from torqlog.errors import DataError
    from torqlog.io.profile import parse_profile

    p = parse_profile({"machine": {"speed_rpm": "4.772 rad/s", "inertia_kgm2": "7356.4 lb*ft**2"},
                       "flywheel": {"outer_diameter_m": "55 in"}}, "p.toml")
    assert p.machine["speed"] == pytest.approx(4.772, rel=1e-12)
    # NIST SP 811 B.9: 1 lb*ft^2 = 4.214011E-02 kg*m^2; 1 in = 0.0254 m (exact)
    assert p.machine["inertia"] == pytest.approx(7356.4 * 4.214011e-2, rel=1e-6)
    assert p.flywheel["outer_diameter"] == pytest.approx(55 * 0.0254, rel=1e-12)
    with pytest.raises(DataError) as err:
        parse_profile({"flywheel": {"bore_m": "3 kg"}}, "p.toml")
    assert str(err.value).startswith("p.toml: [flywheel] bore_m = '3 kg': give a number in m")


def test_statistics_of_a_figure_convert_with_it_and_back():
    # a summary's {median, p95, max} under a unit key, and a key with a statistic tail
    d = {"energy_swing_J": {"median": 1000.0, "p95": 1200.0, "max": None},
         "work_J_mean": 500.0, "cs": {"median": 0.1}}
    us = convert_keys(d, "us")
    assert set(us) == {"energy_swing_ftlbf", "work_ftlbf_mean", "cs"}
    assert us["energy_swing_ftlbf"]["p95"] == pytest.approx(1200.0 / 1.355818, rel=5e-7)
    assert us["energy_swing_ftlbf"]["max"] is None and us["cs"] == {"median": 0.1}
    back = convert_keys(us, "us", back=True)
    assert back["energy_swing_J"]["p95"] == pytest.approx(1200.0, rel=1e-12)
    assert back["work_J_mean"] == pytest.approx(500.0, rel=1e-12)


def test_size_and_shaft_texts_in_us_units(tmp_path):
    # the readable layouts convert too (not only the JSON): inertia in lb·ft², torque in
    # lbf·ft, mass in lb (NIST SP 811 B.9 factors above)
    log, prof = "sample_data/press_comma.csv", "sample_data/press.toml"
    from pathlib import Path

    root = Path(__file__).resolve().parent.parent
    log, prof = str(root / log), str(root / prof)
    si = json.loads(CliRunner().invoke(cli, ["size", log, "--profile", prof, "--format",
                                             "json"]).stdout)
    text = CliRunner().invoke(cli, ["size", log, "--profile", prof, "--units", "us"]).stdout
    from torqlog.present.labels import sig

    added = si["added_inertia_kgm2"] / 4.214011e-2
    assert f"added inertia         {sig(added, 4)} lb·ft²" in text
    assert "kg·m²" not in text.split("note:")[0] and "drive torque RMS lbf·ft" in text
    # the drive slope too: N·m·s/rad -> lbf·ft·s/rad (NIST SP 811 B.9: 1 lbf·ft = 1.355818 N·m)
    slope = si["drive_slope_Nms_per_rad"] / LBF_FT
    assert f"drive slope           {slope:.4g} ± " in text and " lbf·ft·s/rad at the" in text
    assert "N·m·s/rad" not in text and "(the notes in SI units)" in text
    text = CliRunner().invoke(cli, ["shaft", "--profile", prof, "--add-mass", "600",
                                    "--units", "us"]).stdout
    assert f"[after (+{600 / 0.4535924:.4g} lb at " in text
    assert " mil\n" in text and " mm" not in text


def _root():
    from pathlib import Path

    return Path(__file__).resolve().parent.parent


def test_life_text_table_and_histogram_in_us_units():
    log = str(_root() / "sample_data/press_comma.csv")
    si = json.loads(CliRunner().invoke(cli, ["life", log, "--format", "json"]).stdout)
    us = json.loads(CliRunner().invoke(cli, ["life", log, "--format", "json", "--units",
                                             "us"]).stdout)
    # NIST SP 811 B.8: 1 lbf·ft = 1.3558179483 N·m
    assert us["histogram"]["range_edges_lbfft"][1] == pytest.approx(
        si["histogram"]["range_edges_Nm"][1] / LBF_FT, rel=1e-9)
    assert us["histogram"]["range_counts"] == si["histogram"]["range_counts"]
    assert "histogram_Nm" not in us and "range_edges_Nm" not in us["histogram"]
    text = CliRunner().invoke(cli, ["life", log, "--units", "us"]).stdout
    assert f"largest range {si['torque_range_max_Nm'] / LBF_FT:.0f} lbf·ft" in text
    assert (f"damage-equivalent torque range {si['damage_equivalent_torque_Nm'] / LBF_FT:.0f}"
            " lbf·ft") in text
    assert "Range from, lbf·ft" in text and "N·m" not in text.split("Cautions:")[0]


def test_flywheel_checks_in_us_units():
    args = ["flywheel", "--inertia", "1.14", "--speed-rpm", "1750", "--outer-diameter",
            "0.75", "--bore", "0.1", "--material", "steel-c45", "--format", "json"]
    si = {c["name"]: c for c in json.loads(CliRunner().invoke(cli, args).stdout)["checks"]}
    out = CliRunner().invoke(cli, [*args, "--units", "us"]).stdout
    us = {c["name"]: c for c in json.loads(out)["checks"]}
    assert "rim_speed_m_s" not in us and "inertia_kgm2" not in us
    # NIST SP 811 B.8: 1 ft = 0.3048 m, 1 lb·ft² = 0.0421401101 kg·m²
    assert us["rim_speed_ft_s"]["value"] == pytest.approx(si["rim_speed_m_s"]["value"] / FT,
                                                          rel=1e-9)
    assert us["rim_speed_ft_s"]["limit"] == pytest.approx(si["rim_speed_m_s"]["limit"] / FT,
                                                          rel=1e-9)
    assert us["inertia_lbft2"]["value"] == pytest.approx(1.14 / LB_FT2, rel=1e-6)
    assert us["stress_safety_factor"] == si["stress_safety_factor"]
    text = CliRunner().invoke(cli, [*args[:-2], "--units", "us"]).stdout
    checks = text.split("Checks:")[1].split("Cautions:")[0]
    assert "rim_speed_ft_s" in checks and "inertia_lbft2" in checks and "_m_s" not in checks
    v = us["rim_speed_ft_s"]["value"]
    assert f"rim_speed_ft_s             value {v:.4g}" in checks or f"{v:.1f}" in checks


def test_shaft_section_positions_in_us_units():
    args = ["shaft", "--profile", str(_root() / "sample_data/engine.toml"), "--log",
            str(_root() / "sample_data/engine_preamble.txt"), "--units", "us"]
    us = json.loads(CliRunner().invoke(cli, [*args, "--format", "json"]).stdout)
    rows = us["before"]["strength"]["sections"]
    shoulders = [r for r in rows if r["section"].startswith("shoulder at ")]
    assert shoulders and all(not r["section"].endswith(" m") for r in rows)
    for r in shoulders:  # x_in is x_m / 0.0254 (NIST SP 811 B.8: 1 in = 0.3048 m / 12)
        assert r["section"] == f"shoulder at {r['x_in']:.2f} in"
    assert shoulders[0]["x_in"] * FT / 12 == pytest.approx(0.100, abs=5e-4)  # engine.toml
    text = CliRunner().invoke(cli, args).stdout
    assert f"shoulder at {shoulders[0]['x_in']:.2f} in" in text and "0.100 m" not in text
