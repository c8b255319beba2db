"""Labels and significant figures: the one map from JSON keys to what people read.

References: Python's own ``format(x, ".3g")`` (the "g" presentation type of the format
specification mini-language, which rounds half to even on the binary value) is the
independent reference for three significant figures.
"""

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from torqlog.present.labels import label, label_of, relabel_table, show, sig


@settings(derandomize=True, deadline=None, max_examples=200)
@given(st.floats(min_value=1e-4, max_value=9.99e8, allow_nan=False) |
       st.floats(min_value=-9.99e8, max_value=-1e-4, allow_nan=False))
def test_three_significant_figures_agree_with_pythons_g_format(x):
    shown = float(sig(x).replace(",", ""))
    reference = float(format(x, ".3g"))
    assert shown == pytest.approx(reference, rel=1e-12, abs=0.0)


@pytest.mark.parametrize(("value", "text"), [
    (26.5812345, "26.6"), (26.58000000001, "26.6"), (0.1 + 0.2, "0.300"),
    (9.9996, "10.0"), (999.6, "1,000"), (123456.0, "123,000"), (0.0378846, "0.0379"),
    (None, "–"), (math.nan, "–"), (0.0, "0"), (True, "yes"), (7, "7")])
def test_sig_has_no_float_noise(value, text):
    assert sig(value) == text


def test_labels_carry_units_and_scale():
    assert label("added_inertia_at_flywheel_kgm2") == "Added inertia at the flywheel shaft, kg·m²"
    assert show("outer_diameter_m", 0.7512) == "751 mm"  # m to mm, three figures
    assert show("energy_swing_J", 739.09) == "0.739 kJ"
    assert show("drive_torque_rms_share_of_rated", 1.1011) == "110 %"
    # a key not listed gets its unit from its suffix
    assert label_of("drive.existing.motor_speed_min_rpm").full == "Motor speed min, rpm"
    assert label("stress_tangential_bore_MPa") == "Stress tangential bore, MPa"


def test_cli_tables_use_the_same_labels():
    import pandas as pd

    t = relabel_table(pd.DataFrame({"speed_mean_rpm": [598.6716], "cs": [0.03788463],
                                    "flag": [""]}))
    assert list(t.columns) == ["Mean speed, rpm", "Speed fluctuation Cs", "Flag"]
    assert t.iloc[0].tolist() == ["599", "0.0379", ""]
