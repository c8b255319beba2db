"""Flywheel physics against published closed forms and scipy as an independent solver.

Sources named beside each check:
[TG]  Timoshenko & Goodier, Theory of Elasticity, 3rd ed., section 32 (rotating disks).
[R]   Roark's Formulas for Stress and Strain, 7th ed., Table 16.2 (rotating disks).
[SH]  Shigley's Mechanical Engineering Design, 9th ed., section 3-16 (press and shrink fits).
No worked example from a published machine-design text is reproduced: none is recalled
with enough confidence to quote its numbers.
"""

import math

import numpy as np
import pytest
from scipy.integrate import solve_bvp

from torqlog.errors import DataError, UsageError
from torqlog.rotor.discs import disc_stresses, rim_hoop_stress, stepped_disc_stresses
from torqlog.rotor.flywheel import (
    BRITTLE_CAUTION,
    CASTING_CAUTION,
    CAUTIONS,
    DiscGeometry,
    check_flywheel,
    design_flywheel,
    inertia,
    mass,
    requirement_from_size,
    solve_geometry,
)
from torqlog.rotor.materials import get_material

RPM = 2 * math.pi / 60
RHO, NU, E = 7850.0, 0.3, 210e9  # steel


# --------------------------------------------------------------------------- closed forms
@pytest.mark.parametrize("nu", [0.26, 0.3])
def test_solid_disc_centre_and_rim_stress_closed_form(nu):
    # [TG] [R]: centre s_r = s_t = (3+nu)/8 rho w^2 R^2; rim s_t = (1-nu)/4 rho w^2 R^2
    w, b = 150.0, 0.6
    sr, st = disc_stresses(np.array([0.0, b]), w, b, 0.0, RHO, nu)
    centre = (3 + nu) / 8 * RHO * w**2 * b**2
    assert sr[0] == pytest.approx(centre, rel=1e-3)
    assert st[0] == pytest.approx(centre, rel=1e-3)
    assert st[1] == pytest.approx((1 - nu) / 4 * RHO * w**2 * b**2, rel=1e-3)
    assert sr[1] == pytest.approx(0.0, abs=1e-6 * centre)


@pytest.mark.parametrize(("a", "b"), [(0.08, 0.7), (0.2, 0.5), (0.45, 0.5)])
def test_annulus_bore_and_peak_radial_stress_closed_form(a, b):
    # [TG] [R]: bore s_t = (3+nu)/4 rho w^2 (b^2 + (1-nu)/(3+nu) a^2);
    # peak s_r = (3+nu)/8 rho w^2 (b - a)^2 at r = sqrt(a b)
    w = 120.0
    sr, st = disc_stresses(np.array([a, math.sqrt(a * b), b]), w, b, a, RHO, NU)
    bore = (3 + NU) / 4 * RHO * w**2 * (b**2 + (1 - NU) / (3 + NU) * a**2)
    assert st[0] == pytest.approx(bore, rel=1e-3)
    assert sr[1] == pytest.approx((3 + NU) / 8 * RHO * w**2 * (b - a) ** 2, rel=1e-3)
    assert sr[0] == pytest.approx(0.0, abs=1e-9 * bore)
    assert sr[2] == pytest.approx(0.0, abs=1e-9 * bore)


def test_small_bore_doubles_the_centre_stress():
    # [TG] sec. 32: a very small hole doubles the maximum stress of the solid disc
    w, b = 100.0, 0.5
    _, st_hole = disc_stresses(1e-5, w, b, 1e-5, RHO, NU)
    _, st_solid = disc_stresses(0.0, w, b, 0.0, RHO, NU)
    assert st_hole / st_solid == pytest.approx(2.0, rel=1e-3)


def test_check_flywheel_reports_the_closed_form_stresses():
    # [TG]: bore hoop stress and centre stress of the flywheel checks
    w = 450 * RPM
    g = DiscGeometry("annular-disc", 1.4, 0.16, 0.12)
    r = check_flywheel(g, "steel", w)
    a, b = 0.08, 0.7
    bore = (3 + NU) / 4 * RHO * w**2 * (b**2 + (1 - NU) / (3 + NU) * a**2)
    assert r.to_dict()["stress_tangential_bore_MPa"] == pytest.approx(bore / 1e6, rel=1e-3)
    assert r.stress_von_mises_max == pytest.approx(bore, rel=1e-3)  # s_r = 0 at the bore
    assert r.critical_radius == pytest.approx(a)
    assert r.stress_radial_max == pytest.approx((3 + NU) / 8 * RHO * w**2 * (b - a) ** 2,
                                                rel=1e-6)
    solid = check_flywheel(DiscGeometry("solid-disc", 1.4, 0.0, 0.12), "steel", w)
    assert solid.stress_critical == pytest.approx((3 + NU) / 8 * RHO * w**2 * b**2, rel=1e-3)


# --------------------------------------------------------------------------- scipy BVP
def _bvp_stresses(a, b, w, rho, nu, e):
    """Solve u'' + u'/r - u/r^2 = -(1-nu^2) rho w^2 r / E with s_r(a) = s_r(b) = 0."""
    c = (1 - nu**2) * rho * w**2 / e

    def f(r, y):
        return np.vstack([y[1], -y[1] / r + y[0] / r**2 - c * r])

    def sr(y, r):
        return e / (1 - nu**2) * (y[1] + nu * y[0] / r)

    def bc(ya, yb):
        return np.array([sr(ya, a), sr(yb, b)]) / (rho * w**2 * b**2)

    r = np.linspace(a, b, 60)
    sol = solve_bvp(f, bc, r, np.zeros((2, r.size)), tol=1e-10, max_nodes=100000)
    assert sol.success
    rr = np.linspace(a, b, 200)
    u, du = sol.sol(rr)
    return rr, e / (1 - nu**2) * (du + nu * u / rr), e / (1 - nu**2) * (u / rr + nu * du)


@pytest.mark.parametrize(("a", "b", "mat"), [(0.08, 0.7, "steel"), (0.1, 0.45, "grey-iron-250"),
                                             (0.3, 0.5, "ductile-iron")])
def test_stress_profile_against_scipy_solve_bvp(a, b, mat):
    # independent numerical solution of the rotating-disc equilibrium ODE [TG] eq. for u
    m = get_material(mat)
    w = 200.0
    rr, sr_bvp, st_bvp = _bvp_stresses(a, b, w, m.density, m.poisson, m.modulus)
    sr, st = disc_stresses(rr, w, b, a, m.density, m.poisson)
    scale = np.max(np.abs(st_bvp))
    np.testing.assert_allclose(st, st_bvp, rtol=5e-3)
    np.testing.assert_allclose(sr, sr_bvp, atol=5e-3 * scale)
    # the flywheel check itself reports the same profile
    r = check_flywheel(DiscGeometry("annular-disc", 2 * b, 2 * a, 0.1), m, w)
    st_lib = np.interp(rr, r.radius, r.tangential)
    np.testing.assert_allclose(st_lib, st_bvp, rtol=5e-3)


def test_stepped_rim_and_web_against_two_region_solve_bvp():
    # web (a..c, thickness t1) and rim (c..b, thickness t2): the same ODE in each region,
    # joined by continuity of u and of the radial force t * s_r (stepped-disc method,
    # Timoshenko, Strength of Materials II), solved by scipy on a mapped coordinate.
    a, c, b, t1, t2, w = 0.08, 0.55, 0.7, 0.05, 0.25, 150.0
    k = (1 - NU**2) * RHO * w**2 / E

    def f(s, y):
        r1, r2 = a + s * (c - a), c + s * (b - c)
        l1, l2 = c - a, b - c
        return np.vstack([l1 * y[1], l1 * (-y[1] / r1 + y[0] / r1**2 - k * r1),
                          l2 * y[3], l2 * (-y[3] / r2 + y[2] / r2**2 - k * r2)])

    def sr(u, du, r):
        return E / (1 - NU**2) * (du + NU * u / r)

    def bc(ya, yb):
        scale = RHO * w**2 * b**2
        return np.array([sr(ya[0], ya[1], a) / scale, sr(yb[2], yb[3], b) / scale,
                         (yb[0] - ya[2]) * E / (scale * b),
                         (t1 * sr(yb[0], yb[1], c) - t2 * sr(ya[2], ya[3], c)) / scale])

    s = np.linspace(0, 1, 80)
    sol = solve_bvp(f, bc, s, np.zeros((4, s.size)), tol=1e-10, max_nodes=100000)
    assert sol.success
    ss = np.linspace(0, 1, 101)
    y = sol.sol(ss)
    r1, r2 = a + ss * (c - a), c + ss * (b - c)
    st1 = E / (1 - NU**2) * (y[0] / r1 + NU * y[1])
    st2 = E / (1 - NU**2) * (y[2] / r2 + NU * y[3])
    lib1 = stepped_disc_stresses(r1[:-1], w, [a, c, b], [t1, t2], RHO, NU)
    lib2 = stepped_disc_stresses(r2, w, [a, c, b], [t1, t2], RHO, NU)
    np.testing.assert_allclose(lib1[1], st1[:-1], rtol=5e-3)
    np.testing.assert_allclose(lib2[1], st2, rtol=5e-3)
    g = DiscGeometry("rim", 2 * b, 2 * a, t2, rim_inner_diameter=2 * c, web_width=t1)
    assert check_flywheel(g, "steel", w).stress_tangential_bore == pytest.approx(st1[0],
                                                                                 rel=5e-3)


def test_stepped_disc_of_equal_steps_is_the_uniform_disc():
    # [TG]: equal thickness must give the uniform-disc closed form
    r = np.linspace(0.08, 0.7, 50)
    got = stepped_disc_stresses(r, 100.0, [0.08, 0.4, 0.7], [0.2, 0.2], RHO, NU)
    want = disc_stresses(r, 100.0, 0.7, 0.08, RHO, NU)
    np.testing.assert_allclose(got[1], want[1], rtol=1e-9)
    np.testing.assert_allclose(got[0], want[0], atol=1e-9 * want[1].max())


# --------------------------------------------------------------------------- inertia, rim
def test_inertia_and_mass_textbook_formulas():
    # I = m R^2 / 2 (solid), I = m (R^2 + r^2) / 2 (annulus), m = rho pi b (R^2 - r^2)
    R, r, b = 0.7, 0.08, 0.12
    solid = DiscGeometry("solid-disc", 2 * R, 0.0, b)
    m_solid = RHO * math.pi * R**2 * b
    assert mass(solid, RHO) == pytest.approx(m_solid, rel=1e-12)
    assert inertia(solid, RHO) == pytest.approx(0.5 * m_solid * R**2, rel=1e-12)
    ann = DiscGeometry("annular-disc", 2 * R, 2 * r, b)
    m_ann = RHO * math.pi * (R**2 - r**2) * b
    assert mass(ann, RHO) == pytest.approx(m_ann, rel=1e-12)
    assert inertia(ann, RHO) == pytest.approx(0.5 * m_ann * (R**2 + r**2), rel=1e-12)
    # rim ring plus web: the sum of two annuli
    rim = DiscGeometry("rim", 2 * R, 2 * r, b, rim_inner_diameter=1.1, web_width=0.04)
    m_ring = RHO * math.pi * (R**2 - 0.55**2) * b
    m_web = RHO * math.pi * (0.55**2 - r**2) * 0.04
    assert inertia(rim, RHO) == pytest.approx(
        0.5 * m_ring * (R**2 + 0.55**2) + 0.5 * m_web * (0.55**2 + r**2), rel=1e-12)
    no_web = DiscGeometry("rim", 2 * R, 2 * r, b, rim_inner_diameter=1.1)
    assert inertia(no_web, RHO) == pytest.approx(0.5 * m_ring * (R**2 + 0.55**2), rel=1e-12)


def test_rim_hoop_stress_thin_ring():
    # thin rotating ring: s = rho v^2 (Timoshenko, Strength of Materials I)
    assert rim_hoop_stress(7850.0, 30.0) == pytest.approx(7.065e6, rel=1e-12)
    # a 1 mm deep free rim approaches it
    w = 60.0
    g = DiscGeometry("rim", 1.4, 0.16, 0.2, rim_inner_diameter=1.398)
    r = check_flywheel(g, "steel", w)
    assert r.stress_critical == pytest.approx(RHO * (w * 0.7) ** 2, rel=5e-3)
    assert r.to_dict()["rim_hoop_stress_thin_MPa"] == pytest.approx(RHO * (w * 0.7) ** 2 / 1e6)


# --------------------------------------------------------------------------- margins
@pytest.mark.parametrize("mat", ["steel-s355", "grey-iron-200", "ductile-iron"])
def test_speed_factor_is_sqrt_of_stress_factor_and_yield_speed_reaches_strength(mat):
    m = get_material(mat)
    w = 500 * RPM
    r = check_flywheel(DiscGeometry("annular-disc", 1.2, 0.15, 0.1), m, w)
    d = r.to_dict()
    assert d["speed_safety_factor"] == pytest.approx(math.sqrt(d["stress_safety_factor"]),
                                                     rel=1e-12)
    assert d["yield_speed_rpm"] / d["speed_rpm"] == pytest.approx(d["speed_safety_factor"],
                                                                  rel=1e-12)
    # at the yield speed the critical point reaches the strength: von Mises at the bore
    # (s_r = 0 there, so s_t) for ductile, max principal (also s_t) for brittle grey iron
    _, st = disc_stresses(0.075, r.yield_speed, 0.6, 0.075, m.density, m.poisson)
    assert float(st) == pytest.approx(m.strength, rel=1e-9)
    assert d["criterion"] == ("max-principal" if m.brittle else "von-mises")


def test_required_factor_and_verdict():
    # required stress factor = material factor x overspeed^2 (stated rule, common practice)
    g = DiscGeometry("annular-disc", 1.4, 0.16, 0.12)
    r = check_flywheel(g, "ductile-iron", 450 * RPM, overspeed=1.25)
    assert r.required_stress_factor == pytest.approx(1.5 * 1.25**2)
    assert r.verdict == "pass"
    fast = check_flywheel(g, "grey-iron-200", 600 * RPM)  # 44 m/s rim on grey iron
    d = fast.to_dict()
    assert d["rim_speed_m_s"] == pytest.approx(600 * RPM * 0.7)
    assert d["verdict"] == "fail"
    assert d["failed"] == ["rim_speed_m_s"]
    assert d["checks"][1] == {"name": "rim_speed_m_s", "value": pytest.approx(43.98, abs=0.01),
                              "limit": 30.0, "ok": False}
    assert d["cautions"][: len(CAUTIONS)] == list(CAUTIONS)
    assert BRITTLE_CAUTION in d["cautions"]  # grey cast iron is brittle (EN 1561)


def test_only_a_cast_material_gets_the_casting_caution():
    # a steel disc is forged or rolled, not cast: no cast-iron caution (common practice)
    g = DiscGeometry("annular-disc", 1.4, 0.16, 0.12)
    steel = check_flywheel(g, "steel-c45", 300 * RPM).to_dict()["cautions"]
    assert not [c for c in steel if "brittle" in c or "casting" in c]
    assert BRITTLE_CAUTION not in steel and CASTING_CAUTION not in steel
    grey = check_flywheel(g, "grey-iron-250", 300 * RPM).to_dict()["cautions"]
    assert BRITTLE_CAUTION in grey and CASTING_CAUTION not in grey
    sg = check_flywheel(g, "ductile-iron", 300 * RPM).to_dict()["cautions"]
    assert CASTING_CAUTION in sg and BRITTLE_CAUTION not in sg
    assert sg[len(CAUTIONS)] == ("Ductile iron is a casting: casting flaws, porosity and "
                                 "thick sections lower its strength below the test-bar "
                                 "value; inspect castings before use.")


def test_energy_stored_and_released():
    # kinetic energy 1/2 I w^2; to a slowdown s: 1/2 I w^2 (1 - (1 - s)^2)
    g = DiscGeometry("annular-disc", 1.4, 0.16, 0.12)
    w = 450 * RPM
    d = check_flywheel(g, "steel", w, slowdown=0.1).to_dict()
    assert d["stored_energy_J"] == pytest.approx(0.5 * d["inertia_kgm2"] * w**2, rel=1e-12)
    assert d["energy_released_share"] == pytest.approx(0.19, rel=1e-12)
    assert d["energy_released_J"] == pytest.approx(
        0.5 * d["inertia_kgm2"] * (w**2 - (0.9 * w) ** 2), rel=1e-12)
    assert check_flywheel(g, "steel", w).to_dict()["energy_released_J"] is None


def test_shrink_fit_pressure_and_loosening_speed():
    hub, shaft = get_material("ductile-iron"), get_material("steel")
    a, b, delta, w = 0.08, 0.7, 0.12e-3, 450 * RPM
    g = DiscGeometry("annular-disc", 2 * b, 2 * a, 0.12)
    d = check_flywheel(g, hub, w, interference=delta).to_dict()
    # [SH] sec. 3-16 fit pressure, two materials, solid shaft, radial interference delta/2
    p = (delta / 2) / (a * ((1 / hub.modulus) * ((b**2 + a**2) / (b**2 - a**2) + hub.poisson)
                            + (1 / shaft.modulus) * (1 - shaft.poisson)))
    assert d["fit_pressure_rest_MPa"] == pytest.approx(p / 1e6, rel=1e-9)
    # Lame hub hoop stress at the bore under p, [SH] sec. 3-16 (Lame): p (b^2 + a^2)/(b^2 - a^2),
    # radial -p: the von Mises value at rest
    s_t, s_r = p * (b**2 + a**2) / (b**2 - a**2), -p
    vm_rest = math.sqrt(s_r**2 - s_r * s_t + s_t**2)
    assert d["stress_bore_with_fit_MPa"] >= vm_rest / 1e6 * (1 - 1e-9)
    # loosening: free bore growth a s_t(a)/E [TG] minus solid shaft growth
    # a (1-nu)/4 rho w^2 a^2 / E equals delta/2
    per_w2 = (a / hub.modulus * (3 + hub.poisson) / 4 * hub.density
              * (b**2 + (1 - hub.poisson) / (3 + hub.poisson) * a**2)
              - a / shaft.modulus * (1 - shaft.poisson) / 4 * shaft.density * a**2)
    w_loose = math.sqrt(delta / 2 / per_w2)
    assert d["fit_loosening_rpm"] == pytest.approx(w_loose / RPM, rel=1e-3)
    assert d["options"]["shaft_material"] == "steel-c45"


def test_fit_not_checked_without_interference():
    d = check_flywheel(DiscGeometry("annular-disc", 1.4, 0.16, 0.12), "steel",
                       50.0).to_dict()
    assert d["fit_loosening_rpm"] is None
    assert [c["name"] for c in d["checks"]] == ["stress_safety_factor", "rim_speed_m_s",
                                                   "width_to_outer_diameter"]


# --------------------------------------------------------------------------- sizing
def test_solve_width_and_diameter_hold_the_inertia():
    mat = get_material("ductile-iron")
    g = solve_geometry(310.0, mat, "annular-disc", outer_diameter=1.4, bore=0.16)
    # closed form: b = 2 I / (pi rho (R^4 - r^4))
    assert g.width == pytest.approx(2 * 310 / (math.pi * mat.density * (0.7**4 - 0.08**4)),
                                    rel=1e-12)
    g2 = solve_geometry(310.0, mat, "annular-disc", width=0.2, bore=0.16)
    assert inertia(g2, mat.density) == pytest.approx(310.0, rel=1e-12)
    g3 = solve_geometry(310.0, mat, "rim", width=0.2, bore=0.16, rim_depth=0.1,
                        web_width=0.04)  # brentq
    assert inertia(g3, mat.density) == pytest.approx(310.0, rel=1e-9)
    assert g3.outer_diameter - g3.rim_inner_diameter == pytest.approx(0.2)


def test_design_flywheel_solves_then_checks():
    r = design_flywheel(310.0, 450 * RPM, "ductile-iron", "annular-disc", 1.4, 0.16,
                        max_width=0.35, slowdown=0.1)
    d = r.to_dict()
    assert d["inertia_kgm2"] == pytest.approx(310.0, rel=1e-12)
    assert d["options"]["solved"] == "width"
    assert d["checks"][-1]["name"] == "inertia_kgm2" and d["checks"][-1]["ok"]
    keys = {"width_m", "outer_diameter_m", "bore_m", "shape", "material", "mass_kg",
            "inertia_kgm2", "speed_rpm", "rim_speed_m_s", "rim_speed_limit_m_s",
            "stored_energy_J", "energy_released_J", "energy_released_share",
            "stress_tangential_bore_MPa", "stress_radial_max_MPa",
            "stress_von_mises_max_MPa", "strength_MPa", "stress_safety_factor",
            "yield_speed_rpm", "speed_safety_factor", "fit_loosening_rpm", "checks",
            "verdict", "failed", "cautions", "options"}
    assert keys <= set(d)
    df = r.to_pandas()
    assert list(df.columns) == ["radius_m", "stress_radial_MPa", "stress_tangential_MPa",
                                "stress_von_mises_MPa", "stress_max_principal_MPa"]
    assert df["radius_m"].iloc[0] == pytest.approx(0.08)


def test_requirement_from_size_result():
    req, w, info = requirement_from_size({"added_inertia_kgm2": 310.0,
                                          "speed_mean_rpm": 45.0})
    assert (req, w / RPM) == (310.0, pytest.approx(45.0))
    req, w, info = requirement_from_size({"added_inertia_kgm2": 310.0, "speed_mean_rpm": 45.0,
                                          "flywheel_speed_ratio": 2.0})
    # referred inertia scales with the speed ratio squared (kinetic energy is conserved)
    assert req == pytest.approx(77.5) and w / RPM == pytest.approx(90.0)
    req, _, info = requirement_from_size({"added_inertia_at_flywheel_kgm2": 80.0,
                                          "added_inertia_kgm2": 310.0, "speed_mean_rpm": 45.0,
                                          "options": {"flywheel_speed_ratio": 2.0}})
    assert req == 80.0 and info["inertia_key"] == "added_inertia_at_flywheel_kgm2"
    with pytest.raises(DataError) as err:
        requirement_from_size({"speed_mean_rpm": 45.0}, "size.json")
    assert str(err.value) == ("size.json: no 'added_inertia_at_flywheel_kgm2' or "
                              "'added_inertia_kgm2'; write the file with 'torqlog size "
                              "--format json' or give --inertia")


# --------------------------------------------------------------------------- bad input
def test_bore_not_smaller_than_outside_diameter():
    with pytest.raises(UsageError) as err:
        DiscGeometry("annular-disc", 1.4, 1.5, 0.1)
    assert str(err.value) == "bore (1.5 m) must be smaller than the outer diameter (1.4 m)"
    with pytest.raises(UsageError) as err:
        DiscGeometry("annular-disc", 1.4, 1.4, 0.1)
    assert str(err.value) == "bore (1.4 m) must be smaller than the outer diameter (1.4 m)"


def test_shape_rules():
    with pytest.raises(UsageError) as err:
        DiscGeometry("solid-disc", 1.4, 0.16, 0.1)
    assert str(err.value) == ("a solid-disc has no bore; use shape 'annular-disc' for a disc "
                              "with a 0.16 m bore (a bore about doubles the centre stress)")
    with pytest.raises(UsageError) as err:
        DiscGeometry("cone", 1.4, 0.16, 0.1)
    assert str(err.value) == "unknown shape 'cone'; valid: solid-disc, annular-disc, rim"
    with pytest.raises(UsageError) as err:
        DiscGeometry("rim", 1.4, 0.16, 0.1)
    assert str(err.value) == ("shape 'rim' needs rim_inner_diameter (between the bore and "
                              "the outer diameter)")


def test_negative_speed():
    g = DiscGeometry("annular-disc", 1.4, 0.16, 0.1)
    with pytest.raises(UsageError) as err:
        check_flywheel(g, "steel", -600 * RPM)
    assert str(err.value) == "speed must be positive, got -600 rpm (-62.8319 rad/s)"


def test_unknown_material_in_design():
    with pytest.raises(UsageError) as err:
        design_flywheel(310.0, 50.0, "xyz", "annular-disc", 1.4, 0.16)
    assert str(err.value) == ("unknown material 'xyz'; known: grey-iron-200, grey-iron-250, "
                              "ductile-iron, steel-c45, steel-s355, steel")


def test_envelope_that_cannot_hold_the_inertia():
    mat = get_material("grey-iron-200")
    need = 2 * 3100 / (math.pi * mat.density * (0.7**4 - 0.08**4))  # closed form, 1.15 m
    with pytest.raises(DataError) as err:
        design_flywheel(3100.0, 300 * RPM, mat, "annular-disc", 1.4, 0.16, max_width=0.35)
    assert str(err.value) == (f"a 1.4 m annular-disc in grey-iron-200 holding 3100 kg*m^2 "
                              f"needs a width of {need:.3g} m; the envelope allows 0.35 m")
    assert f"{need:.3g}" == "1.15"
    with pytest.raises(DataError) as err:
        solve_geometry(3100.0, mat, "annular-disc", width=0.2, bore=0.16,
                       max_outer_diameter=1.4)
    od = 2 * (2 * 3100 / (math.pi * mat.density * 0.2) + 0.08**4) ** 0.25
    assert str(err.value) == (f"a 0.2 m wide annular-disc in grey-iron-200 holding 3100 "
                              f"kg*m^2 needs an outer diameter of {od:.3g} m; the envelope "
                              f"allows 1.4 m")


def test_conflicting_dimensions():
    with pytest.raises(UsageError) as err:
        solve_geometry(310.0, "steel", "annular-disc", bore=0.16)
    assert str(err.value) == ("give either the outer diameter or the width, not both and not "
                              "neither; the other one is solved from the inertia")
    with pytest.raises(UsageError) as err:
        check_flywheel(DiscGeometry("solid-disc", 1.4, 0.0, 0.1), "steel", 50.0,
                       interference=1e-4)
    assert str(err.value) == "an interference fit needs a bore; the geometry has none"
    with pytest.raises(UsageError) as err:
        check_flywheel(DiscGeometry("annular-disc", 1.4, 0.16, 0.1), "steel", 50.0,
                       overspeed=0.9)
    assert str(err.value) == ("overspeed must be 1 or more (a factor on the operating speed), "
                              "got 0.9")
