"""The circuit diagram: every part drawn and named, labels readable and clear of
each other and of every wire, crossings broken, controls drawn."""

from __future__ import annotations

from reportlab.graphics.shapes import Circle, Group, Line, Rect, String, mmult
from reportlab.pdfbase.pdfmetrics import stringWidth

from calcdoc.report.diagram import DiagramPart, circuit_drawing, connection_rows
from calcdoc.report.fonts import register_fonts

ALL_KINDS = [
    DiagramPart("V1", "voltage_source", ("a", "gnd"), "5.00 V"),
    DiagramPart("R1", "resistor", ("a", "b"), "1.00 kΩ"),
    DiagramPart("I1", "current_source", ("gnd", "b"), "1.00 mA"),
    DiagramPart("E1", "vcvs", ("c", "gnd"), "2 V/V", control_nodes=("b", "gnd")),
    DiagramPart("G1", "vccs", ("d", "gnd"), "1.00 mS", control_nodes=("c", "gnd")),
    DiagramPart("H1", "ccvs", ("e", "gnd"), "10.0 Ω", control_element="R1"),
    DiagramPart("F1", "cccs", ("gnd", "f"), "3 A/A", control_element="R1"),
    DiagramPart("R2", "resistor", ("c", "d"), "2.00 kΩ"),
    DiagramPart("R3", "resistor", ("e", "f"), "3.00 kΩ"),
    DiagramPart("R4", "resistor", ("f", "gnd"), "4.00 kΩ"),
]
WIDTH = 493  # the text width of an A4 sheet with the standard style's margins (pt)


def walk(node, tx=(1, 0, 0, 1, 0, 0)):
    """(shape, transform) for every leaf of a drawing."""
    if isinstance(node, Group):
        t = mmult(tx, node.transform)
        for c in node.contents:
            yield from walk(c, t)
    else:
        yield node, tx


def apply(tx, x, y):
    return tx[0] * x + tx[2] * y + tx[4], tx[1] * x + tx[3] * y + tx[5]


def text_boxes(drawing):
    """(text, x0, y0, x1, y1, size) of every string, in drawing coordinates."""
    out = []
    for s, tx in walk(drawing.contents[0]):
        if not isinstance(s, String):
            continue
        w = stringWidth(s.text, s.fontName, s.fontSize)
        x0 = s.x - (w / 2 if s.textAnchor == "middle" else 0)
        # DejaVu Sans: ascent 0.76 em, descent 0.24 em (the font's own metrics)
        corners = [(x0, s.y - 0.24 * s.fontSize), (x0 + w, s.y + 0.76 * s.fontSize)]
        corners += [(x0, s.y + 0.76 * s.fontSize), (x0 + w, s.y - 0.24 * s.fontSize)]
        pts = [apply(tx, x, y) for x, y in corners]
        xs, ys = [p[0] for p in pts], [p[1] for p in pts]
        out.append((s.text, min(xs), min(ys), max(xs), max(ys), s.fontSize))
    return out


def segments(drawing):
    """(x0, y0, x1, y1, dashed) of every line, in drawing coordinates."""
    out = []
    for s, tx in walk(drawing.contents[0]):
        if isinstance(s, Line):
            (a, b), (c, d) = apply(tx, s.x1, s.y1), apply(tx, s.x2, s.y2)
            out.append((a, b, c, d, bool(s.strokeDashArray)))
    return out


def crosses(seg, box, pad=0.3):
    """True when a horizontal or vertical segment passes through a box."""
    x0, y0, x1, y1, _ = seg
    _, bx0, by0, bx1, by1, _ = box
    if abs(y0 - y1) < 1e-6:  # horizontal
        return by0 + pad < y0 < by1 - pad and min(x0, x1) < bx1 - pad and max(x0, x1) > bx0 + pad
    if abs(x0 - x1) < 1e-6:  # vertical
        return bx0 + pad < x0 < bx1 - pad and min(y0, y1) < by1 - pad and max(y0, y1) > by0 + pad
    return False


def drawing():
    f = register_fonts()
    d = circuit_drawing(ALL_KINDS, "gnd", width=WIDTH, max_height=529, font_name=f.regular)
    assert d is not None
    return d


def test_every_part_and_node_is_named_and_labels_are_readable():
    d = drawing()
    texts = text_boxes(d)
    found = " ".join(t for t, *_ in texts)
    for p in ALL_KINDS:
        assert p.name in found
    for n in "abcdef":
        assert any(t == n for t, *_ in texts)
    assert "V(b,gnd)" in found and "I(R1)" in found  # the control notation the legend defines
    assert min(size for *_, size in texts) >= 7.0
    assert d.width <= WIDTH


def test_labels_overlap_neither_each_other_nor_any_wire():
    d = drawing()
    boxes = text_boxes(d)
    lines = segments(d)
    for i, a in enumerate(boxes):
        assert a[1] >= -0.5 and a[3] <= d.width + 0.5 and a[2] >= -0.5 and a[4] <= d.height + 0.5
        for b in boxes[i + 1 :]:
            overlap = (
                min(a[3], b[3]) - max(a[1], b[1]) > 0.3 and min(a[4], b[4]) - max(a[2], b[2]) > 0.3
            )
            assert not overlap, (a[0], b[0])
        for seg in lines:
            assert not crosses(seg, a), (a[0], seg)


def test_a_rung_crossing_a_rail_it_does_not_join_breaks_the_rail_there():
    d = drawing()
    leaves = list(walk(d.contents[0]))
    lines = [s for s in segments(d) if not s[4]]
    rails = [s for s in lines if abs(s[1] - s[3]) < 1e-6]
    rungs = [s for s in lines if abs(s[0] - s[2]) < 1e-6]
    dots = [apply(tx, s.cx, s.cy) for s, tx in leaves if isinstance(s, Circle) and s.r <= 2.1]
    gaps = []
    for s, tx in leaves:
        if (
            isinstance(s, Rect)
            and s.fillColor is not None
            and s.fillColor.rgb() == (1, 1, 1)
            and s.strokeColor is None
        ):
            (x0, y0), (x1, y1) = apply(tx, s.x, s.y), apply(tx, s.x + s.width, s.y + s.height)
            gaps.append((min(x0, x1), min(y0, y1), max(x0, x1), max(y0, y1)))
    count = 0
    for rx0, ry, rx1, _, _ in rails:
        for x, y0, _, y1, _ in rungs:
            lo, hi = sorted((y0, y1))
            if not (lo + 0.5 < ry < hi - 0.5 and min(rx0, rx1) < x < max(rx0, rx1)):
                continue
            if any(abs(dx - x) < 0.5 and abs(dy - ry) < 0.5 for dx, dy in dots):
                continue  # a junction, drawn with a dot
            count += 1
            # the gap is centred on the rung's x and spans the rail's y
            assert any(g[0] < x < g[2] and g[1] < ry < g[3] and g[2] - g[0] >= 5 for g in gaps), (
                x,
                ry,
            )
    assert count >= 5  # the test circuit has crossings to check


def test_junction_dots_where_three_meet():
    d = drawing()
    dots = [
        s
        for s, _ in walk(d.contents[0])
        if isinstance(s, Circle)
        and s.r <= 2.1
        and s.fillColor is not None
        and s.fillColor.rgb() == (0, 0, 0)
    ]
    # gnd joins eight parts: its rail has a dot at every joint but the last
    assert len(dots) >= 7


def test_every_dependent_source_has_its_control_drawn():
    d = drawing()
    dashed = [s for s in segments(d) if s[4]]
    taps = [
        s
        for s, _ in walk(d.contents[0])
        if isinstance(s, Circle)
        and s.fillColor is not None
        and s.fillColor.rgb() == (1, 1, 1)
        and s.r < 2
    ]
    rings = [s for s, _ in walk(d.contents[0]) if isinstance(s, Circle) and s.fillColor is None]
    assert len(rings) == 2  # H1 and F1 sense the current of R1
    assert (
        len(taps) >= 6 + 4
    )  # a terminal per rail (6 nodes and gnd) and two taps per node-controlled source
    assert len(dashed) >= 4


def test_too_many_parts_give_no_drawing():
    many = [DiagramPart(f"R{k}", "resistor", (f"n{k}", f"n{k + 1}"), "1 kΩ") for k in range(31)]
    assert circuit_drawing(many, "n0", width=WIDTH) is None


def test_connection_rows_cover_every_terminal_once():
    rows = dict(connection_rows(ALL_KINDS))
    count = sum(len(v.split(", ")) for v in rows.values())
    assert count == 2 * len(ALL_KINDS)
    assert "V1 (+)" in rows["a"] and "V1 (−)" in rows["gnd"]


def test_drawing_renders_to_pdf_with_text(tmp_path):
    from pypdf import PdfReader
    from reportlab.graphics import renderPDF

    out = tmp_path / "d.pdf"
    renderPDF.drawToFile(drawing(), str(out))
    text = PdfReader(out).pages[0].extract_text()
    assert "R1" in text and "gnd" in text
