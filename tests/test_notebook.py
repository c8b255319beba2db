"""Results show themselves as readable HTML tables in Jupyter."""

import math
from pathlib import Path

import html5lib
import pytest

from torqlog.io.profile import load_profile
from torqlog.rotor.flywheel import flywheel_from_profile
from torqlog.signal.cycles import analyse_cycles, options_from_profile
from torqlog.signal.survey import survey_log
from torqlog.sizing.inertia import size_log

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def results():
    prof = load_profile(ROOT / "sample_data/press.toml")
    cyc = analyse_cycles(str(ROOT / "sample_data/press_comma.csv"), options_from_profile(prof))
    fly = flywheel_from_profile(None, inertia=310.0, speed=450 * math.pi / 30,
                                material="ductile-iron", outer_diameter=1.4, bore=0.16)
    return {"cycles": cyc, "size": size_log(cyc, prof), "flywheel": fly,
            "survey": survey_log(str(ROOT / "sample_data/press_comma.csv"))}


@pytest.mark.parametrize("name", ["cycles", "size", "flywheel", "survey"])
def test_every_result_has_a_well_formed_html_table(results, name):
    text = results[name]._repr_html_()
    html5lib.HTMLParser(strict=True).parseFragment(text)  # raises on malformed markup
    assert "<table><tr><th>figure</th><th>value</th><th>unit</th></tr>" in text
    assert f"<b>{type(results[name]).__name__}</b>" in text


def test_values_and_units_shown(results):
    text = results["flywheel"]._repr_html_()
    assert "<tr><td>inertia_kgm2</td><td class=n>310</td><td>kg·m²</td></tr>" in text
    assert "<summary>options</summary>" in text
    cyc = results["cycles"]._repr_html_()
    assert f"first 10 of {len(results['cycles'].table)} rows" in cyc
