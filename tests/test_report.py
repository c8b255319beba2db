"""The report and the demo: strict HTML, embedded PNGs, escaping, and numbers that equal
the individual commands' JSON on the same inputs.

Outside references: the HTML5 parsing algorithm (html5lib in strict mode raises on every
parse error); the PNG specification (W3C, *Portable Network Graphics (PNG) Specification*,
2nd ed., 2003: signature sec. 5.2, IHDR sec. 11.2.2, pHYs sec. 11.3.5.3); the SHA-256 test
vector of FIPS 180-2, appendix B.1; Shigley's flywheel relation I = ΔE / (Cs·ω̄²)
(Budynas & Nisbett, *Shigley's Mechanical Engineering Design*, 10th ed., eq. 16-62).
"""

import base64
import importlib.util
import json
import math
import struct
from pathlib import Path

import html5lib
import pytest
from click.testing import CliRunner

from torqlog.cli import cli
from torqlog.report import SECTIONS, build_report, file_sha256, render_html, summary_value
from torqlog.simulate import demo_profile, simulate, write_log

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG spec sec. 5.2


def run(args):
    res = CliRunner().invoke(cli, [str(a) for a in args])
    assert res.exit_code == 0, res.output
    return res


def parse(text):
    """Parse strictly (html5lib raises ParseError on any HTML5 parse error)."""
    parser = html5lib.HTMLParser(strict=True, namespaceHTMLElements=False)
    return parser.parse(text)


@pytest.fixture(scope="module")
def press(tmp_path_factory):
    """A short press log, its profile, the report and the commands' JSON on them."""
    d = tmp_path_factory.mktemp("press")
    log = write_log(simulate("press", duration=12.0, rate=1000.0, seed=3), d / "press.csv")
    profile = d / "press.toml"
    profile.write_text(demo_profile("press"), encoding="utf-8")
    html, pdf = d / "report.html", d / "report.pdf"
    res = run(["report", log, "--profile", profile, "-o", html, "--pdf", pdf])
    cycles = json.loads(run(["cycles", log, "--profile", profile, "--format", "json"]).stdout)
    size_file = d / "size.json"
    run(["size", log, "--profile", profile, "--format", "json", "-o", size_file])
    flywheel = json.loads(run(["flywheel", "--profile", profile, "--from-size", size_file,
                               "--format", "json"]).stdout)
    return {"dir": d, "log": log, "profile": profile, "html": html, "pdf": pdf,
            "stdout": res.stdout, "text": html.read_text(encoding="utf-8"),
            "cycles": cycles, "size": json.loads(size_file.read_text()), "flywheel": flywheel}


def test_report_prints_its_path_and_parses_strictly_with_every_section(press):
    assert press["stdout"] == f"{press['html']}\n"
    tree = parse(press["text"])
    ids = {e.get("id") for e in tree.iter("section")}
    assert ids == set(SECTIONS) - {"trends"}  # one log: no trend section
    assert tree.find(".//title").text == "torqlog report: Press 4, line B"
    # self-contained: nothing is fetched from elsewhere
    for tag, attr in (("img", "src"), ("link", "href"), ("script", "src")):
        for e in tree.iter(tag):
            assert e.get(attr, "").startswith("data:"), (tag, e.get(attr))


def _png_facts(data: bytes):
    """Width, height [px] from IHDR and dots per inch from pHYs (PNG spec 11.2.2, 11.3.5.3)."""
    assert data[:8] == PNG_SIGNATURE
    length, kind = struct.unpack(">I4s", data[8:16])
    assert (length, kind) == (13, b"IHDR")
    width, height = struct.unpack(">II", data[16:24])
    pos, dpi = 8, None
    while pos < len(data):
        n, kind = struct.unpack(">I4s", data[pos:pos + 8])
        if kind == b"pHYs":
            ppu_x, _, unit = struct.unpack(">IIB", data[pos + 8:pos + 17])
            assert unit == 1  # metre
            dpi = ppu_x * 0.0254
        pos += 12 + n
    return width, height, dpi


def test_every_img_is_an_embedded_png_at_print_resolution(press):
    tree = parse(press["text"])
    imgs = list(tree.iter("img"))
    # cycles, distributions, spectrum, drive curve, flywheel stresses, shaft
    assert len(imgs) == 6
    for img in imgs:
        src = img.get("src")
        assert src.startswith("data:image/png;base64,")
        w, h, dpi = _png_facts(base64.b64decode(src.split(",", 1)[1], validate=True))
        assert 800 <= w <= 3000 and 400 <= h <= 3000, (img.get("alt"), w, h)
        assert dpi == pytest.approx(150.0, abs=0.1)
        assert img.get("alt")


def test_summary_table_equals_the_cycles_json(press):
    tree = parse(press["text"])
    table = next(t for t in tree.iter("table") if t.get("id") == "summary-table")
    cells = [td for td in table.iter("td") if td.get("data-key")]
    summary = press["cycles"]["summary"]
    assert len(cells) == 12
    for td in cells:
        expected = summary_value(summary, td.get("data-key"))
        assert td.get("data-log") == "0"
        if expected is None:
            assert td.get("data-value") == "" and td.text == "–"
            continue
        assert float(td.get("data-value")) == expected, td.get("data-key")
        shown = float(td.text.replace(",", ""))
        scale = 1e-3 if td.get("data-key").split(".")[0] in (
            "energy_swing_J", "torque_mean_Nm", "torque_peak_Nm_p99") else 1.0
        assert shown == pytest.approx(expected * scale, rel=5e-4)  # 4 significant digits


def test_key_figures_equal_size_and_flywheel_json(press):
    tree = parse(press["text"])
    table = next(t for t in tree.iter("table") if t.get("id") == "key-figures")
    jsons = {"size": press["size"], "flywheel": press["flywheel"]}
    seen = set()
    for td in table.iter("td"):
        stage, key = td.get("data-stage"), td.get("data-key")
        base, _, idx = key.partition(".")
        expected = jsons[stage][base]
        if idx:  # a list index or a key of a nested object
            expected = expected[int(idx)] if idx.isdigit() else expected[idx]
        assert float(td.get("data-value")) == expected, key
        seen.add((stage, base))
    assert {("size", "required_inertia_kgm2"), ("size", "ci95_kgm2"),
            ("size", "added_inertia_kgm2"), ("flywheel", "width_m"),
            ("flywheel", "rim_speed_m_s"), ("flywheel", "stress_safety_factor")} <= seen
    # Shigley eq. 16-62: I = ΔE / (Cs ω̄²) with the report's own figures
    z = press["size"]
    w = z["speed_mean_rpm"] * math.pi / 30.0
    assert z["bound_constant_drive_required_inertia_kgm2"] == pytest.approx(
        z["design_energy_swing_J"] / (z["target_cs"] * w * w), rel=1e-9)


def test_shaft_check_equals_the_shaft_command(press):
    data = build_report([press["log"]], press["profile"])
    sh = data.shaft
    o = sh["options"]
    ratio = 32.0  # the press profile's flywheel_speed_ratio: inertia referred as I·r²
    assert o["add_mass_kg"] == press["flywheel"]["mass_kg"]
    assert o["add_inertia_kgm2"] == pytest.approx(press["flywheel"]["inertia_kgm2"] * ratio**2,
                                                  rel=1e-12)
    cmd = json.loads(run(["shaft", "--profile", press["profile"], "--speed-rpm",
                          repr(o["speed_rpm"]), "--add-mass", repr(o["add_mass_kg"]),
                          "--add-inertia", repr(o["add_inertia_kgm2"]),
                          "--format", "json"]).stdout)
    for state in ("before", "after"):
        assert sh[state]["lateral"]["fe_hz"] == cmd[state]["lateral"]["fe_hz"]
        assert sh[state]["torsional"]["modes_hz"] == cmd[state]["torsional"]["modes_hz"]
    assert o["orders_source"] == "spectrum"
    assert data.spectrum["order"][:3] == [1.0, 2.0, 3.0]


def test_pdf_has_text_pages_and_one_page_per_figure(press):
    import re

    pdf = press["pdf"].read_bytes()
    assert pdf.startswith(b"%PDF-")
    # PDF 1.4 reference: the page tree's /Count is the number of pages; each figure is one
    # embedded raster image (/Subtype /Image)
    count = int(re.search(rb"/Count (\d+)", pdf).group(1))
    images = len(re.findall(rb"/Subtype\s*/Image", pdf))
    assert images == 6
    assert count - images in (1, 2, 3)  # the text pages come first


def test_file_names_and_machine_names_are_escaped(press, tmp_path):
    folder = tmp_path / "<script>alert(1)<"
    folder.mkdir()
    log = folder / "script>.csv"  # the path reads ".../<script>alert(1)</script>.csv"
    log.write_bytes(press["log"].read_bytes())
    profile = tmp_path / "evil.toml"
    profile.write_text(demo_profile("press").replace(
        'name = "Press 4, line B"', 'name = "<script>alert(2)</script> & <b>Co</b>"'),
        encoding="utf-8")
    data = build_report([log], profile)
    text = render_html(data)
    tree = parse(text)
    assert "<script>" not in text and "<b>Co" not in text
    assert list(tree.iter("script")) == [] and list(tree.iter("b")) == []
    assert "&lt;script&gt;alert(1)&lt;/script&gt;.csv" in text
    assert tree.find(".//h1").text == \
        "Flywheel and shaft report: <script>alert(2)</script> & <b>Co</b>"
    assert any("<script>alert(1)</script>.csv" in (td.text or "") for td in tree.iter("td"))


def test_sha256_of_inputs_against_fips_vector(tmp_path):
    p = tmp_path / "abc.txt"
    p.write_bytes(b"abc")
    # FIPS 180-2, appendix B.1
    assert file_sha256(p) == ("ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad")


def test_two_logs_give_a_trend_section(press):
    data = build_report([press["log"], press["log"]], press["profile"])
    tree = parse(render_html(data))
    sec = next(s for s in tree.iter("section") if s.get("id") == "trends")
    text = "".join(sec.itertext())
    if importlib.util.find_spec("torqlog.trend") is None:
        assert data.skipped["trend"] == "no trend: this torqlog has no trend module"
    else:  # the comma log states no start time, so no file can be placed in a shift
        assert data.trend is not None or data.skipped["trend"].startswith("no trend: ")
    assert "Trends across shifts" in text


def test_report_needs_a_profile(press):
    res = CliRunner().invoke(cli, ["report", str(press["log"]), "-o",
                                   str(press["dir"] / "x.html")])
    assert res.exit_code == 2
    assert res.stderr == "Error: give --profile FILE: the report needs the machine profile\n"


def test_demo_writes_every_stage_and_ends_with_the_report_path(tmp_path):
    out = tmp_path / "demo"
    res = run(["demo", "--out", out])
    last = res.stdout.strip().splitlines()[-1]
    assert last == f"report: {out / 'press' / 'report.html'}"
    for key in ("press", "compressor", "engine"):
        folder = out / key
        html = folder / "report.html"
        assert html.is_file()
        tree = parse(html.read_text(encoding="utf-8"))
        assert {"summary", "cautions", "inputs", "measured", "shaft"} <= \
            {s.get("id") for s in tree.iter("section")}
        for name in ("size", "shaft", "spectrum"):
            assert (folder / f"{name}.json").is_file(), (key, name)
        assert len(list(folder.glob("inspect_*.json"))) == len(list(folder.glob("cycles_*.json")))
    press_dir = out / "press"
    assert len(list(press_dir.glob("press_*.csv"))) == 12
    assert (press_dir / "report.pdf").read_bytes()[:5] == b"%PDF-"
    # the demo's JSON is what the report shows
    size = json.loads((press_dir / "size.json").read_text())
    tree = parse((press_dir / "report.html").read_text(encoding="utf-8"))
    td = next(t for t in tree.iter("td") if t.get("data-key") == "required_inertia_kgm2")
    assert float(td.get("data-value")) == size["required_inertia_kgm2"]
    # the engine's shaft fails its checks: said plainly, not hidden
    engine = (out / "engine" / "report.html").read_text(encoding="utf-8")
    assert "FAIL" in engine
    assert Path(out / "engine" / "flywheel.json").is_file()
    assert Path(out / "engine" / "shaft.json").is_file()
