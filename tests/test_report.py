"""The report and the demo: strict HTML, embedded PNGs, escaping, and numbers that equal
the individual commands' JSON on the same inputs.

Outside references: the HTML5 parsing algorithm (html5lib in strict mode raises on every
parse error); the PNG specification (W3C, *Portable Network Graphics (PNG) Specification*,
2nd ed., 2003: signature sec. 5.2, IHDR sec. 11.2.2, pHYs sec. 11.3.5.3); the SHA-256 test
vector of FIPS 180-2, appendix B.1; Shigley's flywheel relation I = ΔE / (Cs·ω̄²)
(Budynas & Nisbett, *Shigley's Mechanical Engineering Design*, 10th ed., eq. 16-62);
the PDF page count as poppler's pdfinfo reads it (ISO 32000-1, 7.7.3.2, /Count of the page
tree).
"""

import base64
import importlib.util
import json
import math
import struct

import html5lib
import pytest
from click.testing import CliRunner

from torqlog.cli import cli
from torqlog.demo.simulate import demo_profile, simulate, write_log
from torqlog.present.labels import sig
from torqlog.present.report import (
    CAUTIONS,
    PAGE_ONE,
    SECTIONS,
    build_report,
    file_sha256,
    render_html,
    summary_value,
)

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


def _text(e):
    return " ".join("".join(e.itertext()).split())


def _section(tree, sid):
    return next(s for s in tree.iter("section") if s.get("id") == sid)


def _lookup(data, dotted):
    """A JSON value by dotted path; list indices as digits."""
    for part in dotted.split("."):
        data = data[int(part)] if part.isdigit() else data[part]
    return data


def test_report_prints_its_path_and_parses_strictly_with_every_section_in_order(press):
    assert press["stdout"] == f"{press['html']}\n"
    tree = parse(press["text"])
    ids = [e.get("id") for e in tree.iter("section")]
    # one log of one machine: no trend and no fleet section
    assert ids == [s for s in SECTIONS if s not in ("trends", "fleet")]
    assert tree.find(".//title").text == "torqlog report: Press 4, line B"
    # self-contained: nothing is fetched from elsewhere
    for tag, attr in (("img", "src"), ("link", "href"), ("script", "src")):
        for e in tree.iter(tag):
            assert e.get(attr, "").startswith("data:"), (tag, e.get(attr))


def test_page_one_items_in_order_each_linked_and_free_of_raw_keys(press):
    tree = parse(press["text"])
    rows = [r for r in _section(tree, "verdict").iter("tr") if r.get("data-item")]
    assert [r.get("data-item") for r in rows] == [i for i in PAGE_ONE if i != "drift"]
    section_ids = {s.get("id") for s in tree.iter("section")}
    for r in rows:
        links = [a.get("href") for a in r.iter("a")]
        assert len(links) == 1 and links[0][1:] in section_ids, links
        verdict = _text(r.find("td[@class='v']"))
        assert verdict in ("PASS", "FAIL", "MARGINAL", "NOTE", "NOT ASSESSED"), verdict  # words
    text = _text(_section(tree, "verdict"))
    import re

    assert not re.search(r"\b[a-z]+_[a-z_]+\b", text), re.findall(r"\b[a-z]+_[a-z_]+\b", text)
    for bad in ("--", "sha256", "SHA-256", "Error", "give --", "known:"):
        assert bad not in text, bad
    # the press needs inertia: what to do names the amount, the shaft and the model
    action = _text(next(r for r in rows if r.get("data-item") == "action").find("td"))
    assert action.startswith("Add ") and "flywheel shaft" in action and "model" in action


def test_page_one_numbers_equal_the_size_flywheel_and_cycles_json(press):
    tree = parse(press["text"])
    spans = [s for s in _section(tree, "verdict").iter("span") if s.get("data-key")]
    jsons = {"size": press["size"], "flywheel": press["flywheel"], "cycles": press["cycles"]}
    stages = set()
    for s in spans:
        if s.get("data-stage") not in jsons:
            continue
        expected = _lookup(jsons[s.get("data-stage")], s.get("data-key"))
        assert float(s.get("data-value")) == expected, s.get("data-key")
        stages.add(s.get("data-stage"))
    assert stages == {"size", "flywheel", "cycles"}
    # the worst-decile Cs: numpy's linear-interpolation quantile of the clean cycles' Cs
    rows = [r for r in press["cycles"]["cycles"] if not r["flag"]]
    import numpy as np

    p90 = next(s for s in spans if s.get("data-key") == "cs_p90")
    assert float(p90.get("data-value")) == pytest.approx(
        float(np.quantile([r["cs"] for r in rows], 0.9)), rel=1e-12)


def test_summary_table_equals_the_cycles_json(press):
    tree = parse(press["text"])
    table = next(t for t in tree.iter("table") if t.get("id") == "summary-table")
    cells = [td for td in table.iter("td") if td.get("data-stage") == "cycles"]
    summary = press["cycles"]["summary"]
    assert len(cells) == 12
    for td in cells:
        expected = summary_value(summary, td.get("data-key"))
        if expected is None:
            assert td.get("data-value") == "" and td.text == "–"
            continue
        assert float(td.get("data-value")) == expected, td.get("data-key")
        shown = float(td.text.replace(",", ""))
        scale = 1e-3 if td.get("data-key").split(".")[0] in (
            "energy_swing_J", "torque_mean_Nm", "torque_peak_Nm_p99") else 1.0
        # three significant figures: Python's own "g" format as the reference rounding
        assert shown == float(f"{expected * scale:.3g}"), td.get("data-key")


def test_key_figures_equal_size_and_flywheel_json(press):
    tree = parse(press["text"])
    jsons = {"size": press["size"], "flywheel": press["flywheel"]}
    seen = set()
    for tid in ("key-figures", "flywheel-table"):
        table = next(t for t in tree.iter("table") if t.get("id") == tid)
        for td in table.iter("td"):
            stage, key = td.get("data-stage"), td.get("data-key")
            if not key:
                continue
            assert float(td.get("data-value")) == _lookup(jsons[stage], key), key
            seen.add((stage, key.split(".")[0]))
    assert {("size", "required_inertia_kgm2"), ("size", "ci95_kgm2"),
            ("size", "added_inertia_kgm2"), ("flywheel", "width_m"),
            ("flywheel", "rim_speed_m_s"), ("flywheel", "stress_safety_factor")} <= seen
    # Shigley eq. 16-62: the constant-drive bound I = ΔE / (Cs ω̄²) with the report's figures
    z = press["size"]
    w = z["speed_mean_rpm"] * math.pi / 30.0
    assert z["bound_constant_drive_required_inertia_kgm2"] == pytest.approx(
        z["design_energy_swing_J"] / (z["target_cs"] * w * w), rel=1e-9)


def test_each_caution_appears_once_with_its_basis(press):
    import re

    tree = parse(press["text"])
    body = _text(tree.find("body"))
    sentences = [s.strip() for c in CAUTIONS.values()
                 for s in re.split(r"(?<=[.:])\s+", c.text) if len(s.strip()) > 20]
    for s in sentences:
        assert body.count(s) == 1, s
    tree = parse(press["text"])
    items = list(_section(tree, "cautions").iter("li"))
    assert [i.get("class") for i in items] == ["burst", "shaft", "estimate"]  # burst first
    for i in items:
        assert "Defer to:" in _text(i) and ("codes and standards" in _text(i) or
                                             "licensed engineer" in _text(i))
    # no stage's own wording of the same caution is repeated anywhere
    for stage in ("size", "flywheel"):
        for c in press[stage].get("cautions", []):
            assert body.count(c) <= 1, c


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
    # page one's shaft verdict is the shaft command's verdict after the flywheel
    tree = parse(render_html(data))
    row = next(r for r in tree.iter("tr") if r.get("data-item") == "shaft-fine")
    after = [cmd["after"][k]["verdict"] for k in ("lateral", "torsional", "strength")
             if cmd["after"].get(k)]
    worst = "FAIL" if "fail" in after else "MARGINAL" if "marginal" in after else "PASS"
    assert _text(row.find("td[@class='v']")) == worst
    # its numbers are the shaft command's (lateral) and the report's shaft JSON (strength,
    # which the report also loads with the log's mean-cycle torque)
    spans = {s.get("data-key"): float(s.get("data-value")) for s in row.iter("span")
             if s.get("data-stage") == "shaft"}
    assert {"after.lateral.fe_hz.0", "after.lateral.ratio"} <= set(spans)
    for key, value in spans.items():  # the speed went to the command as rpm text: 1e-12
        assert value == pytest.approx(_lookup(cmd if ".lateral." in key else sh, key),
                                      rel=1e-12), key


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


def test_pdf_is_typeset_with_page_one_first_and_page_numbers(press):
    import re
    import shutil
    import subprocess

    pdf = press["pdf"].read_bytes()
    assert pdf.startswith(b"%PDF-")
    assert len(re.findall(rb"/Subtype\s*/Image", pdf)) == 6  # each figure once
    if shutil.which("pdftotext") is None:
        pytest.skip("poppler's pdftotext is not installed")
    pages = subprocess.run(["pdftotext", "-raw", str(press["pdf"]), "-"], check=True,
                           capture_output=True, text=True).stdout.split("\f")
    pages = [p for p in pages if p.strip()]
    n = len(pages)
    assert n >= 6
    for i, p in enumerate(pages, 1):
        assert f"page {i} of {n}" in p
    first = " ".join(pages[0].split())
    order = [first.index(q) for q in ("Which machine", "How rough", "What to do?",
                                      "flywheel safe?", "shaft fine", "motor see", "Cautions")]
    assert order == sorted(order)
    assert "DejaVu" not in first and "Δ" in " ".join(pages[1].split())  # glyphs set


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


def test_two_logs_give_a_trend_section_and_a_drift_line(press):
    data = build_report([press["log"], press["log"]], press["profile"])
    tree = parse(render_html(data))
    text = _text(_section(tree, "trends"))
    assert "The sizing used the first log, press.csv." in text
    if importlib.util.find_spec("torqlog.fleet.trend") is None:
        assert data.skipped["trend"] == "no trend: this torqlog has no trend module"
    else:  # the comma log states no start time, so no file can be placed in a shift
        assert data.trend is not None or data.skipped["trend"].startswith("no trend: ")
    items = [r.get("data-item") for r in tree.iter("tr") if r.get("data-item")]
    assert items == list(PAGE_ONE)


@pytest.fixture(scope="module")
def compressor(tmp_path_factory):
    d = tmp_path_factory.mktemp("comp")
    log = write_log(simulate("compressor", duration=4.0, rate=2000.0, seed=1), d / "k2.csv")
    return d, log


def test_a_log_alone_gives_a_report_that_names_the_profile_lines_to_add(compressor):
    d, log = compressor
    html = d / "alone.html"
    res = CliRunner().invoke(cli, ["report", str(log), "-o", str(html)])
    assert res.exit_code == 0, res.output
    tree = parse(html.read_text(encoding="utf-8"))
    assert [s.get("id") for s in tree.iter("section")] == [
        s for s in SECTIONS if s not in ("trends", "fleet")]
    # No target Cs: the common-practice target of the default machine class, said to be
    # assumed (machine-class table after Norton, *Design of Machinery*, values from memory:
    # shearing machinery 0.03-0.05, the stricter end taken)
    rough = _text(next(r for r in tree.iter("tr") if r.get("data-item") == "roughness"))
    assert "against the assumed target 0.0300 (no target was given: common practice for " \
        "shearing machinery (0.03 to 0.05))" in rough
    rec = _text(_section(tree, "recommendation"))
    assert "No target Cs was given, so the target is assumed: 0.0300" in rec
    assert "target_cs = 0.03" in rec and "[machine]" in rec and "[motor]" in rec
    # the sizing is the one `torqlog size --machine-class` gives on the same log, and the
    # existing inertia is the identified one, stated with the line to replace it
    size = json.loads(run(["size", log, "--machine-class", "shearing-machinery",
                           "--format", "json"]).stdout)
    assert "identified" in size["options"]["existing_inertia_source"]
    action = next(r for r in tree.iter("tr") if r.get("data-item") == "action")
    cell = next(s for s in action.iter("span") if s.get("data-key") ==
                "added_inertia_at_flywheel_kgm2")
    assert float(cell.get("data-value")) == size["added_inertia_at_flywheel_kgm2"]
    assert "to reach the assumed target Cs 0.0300" in _text(action)
    assert f"inertia_kgm2 = {sig(size['existing_inertia_kgm2'])}" in rec
    # the constant-drive bound with the identified inertia (Shigley eq. 16-62)
    w = size["speed_mean_rpm"] * math.pi / 30.0
    bound = size["design_energy_swing_J"] / (0.03 * w * w)
    assert size["bound_constant_drive_required_inertia_kgm2"] == pytest.approx(bound, rel=1e-9)
    assert f"that is {sig(size['bound_constant_drive_added_inertia_kgm2'])} kg·m² added to " \
        "the existing inertia" in rec
    assert "The profile gives no target Cs" not in html.read_text(encoding="utf-8")
    assert "[shaft]" in _text(_section(tree, "shaft"))
    # the measured state is all there: spectrum figure included
    assert {f.get("id") for f in tree.iter("figure")} >= {"fig-cycles", "fig-spectrum"}
    assert "No machine profile was given." in _text(_section(tree, "appendix"))


def test_no_flywheel_material_gives_three_materials_side_by_side(compressor):
    d, log = compressor
    profile = d / "k2.toml"
    profile.write_text(demo_profile("compressor").replace('material = "ductile-iron"\n', "", 1),
                       encoding="utf-8")
    assert 'material = "ductile-iron"' not in profile.read_text().split("[flywheel]")[1] \
        .split("[shaft]")[0]
    html = d / "nomat.html"
    res = CliRunner().invoke(cli, ["report", str(log), "--profile", str(profile), "-o",
                                   str(html)])
    assert res.exit_code == 0, res.output
    tree = parse(html.read_text(encoding="utf-8"))
    table = next(t for t in tree.iter("table") if t.get("id") == "material-comparison")
    header = [_text(th) for th in table.find("thead").iter("th")]
    assert len(header) == 4 and header[0] == "Figure"
    text = _text(_section(tree, "flywheel"))
    assert "Picked: " in text and "three common materials" in text
    # each compared flywheel matches `torqlog flywheel --material` on the same sizing
    size_file = d / "size.json"
    run(["size", log, "--profile", profile, "--format", "json", "-o", size_file])
    mass_cells = [td for td in table.iter("td") if td.get("data-key") == "mass_kg"]
    for td, material in zip(mass_cells, ("grey-iron-250", "ductile-iron", "steel-s355"),
                            strict=True):
        fw = json.loads(run(["flywheel", "--profile", profile, "--from-size", size_file,
                             "--material", material, "--format", "json"]).stdout)
        assert float(td.get("data-value")) == fw["mass_kg"], material


def test_demo_writes_a_report_and_pdf_per_machine_with_o(tmp_path):
    out = tmp_path / "demo"
    res = run(["demo", "-o", out])
    last = res.stdout.strip().splitlines()[-1]
    assert last == f"report: {out / 'press' / 'report.html'}"
    for key in ("press", "compressor", "engine"):
        folder = out / key
        tree = parse((folder / "report.html").read_text(encoding="utf-8"))
        assert {"verdict", "cautions", "measured", "shaft", "appendix"} <= \
            {s.get("id") for s in tree.iter("section")}
        assert (folder / "report.pdf").read_bytes()[:5] == b"%PDF-"
        for name in ("size", "shaft", "spectrum"):
            assert (folder / f"{name}.json").is_file(), (key, name)
        assert len(list(folder.glob("inspect_*.json"))) == len(list(folder.glob("cycles_*.json")))
    press_dir = out / "press"
    assert len(list(press_dir.glob("press_*.csv"))) == 12
    # the demo's JSON is what the report shows
    size = json.loads((press_dir / "size.json").read_text())
    tree = parse((press_dir / "report.html").read_text(encoding="utf-8"))
    td = next(t for t in tree.iter("td") if t.get("data-key") == "required_inertia_kgm2")
    assert float(td.get("data-value")) == size["required_inertia_kgm2"]
    # twelve press shifts: page one carries the drift line, and the load creep is flagged
    drift = next(r for r in tree.iter("tr") if r.get("data-item") == "drift")
    assert _text(drift.find("td[@class='v']")) in ("FAIL", "NOT ASSESSED")
    # the engine's shaft fails its checks: said plainly, not hidden
    engine = parse((out / "engine" / "report.html").read_text(encoding="utf-8"))
    row = next(r for r in engine.iter("tr") if r.get("data-item") == "shaft-fine")
    assert _text(row.find("td[@class='v']")) == "FAIL"
    # the engine log has torque and an index only: no Cs, so no pass or fail on roughness
    row = next(r for r in engine.iter("tr") if r.get("data-item") == "roughness")
    assert _text(row.find("td[@class='v']")) == "NOT ASSESSED"
    assert "holds no speed within the cycle" in _text(row)


def test_page_one_abnormal_cycles_line_equals_the_cycles_command(press):
    # Page one's "Any abnormal cycles?" comes from the same cycle-shape check as
    # `torqlog cycles` on the same log and profile (the counts must agree).
    shape = press["cycles"]["anomaly"]
    text = press["text"]
    assert "Not assessed: this report has no cycle-shape" not in text
    if shape["scored"] == 0:  # too few clean cycles to learn the normal shape from
        assert "Cycle shape not checked: " in text
    elif shape["flagged"] == 0:
        assert f"No abnormal cycles: all {shape['scored']} clean cycles" in text
    else:
        assert f"{shape['flagged']} abnormal" in text
