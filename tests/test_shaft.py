"""Shaft natural frequencies against closed-form results and scipy as an independent solver.

Sources are named beside each check. Steel E = 207 GPa, rho = 7850 kg/m^3 are typical
handbook values for carbon steel, quoted from memory; the checks hold for any values.
"""

import math

import numpy as np
import pytest
import scipy.integrate
import scipy.linalg
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from torqlog.errors import DataError, UsageError
from torqlog.io.profile import parse_profile
from torqlog.shaft.check import check_shaft
from torqlog.shaft.lateral import (
    PointMass,
    ShaftModel,
    ShaftSegment,
    dunkerley,
    fe_modes,
    lateral_check,
    rayleigh,
    shaft_mesh,
    shaft_model_from_profile,
    static_deflection,
)

E = 207e9
RHO = 7850.0


def _hz(omega2):
    return math.sqrt(omega2) / (2 * math.pi)


# ----------------------------------------------------------------- lateral, closed form
@pytest.mark.parametrize("a", [0.25, 0.5, 0.8])
def test_single_mass_rayleigh_dunkerley_fe_equal_sqrt_k_over_m(a):
    # Roark's Formulas for Stress and Strain, Table 8.1 (simply supported, point load):
    # deflection under the load P a^2 b^2 / (3 E I L), so k = 3 E I L / (a^2 b^2).
    length, d, m = 1.2, 0.06, 80.0
    seg = ShaftSegment(length, d)
    model = ShaftModel([seg], [0.0, length], [PointMass("disc", m, a)], E, 0.0)
    b = length - a
    k = 3 * E * seg.second_moment * length / (a**2 * b**2)
    expected = _hz(k / m)
    assert rayleigh(model) == pytest.approx(expected, rel=1e-3)
    assert dunkerley(model) == pytest.approx(expected, rel=1e-3)
    freqs, shapes = fe_modes(model)
    assert freqs.shape == (1,)  # a massless shaft with one mass has one mode
    assert freqs[0] == pytest.approx(expected, rel=1e-3)
    assert shapes.shape == (1, len(shaft_mesh(model)))


def test_rotary_inertia_of_central_disc():
    # Roark's Formulas for Stress and Strain, Table 8.1 (from memory): simply supported
    # span, central load: k = 48 E I / L^3; central couple: slope at the couple
    # theta = M L / (12 E I), so k_theta = 12 E I / L. A thin disc's diametral inertia is
    # half its polar inertia. At midspan the two motions uncouple.
    length, m, ip = 1.0, 50.0, 4.0
    seg = ShaftSegment(length, 0.05)
    model = ShaftModel([seg], [0.0, length], [PointMass("disc", m, 0.5, ip)], E, 0.0)
    ei = E * seg.second_moment
    freqs, _ = fe_modes(model, rotary_inertia=True)
    expected = [_hz(48 * ei / (m * length**3)), _hz(12 * ei / length / (ip / 2))]
    assert freqs == pytest.approx(expected, rel=1e-6)
    assert len(fe_modes(model)[0]) == 1  # without rotary inertia only the bounce mode


def test_central_load_deflection():
    # Gere & Timoshenko, Mechanics of Materials, beam tables: P L^3 / (48 E I) at midspan.
    length, d, m = 1.0, 0.05, 100.0
    seg = ShaftSegment(length, d)
    model = ShaftModel([seg], [0.0, length], [PointMass("m", m, 0.5)], E, 0.0)
    x, y = static_deflection(model)
    mid = np.argmin(np.abs(x - 0.5))
    assert y[mid] == pytest.approx(m * 9.80665 * length**3 / (48 * E * seg.second_moment),
                                   rel=1e-9)
    assert y[0] == 0.0 and y[-1] == 0.0


@pytest.mark.parametrize("bore", [0.0, 0.06])
def test_uniform_shaft_own_mass_fe_and_rayleigh(bore):
    # Blevins, Formulas for Natural Frequency and Mode Shape, Table 8-1, pinned-pinned
    # beam: f1 = (pi^2 / L^2) sqrt(E I / (rho A)) / (2 pi). Rayleigh with the static
    # deflection shape is an upper bound within 1 % (Thomson & Dahleh, Rayleigh's method).
    length, d = 1.5, 0.1
    seg = ShaftSegment(length, d, bore)
    model = ShaftModel([seg], [0.0, length], [], E, RHO)
    exact = (math.pi**2 / length**2) * math.sqrt(E * seg.second_moment / (RHO * seg.area))
    exact /= 2 * math.pi
    freqs, _ = fe_modes(model, 3)
    assert freqs[0] == pytest.approx(exact, rel=0.005)
    # Blevins: the n-th pinned-pinned mode is n^2 times the first
    assert freqs[1] == pytest.approx(4 * exact, rel=0.005)
    f_r = rayleigh(model, include_self_weight=True)
    assert exact <= f_r <= 1.01 * exact
    # Dunkerley with the shaft alone reduces to the FE fundamental of the bare shaft
    assert dunkerley(model, include_self_weight=True) == pytest.approx(freqs[0], rel=1e-7)


def test_overhung_tip_deflection():
    # Gere & Timoshenko, Mechanics of Materials, beam with overhang, load P at the free
    # end of an overhang a beyond a simply supported span L: y = P a^2 (L + a) / (3 E I).
    span, a, d, m = 1.1, 0.4, 0.14, 900.0
    seg = ShaftSegment(span + a, d)
    model = ShaftModel([seg], [0.0, span], [PointMass("flywheel", m, span + a)], E, 0.0)
    x, y = static_deflection(model)
    p = m * 9.80665
    assert y[-1] == pytest.approx(p * a**2 * (span + a) / (3 * E * seg.second_moment),
                                  rel=1e-9)


def test_stepped_hollow_shaft_deflection_by_unit_load_method():
    # Unit-load (virtual work) method, Gere & Timoshenko, Mechanics of Materials:
    # deflection at the load = integral of M(x)^2 / (P E I(x)) dx, evaluated here with
    # scipy.integrate.quad, independent of the finite elements.
    segs = [ShaftSegment(0.3, 0.08), ShaftSegment(0.5, 0.10, 0.04), ShaftSegment(0.4, 0.07)]
    length, at, m = 1.2, 0.55, 250.0
    model = ShaftModel(segs, [0.0, length], [PointMass("gear", m, at)], E, 0.0)
    p = m * 9.80665
    ends = np.cumsum([0.0] + [s.length for s in segs])

    def ei(x):
        i = min(np.searchsorted(ends, x, side="right") - 1, len(segs) - 1)
        return E * segs[i].second_moment

    def moment(x):  # bending moment of the simply supported span under P at `at`
        return p * (length - at) * x / length if x <= at else p * at * (length - x) / length

    pts = sorted({*ends.tolist(), at})
    expected = sum(scipy.integrate.quad(lambda x: moment(x) ** 2 / (p * ei(x)), a, b,
                                        epsabs=0, epsrel=1e-12)[0]
                   for a, b in zip(pts[:-1], pts[1:], strict=True))
    x, y = static_deflection(model)
    assert y[np.argmin(np.abs(x - at))] == pytest.approx(expected, rel=1e-6)


@settings(max_examples=25, deadline=None)
@given(
    masses=st.lists(st.tuples(st.floats(5.0, 1000.0), st.floats(0.0, 1.0)), min_size=2,
                    max_size=4),
    span=st.floats(0.6, 1.0),
    diameters=st.tuples(st.floats(0.04, 0.12), st.floats(0.04, 0.12)),
)
def test_dunkerley_below_fe_below_rayleigh(masses, span, diameters):
    # Thomson & Dahleh, Theory of Vibration: Dunkerley's equation is a lower bound and
    # Rayleigh's quotient an upper bound of the fundamental; the FE solution of a
    # massless shaft with point masses at nodes is exact for the discrete system.
    length = 1.2
    segs = [ShaftSegment(0.5, diameters[0]), ShaftSegment(0.7, diameters[1])]
    pms = [PointMass(f"m{i}", m, round(f * length, 3)) for i, (m, f) in enumerate(masses)]
    assume(any(0.0 < p.at and abs(p.at - span) > 1e-3 for p in pms))  # one mass off bearings
    model = ShaftModel(segs, [0.0, span], pms, E, 0.0)
    fe = fe_modes(model, 1)[0][0]
    assert dunkerley(model) <= fe * (1 + 1e-9)
    assert fe <= rayleigh(model) * (1 + 1e-9)


def test_lateral_check_margin_text_and_method_error():
    seg = ShaftSegment(1.0, 0.05)
    model = ShaftModel([seg], [0.0, 1.0], [PointMass("m", 50.0, 0.5)], E, 0.0)
    # Roark Table 8.1: k = 48 E I / L^3 at midspan
    f1 = _hz(48 * E * seg.second_moment / 50.0)
    res = lateral_check(model, f1 / 5.0, required_ratio=3.0)
    d = res.to_dict()
    assert d["ratio"] == pytest.approx(5.0, rel=1e-6)
    assert (d["verdict"], d["regime"]) == ("pass", "stiff")
    assert d["forcing_2x_hz"] == pytest.approx(2 * f1 / 5.0, rel=1e-12)
    assert d["margin_text"] == (f"first lateral mode {f1:.1f} Hz is 5.0× the shaft speed "
                                f"{f1 / 5:.2f} Hz (stiff shaft, required 3×): pass")
    low = lateral_check(model, f1 / 2.0)
    assert low.verdict == "fail"
    assert low.margin_text.endswith("is only 2.0× the shaft speed "
                                    f"{f1 / 2:.2f} Hz (stiff shaft, required 3×): fail")
    with pytest.raises(UsageError, match=r"^unknown lateral method 'dunk'; valid: fe, "
                                         r"rayleigh, dunkerley$"):
        lateral_check(model, 1.0, method="dunk")


def test_lateral_flexible_shaft_separation_margin():
    # massless shaft, one mass: a single mode at f1 (Roark Table 8.1). Running above it
    # (common practice: every mode at least ±15 % from 1× and 2×)
    seg = ShaftSegment(1.0, 0.05)
    model = ShaftModel([seg], [0.0, 1.0], [PointMass("m", 50.0, 0.5)], E, 0.0)
    f1 = _hz(48 * E * seg.second_moment / 50.0)
    ok = lateral_check(model, f1 / 0.7, n_modes=1)   # mode at 0.7× and 0.35× of 2×
    assert (ok.regime, ok.verdict) == ("flexible", "pass")
    assert ok.margin_text.endswith("is -30 % from 1× (required ±15 %): pass")
    bad = lateral_check(model, f1 / 0.9, n_modes=1)  # 10 % below 1×
    assert (bad.regime, bad.verdict) == ("flexible", "fail")
    assert bad.margin_text.endswith("is -10 % from 1× (required ±15 %): fail")
    with pytest.raises(UsageError, match=r"^separation margin must be a fraction between 0 "
                                         r"and 1, got 1.5$"):
        lateral_check(model, 1.0, margin=1.5)


def test_genset_lateral_mode_near_torque_order_passes():
    # a genset shaft whose first lateral mode is 8x its running speed but only 1x its
    # 8th torque order: torque orders drive torsional modes, not lateral ones (Thomson
    # and Dahleh, whirling: lateral modes are excited by unbalance at 1x), so it passes
    prof = parse_profile({
        "machine": {"speed_rpm": 1500.0},
        "shaft": {"bearings_m": [0.0, 1.0], "segments": [{"length_m": 1.0, "diameter_m": 0.05}],
                  "masses": [{"name": "flywheel", "mass_kg": 50.0, "at_m": 0.5}]}},
        "genset.toml")
    f1 = fe_modes(shaft_model_from_profile(prof), 1)[0][0]
    res = check_shaft(prof, speed=2 * math.pi * f1 / 8.0, orders={8.0: 1.0})
    lat = res.current.lateral
    assert lat.ratio == pytest.approx(8.0, rel=2e-3)
    assert lat.verdict == "pass"
    assert res.verdict == "pass"


def test_model_errors():
    seg = ShaftSegment(1.0, 0.05)
    with pytest.raises(DataError, match=r"^shaft model bearing at 1.2 m is not on the shaft "
                                        r"\(0 to 1 m\); bearings_m must lie within the "
                                        r"segments$"):
        ShaftModel([seg], [0.0, 1.2], [], E, RHO)
    with pytest.raises(DataError, match=r"^shaft model needs at least two bearings"):
        ShaftModel([seg], [0.5], [], E, RHO)
    with pytest.raises(DataError, match=r"^shaft model mass 'fly' at 1.5 m is outside"):
        ShaftModel([seg], [0.0, 1.0], [PointMass("fly", 10.0, 1.5)], E, RHO)
    with pytest.raises(DataError, match=r"^shaft model segments\[0\] bore 50 mm must be"):
        ShaftModel([ShaftSegment(1.0, 0.05, 0.05)], [0.0, 1.0], [], E, RHO)


# ----------------------------------------------------------------- the check
_PROFILE = {
    "machine": {"speed_rpm": 45.0},
    "shaft": {"bearings_m": [0.0, 1.10],
              "segments": [{"length_m": 0.35, "diameter_m": 0.14},
                           {"length_m": 0.75, "diameter_m": 0.16},
                           {"length_m": 0.40, "diameter_m": 0.14}],
              "masses": [{"name": "flywheel", "mass_kg": 900.0, "at_m": 1.40},
                         {"name": "gear", "mass_kg": 150.0, "at_m": 0.50}]},
    "torsional": {"names": ["motor", "flywheel", "crank"], "inertias_kgm2": [0.35, 310.0, 40.0],
                  "stiffness_Nm_per_rad": [2.1e6, 8.5e6]},
}


def test_check_shaft_before_after_contract():
    prof = parse_profile(_PROFILE, "press.toml")
    res = check_shaft(prof, add_mass=600.0, add_inertia=150.0)
    d = res.to_dict()
    assert set(d) == {"before", "after", "lateral", "torsional", "verdict", "failed",
                      "cautions", "options", "forced_response", "strength",
                      "fatigue_safety_factor", "governing_section",
                      "governing_check", "marginal"}
    assert (d["verdict"], d["failed"]) == ("pass", [])
    assert set(d["lateral"]) >= {"rayleigh_hz", "dunkerley_hz", "fe_hz",
                                 "static_deflection_max_mm", "forcing_hz", "ratio",
                                 "required_ratio", "verdict", "margin_text"}
    assert d["lateral"] == d["after"]["lateral"]
    # more mass at the same place lowers the frequency (Rayleigh quotient, Thomson)
    assert d["after"]["lateral"]["fe_hz"][0] < d["before"]["lateral"]["fe_hz"][0]
    # lateral forcing: 1x the flywheel shaft speed, 45 rpm = 0.75 Hz, and 2x
    assert d["lateral"]["forcing_hz"] == pytest.approx(0.75, rel=1e-12)
    assert d["lateral"]["forcing_2x_hz"] == pytest.approx(1.5, rel=1e-12)
    assert d["options"]["add_mass_at_m"] == 1.40  # placed at the "flywheel" mass
    # the added inertia goes to the flywheel element: compare with scipy eigvals
    j = np.array([0.35, 460.0, 40.0])
    k = np.array([2.1e6, 8.5e6])
    K = np.array([[k[0], -k[0], 0.0], [-k[0], k[0] + k[1], -k[1]], [0.0, -k[1], k[1]]])
    w2 = np.sort(scipy.linalg.eigvals(np.diag(1 / j) @ K).real)
    np.testing.assert_allclose(d["torsional"]["modes_hz"][1:],
                               np.sqrt(w2[1:]) / (2 * np.pi), rtol=1e-9)
    assert d["torsional"]["rigid_body"] == [True, False, False]
    assert any("qualified, licensed engineer" in c for c in d["cautions"])
    assert check_shaft(prof).to_dict()["after"] is None


def test_check_shaft_verdict_names_failed_checks():
    # 1200 rpm = 20 Hz: the first lateral mode of this shaft (about 59 Hz) is under the
    # 3x required of a stiff shaft (common practice)
    prof = parse_profile(_PROFILE, "press.toml")
    res = check_shaft(prof, speed=1200.0 * 2 * math.pi / 60, orders={1.0: 1.0})
    assert res.current.lateral.forcing_hz == pytest.approx(20.0, rel=1e-12)
    assert res.verdict == "fail"
    assert res.failures == {"lateral": res.current.lateral.margin_text}
    assert res.failures["lateral"].endswith("(stiff shaft, required 3×): fail")
    d = res.to_dict()
    assert (d["verdict"], d["failed"]) == ("fail", ["lateral"])


def test_check_shaft_revs_per_cycle_gives_half_orders():
    # a four-stroke cycle of 2 revolutions has half orders of the shaft speed (Ker Wilson,
    # Practical Solution of Torsional Vibration Problems, vol. 2, from memory)
    prof = parse_profile(_PROFILE, "press.toml")
    d = check_shaft(prof, revs_per_cycle=2).to_dict()
    assert d["options"]["revs_per_cycle"] == 2
    assert d["torsional"]["orders_checked"] == [k / 2 for k in range(1, 21)]
    with pytest.raises(UsageError, match=r"^revs per cycle must be a whole number of 1 or "
                                         r"more, got 0$"):
        check_shaft(prof, revs_per_cycle=0)


def test_check_shaft_errors():
    no_shaft = parse_profile({"machine": {"speed_rpm": 45.0}}, "bare.toml")
    with pytest.raises(DataError, match=r"^bare.toml: no \[shaft\] section; add one with "
                                        r"bearings_m, segments and masses to check the "
                                        r"shaft$"):
        check_shaft(no_shaft)
    prof = parse_profile(_PROFILE, "press.toml")
    with pytest.raises(UsageError, match=r"^added mass at 2 m is outside the shaft \(0 to "
                                         r"1.5 m\); give --at within the shaft$"):
        check_shaft(prof, add_mass=100.0, add_mass_at=2.0)
    with pytest.raises(UsageError, match=r"^no element 'rim' in the torsional chain; valid: "
                                         r"motor, flywheel, crank$"):
        check_shaft(prof, add_inertia=10.0, add_inertia_at="rim")


def test_check_shaft_with_order_spectrum():
    # orders 1 and 2 strong, order 5 below the 5 % share: the highest forcing is 2x speed
    from torqlog.signal.spectrum import order_spectrum

    theta = np.arange(360) * 2 * np.pi / 360
    torque = 900.0 + 400.0 * np.cos(theta) + 300.0 * np.cos(2 * theta) + 10.0 * np.cos(5 * theta)
    spec = order_spectrum(torque)
    prof = parse_profile(_PROFILE, "press.toml")
    d = check_shaft(prof, orders=spec).to_dict()
    assert d["options"]["orders_source"] == "spectrum"
    assert d["options"]["forcing_order"] == 2.0
    assert d["lateral"]["forcing_hz"] == pytest.approx(45.0 / 60.0, rel=1e-12)
    assert d["torsional"]["orders_checked"] == [1.0, 2.0]
    assert not any("assumed significant" in c for c in d["cautions"])


def test_segment_material_given_by_name_or_by_its_properties():
    # The shaft's material comes from torqlog.rotor.materials (steel = steel-c45: E 210 GPa,
    # EN 1993-1-1 cl. 3.2.6; 7850 kg/m^3, EN 1991-1-1 Annex A); a segment may name its own
    # material or give it as a table of properties, through the parser flywheels use.
    # Aluminium alloy E 70 GPa, 2700 kg/m^3: typical handbook values, from memory.
    from torqlog.shaft.lateral import shaft_model_from_profile

    data = {"shaft": dict(_PROFILE["shaft"])}
    data["shaft"]["segments"] = [dict(s) for s in data["shaft"]["segments"]]
    data["shaft"]["segments"][1]["material"] = {
        "name": "aluminium bar", "density_kg_per_m3": 2700, "modulus_GPa": 70,
        "poisson": 0.33, "yield_MPa": 240}
    data["shaft"]["segments"][2]["material"] = "ductile-iron"
    model = shaft_model_from_profile(parse_profile(data, "press.toml"))
    assert model.modulus == 210e9 and model.density == 7850.0
    assert model.segments[1].modulus == 70e9 and model.segments[1].density == 2700.0
    assert model.segments[2].modulus == 169e9  # EN-GJS-400-15 of the table
    assert model.segments[0].modulus is None
    data["shaft"]["segments"][1]["material"] = {"name": "aluminium bar", "modulus_GPa": 70}
    with pytest.raises(UsageError, match=r"'aluminium bar' is given by its properties and "
                       r"lacks 1\. density .*2\. poisson .*3\. strength"):
        shaft_model_from_profile(parse_profile(data, "press.toml"))


def test_dunkerley_ignores_a_mass_held_by_a_bearing():
    # A mass on a bearing does not deflect, so it adds nothing to Dunkerley's sum
    # (Thomson & Dahleh, Dunkerley's equation): with a 50 kg mass at mid-span of a 1 m,
    # 50 mm massless steel shaft the answer is the single-mass √(k/m), k = 48EI/L³
    # (Roark, simply supported beam, central load).
    from torqlog.shaft.lateral import PointMass, ShaftModel, ShaftSegment, dunkerley

    e = 210e9
    seg = ShaftSegment(length=1.0, diameter=0.05)
    model = ShaftModel(segments=(seg,), bearings=(0.0, 1.0),
                       masses=(PointMass("on bearing", 100.0, 0.0),
                               PointMass("middle", 50.0, 0.5)), modulus=e, density=0.0)
    k = 48 * e * seg.second_moment / 1.0**3
    assert dunkerley(model) == pytest.approx(math.sqrt(k / 50.0) / (2 * math.pi), rel=1e-3)
