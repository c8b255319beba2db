"""The shaft strength check uses the shaft's own material, never another one.

Criteria: DE-Goodman needs the ultimate tensile strength Sut (endurance limit
Se' = 0.5 Sut, Shigley 10th ed. eq. 6-8; Goodman line eq. 7-8) and the yield strength Sy
(first-cycle yield, eq. 7-15).
"""

import copy

import numpy as np
import pytest

from torqlog.errors import UsageError
from torqlog.io.profile import parse_profile
from torqlog.rotor.materials import material_from_mapping
from torqlog.shaft.check import check_shaft

_PROFILE = {
    "machine": {"speed_rpm": 45.0},
    "shaft": {"bearings_m": [0.0, 1.10],
              "segments": [{"length_m": 0.35, "diameter_m": 0.14},
                           {"length_m": 0.75, "diameter_m": 0.16}],
              "masses": [{"name": "flywheel", "mass_kg": 900.0, "at_m": 1.0}]},
}
_BAR = {"name": "shop bar 42", "behaviour": "ductile", "density_kg_per_m3": 7850,
        "modulus_GPa": 205, "poisson": 0.29, "yield_MPa": 415}


def _strength(material, **lines):
    data = copy.deepcopy(_PROFILE)
    data["shaft"]["material"] = material
    data["shaft"].update(lines)
    phi = np.arange(360) * 2 * np.pi / 360
    torque = 5000 + 8000 * np.cos(phi)
    return check_shaft(parse_profile(data, "p.toml"), cycle_torque=torque).to_dict()


def test_own_material_strengths_are_used_and_labelled_as_given():
    d = _strength({**_BAR, "tensile_MPa": 560})
    o = d["strength"]["options"]
    assert (o["ultimate_strength_MPa"], o["yield_strength_MPa"]) == (560.0, 415.0)
    assert o["material"] == "shop bar 42 (properties as given by the user)"
    assert "AISI" not in str(d)  # no handbook steel named for the user's own material


def test_own_material_disagreeing_with_strength_lines_is_refused_naming_both():
    with pytest.raises(UsageError) as err:
        _strength({**_BAR, "tensile_MPa": 560}, ultimate_strength_MPa=630.0,
                  yield_strength_MPa=530.0)
    assert str(err.value) == (
        "p.toml: [shaft] ultimate_strength_MPa = 630 disagrees with the ultimate tensile "
        "strength Sut of material 'shop bar 42' (tensile_MPa = 560 MPa); remove the line or "
        "make the two agree: the check will not choose between them")


def test_own_material_without_sut_is_refused_naming_the_key():
    with pytest.raises(UsageError) as err:
        _strength(dict(_BAR))
    assert str(err.value) == (
        "p.toml: [shaft] material 'shop bar 42' gives no ultimate tensile strength Sut, "
        "which the goodman fatigue check needs (endurance limit Se' = 0.5 Sut, Shigley 10th "
        "ed. eq. 6-8): add tensile_MPa = ... to the material (or ultimate_strength_MPa = ... "
        "to [shaft])")
    # a [shaft] line may supply the value the material lacks
    d = _strength(dict(_BAR), ultimate_strength_MPa=560.0)
    assert d["strength"]["options"]["ultimate_strength_MPa"] == 560.0
    assert d["strength"]["options"]["yield_strength_MPa"] == 415.0


def test_ductile_material_takes_both_yield_and_tensile_strength():
    m = material_from_mapping({**_BAR, "tensile_MPa": 560}, "here")
    assert (m.strength, m.ultimate, m.brittle) == (415e6, 560e6, False)
    with pytest.raises(UsageError) as err:
        material_from_mapping({**_BAR, "tensile_MPa": 400}, "here")
    assert str(err.value) == ("here: yield_MPa 415 is above tensile_MPa 400; the yield "
                              "strength of a ductile material is below its ultimate tensile "
                              "strength")


def test_built_in_material_uses_its_table_values_and_lines_win_with_a_label():
    # EN 1563 EN-GJS-400-15: Rp0.2 min 250 MPa, Rm min 400 MPa
    o = _strength("ductile-iron")["strength"]["options"]
    assert (o["ultimate_strength_MPa"], o["yield_strength_MPa"]) == (400.0, 250.0)
    d = _strength("steel-c45", ultimate_strength_MPa=630.0, yield_strength_MPa=530.0)
    assert d["strength"]["options"]["material"] == "steel-c45 (strengths from the profile)"
    assert ("Shaft strengths: the profile's ultimate, yield line(s) used instead of the "
            "minimum values of 'steel-c45'.") in d["cautions"]


def test_brittle_shaft_material_is_refused():
    with pytest.raises(UsageError) as err:
        _strength("grey-iron-250")
    assert str(err.value) == ("p.toml: [shaft] material 'grey-iron-250' is brittle: the "
                              "shaft fatigue and yield check (Shigley 10th ed. ch. 6-7) is "
                              "for ductile steels; give the shaft's ductile material")
