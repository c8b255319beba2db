"""Page one's "Is the shaft fine with it?" names the check the shaft result says governs."""

import types

import numpy as np

from torqlog.io.profile import parse_profile
from torqlog.present.report import _find_shaft
from torqlog.shaft.check import check_shaft

_PROFILE = {
    "machine": {"speed_rpm": 600.0},
    "shaft": {"material": "steel", "ultimate_strength_MPa": 630.0, "yield_strength_MPa": 530.0,
              "bearings_m": [0.0, 0.8], "segments": [{"length_m": 0.8, "diameter_m": 0.04}],
              "masses": [{"name": "flywheel", "mass_kg": 50.0, "at_m": 0.4}]},
}


def _page_one(torque_mean):
    theta = np.arange(360) * 2 * np.pi / 360
    sh = check_shaft(parse_profile(_PROFILE, "p.toml"),
                     cycle_torque=torque_mean * (1 + 0.3 * np.cos(theta))).to_dict()
    d = types.SimpleNamespace(shaft=sh, skipped={}, extra={}, units="si")
    return sh, _find_shaft(d)


def test_page_one_names_the_governing_check_of_the_shaft_json():
    # fatigue safety factor between 1 and the required 1.5 (DE-Goodman, Shigley 10th ed.
    # eq. 7-8): the strength check governs, not the lateral one
    sh, f = _page_one(1700.0)
    assert sh["verdict"] == f.verdict == "marginal"
    assert sh["governing_check"] == "fatigue at plain, largest moment at 0.400 m"
    assert f.text.startswith("Shaft as it is: fatigue at plain, largest moment at 0.400 m "
                             "governs; the lateral check passes: first lateral mode ")
    assert "the lateral check governs" not in f.text
    n = sh["fatigue_safety_factor"]
    assert f.text.endswith(f" Strength: fatigue safety factor {n:.2f} at plain, largest "
                           "moment at 0.400 m (required 1.5).")
