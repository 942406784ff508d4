"""The circuit diagram: every part drawn and named, nothing overlapping."""

from __future__ import annotations

from reportlab.graphics.shapes import Circle, Group, String
from reportlab.pdfbase.pdfmetrics import stringWidth

from calcdoc.report.diagram import DiagramPart, circuit_drawing, connection_rows
from calcdoc.report.fonts import register_fonts

ALL_KINDS = [
    DiagramPart("V1", "voltage_source", ("a", "gnd"), "5 V"),
    DiagramPart("R1", "resistor", ("a", "b"), "1 kΩ"),
    DiagramPart("I1", "current_source", ("gnd", "b"), "1 mA"),
    DiagramPart("E1", "vcvs", ("c", "gnd"), "2 × V(b,gnd)"),
    DiagramPart("G1", "vccs", ("d", "gnd"), "1 mS × V(c,gnd)"),
    DiagramPart("H1", "ccvs", ("e", "gnd"), "10 Ω × I(R1)"),
    DiagramPart("F1", "cccs", ("gnd", "f"), "3 × I(R1)"),
    DiagramPart("R2", "resistor", ("c", "d"), "2 kΩ"),
    DiagramPart("R3", "resistor", ("e", "f"), "3 kΩ"),
    DiagramPart("R4", "resistor", ("f", "gnd"), "4 kΩ"),
    DiagramPart("R5", "resistor", ("a", "gnd"), "5 kΩ"),  # in parallel with V1
]


def strings(node, tx=(1, 0, 0, 1, 0, 0)):
    """Every String with its bounding box in drawing coordinates."""
    from reportlab.graphics.shapes import mmult

    out = []
    if isinstance(node, Group):
        t = mmult(tx, node.transform)
        for c in node.contents:
            out += strings(c, t)
    elif isinstance(node, String):
        w = stringWidth(node.text, node.fontName, node.fontSize)
        x0 = node.x - (w / 2 if node.textAnchor == "middle" else 0)
        corners = [
            (x0, node.y),
            (x0 + w, node.y),
            (x0, node.y + node.fontSize * 0.8),
            (x0 + w, node.y + node.fontSize * 0.8),
        ]
        pts = [(tx[0] * x + tx[2] * y + tx[4], tx[1] * x + tx[3] * y + tx[5]) for x, y in corners]
        xs, ys = [p[0] for p in pts], [p[1] for p in pts]
        out.append((node.text, min(xs), min(ys), max(xs), max(ys)))
    return out


def dots(node, tx=(1, 0, 0, 1, 0, 0)):
    from reportlab.graphics.shapes import mmult

    out = []
    if isinstance(node, Group):
        t = mmult(tx, node.transform)
        for c in node.contents:
            out += dots(c, t)
    elif (
        isinstance(node, Circle)
        and node.r <= 2.5
        and node.fillColor is not None
        and node.fillColor.rgb() == (0, 0, 0)
    ):
        out.append((tx[0] * node.cx + tx[4], tx[3] * node.cy + tx[5]))
    return out


def test_every_part_and_node_is_named_and_labels_do_not_overlap():
    f = register_fonts()
    d = circuit_drawing(ALL_KINDS, "gnd", width=500, font_name=f.regular)
    assert d is not None
    texts = strings(d.contents[0])
    found = " ".join(t for t, *_ in texts)
    for p in ALL_KINDS:
        assert p.name in found and p.label in found
    for n in "abcdef":
        assert any(t == n for t, *_ in texts)
    labels = [b for b in texts if b[0] not in ("+", "−")]
    for i, (t1, a0, b0, a1, b1) in enumerate(labels):
        assert a0 >= -0.5 and a1 <= d.width + 0.5 and b0 >= -0.5 and b1 <= d.height + 0.5, t1
        for t2, c0, e0, c1, e1 in labels[i + 1 :]:
            overlap = min(a1, c1) - max(a0, c0) > 0.5 and min(b1, e1) - max(b0, e0) > 0.5
            assert not overlap, (t1, t2)


def test_junction_dots_where_three_meet():
    f = register_fonts()
    d = circuit_drawing(ALL_KINDS, "gnd", width=500, font_name=f.regular)
    # gnd joins seven parts: its rail has a dot at every joint but the last
    assert len(dots(d.contents[0])) >= 6


def test_too_many_parts_give_no_drawing():
    many = [DiagramPart(f"R{k}", "resistor", (f"n{k}", f"n{k + 1}"), "1 kΩ") for k in range(31)]
    assert circuit_drawing(many, "n0", width=500) is None


def test_connection_rows_cover_every_terminal_once():
    rows = dict(connection_rows(ALL_KINDS))
    count = sum(len(v.split(", ")) for v in rows.values())
    assert count == 2 * len(ALL_KINDS)
    assert "V1 (+)" in rows["a"] and "V1 (−)" in rows["gnd"]


def test_drawing_renders_to_pdf_with_text(tmp_path):
    from pypdf import PdfReader
    from reportlab.graphics import renderPDF

    f = register_fonts()
    d = circuit_drawing(ALL_KINDS, "gnd", width=500, font_name=f.regular)
    out = tmp_path / "d.pdf"
    renderPDF.drawToFile(d, str(out))
    text = PdfReader(out).pages[0].extract_text()
    assert "R1" in text and "gnd" in text
