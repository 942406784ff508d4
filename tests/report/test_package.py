"""The PDF package, read back with pypdf (an independent PDF reader)."""

from __future__ import annotations

import hashlib
import io
import json
import re
from pathlib import Path

import pytest
from pypdf import PdfReader

import calcdoc
from calcdoc.cli import main
from calcdoc.format import eng
from calcdoc.report.package import CAUTIONS, build_package

ROOT = Path(__file__).resolve().parents[2]
PROJECTS = sorted((ROOT / "projects").glob("*.toml"))


@pytest.fixture(scope="module")
def built():
    out = {}
    from calcdoc.pipeline import analyse

    for path in PROJECTS:
        results = analyse(calcdoc.load(path), closed_form=True)
        out[path.stem] = (results, build_package(results))
    return out


def text_of(pdf: bytes) -> tuple[PdfReader, list[str]]:
    reader = PdfReader(io.BytesIO(pdf))
    return reader, [p.extract_text() for p in reader.pages]


@pytest.mark.parametrize("name", [p.stem for p in PROJECTS])
def test_numbers_titles_sheets_and_cautions(built, name):
    results, package = built[name]
    reader, pages = text_of(package.pdf)
    flat = " ".join(" ".join(pages).split())
    sig = results.project.report.significant_figures
    for (
        case
    ) in results.cases:  # every node voltage and element power, formatted as the engine's numbers
        for v in case.branches.node_voltage.tolist():
            assert eng(v, "V", sig) in flat
        for p in case.branches.power.tolist():
            assert eng(p, "W", sig) in flat
        for chk in case.checks:
            assert chk.id in flat
    n = len(pages)
    for k, page in enumerate(pages, 1):
        assert f"Sheet {k} of {n}" in page
    for title in ("Contents", "1 Purpose, scope and method", "2 Design inputs", "3 Circuit diagram",
                  "4 Formulation", "5 Solution", "6 Verification", "7 Design checks", "Appendix A", "Appendix B"):  # fmt: skip
        assert title in flat, title
    assert re.search(r"\d+ Conclusion", flat)
    extra = results.extra
    if "tolerance" in extra or "envelope" in extra:
        assert "Tolerance and operating cases" in flat
    if "sensitivity" in extra:
        assert "Sensitivity" in flat
    if "sweeps" in extra:
        assert "Parameter sweeps" in flat
        for s in extra["sweeps"].sweeps:
            for c in s.crossings:
                assert c.check in flat
    for caution in CAUTIONS:
        assert " ".join(caution.split()) in flat
    assert f"SHA-256 of input: {results.project.sha256}" in flat
    assert "Ω" in flat or "V" in flat


@pytest.mark.parametrize("name", [p.stem for p in PROJECTS])
def test_embedded_input_and_results(built, name):
    results, package = built[name]
    reader = PdfReader(io.BytesIO(package.pdf))
    files = reader.attachments
    src = (ROOT / "projects" / f"{name}.toml").read_bytes()
    assert files[f"{name}.toml"][0] == src  # byte for byte
    assert json.loads(files["results.json"][0]) == json.loads(json.dumps(calcdoc.to_json(results)))
    meta = reader.metadata
    assert meta["/CalcdocInputSHA256"] == hashlib.sha256(src).hexdigest()
    assert meta["/CalcdocInput"] == f"{name}.toml"
    assert meta.title == results.project.document.title


def _fonts(obj, seen, out):
    from pypdf.generic import IndirectObject

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
                _fonts(obj[k], seen, out)
    elif isinstance(obj, list):
        for v in obj:
            _fonts(v, seen, out)


def test_every_font_is_embedded(built):
    for _, package in built.values():
        reader = PdfReader(io.BytesIO(package.pdf))
        fonts: list = []
        for page in reader.pages:
            _fonts(page.get("/Resources"), set(), fonts)
        assert fonts
        for f in fonts:
            fd = f.get("/FontDescriptor")
            if f.get("/Subtype") == "/Type0":
                fd = f["/DescendantFonts"][0].get_object().get("/FontDescriptor")
            assert fd is not None, f.get("/BaseFont")
            fd = fd.get_object()
            assert any(k in fd for k in ("/FontFile", "/FontFile2", "/FontFile3")), f.get(
                "/BaseFont"
            )


def test_two_builds_are_byte_identical(built):
    results, package = built["sensor_supply"]
    from calcdoc.pipeline import analyse

    again = build_package(
        analyse(calcdoc.load(ROOT / "projects" / "sensor_supply.toml"), closed_form=True)
    )
    assert hashlib.sha256(again.pdf).digest() == hashlib.sha256(package.pdf).digest()


def test_not_approved_marking_only_until_approved(built):
    _, draft = built["sensor_supply"]  # checked, not approved
    _, approved = built["instrument_loop"]  # approved
    assert all("NOT APPROVED" in t for t in text_of(draft.pdf)[1])
    assert not any("NOT APPROVED" in t for t in text_of(approved.pdf)[1])
    assert "open (not signed)" in text_of(draft.pdf)[1][0]


def test_signature_box_is_on_the_cover(built):
    _, package = built["sensor_supply"]
    page, (x1, y1, x2, y2) = package.signature_box
    assert page == 0 and x2 - x1 > 100 and y2 - y1 > 10


def test_equations_are_vector_not_images(built):
    _, package = built["sensor_supply"]
    reader = PdfReader(io.BytesIO(package.pdf))
    for page in reader.pages:
        xobj = page["/Resources"].get("/XObject", {})
        assert not any(x.get_object().get("/Subtype") == "/Image" for x in xobj.values())
    # the symbolic and substituted KCL are present as searchable text
    flat = " ".join(p.extract_text() for p in reader.pages)
    assert "KCL at node field" in flat and "V(field)/Rs" in flat


def test_build_command_writes_atomically(tmp_path, capsys):
    project = tmp_path / "p.toml"
    project.write_text((ROOT / "tests" / "cases" / "divider.toml").read_text())
    out = tmp_path / "out.pdf"
    assert main(["build", str(project), "-o", str(out), "-q"]) == 0
    first = out.read_bytes()
    assert first.startswith(b"%PDF")
    project.write_text(project.read_text().replace('value = "4k7"', 'value = "4 volts"'))
    assert main(["build", str(project), "-o", str(out), "-q"]) == 2
    assert out.read_bytes() == first  # the earlier package is untouched
    assert [p.name for p in tmp_path.iterdir() if p.name.endswith(".part")] == []
    err = capsys.readouterr().err
    assert "elements.R1.value" in err


def test_default_output_name(tmp_path, capsys):
    src = (ROOT / "projects" / "sensor_supply.toml").read_text()
    (tmp_path / "x.toml").write_text(src)
    assert main(["build", str(tmp_path / "x.toml"), "-q"]) == 0
    assert (tmp_path / "DEMO-101-revB.pdf").is_file()


def test_compact_template_on_letter(tmp_path):
    results = calcdoc.solve(calcdoc.load(ROOT / "tests" / "cases" / "divider.toml"))
    package = build_package(results, template="compact")
    reader = PdfReader(io.BytesIO(package.pdf))
    w, h = float(reader.pages[0].mediabox.width), float(reader.pages[0].mediabox.height)
    assert (round(w), round(h)) == (612, 792)  # US Letter, 8.5 x 11 in (ANSI paper size)
    flat = " ".join(p.extract_text() for p in reader.pages)
    assert "Appendix A" not in flat  # the compact style leaves the input listing out


def test_unknown_template_is_an_input_error(tmp_path, capsys):
    project = tmp_path / "p.toml"
    project.write_text(
        (ROOT / "tests" / "cases" / "divider.toml").read_text() + '\n[report]\ntemplate = "fancy"\n'
    )
    assert main(["build", str(project), "-q"]) == 2
    assert "report.template" in capsys.readouterr().err


def test_large_circuit_uses_connection_table():
    from netlists import project_text

    els = [("V1", "voltage_source", ("n0", "gnd"), "10 V")]
    for k in range(40):
        els.append((f"R{k}", "resistor", (f"n{k}", f"n{k + 1}"), "1 kohm"))
    els.append(("RL", "resistor", ("n40", "gnd"), "1 kohm"))
    package = build_package(calcdoc.solve(calcdoc.loads(project_text(els))))
    flat = " ".join(p.extract_text() for p in PdfReader(io.BytesIO(package.pdf)).pages)
    assert "too many for a readable drawing" in flat
    assert re.search(r"Appendix C\s+Matrix listing", flat)


def test_style_logo_on_the_cover(tmp_path):
    from PIL import Image

    Image.new("RGB", (300, 80), (31, 58, 95)).save(tmp_path / "logo.png")
    (tmp_path / "house.toml").write_text(
        'paper = "A4"\nlogo = "logo.png"\norganisation = "Example Works"\n'
    )
    results = calcdoc.solve(calcdoc.load(ROOT / "tests" / "cases" / "divider.toml"))
    package = build_package(results, template=str(tmp_path / "house.toml"))
    reader = PdfReader(io.BytesIO(package.pdf))
    xobj = reader.pages[0]["/Resources"].get("/XObject", {})
    assert any(x.get_object().get("/Subtype") == "/Image" for x in xobj.values())
    assert "Example Works" in reader.pages[0].extract_text()
