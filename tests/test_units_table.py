"""The fast table of common unit factors agrees with pint, which stays the authority."""

from __future__ import annotations

import math

import pytest

from torqlog.io.units import _COMMON, SI_UNITS, registry, si_factor


@pytest.mark.parametrize(("unit", "kind"), sorted(_COMMON))
def test_common_factor_equals_pint(unit, kind):
    expected = registry().Quantity(1.0, unit).to(SI_UNITS[kind]).magnitude
    assert _COMMON[(unit, kind)] == pytest.approx(expected, rel=1e-15)


def test_spellings_reach_the_table_and_pint():
    # NIST SP 811 Appendix B: 1 rpm = 2π/60 rad/s; 1 lbf·ft = 1.355 818 N·m (pint path)
    assert si_factor("1/min", "speed") == pytest.approx(2 * math.pi / 60, rel=1e-15)
    assert si_factor("lbf·ft", "torque") == pytest.approx(1.355818, rel=1e-6)
