"""Shaft strength wired to the log: forced response, sections, keys, bearings."""

from __future__ import annotations

import copy
import math

import numpy as np
import pytest

from torqlog.errors import DataError
from torqlog.io.profile import parse_profile
from torqlog.shaft.check import check_shaft

_PROFILE = {
    "machine": {"speed_rpm": 45.0},
    "shaft": {"bearings_m": [0.0, 1.10], "ultimate_strength_MPa": 630.0,
              "yield_strength_MPa": 530.0, "bearing_ratings_N": [200e3, 200e3],
              "segments": [{"length_m": 0.35, "diameter_m": 0.14, "fillet_m": 0.005},
                           {"length_m": 0.75, "diameter_m": 0.16},
                           {"length_m": 0.40, "diameter_m": 0.14}],
              "masses": [{"name": "flywheel", "mass_kg": 900.0, "at_m": 1.40, "seat": "key",
                          "key_width_m": 0.036, "key_height_m": 0.02, "key_length_m": 0.2,
                          "hub_length_m": 0.3},
                         {"name": "gear", "mass_kg": 150.0, "at_m": 0.50}]},
    "torsional": {"names": ["motor", "flywheel", "crank"], "inertias_kgm2": [0.35, 310.0, 40.0],
                  "stiffness_Nm_per_rad": [2.1e6, 8.5e6]},
}
PHI = np.arange(360) * 2 * np.pi / 360
TORQUE = 5000 + 8000 * np.cos(PHI) + 3000 * np.cos(2 * PHI)


def _prof(change=None):
    data = copy.deepcopy(_PROFILE)
    if change:
        change(data)
    return parse_profile(data, "p.toml")


def test_strength_contract_and_scaling():
    res = check_shaft(_prof(), cycle_torque=TORQUE, add_mass=600.0, add_inertia=150.0)
    d = res.to_dict()
    assert d["fatigue_safety_factor"] == d["strength"]["fatigue_safety_factor"]
    assert d["governing_section"] == "keyseat under flywheel"
    names = [r["section"] for r in d["strength"]["sections"]]
    assert names[:3] == ["shoulder at 0.350 m", "shoulder at 1.100 m", "keyseat under flywheel"]
    # more flywheel mass overhung: the bending at the outboard shoulder grows
    before = {r["section"]: r for r in d["before"]["strength"]["sections"]}
    after = {r["section"]: r for r in d["after"]["strength"]["sections"]}
    key = "shoulder at 1.100 m"
    assert after[key]["moment_alt_Nm"] > before[key]["moment_alt_Nm"]
    # overhung flywheel: the moment at the outboard bearing is W a (statics, Gere & Timoshenko)
    assert before[key]["moment_alt_Nm"] == pytest.approx(9.80665 * 900.0 * 0.30, rel=1e-6)
    # a torque log scaled x1.5 lowers the fatigue safety factor
    n1 = check_shaft(_prof(), cycle_torque=TORQUE).to_dict()["fatigue_safety_factor"]
    n2 = check_shaft(_prof(), cycle_torque=1.5 * TORQUE).to_dict()["fatigue_safety_factor"]
    assert n2 < n1
    # bearings: ISO 281 L10 = (C/P)^3 from the reaction of the FE statics
    b = d["before"]["strength"]["bearings"][1]
    assert b["l10_revolutions"] == pytest.approx((200e3 / abs(b["reaction_N"])) ** 3 * 1e6)
    # the reactions balance the weights (statics)
    total = sum(r["reaction_N"] for r in d["before"]["strength"]["bearings"])
    assert total == pytest.approx(9.80665 * 1050.0, rel=1e-9)


def test_resonance_raises_shaft_torque():
    # an order placed on the elastic mode raises the section torque well above the
    # quasi-static value: the strength check sees the resonance (Rao sec. 3.4)
    from torqlog.shaft.torsion import TorsionalChain, torsional_modes

    chain = TorsionalChain(("motor", "flywheel", "crank"), (0.35, 310.0, 40.0), (2.1e6, 8.5e6))
    f1 = torsional_modes(chain).freqs[1]
    speed_res = 2 * math.pi * f1 / 2.0          # order 2 on the mode
    far = check_shaft(_prof(), speed=speed_res * 0.5, cycle_torque=TORQUE)
    near = check_shaft(_prof(), speed=speed_res, cycle_torque=TORQUE)
    amp_near = near.current.response.amplification[1, 1]
    assert amp_near > 10.0
    assert near.to_dict()["fatigue_safety_factor"] < far.to_dict()["fatigue_safety_factor"]


def test_bad_input_names_the_key():
    def neg_fillet(d):
        d["shaft"]["segments"][0]["fillet_m"] = -0.002

    with pytest.raises(DataError, match=r"^p.toml: \[shaft\] segments\[0\] fillet_m must be a "
                                        r"positive radius in m, got -0.002$"):
        check_shaft(_prof(neg_fillet), cycle_torque=TORQUE)

    def long_key(d):
        d["shaft"]["masses"][0]["key_length_m"] = 0.4

    with pytest.raises(DataError, match=r"^p.toml: \[shaft\] masses\[0\] key_length_m 0.4 m is "
                                        r"longer than the hub \(hub_length_m 0.3 m\); a key "
                                        r"must fit in its hub$"):
        check_shaft(_prof(long_key), cycle_torque=TORQUE)

    def outside(d):
        d["shaft"]["bearings_m"] = [0.0, 1.8]

    with pytest.raises(DataError, match=r"^p.toml: \[shaft\] bearing at 1.8 m is not on the "
                                        r"shaft \(0 to 1.5 m\); bearings_m must lie within the "
                                        r"segments$"):
        check_shaft(_prof(outside), cycle_torque=TORQUE)


def test_campbell_crossings_and_cli(tmp_path):
    from click.testing import CliRunner

    from torqlog.cli import cli
    from torqlog.present.campbell import campbell_crossings

    res = check_shaft(_prof(), orders={4.0: 1.0})
    f1 = res.current.lateral.fe_hz[0]
    tor = [f for f, r in zip(res.current.torsional.modes_hz, res.current.torsional.rigid_body,
                             strict=True) if not r][0]
    lo, hi = 2 * math.pi * 100 / 60, 2 * math.pi * 20000 / 60
    cross = campbell_crossings(res, (lo, hi))
    # the 1x line meets the first lateral mode at 60 f1 rpm, the 2x line at 30 f1 rpm;
    # order 4 meets the first torsional mode at 15 f rpm
    lat = {c["line"]: c["speed_rpm"] for c in cross
           if c["kind"] == "lateral" and c["mode_hz"] == f1}
    assert lat == {"1×": pytest.approx(60 * f1), "2×": pytest.approx(30 * f1)}
    assert any(c["kind"] == "torsional" and c["line"] == "order 4"
               and c["speed_rpm"] == pytest.approx(15 * tor) for c in cross)
    out = CliRunner().invoke(cli, ["shaft", "--profile", "sample_data/press.toml",
                                   "--speed-range", "10", "60"])
    assert out.exit_code == 2
    assert out.stderr == ("Error: --speed-range draws a Campbell diagram: give --plot "
                          "FILE.png too\n")
