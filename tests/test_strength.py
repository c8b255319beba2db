"""Shaft strength formulas against Shigley's worked example and published values."""

from __future__ import annotations

import math

import pytest

from torqlog.errors import UsageError
from torqlog.shaft.strength import (
    bearing_l10,
    endurance_limit_specimen,
    fatigue_notch_factor,
    fatigue_safety_factor,
    key_safety_factors,
    notch_sensitivity,
    reliability_factor,
    shoulder_fillet_kt,
    shrink_fit_torque,
    size_factor,
    surface_factor,
    temperature_factor,
    yield_safety_factor,
)

KPSI = 6.894757e6
INCH = 0.0254
LBF_IN = 0.1129848  # N*m per lbf*in


def test_shigley_example_7_1():
    # Shigley's Mechanical Engineering Design, 10th ed., Example 7-1 (printed values quoted
    # from memory): shoulder d = 1.100 in, D = 1.65 in, r = 0.11 in, Ma = 1260 lbf*in,
    # Tm = 1100 lbf*in, Sut = 105 kpsi, Sy = 82 kpsi, machined, reliability 0.99.
    # Printed: q = 0.85, qs = 0.88 (read from Figs 6-20/6-21), ka = 0.787, kb = 0.870,
    # ke = 0.814, Se = 29.3 kpsi; n = 1.62 DE-Goodman, 1.87 DE-Gerber, 1.88 DE-ASME
    # elliptic; first-cycle yield n_y = 4.5 (sigma'max about 18.3 kpsi).
    sut, sy, d, r = 105 * KPSI, 82 * KPSI, 1.1 * INCH, 0.11 * INCH
    assert notch_sensitivity(sut, r) == pytest.approx(0.85, abs=0.005)
    assert notch_sensitivity(sut, r, torsion=True) == pytest.approx(0.88, abs=0.005)
    ka, kb, ke = surface_factor(sut, "machined"), size_factor(d), reliability_factor(0.99)
    assert (ka, kb, ke) == (pytest.approx(0.787, abs=1e-3), pytest.approx(0.870, abs=2e-3),
                            pytest.approx(0.814, abs=1e-3))
    se = ka * kb * ke * endurance_limit_specimen(sut)
    assert se / KPSI == pytest.approx(29.3, abs=0.1)
    # the example uses the chart values Kt = 1.68, Kts = 1.42 (Figs A-15-9, A-15-8)
    kf, kfs = fatigue_notch_factor(1.68, 0.85), fatigue_notch_factor(1.42, 0.88)
    assert (kf, kfs) == (pytest.approx(1.58, abs=0.005), pytest.approx(1.37, abs=0.005))
    ma, tm = 1260 * LBF_IN, 1100 * LBF_IN
    se = 29.3 * KPSI
    n = {m: fatigue_safety_factor(d, ma, 0.0, 0.0, tm, kf, kfs, se, sut, sy, m)
         for m in ("goodman", "gerber", "asme-elliptic")}
    assert n["goodman"] == pytest.approx(1.62, abs=0.01)
    assert n["gerber"] == pytest.approx(1.87, abs=0.01)
    assert n["asme-elliptic"] == pytest.approx(1.88, abs=0.01)
    assert yield_safety_factor(d, ma, tm, kf, kfs, sy) == pytest.approx(4.5, abs=0.05)
    # the Roark fit reproduces the chart readings within 4 %
    assert shoulder_fillet_kt(1.65, 1.1, 0.11) == pytest.approx(1.68, rel=0.04)
    assert shoulder_fillet_kt(1.65, 1.1, 0.11, torsion=True) == pytest.approx(1.42, rel=0.02)


def test_marin_and_limits():
    # Shigley eq. 6-8: Se' = 0.5 Sut up to 1400 MPa, 700 MPa above
    assert endurance_limit_specimen(1600e6) == 700e6
    # eq. 6-20 branches: 1.24 d^-0.107 at 50 mm, 1.51 d^-0.157 at 100 mm
    assert size_factor(0.050) == pytest.approx(1.24 * 50**-0.107)
    assert size_factor(0.100) == pytest.approx(1.51 * 100**-0.157)
    # Table 6-5: 0.897 at 90 %, 0.753 at 99.9 %
    assert reliability_factor(0.9) == pytest.approx(0.897, abs=1e-3)
    assert reliability_factor(0.999) == pytest.approx(0.753, abs=1e-3)
    # eq. 6-27 against Table 6-4 (from memory): 1.020 at 100 °C, 0.975 at 300 °C
    assert temperature_factor(20.0) == 1.0
    assert temperature_factor(300.0) == pytest.approx(0.975, abs=0.005)
    assert temperature_factor(100.0) == pytest.approx(1.020, abs=0.005)
    with pytest.raises(UsageError, match=r"^fillet radius must be positive, got -2 mm$"):
        shoulder_fillet_kt(0.1, 0.08, -0.002)
    with pytest.raises(UsageError, match=r"^unknown fatigue method 'soder'; valid: goodman, "
                                         r"gerber, asme-elliptic$"):
        fatigue_safety_factor(0.05, 1, 0, 0, 1, 1, 1, 1e8, 5e8, 4e8, "soder")


def test_key_fit_and_bearing():
    # Shigley sec. 7-7: F = 2T/d; shear F/(w l) vs 0.577 Sy, bearing F/(l h/2) vs Sy.
    # T = 1000 N*m, d = 50 mm, key 14 x 9 x 50 mm, Sy = 400 MPa: F = 40 kN,
    # tau = 57.1 MPa -> n = 4.04; sigma = 177.8 MPa -> n = 2.25
    ns, nb = key_safety_factors(1000.0, 0.05, 0.014, 0.009, 0.05, 400e6)
    assert ns == pytest.approx(0.577 * 400 / (40e3 / (0.014 * 0.05) / 1e6), rel=1e-9)
    assert (ns, nb) == (pytest.approx(4.04, abs=0.01), pytest.approx(2.25, abs=0.01))
    # Shigley sec. 3-16: T = (pi/2) f p l d^2; p = 50 MPa, d = l = 100 mm, f = 0.12
    assert shrink_fit_torque(50e6, 0.1, 0.1, 0.12) == pytest.approx(
        math.pi / 2 * 0.12 * 50e6 * 0.1 * 0.01, rel=1e-12)
    # ISO 281: L10 = (C/P)^3 for ball, ^(10/3) for roller bearings, 10^6 revolutions
    revs, hours = bearing_l10(60e3, 6e3, 1000.0, roller=True)
    assert revs == pytest.approx(10 ** (10 / 3) * 1e6)
    assert hours == pytest.approx(revs / 60e3)
