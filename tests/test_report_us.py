"""The report and the figures in US customary units (--units us).

Every number a US report shows is its stage's JSON value converted by the one conversion
layer (torqlog.io.units, pint), so page one must equal the --units us JSON of the commands
to the digits printed. Factors held against NIST Special Publication 811 (2008), Appendix
B.9: 1 lbf·ft = 1.355818 N·m, 1 ft·lbf = 1.355818 J, 1 lb·ft² = 4.214011e-2 kg·m²,
1 in = 0.0254 m (exact), 1 ksi = 6.894757 MPa.
"""

import json
import re

import html5lib
import numpy as np
import pytest
from click.testing import CliRunner

from torqlog.cli import cli
from torqlog.demo.simulate import demo_profile, simulate, write_log
from torqlog.present.labels import label_of, sig

NIST_REL = 5e-7  # NIST SP 811 gives seven significant digits
LBF_FT = 1.355818  # N·m per lbf·ft (and J per ft·lbf), NIST SP 811 B.9
LB_FT2 = 4.214011e-2  # kg·m² per lb·ft², NIST SP 811 B.9
INCH = 0.0254  # m per inch, exact
KSI = 6.894757  # MPa per ksi, NIST SP 811 B.9


def run(args):
    res = CliRunner().invoke(cli, [str(a) for a in args])
    assert res.exit_code == 0, res.output
    return res


@pytest.fixture(scope="module")
def press_us(tmp_path_factory):
    """A short press log, the US report on it and the commands' --units us JSON."""
    d = tmp_path_factory.mktemp("press_us")
    log = write_log(simulate("press", duration=12.0, rate=1000.0, seed=3), d / "press.csv")
    profile = d / "press.toml"
    profile.write_text(demo_profile("press"), encoding="utf-8")
    html, pdf = d / "report.html", d / "report.pdf"
    run(["report", log, "--profile", profile, "--units", "us", "-o", html, "--pdf", pdf])
    size_si = d / "size.json"
    run(["size", log, "--profile", profile, "--format", "json", "-o", size_si])
    js = {
        "size": json.loads(run(["size", log, "--profile", profile, "--units", "us",
                                "--format", "json"]).stdout),
        "flywheel": json.loads(run(["flywheel", "--profile", profile, "--from-size", size_si,
                                    "--units", "us", "--format", "json"]).stdout),
        "cycles": json.loads(run(["cycles", log, "--profile", profile, "--summary-only",
                                  "--units", "us", "--format", "json"]).stdout),
    }
    return {"dir": d, "log": log, "html": html.read_text(encoding="utf-8"), "pdf": pdf,
            "json": js}


def _lookup(data, dotted):
    for part in dotted.split("."):
        data = data[int(part)] if part.isdigit() else data[part]
    return data


def _verdict(text):
    tree = html5lib.HTMLParser(strict=True, namespaceHTMLElements=False).parse(text)
    return next(s for s in tree.iter("section") if s.get("id") == "verdict")


def test_page_one_numbers_equal_the_us_json_to_the_printed_digits(press_us):
    spans = [s for s in _verdict(press_us["html"]).iter("span") if s.get("data-key")]
    checked = set()
    for s in spans:
        stage, key = s.get("data-stage"), s.get("data-key")
        if stage not in press_us["json"]:
            continue
        expected = _lookup(press_us["json"][stage], key)
        assert float(s.get("data-value")) == pytest.approx(expected, rel=1e-12), key
        lab = label_of(key.rsplit(".", 1)[-1])  # a US key: its value is US already
        shown = abs(expected) if "copper_loss" in key else expected  # "fall by" |change|
        assert s.text == f"{sig(shown, lab.digits, lab.scale)} {lab.unit}".strip(), key
        checked.add(key)
    # the inertia to add, the flywheel's diameter and mass are in US units and traced
    assert {"added_inertia_at_flywheel_lbft2", "outer_diameter_in", "mass_lb"} <= checked
    assert "speed_mean_rpm" in {k.rsplit(".", 1)[-1] for k in checked}  # rpm stays


def test_page_one_and_tables_speak_us_units_only(press_us):
    text = re.sub(r'src="data:[^"]+"', "", press_us["html"])
    body = re.sub(r"<[^>]+>", " ", text[: text.index('id="appendix"')])
    for si in ("kN·m", "kJ", "kg·m²", "MPa", " mm"):
        assert si not in body, si
    for us in ("lbf·ft", "ft·lbf", "lb·ft²", "ksi", " in"):
        assert us in body, us
    assert "US customary units" in body


def test_us_summary_table_is_the_cycles_summary_converted_by_nist_factors(press_us):
    tree = html5lib.HTMLParser(namespaceHTMLElements=False).parse(press_us["html"])
    table = next(t for t in tree.iter("table") if t.get("id") == "summary-table")
    heads = [" ".join("".join(th.itertext()).split()) for th in table.iter("th")]
    assert "Energy swing ΔE, 95th percentile, ft·lbf" in heads
    assert "Mean torque, lbf·ft" in heads
    cell = next(td for td in table.iter("td") if td.get("data-key") == "energy_swing_J.p95")
    si = float(cell.get("data-value"))  # the SI value behind the cell
    us = press_us["json"]["cycles"]["summary"]["energy_swing_ftlbf"]["p95"]
    assert us == pytest.approx(si / LBF_FT, rel=NIST_REL)  # hand conversion, NIST B.9
    assert cell.text == sig(us, 3)


def test_us_pdf_says_the_same(press_us):
    import subprocess

    out = subprocess.run(["pdftotext", "-layout", str(press_us["pdf"]), "-"],
                         capture_output=True, text=True, check=True).stdout
    page_one = out.split("\f")[0]
    added = press_us["json"]["size"]["added_inertia_at_flywheel_lbft2"]
    assert f"{sig(added, 3)} lb·ft²" in " ".join(page_one.split())
    assert "kg·m²" not in page_one


# ----------------------------------------------------------------------------- figures
def _figure_of(monkeypatch, draw):
    """Draw through torqlog.present.plots and return the Figure object it saved."""
    from torqlog.present import plots

    seen = []

    def keep(fig, path):
        seen.append(fig)
        return path

    monkeypatch.setattr(plots, "save", keep)
    draw(plots)
    return seen[0]


def test_cycle_figure_axes_in_us_units(monkeypatch, press_us):
    from torqlog.signal.cycles import analyse_cycles

    res = analyse_cycles(press_us["log"])
    si = _figure_of(monkeypatch, lambda p: p.plot_cycles(res, "c.png"))
    us = _figure_of(monkeypatch, lambda p: p.plot_cycles(res, "c.png", units="us"))
    assert [a.get_ylabel() for a in us.axes] == ["torque [lbf·ft]", "E(θ) [ft·lbf]",
                                                 "speed [rpm]"]
    assert [a.get_ylabel() for a in si.axes] == ["torque [kN·m]", "E(θ) [kJ]", "speed [rpm]"]
    # the mean-cycle torque line: kN·m × 1000 / 1.355818 = lbf·ft (NIST SP 811 B.9)
    t_si = si.axes[0].lines[-2].get_ydata()
    t_us = us.axes[0].lines[-2].get_ydata()
    np.testing.assert_allclose(t_us, t_si * 1e3 / LBF_FT, rtol=NIST_REL)


def test_flywheel_and_drive_figures_axes_in_us_units(monkeypatch):
    from torqlog.rotor.flywheel import flywheel_from_profile

    fw = flywheel_from_profile(None, material="steel-c45", inertia=310.0,
                               speed=450 * np.pi / 30, shape="annular-disc",
                               outer_diameter=1.4, bore=0.16)
    fig = _figure_of(monkeypatch, lambda p: p.plot_flywheel_stresses(fw, "f.png", units="us"))
    ax = fig.axes[0]
    assert (ax.get_xlabel(), ax.get_ylabel()) == ("radius [in]", "stress [ksi]")
    # the axis ends at 1.02 × the outer radius: 0.7 m / 0.0254 m/in
    assert ax.get_xlim()[1] == pytest.approx(1.02 * 0.7 / INCH, rel=1e-12)
    hoop = ax.lines[1].get_ydata()
    assert np.nanmax(hoop) == pytest.approx(np.max(fw.tangential) / 1e6 / KSI, rel=NIST_REL)
    import pandas as pd

    curve = pd.DataFrame({"added_inertia_kgm2": [0.0, 100.0], "cs": [0.2, 0.1],
                          "motor_torque_peak_Nm": [500.0, 400.0]})
    fig = _figure_of(monkeypatch, lambda p: p.plot_drive_curve(curve, "d.png", units="us"))
    assert fig.axes[0].get_xlabel() == "added inertia at the logged shaft [lb·ft²]"
    assert fig.axes[1].get_ylabel() == "peak motor torque [lbf·ft]"
    assert fig.axes[0].lines[0].get_xdata()[1] == pytest.approx(100.0 / LB_FT2, rel=NIST_REL)


def test_shaft_figure_axes_in_us_units(monkeypatch):
    from torqlog.io.profile import parse_profile
    from torqlog.shaft.check import check_shaft

    prof = parse_profile({"machine": {"speed_rpm": 45.0}, "shaft": {
        "bearings_m": [0.0, 1.10],
        "segments": [{"length_m": 0.35, "diameter_m": 0.14},
                     {"length_m": 0.75, "diameter_m": 0.16},
                     {"length_m": 0.40, "diameter_m": 0.14}],
        "masses": [{"name": "flywheel", "mass_kg": 900.0, "at_m": 1.40}]}}, "p.toml")
    res = check_shaft(prof, add_mass=600.0)
    fig = _figure_of(monkeypatch, lambda p: p.plot_shaft(res, "s.png", units="us"))
    top = fig.axes[0]
    assert (top.get_xlabel(), top.get_ylabel()) == ("position along shaft x [in]",
                                                    "deflection (down) [mil]")
    # bearings drawn at 0 and 1.10 m / 0.0254 m/in; deflection 1 mil = 0.0254 mm
    bearings = next(ln for ln in top.lines if ln.get_label() == "bearing (simple support)")
    assert list(bearings.get_xdata()) == pytest.approx([0.0, 1.10 / INCH], rel=1e-12)
    before = top.lines[0].get_ydata()
    assert np.max(np.abs(before)) == pytest.approx(
        res.before.lateral.static_deflection_max / INCH * 1e3, rel=1e-9)
