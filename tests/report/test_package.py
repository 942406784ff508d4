"""The PDF package as a checker reads it, read back with pypdf (an independent PDF reader).

Expected values come from the embedded JSON results, from the project files
or from hand-written tables in the tests, never from the report's own
formatting code.
"""

from __future__ import annotations

import hashlib
import io
import json
import math
import re
from pathlib import Path

import pytest
from pypdf import PdfReader

import calcdoc
from calcdoc.cli import main
from calcdoc.report.package import CAUTIONS, build_package

ROOT = Path(__file__).resolve().parents[2]
PROJECTS = sorted((ROOT / "projects").glob("*.toml"))
PREFIX = {-12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M"}


def si(value: float, unit: str, sig: int = 4) -> str:
    """Engineering notation written out here, independently of calcdoc.format."""
    if value == 0:
        return f"0 {unit}"
    mag = abs(value)
    exp = 3 * math.floor(math.log10(mag) / 3)
    mant = mag / 10**exp
    digits = sig - 1 - math.floor(math.log10(mant))
    text = f"{mant:.{max(digits, 0)}f}"
    if float(text) >= 1000:
        exp += 3
        text = f"{mag / 10**exp:.{sig - 1}f}"
    return ("−" if value < 0 else "") + f"{text} {PREFIX[exp]}{unit}"


def check_words(cid: str) -> str:
    """How a checker names a check (hand-written rule: "R1 power", "Node out window, upper")."""
    parts = cid.split(".")
    if parts[0] == "nodes":
        return f"Node {parts[1]} window, {'lower' if parts[2] == 'min' else 'upper'}"
    if parts[0] == "across":  # a window between two nodes, by its name as written
        return f"Across {parts[1]}"
    return f"{parts[0]} {parts[1].replace('_', ' ')}"


def read(pdf: bytes) -> tuple[PdfReader, list[str]]:
    reader = PdfReader(io.BytesIO(pdf))
    return reader, [" ".join(p.extract_text().replace("\xa0", " ").split()) for p in reader.pages]


def embedded(reader: PdfReader) -> dict:
    return json.loads(reader.attachments["results.json"][0])


def check_set(doc: dict) -> list[dict]:
    """Every check in every case and at every tolerance worst case, from the JSON results."""
    out = []
    for case in doc["cases"]:
        out += case["checks"] + case.get("tolerance", {}).get("checks", [])
    return out


@pytest.fixture(scope="module")
def built():
    from calcdoc.pipeline import analyse

    out = {}
    for path in PROJECTS:
        results = analyse(calcdoc.load(path), closed_form=True)
        package = build_package(results)
        reader, pages = read(package.pdf)
        out[path.stem] = (results, package, reader, pages)
    return out


@pytest.mark.parametrize("name", [p.stem for p in PROJECTS])
def test_numbers_titles_sheets_and_cautions(built, name):
    _, _, reader, pages = built[name]
    doc = embedded(reader)
    flat = " ".join(pages)
    for case in doc["cases"]:  # every node voltage and element power, to 4 significant figures
        for v in case["nodes"].values():
            assert si(v, "V") in flat, si(v, "V")
        for e in case["elements"].values():
            assert si(e["power"], "W") in flat, si(e["power"], "W")
        for c in case["checks"]:
            assert check_words(c["id"]) in flat
    n = len(pages)
    for k, page in enumerate(pages, 1):
        assert f"Sheet {k} of {n}" in page
    for title in (
        "Contents",
        "1 Purpose, scope and method",
        "2 Design inputs",
        "3 Circuit diagram",
        "4 Formulation",
        "5 Solution",
        "6 Verification",
        "7 Design checks",
        "Appendix A",
        "Appendix B",
    ):
        assert title in flat, title
    assert re.search(r"\d+ Conclusion", flat)
    for caution in CAUTIONS:
        assert " ".join(caution.split()) in flat
    assert f"SHA-256 of input: {doc['input']['sha256']}" in flat
    assert "(s)" not in flat and "CHECK(S)" not in flat and "Calculated by" not in flat


@pytest.mark.parametrize("name", [p.stem for p in PROJECTS])
def test_cover_counts_and_worst_utilisation_are_those_of_the_check_set(built, name):
    _, _, reader, pages = built[name]
    checks = check_set(embedded(reader))
    cover = pages[0]
    worst = max(c["utilization"] for c in checks if c["utilization"] is not None)
    assert f"Worst utilisation {worst * 100:.1f} %" in cover
    assert f"Checks run {len(checks)}:" in cover
    failing = sum(c["status"] == "fail" for c in checks)
    assert (f"Checks failing {failing}:" if failing else "Checks failing none") in cover
    conclusion = next(p for p in pages if re.search(r"\d+ Conclusion", p) and "Open items" in p)
    if failing:
        assert f"{failing} of {len(checks)} checks fail" in conclusion
    else:
        assert f"All {len(checks)} checks pass" in conclusion
        assert f"{worst * 100:.1f} % used" in conclusion  # the smallest margin, named


def test_bridge_cover_shows_the_tolerance_worst_case():
    # issue 12: the bridge demo's cover said 65.9 % while its tolerance section reached 79.1 %
    results = calcdoc.solve(calcdoc.load(ROOT / "projects" / "bridge_amplifier.toml"))
    _, pages = read(build_package(results).pdf)
    assert (
        "Worst utilisation 79.1 %: Node out window, upper, case Overload 150 %, tolerance worst case"
        in pages[0]
    )


@pytest.mark.parametrize("name", [p.stem for p in PROJECTS])
def test_no_e_notation_and_nothing_below_the_resolution(built, name):
    _, _, reader, pages = built[name]
    doc = embedded(reader)
    flat = re.sub(r"\b[0-9a-f]{64}\b", "", " ".join(pages))  # SHA-256 digests are hex, not numbers
    assert not re.search(r"\d[eE][+−-]?\d", flat), re.search(r".{30}\d[eE][+−-]?\d.{10}", flat)
    assert not re.search(r"\d\.?\d* ?[fa][AVW]\b", flat)  # femto and atto: noise, never results
    # every current printed is zero or at least 10⁻⁹ of the largest current of its case
    # (the print resolution stated on the method page)
    floor = min(max(abs(e["current"]) for e in c["elements"].values()) for c in doc["cases"]) * 1e-9
    scale = {"p": 1e-12, "n": 1e-9, "µ": 1e-6, "m": 1e-3, "": 1.0, "k": 1e3}
    for m in re.finditer(r"(?<![\w.])(\d+(?:\.\d+)?) ([pnµmk]?)A\b", flat):
        value = float(m[1]) * scale[m[2]]
        assert value == 0 or value >= floor, m[0]
    for m in re.finditer(r"(?<![\w\-])-\d", flat):  # a number's minus is U+2212, never a hyphen
        pytest.fail(f"hyphen as minus: {flat[m.start() - 20 : m.end() + 10]}")


def test_exact_solution_prints_no_residual_or_condition_number(built):
    _, _, _, pages = built["bridge_amplifier"]
    flat = " ".join(pages)
    method = "the condition number and the estimated relative error are reported"
    assert "condition number" not in flat.replace(method, "")
    assert "solved exactly in rational arithmetic" in flat


@pytest.mark.parametrize("name", [p.stem for p in PROJECTS])
def test_no_heading_is_the_last_thing_on_a_sheet(built, name):
    _, package, _, _ = built[name]
    records = package.records
    assert sum(kind == "heading" for kind, _, _ in records) > 10
    for (kind, sheet, text), (_, next_sheet, _) in zip(records, records[1:], strict=False):
        if kind == "heading":
            assert next_sheet == sheet, f"heading {text!r} ends sheet {sheet}"


def test_headings_name_no_method_and_no_key_path(built):
    for _, package, _, _ in built.values():
        for kind, _, text in package.records:
            if kind == "heading":
                assert "(adjoint)" not in text and "(closed form)" not in text
                assert not re.search(r"\w\.(power|voltage|current|min|max)\b", text), text
                assert "Case nominal" not in text  # case names are capitalised


def test_cross_references_follow_the_numbering(built):
    _, _, _, pages = built["bridge_amplifier"]
    flat = " ".join(pages)
    checks = re.search(r"(\d+) Design checks \.", flat)[1]  # from the contents
    verification = re.search(r"(\d+) Verification \.", flat)[1]
    assert f"(section {verification})" in pages[0] and f"section {checks})" in pages[0]
    conclusion = next(p for p in pages if "Open items" in p)
    assert f"section {checks}" in conclusion


def test_pdf_dates_are_the_document_date(built):
    _, _, reader, _ = built["bridge_amplifier"]
    assert reader.metadata["/CreationDate"] == "D:20261124000000Z"  # date = 2026-11-24 in the file
    assert reader.metadata["/ModDate"] == "D:20261124000000Z"


@pytest.mark.parametrize("name", [p.stem for p in PROJECTS])
def test_embedded_input_and_results(built, name):
    results, _, reader, _ = built[name]
    files = reader.attachments
    src = (ROOT / "projects" / f"{name}.toml").read_bytes()
    assert files[f"{name}.toml"][0] == src  # byte for byte
    assert json.loads(files["results.json"][0]) == json.loads(json.dumps(calcdoc.to_json(results)))
    meta = reader.metadata
    assert meta["/CalcdocInputSHA256"] == hashlib.sha256(src).hexdigest()
    assert meta.title == results.project.document.title


def test_every_font_is_embedded(built):
    from pypdf.generic import IndirectObject

    def fonts(obj, seen, out):
        if isinstance(obj, IndirectObject):
            if obj.idnum in seen:
                return
            seen.add(obj.idnum)
            obj = obj.get_object()
        if hasattr(obj, "keys"):
            if obj.get("/Type") == "/Font":
                out.append(obj)
            for k in obj:
                if k not in ("/Parent", "/P"):
                    fonts(obj[k], seen, out)
        elif isinstance(obj, list):
            for v in obj:
                fonts(v, seen, out)

    for _, _, reader, _ in built.values():
        found: list = []
        for page in reader.pages:
            fonts(page.get("/Resources"), set(), found)
        assert found
        for f in found:
            fd = f.get("/FontDescriptor")
            if f.get("/Subtype") == "/Type0":
                fd = f["/DescendantFonts"][0].get_object().get("/FontDescriptor")
            assert any(k in fd.get_object() for k in ("/FontFile", "/FontFile2", "/FontFile3"))


def test_two_builds_are_byte_identical(built):
    _, package, _, _ = built["sensor_supply"]
    from calcdoc.pipeline import analyse

    again = build_package(
        analyse(calcdoc.load(ROOT / "projects" / "sensor_supply.toml"), closed_form=True)
    )
    assert hashlib.sha256(again.pdf).digest() == hashlib.sha256(package.pdf).digest()


def test_sources_of_values_and_none_stated(built):
    _, _, _, pages = built["bridge_amplifier"]
    flat = " ".join(pages)
    assert "Calibration sheet CAL-0412, gauge data" in flat  # elements.R1.source
    assert "IEC 60115-1" not in flat  # no derating is applied, so the standard is not cited
    results = calcdoc.solve(calcdoc.load(ROOT / "tests" / "cases" / "divider.toml"))
    _, pages = read(build_package(results).pdf)
    flat = " ".join(pages)
    assert "not stated" in flat  # no source or basis for its elements
    assert "Operating cases None stated" in flat and "Tolerance analysis none asked for" in flat
    assert "Parameters None stated" in flat and "References None stated" in flat


def test_dependent_source_control_and_product(built):
    _, _, reader, pages = built["bridge_amplifier"]
    flat = " ".join(pages)
    nominal = embedded(reader)["cases"][0]
    control = nominal["nodes"]["y"] - nominal["nodes"]["x"]  # Amp senses V(y) − V(x)
    assert (
        f"Amp V(y) − V(x) {si(control, 'V')} 400 V/V {si(nominal['elements']['Amp']['voltage'], 'V')}"
        in flat
    )
    assert (
        f"gain × V(y,x) = 400 V/V × {si(control, 'V')}" in flat
    )  # the KVL term says where it comes from


def test_sensitivity_is_one_ranking_and_monte_carlo_skips_a_fixed_node(built):
    results, package, _, pages = built["instrument_loop"]
    flat = " ".join(pages)
    assert flat.count("Quantity Kind") == 1  # three outputs: one table
    # the supply node is held by the PSU at 24 V: the distribution drawn is of a node that varies
    label = results.extra["tolerance"].per_case[0].histogram[0]
    assert label != "V(sup)" and label in flat
    assert "does not vary across the samples" not in flat


def test_input_appendix_breaks_long_lines_only_at_spaces(tmp_path):
    words = [f"word{k:02d}" for k in range(60)]
    src = (ROOT / "tests" / "cases" / "divider.toml").read_text()
    src = src.replace("schema = 1", f'schema = 1\n[document]\npurpose = "{" ".join(words)}"', 1)
    path = tmp_path / "p.toml"
    path.write_text(src)
    _, pages = read(build_package(calcdoc.solve(calcdoc.load(path))).pdf)
    appendix = " ".join(p for p in pages if "Appendix A" in p or "word59" in p)
    assert all(w in appendix for w in words)


def test_long_title_does_not_overprint_the_number_and_bad_characters_warn(tmp_path):
    from reportlab.pdfbase.pdfmetrics import stringWidth

    from calcdoc.report.fonts import register_fonts

    title = "Very long title " * 12 + "end"
    src = (ROOT / "tests" / "cases" / "divider.toml").read_text()
    hebrew = "\u05e9\u05dc\u05d5\u05dd \u05e2\u05d5\u05dc\u05dd"  # "shalom olam", logical order
    src = src.replace(
        "schema = 1",
        f'schema = 1\n[document]\ntitle = "{title}"\nnumber = "X-1"\n'
        f'revision = "A"\nproject = "Site \u6f22 {hebrew}"',
        1,
    )
    path = tmp_path / "p.toml"
    path.write_text(src)
    package = build_package(calcdoc.solve(calcdoc.load(path)))
    assert any("document.project" in w and "U+6F22" in w for w in package.warnings)
    reader, pages = read(package.pdf)
    assert "\ufffd" in pages[0]
    # pypdf turns a right-to-left run drawn in display order back into logical order
    # (drawn in logical order, it would extract reversed: checked by hand with pypdf 7)
    assert hebrew in pages[0]
    fonts = register_fonts()
    spans = []
    reader.pages[1].extract_text(
        visitor_text=lambda t, cm, tm, font, size: spans.append((t, tm[4], tm[5]))
    )
    head = [s for s in spans if s[0].strip() and s[2] > 780]
    title_span = next(s for s in head if s[0].startswith("Very long title"))
    ident = next(s for s in head if s[0].startswith("Doc. X-1"))
    size = 7.0  # the smaller header size; stringWidth of the font's own metrics
    assert title_span[1] + stringWidth(title_span[0].strip(), fonts.bold, size) < ident[1]
    assert title_span[0].strip().endswith("…")


# ------------------------------------------------------------------ status and marking

SIGNOFFS = {
    "none": "",
    "prepared": 'prepared = { name = "A", date = 2026-01-02 }',
    "checked": 'prepared = { name = "A", date = 2026-01-02 }\nchecked = { name = "B", date = 2026-01-03 }',
    "approved": 'prepared = { name = "A", date = 2026-01-02 }\nchecked = { name = "B", date = 2026-01-03 }\n'
    'approved = { name = "C", date = 2026-01-04 }',
    "approved_undated": 'prepared = { name = "A", date = 2026-01-02 }\nchecked = { name = "B", date = 2026-01-03 }\n'
    'approved = { name = "C" }',
    "approved_unchecked": 'prepared = { name = "A", date = 2026-01-02 }\napproved = { name = "C", date = 2026-01-04 }',
}
# (sign-off, verdict) -> (status on the cover and every footer, approved marking gone)
EXPECTED = {
    ("none", "pass"): ("Draft", False),
    ("prepared", "pass"): ("Prepared, awaiting check", False),
    ("checked", "pass"): ("Checked, awaiting approval", False),
    ("approved", "pass"): ("Approved", True),
    ("approved_undated", "pass"): ("Checked, awaiting approval", False),
    ("approved_unchecked", "pass"): ("Prepared, awaiting check", False),
    ("none", "fail"): ("Not fit for approval: 1 of 1 check fail", False),
    ("checked", "fail"): ("Not fit for approval: 1 of 1 check fail", False),
    ("approved", "fail"): ("Not fit for approval: 1 of 1 check fail", False),
}


@pytest.mark.parametrize(("signoff", "verdict"), sorted(EXPECTED))
def test_status_follows_signoff_and_verdict(tmp_path, signoff, verdict):
    # 10 V across 1 kΩ dissipates 100 mW (P = V²/R, common practice, no source):
    # a 0.25 W rating passes, a 0.05 W rating fails
    rating = "0.25 W" if verdict == "pass" else "0.05 W"
    path = tmp_path / "p.toml"
    path.write_text(
        'schema = 1\n[document]\ntitle = "Status"\ndate = 2026-01-05\n'
        f"[signoff]\n{SIGNOFFS[signoff]}\n"
        '[elements.V1]\ntype = "voltage_source"\nnodes = ["a", "gnd"]\nvalue = "10 V"\n'
        f'[elements.R1]\ntype = "resistor"\nnodes = ["a", "gnd"]\nvalue = "1 kohm"\nrating = {{ power = "{rating}" }}\n'
    )
    status, approved = EXPECTED[(signoff, verdict)]
    _, pages = read(build_package(calcdoc.solve(calcdoc.load(path))).pdf)
    assert f"Status: {status}" in pages[0]
    for page in pages:
        assert f"Status: {status}" in page
        assert ("NOT APPROVED" in page) is not approved
        assert ("NOT FIT FOR APPROVAL" in page) is (verdict == "fail")
    if signoff == "approved_undated":
        assert "no date: not signed" in pages[0]


# ------------------------------------------------------------------ commands and styles


def test_build_command_writes_atomically_and_prints_warnings(tmp_path, capsys):
    project = tmp_path / "p.toml"
    src = (ROOT / "tests" / "cases" / "divider.toml").read_text()
    project.write_text(
        src.replace("schema = 1", 'schema = 1\n[document]\ntitle = "Panel \u6f22\u5b57"', 1)
    )
    out = tmp_path / "out.pdf"
    assert main(["build", str(project), "-o", str(out), "-q"]) == 0
    assert "document.title" in capsys.readouterr().err  # the field with characters the font lacks
    first = out.read_bytes()
    project.write_text(project.read_text().replace('value = "4k7"', 'value = "4 volts"'))
    assert main(["build", str(project), "-o", str(out), "-q"]) == 2
    assert out.read_bytes() == first  # the earlier package is untouched
    assert [p.name for p in tmp_path.iterdir() if p.name.endswith(".part")] == []
    assert "elements.R1.value" in capsys.readouterr().err


def test_default_output_name(tmp_path):
    src = (ROOT / "projects" / "sensor_supply.toml").read_text()
    (tmp_path / "x.toml").write_text(src)
    assert main(["build", str(tmp_path / "x.toml"), "-q"]) == 0
    assert (tmp_path / "DEMO-101-revB.pdf").is_file()


def test_compact_template_on_letter(tmp_path):
    project = tmp_path / "p.toml"
    project.write_text(
        (ROOT / "tests" / "cases" / "divider.toml").read_text()
        + '\n[report]\ntemplate = "compact"\n'
    )
    reader, pages = read(build_package(calcdoc.solve(calcdoc.load(project))).pdf)
    w, h = float(reader.pages[0].mediabox.width), float(reader.pages[0].mediabox.height)
    assert (round(w), round(h)) == (612, 792)  # US Letter, 8.5 x 11 in (ANSI paper size)
    assert "Appendix A" in " ".join(pages) and "Input file" not in " ".join(pages[1:3])


def test_style_logo_on_the_cover(tmp_path):
    from PIL import Image

    Image.new("RGB", (300, 80), (31, 58, 95)).save(tmp_path / "logo.png")
    (tmp_path / "house.toml").write_text(
        'paper = "A4"\nlogo = "logo.png"\norganisation = "Example Works"\n'
    )
    project = tmp_path / "p.toml"
    project.write_text(
        (ROOT / "tests" / "cases" / "divider.toml").read_text()
        + '\n[report]\ntemplate = "house.toml"\n'
    )
    reader = PdfReader(io.BytesIO(build_package(calcdoc.solve(calcdoc.load(project))).pdf))
    xobj = reader.pages[0]["/Resources"].get("/XObject", {})
    assert any(x.get_object().get("/Subtype") == "/Image" for x in xobj.values())
    assert "Example Works" in reader.pages[0].extract_text()


def test_large_network_lists_in_columns():
    from netlists import project_text

    els = [("V1", "voltage_source", ("n0", "gnd"), "10 V")]
    for k in range(40):
        els.append((f"R{k}", "resistor", (f"n{k}", f"n{k + 1}"), "1 kohm"))
    els.append(("RL", "resistor", ("n40", "gnd"), "1 kohm"))
    package = build_package(calcdoc.solve(calcdoc.loads(project_text(els))))
    _, pages = read(package.pdf)
    flat = " ".join(pages)
    assert "too many for a readable drawing" in flat
    assert "Node Voltage Node Voltage" in flat  # node voltages set in side-by-side groups
    assert re.search(r"Appendix C\s+Matrix listing", flat)
