"""The circuit diagram, drawn from the project file.

Layout that always works: every node is a horizontal rail, rails are
stacked with the reference rail at the bottom (under a ground symbol), and
every element is a vertical rung in its own column between its two rails.
A rung that passes a rail it does not join is drawn with a white gap in
that rail, so crossings never read as connections; a dot marks every
junction where three or more conductors meet.  Symbols follow the shapes
of IEC 60617 (resistor: rectangle; independent sources: circle with +/−
or an arrow; dependent sources: diamond).  Beyond ``max_parts`` elements,
or when the labels would print below 6 pt, no drawing is made and the
report lists the connections instead.
"""

from __future__ import annotations

from collections import deque
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from reportlab.graphics.shapes import Circle, Drawing, Group, Line, Polygon, Rect, String
from reportlab.lib import colors
from reportlab.pdfbase.pdfmetrics import stringWidth

MIN_FONT = 6.0
FONT = 8.0
COL = 30.0  # column pitch at full size (pt)
RAIL = 78.0  # rail pitch at full size (pt)


@dataclass(frozen=True)
class DiagramPart:
    name: str
    kind: str
    nodes: tuple[str, str]
    label: str
    drawing: str = ""  # the element table's symbol name (report/symbols.py); "" = by kind
    state: str = ""  # a contact's state in the case drawn


def rail_order(
    parts: Sequence[DiagramPart], reference: str, levels: Mapping[str, float] | None = None
) -> list[str]:
    """Nodes from top to bottom, the reference last.

    With ``levels`` (the nominal node voltages) the highest potential is at
    the top, as engineers draw; otherwise the farthest from the reference.
    """
    adj: dict[str, set[str]] = {}
    for p in parts:
        a, b = p.nodes
        adj.setdefault(a, set()).add(b)
        adj.setdefault(b, set()).add(a)
    dist = {reference: 0}
    q = deque([reference])
    while q:
        x = q.popleft()
        for y in sorted(adj.get(x, ())):
            if y not in dist:
                dist[y] = dist[x] + 1
                q.append(y)
    first = {}
    for i, p in enumerate(parts):
        for n in p.nodes:
            first.setdefault(n, i)
    nodes = [n for n in first if n != reference]
    far = max(dist.values(), default=0) + 1
    if levels is not None:
        nodes.sort(key=lambda n: (-levels.get(n, 0.0), first[n]))
    else:
        nodes.sort(key=lambda n: (-dist.get(n, far), first[n]))
    return [*nodes, reference]


def _column_order(parts: Sequence[DiagramPart], row: dict[str, int]) -> list[DiagramPart]:
    """Short rungs near the top first, so rails stay short and crossings few."""
    return sorted(parts, key=lambda p: (min(row[n] for n in p.nodes), max(row[n] for n in p.nodes)))


def connection_rows(parts: Sequence[DiagramPart]) -> list[tuple[str, str]]:
    """(node, elements joined at it with their terminal) for a connection table."""
    joined: dict[str, list[str]] = {}
    for p in parts:
        marks = ("+", "−") if p.kind in ("voltage_source", "vcvs", "ccvs") else ("a", "b")
        for n, m in zip(p.nodes, marks, strict=True):
            joined.setdefault(n, []).append(f"{p.name} ({m})")
    return [(n, ", ".join(v)) for n, v in joined.items()]


def circuit_drawing(
    parts: Sequence[DiagramPart],
    reference: str,
    *,
    width: float,
    max_height: float = 640.0,
    font_name: str = "CalcdocSans",
    max_parts: int = 30,
    levels: Mapping[str, float] | None = None,
) -> Drawing | None:
    """The schematic as a vector drawing, or None when it would not be readable."""
    if not parts or len(parts) > max_parts:
        return None
    rails = rail_order(parts, reference, levels)
    row = {n: i for i, n in enumerate(rails)}
    cols = _column_order(parts, row)
    label_w = max(stringWidth(n, font_name, FONT) for n in rails) + 14
    full_w = label_w + COL * (len(cols) + 0.5) + 10
    full_h = RAIL * (len(rails) - 1) + 60
    scale = min(1.0, width / full_w, max_height / full_h)
    if FONT * scale < MIN_FONT:
        return None
    g = Group()
    y_of = {n: full_h - 20 - RAIL * row[n] for n in rails}
    x_of = [label_w + COL * (i + 0.5) for i in range(len(cols))]
    ink = colors.black
    # rails
    spans: dict[str, list[float]] = {}
    for x, p in zip(x_of, cols, strict=True):
        for n in p.nodes:
            spans.setdefault(n, []).append(x)
    for n, xs in spans.items():
        y = y_of[n]
        x0 = label_w - 6
        g.add(Line(x0, y, max(xs), y, strokeColor=ink, strokeWidth=1))
        g.add(String(2, y - FONT * 0.35, n, fontName=font_name, fontSize=FONT, fillColor=ink))
        g.add(Circle(x0, y, 1.8, fillColor=colors.white, strokeColor=ink, strokeWidth=0.8))
        for x in xs:
            if x != max(xs):
                g.add(Circle(x, y, 2.0, fillColor=ink, strokeColor=ink, strokeWidth=0))
    # rungs
    for x, p in zip(x_of, cols, strict=True):
        ya, yb = y_of[p.nodes[0]], y_of[p.nodes[1]]
        top, bot = max(ya, yb), min(ya, yb)
        for n in rails:  # gaps where the rung passes other rails
            yn = y_of[n]
            if bot < yn < top and n in spans and min(spans[n]) - 6 <= x <= max(spans[n]):
                g.add(Line(x, yn, x, yn, strokeColor=colors.white, strokeWidth=0))
                g.add(Rect(x - 3.5, yn - 1.5, 7, 3, fillColor=colors.white, strokeColor=None))
        # the symbol sits in the first gap between rails, never on a rail it crosses
        below = max((y_of[n] for n in rails if bot <= y_of[n] < top), default=bot)
        mid = (top + below) / 2
        g.add(Line(x, top, x, mid + 11, strokeColor=ink, strokeWidth=1))
        g.add(Line(x, mid - 11, x, bot, strokeColor=ink, strokeWidth=1))
        g.add(_symbol(p, x, mid, ya > yb, font_name))
        text = f"{p.name}  {p.label}"
        room = top - below - 28
        size = FONT
        while stringWidth(text, font_name, size) > max(room, 30) and size > MIN_FONT / scale:
            size -= 0.5
        s = String(
            0, 0, text, fontName=font_name, fontSize=size, fillColor=ink, textAnchor="middle"
        )
        lab = Group(s)
        lab.translate(x + 15 + size * 0.1, mid)
        lab.rotate(90)
        g.add(lab)
    # ground symbol under the reference rail
    yr, xr = y_of[reference], label_w + 4
    g.add(Line(xr, yr, xr, yr - 9, strokeColor=ink, strokeWidth=1))
    for k, half in enumerate((7, 4.5, 2)):
        g.add(
            Line(
                xr - half, yr - 9 - 3 * k, xr + half, yr - 9 - 3 * k, strokeColor=ink, strokeWidth=1
            )
        )
    g.scale(scale, scale)
    return Drawing(full_w * scale, full_h * scale, g)


def _symbol(p: DiagramPart, x: float, y: float, a_on_top: bool, font: str) -> Group:
    from calcdoc.report.symbols import SYMBOLS

    if p.drawing in SYMBOLS:
        return SYMBOLS[p.drawing](x, y, a_on_top, p.state, font)
    g = Group()
    ink = colors.black
    if p.kind == "resistor":
        g.add(Rect(x - 4.5, y - 11, 9, 22, fillColor=colors.white, strokeColor=ink, strokeWidth=1))
        return g
    if p.kind in ("voltage_source", "current_source"):
        g.add(Circle(x, y, 10, fillColor=colors.white, strokeColor=ink, strokeWidth=1))
    else:
        g.add(
            Polygon(
                [x, y + 11, x + 9, y, x, y - 11, x - 9, y],
                fillColor=colors.white,
                strokeColor=ink,
                strokeWidth=1,
            )
        )
    if p.kind in ("voltage_source", "vcvs", "ccvs"):
        sa, sb = (5.5, -5.5) if a_on_top else (-5.5, 5.5)
        g.add(
            String(
                x, y + sa - 2.5, "+", fontName=font, fontSize=7, textAnchor="middle", fillColor=ink
            )
        )
        g.add(
            String(
                x, y + sb - 2.5, "−", fontName=font, fontSize=7, textAnchor="middle", fillColor=ink
            )
        )
    else:  # current flows a -> b: the arrow points at b
        d = -1 if a_on_top else 1
        g.add(Line(x, y - 6 * d, x, y + 5 * d, strokeColor=ink, strokeWidth=1))
        g.add(
            Polygon(
                [x, y + 7 * d, x - 3, y + 2.5 * d, x + 3, y + 2.5 * d],
                fillColor=ink,
                strokeColor=ink,
                strokeWidth=0.5,
            )
        )
    return g
