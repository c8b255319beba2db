"""Materials table: values against the standards they cite, look-up and overrides."""

import pytest

from torqlog.errors import UsageError
from torqlog.rotor.materials import MATERIALS, Material, custom_material, get_material

MPA = 1e6
GPA = 1e9


@pytest.mark.parametrize(
    ("name", "strength_mpa", "kind", "brittle"),
    [
        # EN 1561: the grade number is the minimum tensile strength Rm of the test bar.
        ("grey-iron-200", 200, "tensile", True),
        ("grey-iron-250", 250, "tensile", True),
        # EN 1563, EN-GJS-400-15: Rp0.2 >= 250 MPa.
        ("ductile-iron", 250, "yield", False),
        # EN 10083-2, C45 normalised, 16 < d <= 100 mm: ReH >= 305 MPa (from memory).
        ("steel-c45", 305, "yield", False),
        # EN 10025-2, S355, 40 < t <= 63 mm: ReH >= 335 MPa.
        ("steel-s355", 335, "yield", False),
    ],
)
def test_strengths_follow_the_cited_standards(name, strength_mpa, kind, brittle):
    m = get_material(name)
    assert m.strength == pytest.approx(strength_mpa * MPA, rel=1e-12)
    assert m.strength_kind == kind
    assert m.brittle is brittle
    assert m.source  # every value names where it comes from


@pytest.mark.parametrize("name", ["steel-c45", "steel-s355", "steel"])
def test_steel_elastic_constants_eurocode(name):
    # EN 1993-1-1 cl. 3.2.6: E = 210 000 N/mm^2, nu = 0.3, G ~ 81 000 N/mm^2;
    # EN 1991-1-1 Annex A: 78.5 kN/m^3 -> 7850 kg/m^3 (rounded, g = 10 m/s^2).
    m = get_material(name)
    assert m.modulus == 210 * GPA
    assert m.poisson == 0.3
    assert m.density == 7850.0
    assert m.shear_modulus == pytest.approx(210e9 / 2.6, rel=1e-12)
    assert m.shear_modulus == pytest.approx(81e9, rel=0.005)


def test_grey_iron_rim_speed_limit_common_practice():
    # common practice for cast-iron flywheels, about 30 m/s (from memory)
    assert get_material("grey-iron-200").rim_speed_limit == 30.0
    assert get_material("grey-iron-250").rim_speed_limit == 30.0
    assert all(m.rim_speed_limit > 0 for m in MATERIALS.values())


def test_table_is_read_only_and_steel_is_an_alias():
    with pytest.raises(TypeError):
        MATERIALS["unobtainium"] = MATERIALS["steel"]  # type: ignore[index]
    assert MATERIALS["steel"] is MATERIALS["steel-c45"]
    assert list(MATERIALS) == ["grey-iron-200", "grey-iron-250", "ductile-iron",
                               "steel-c45", "steel-s355", "steel"]


def test_lookup_ignores_case_and_blanks():
    assert get_material("  Ductile-Iron ") is MATERIALS["ductile-iron"]


def test_unknown_material_lists_known_names():
    with pytest.raises(UsageError) as err:
        get_material("unobtainium")
    assert str(err.value) == ("unknown material 'unobtainium'; known: grey-iron-200, "
                              "grey-iron-250, ductile-iron, steel-c45, steel-s355, steel")


def test_custom_material_overrides_a_base():
    m = custom_material("ductile-iron", strength=300 * MPA, density=7000.0)
    assert m.name == "ductile-iron+custom"
    assert (m.strength, m.density) == (300 * MPA, 7000.0)
    assert m.modulus == MATERIALS["ductile-iron"].modulus
    assert m.source.startswith("user values: density=7000 kg/m^3, strength=300 MPa; "
                             "other values:")
    assert custom_material("steel") is MATERIALS["steel"]


def test_custom_material_from_scratch_needs_the_core_values():
    m = custom_material(density=2700.0, modulus=70 * GPA, poisson=0.33, strength=240 * MPA)
    assert m == Material(name="custom", density=2700.0, modulus=70 * GPA, poisson=0.33,
                         strength=240 * MPA, strength_kind="yield", brittle=False,
                         rim_speed_limit=None, source=m.source)
    with pytest.raises(UsageError) as err:
        custom_material(density=2700.0, strength=240 * MPA)
    assert str(err.value) == (
        "material 'custom' is given by its properties and lacks 1. modulus (--modulus on "
        "the command line, modulus_GPa in a profile or materials file); 2. poisson "
        "(--poisson on the command line, poisson in a profile or materials file); give "
        "each, or name a known material")


def test_out_of_range_values_are_refused():
    with pytest.raises(UsageError) as err:
        custom_material("steel", poisson=0.6)
    assert str(err.value) == "material 'steel-c45+custom': poisson must be in [0, 0.5), got 0.6"
    with pytest.raises(UsageError) as err:
        custom_material("steel", strength=-1.0)
    assert str(err.value) == "material 'steel-c45+custom': strength must be positive, got -1.0"
