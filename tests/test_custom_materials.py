"""Materials of the user's own: from properties, from a profile table, from a plant file.

The exactness check compares a disc in a material given only by its properties with the
same disc in the built-in steel: the same physics on the same numbers must agree to
rounding. Unit factors: NIST SP 811 (2008), Appendix B.9.
"""

import json

import pytest
from click.testing import CliRunner

from torqlog.cli import cli
from torqlog.errors import UsageError
from torqlog.io.profile import parse_profile
from torqlog.rotor.flywheel import flywheel_from_profile
from torqlog.rotor.materials import (
    get_material,
    load_materials,
    material_from_mapping,
    resolve_material,
)

STEEL = get_material("steel-c45")
DISC = dict(inertia=310.0, speed=450 * 3.141592653589793 / 30, shape="annular-disc",
            outer_diameter=1.4, bore=0.16)


def run(args):
    return CliRunner().invoke(cli, args)


def _numbers(d):
    return {k: v for k, v in d.items() if isinstance(v, float)}


def test_steel_given_by_properties_matches_built_in_steel_exactly():
    own = flywheel_from_profile(None, density=STEEL.density, modulus=STEEL.modulus,
                                poisson=STEEL.poisson, strength=STEEL.strength,
                                brittle=False, **DISC).to_dict()
    ref = flywheel_from_profile(None, material="steel-c45", **DISC).to_dict()
    assert own["material"] == "custom"
    assert own["material_designation"] == ""  # no standard claimed
    assert own["material_source"] == "properties as given by the user"
    assert ref["material_designation"] == "C45+N (EN 10083-2)"
    a, b = _numbers(own), _numbers(ref)
    assert set(a) == set(b) - {"rim_speed_limit_m_s"}  # the user gave no rim-speed limit
    for key in a:
        assert a[key] == pytest.approx(b[key], rel=1e-12, abs=1e-300), key


def test_missing_properties_are_named_one_by_one():
    with pytest.raises(UsageError) as err:
        resolve_material(None, density=7850.0, poisson=0.3, brittle=False)
    assert str(err.value) == (
        "material 'custom' is given by its properties and lacks 1. modulus (--modulus on "
        "the command line, modulus_GPa in a profile or materials file); 2. strength "
        "(--yield on the command line, yield_MPa (tensile_MPa if brittle) in a profile or "
        "materials file); give each, or name a known material")


def test_ductile_or_brittle_is_asked_for():
    with pytest.raises(UsageError, match="say whether it is ductile or brittle"):
        resolve_material(None, density=7850.0, modulus=210e9, poisson=0.3, strength=3e8)


def test_issue_example_in_us_units_on_the_command_line():
    res = run(["flywheel", "--inertia", "310", "--speed-rpm", "300", "--outer-diameter",
               "1.4", "--bore", "0.16", "--density", "0.260 lb/in^3", "--yield", "31 kpsi",
               "--poisson", "0.211", "--modulus", "100 GPa", "--behaviour", "brittle",
               "--material-name", "press-frame iron", "--format", "json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert d["material"] == "press-frame iron"
    assert d["material_designation"] == ""
    # NIST SP 811 B.9: 1 lb/in^3 = 2.767 990 E+04 kg/m^3; 1 kpsi = 6.894 757 E+06 Pa
    assert d["strength_MPa"] == pytest.approx(31 * 6.894757, rel=1e-6)
    assert d["strength_kind"] == "tensile"
    assert d["criterion"] == "max-principal"
    assert d["mass_kg"] / d["width_m"] == pytest.approx(
        0.260 * 2.767990e4 * 3.141592653589793 / 4 * (1.4**2 - 0.16**2), rel=1e-6)


def test_without_behaviour_the_command_line_asks_for_it():
    res = run(["flywheel", "--inertia", "310", "--speed-rpm", "300", "--outer-diameter",
               "1.4", "--density", "7200", "--yield", "200", "--poisson", "0.26",
               "--modulus", "100"])
    assert res.exit_code == 2
    assert res.stderr.startswith("Error: material 'custom': say whether it is ductile or "
                                 "brittle (--behaviour ductile|brittle")


def test_overriding_a_named_material_drops_its_designation():
    m = resolve_material("ductile-iron", strength=300e6)
    assert (m.name, m.designation) == ("ductile-iron+custom", "")
    assert get_material("ductile-iron").designation == "EN-GJS-400-15 (EN 1563)"


def test_profile_table_material_with_units_in_text():
    prof = parse_profile({"flywheel": {"material": {
        "name": "shop steel", "behaviour": "ductile", "density_kg_per_m3": 7850,
        "modulus_GPa": 210, "poisson": 0.3, "yield_MPa": "44.236 kpsi"}}}, "p.toml")
    res = flywheel_from_profile(prof, **DISC)
    assert res.material.name == "shop steel"
    assert res.material.strength == pytest.approx(44.236 * 6.894757e6, rel=1e-6)
    with pytest.raises(UsageError, match="unknown material key 'yeild_MPa'"):
        material_from_mapping({"yeild_MPa": 300}, "p.toml [flywheel] material")
    with pytest.raises(UsageError, match="give tensile_MPa instead of yield_MPa"):
        material_from_mapping({"behaviour": "brittle", "yield_MPa": 300}, "here")


def test_plant_materials_file(tmp_path):
    f = tmp_path / "plant.toml"
    f.write_text('["brindlemoor-iron"]\nbehaviour = "brittle"\ndensity_kg_per_m3 = 7200\n'
                 'modulus_GPa = 105\npoisson = 0.26\ntensile_MPa = 220\n'
                 'rim_speed_limit_m_s = 30\n', encoding="utf-8")
    table = load_materials(f)
    m = table["brindlemoor-iron"]
    assert (m.strength, m.brittle, m.rim_speed_limit) == (220e6, True, 30.0)
    assert m.source == f"properties as given in {f}"
    res = run(["flywheel", "--inertia", "310", "--speed-rpm", "200", "--outer-diameter",
               "1.4", "--bore", "0.16", "--material", "brindlemoor-iron", "--materials", str(f),
               "--format", "json"])
    assert res.exit_code == 0, res.output
    assert json.loads(res.stdout)["material"] == "brindlemoor-iron"
    clash = tmp_path / "clash.toml"
    clash.write_text('["steel"]\ndensity_kg_per_m3 = 1\n', encoding="utf-8")
    with pytest.raises(UsageError, match="'steel' is a built-in material"):
        load_materials(clash)


# ----------------------------------------------------------------------------- shaft
_SHAFT_PROFILE = {
    "machine": {"speed_rpm": 45.0},
    "shaft": {"bearings_m": [0.0, 1.10], "ultimate_strength_MPa": 630.0,
              "yield_strength_MPa": 530.0,
              "segments": [{"length_m": 0.35, "diameter_m": 0.14},
                           {"length_m": 0.75, "diameter_m": 0.16},
                           {"length_m": 0.40, "diameter_m": 0.14}],
              "masses": [{"name": "flywheel", "mass_kg": 900.0, "at_m": 1.40},
                         {"name": "gear", "mass_kg": 150.0, "at_m": 0.50}]},
    "torsional": {"names": ["motor", "flywheel", "crank"], "inertias_kgm2": [0.35, 310.0, 40.0],
                  "stiffness_Nm_per_rad": [2.1e6, 8.5e6]},
}
#: steel-c45's own numbers (EN 10083-2 ReH 305 MPa; E 210 GPa, nu 0.3: EN 1993-1-1 cl.
#: 3.2.6; 7850 kg/m^3: EN 1991-1-1 Annex A), given as a table of properties.
_STEEL_TABLE = {"name": "shop bar", "density_kg_per_m3": 7850.0, "modulus_GPa": 210.0,
                "poisson": 0.3, "yield_MPa": 305.0}


def _shaft(material, materials=None):
    import copy

    import numpy as np

    from torqlog.shaft.check import check_shaft

    data = copy.deepcopy(_SHAFT_PROFILE)
    data["shaft"]["material"] = material
    phi = np.arange(360) * 2 * np.pi / 360
    torque = 5000 + 8000 * np.cos(phi) + 3000 * np.cos(2 * phi)
    return check_shaft(parse_profile(data, "p.toml"), add_mass=600.0, add_inertia=150.0,
                       cycle_torque=torque, materials=materials).to_dict()


def _leaves(d, prefix=""):
    """Every number of a nested result by its path."""
    out = {}
    items = d.items() if isinstance(d, dict) else enumerate(d)
    for k, v in items:
        path = f"{prefix}.{k}" if prefix else str(k)
        if isinstance(v, dict | list):
            out.update(_leaves(v, path))
        elif isinstance(v, float | int) and not isinstance(v, bool):
            out[path] = v
    return out


def test_shaft_given_by_properties_matches_built_in_steel_exactly():
    # the profile's strength lines (630/530 MPa, AISI 1045 CD, Shigley 10th ed. Table A-20)
    # win over the built-in steel's minimum values; an own material must carry the same
    # strengths to give the same result
    own = _shaft({**_STEEL_TABLE, "yield_MPa": 530.0, "tensile_MPa": 630.0})
    ref = _shaft("steel")
    assert own["options"]["material"] == "shop bar"
    assert own["options"]["material_designation"] == ""  # no standard claimed
    assert own["options"]["material_source"] == "properties as given by the user"
    assert ref["options"]["material_designation"] == "C45+N (EN 10083-2)"
    a, b = _leaves(own), _leaves(ref)
    assert set(a) == set(b) and len(a) > 50
    for key in a:
        assert a[key] == pytest.approx(b[key], rel=1e-12, abs=1e-300), key
    assert own["verdict"] == ref["verdict"]
    assert own["strength"]["options"]["material"] == ("shop bar (properties as given by "
                                                      "the user)")
    assert ref["strength"]["options"]["material"] == "steel (strengths from the profile)"


def test_shaft_material_from_a_plant_file_and_on_the_command_line(tmp_path):
    import tomllib

    mats = tmp_path / "plant.toml"
    mats.write_text('["shop-bar"]\nbehaviour = "ductile"\ndensity_kg_per_m3 = 7850\n'
                    'modulus_GPa = 210\npoisson = 0.3\nyield_MPa = 530\n'
                    'tensile_MPa = 630\nsource = "mill certificate 26-031"\n',
                    encoding="utf-8")
    own = _shaft("shop-bar", load_materials(mats))
    assert own["options"]["material_source"] == "mill certificate 26-031"
    assert own["options"]["material_designation"] == ""
    ref = _shaft("steel")
    assert own["lateral"]["fe_hz"] == pytest.approx(ref["lateral"]["fe_hz"], rel=1e-12)
    # the command line: --materials FILE for the shaft as for the flywheel
    prof = tmp_path / "p.toml"
    lines = ['[machine]\nspeed_rpm = 45.0\n[shaft]\nmaterial = "shop-bar"\n'
             'bearings_m = [0.0, 1.10]\n'
             'segments = [ { length_m = 0.35, diameter_m = 0.14 }, '
             '{ length_m = 0.75, diameter_m = 0.16 } ]\n'
             'masses = [ { name = "flywheel", mass_kg = 900.0, at_m = 1.0 } ]\n']
    prof.write_text("".join(lines), encoding="utf-8")
    tomllib.loads(prof.read_text())  # valid TOML
    res = run(["shaft", "--profile", str(prof), "--materials", str(mats), "--format", "json"])
    assert res.exit_code == 0, res.output
    assert json.loads(res.output)["options"]["material"] == "shop-bar"
    res = run(["shaft", "--profile", str(prof), "--format", "json"])
    assert res.exit_code == 2
    assert "unknown material 'shop-bar'; known: grey-iron-200" in res.output


def test_shaft_material_table_refuses_an_unknown_key_by_name():
    with pytest.raises(UsageError, match=r"p.toml: \[shaft\] material: unknown material key "
                                         r"'yield_strength'; valid keys: name, "):
        _shaft({**_STEEL_TABLE, "yield_strength": 300})
