"""The circuit diagram, drawn from the project file.

Layout that always works: every node is a horizontal rail, rails are
stacked by nominal potential with the reference rail at the bottom (under
a ground symbol), and every element is a vertical rung in its own column
between its two rails.  Where a rung passes a rail it does not join, the
rail is broken by a gap, so a crossing never reads as a connection; a dot
marks every junction where three conductors meet.  Symbols follow the
shapes of IEC 60617 (resistor: rectangle; independent sources: circle
with + and − or an arrow; dependent sources: diamond).

A dependent source's control is drawn as a dashed line, which carries no
current: from taps on its two control nodes (marked + and −), or from a
ring on the wire of the element whose current controls it.

Type is never scaled: labels are set at :data:`FONT` pt (at least
:data:`MIN_FONT`), and a circuit too large to draw at that size returns no
drawing (the report lists its connections instead).
"""

from __future__ import annotations

from collections import deque
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

from reportlab.graphics.shapes import Circle, Drawing, Group, Line, Rect, String
from reportlab.lib import colors
from reportlab.pdfbase.pdfmetrics import stringWidth

from calcdoc.model.elements import KINDS

MIN_FONT = 7.0
FONT = 7.5
COL = 31.0  # column pitch for a one-line label (pt)
LINE_PITCH = 8.5  # more pitch for each further label line
SENSE_PITCH = 17.0  # from a control-tap column to its source
CONTROL_ROOM = 6.0  # more pitch before a source controlled by the current of its left neighbour
RAIL_MIN = 60.0  # rail pitch bounds (pt)
RAIL_MAX = 120.0
LABEL_DX = 17.0  # label baseline from the rung
LABEL_CLEAR = 10.0  # label ends to the rails above and below
GAP = 3.5  # half-width of the break in a rail where a rung crosses it
DASH = [2.2, 1.8]

LEGEND = (
    "Horizontal line: a node, named at its left end; the ground symbol marks the reference node.",
    "Dot: a junction where conductors join. A line that passes a gap in another line does not "
    "join it.",
    "Dashed line: a dependent source's control, which carries no current: from taps on two nodes "
    "(marked + and −) or from a ring on the wire of the element whose current controls it.",
    "Labels give the element's name and value; a dependent source's label gives gain × control, "
    "where V(y,x) means V(y) − V(x) and I(R1) the current through R1 from its a to its b terminal.",
)


def legend(parts: Sequence[DiagramPart], turned: bool = False) -> list[str]:
    """The legend of a drawing: the general lines, then one line per symbol drawn."""
    from calcdoc.report.symbols import WORDS

    general = list(LEGEND)
    if turned:
        general[0] = (
            "Vertical line: a node, named at its top end; the ground symbol marks the reference "
            "node (the drawing is turned a quarter turn)."
        )
    drawn = dict.fromkeys(
        p.drawing or (KINDS[p.kind].drawing if p.kind in KINDS else "box") for p in parts
    )
    symbols = list(dict.fromkeys(WORDS.get(d, WORDS["box"]) for d in drawn))
    return [*general[:2], *symbols, *general[2:]]


@dataclass(frozen=True)
class DiagramPart:
    name: str
    kind: str
    nodes: tuple[str, str]
    label: str
    control_nodes: tuple[str, str] | None = None
    control_element: str | None = None
    drawing: str = ""  # the element table's symbol name (report/symbols.py); "" = by kind
    state: str = ""  # a contact's state in the case drawn


@dataclass
class _Column:
    part: DiagramPart | None  # None: the control taps of ``of``
    of: DiagramPart | None = None
    lines: list[str] = field(default_factory=list)


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
    first: dict[str, int] = {}
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


def connection_rows(parts: Sequence[DiagramPart]) -> list[tuple[str, str]]:
    """(node, elements joined at it with their terminal) for a connection table."""
    joined: dict[str, list[str]] = {}
    for p in parts:
        polar = p.kind in KINDS and KINDS[p.kind].terminals == ("plus", "minus")
        marks = ("+", "−") if polar else ("a", "b")
        for n, m in zip(p.nodes, marks, strict=True):
            joined.setdefault(n, []).append(f"{p.name} ({m})")
    return [(n, ", ".join(v)) for n, v in joined.items()]


def label_text(p: DiagramPart) -> tuple[str, str]:
    """(name, value) of a part's label; a dependent source's value is gain × control."""
    gain = p.kind not in KINDS or KINDS[p.kind].has_value  # an op-amp has no gain to print
    if p.control_nodes and gain:
        return p.name, f"{p.label} × V({p.control_nodes[0]},{p.control_nodes[1]})"
    if p.control_element:
        return p.name, f"{p.label} × I({p.control_element})"
    return p.name, p.label


def _columns(parts: Sequence[DiagramPart], row: dict[str, int]) -> list[_Column]:
    """Short rungs near the top first; control taps just before their source, and a
    current-controlled source just after the element that controls it."""
    order = sorted(
        parts, key=lambda p: (min(row[n] for n in p.nodes), max(row[n] for n in p.nodes))
    )
    names = {p.name for p in parts}
    followers = [p for p in order if p.control_element in names]
    for p in followers:
        order.remove(p)
    for p in followers:
        at = next(i for i, q in enumerate(order) if q.name == p.control_element)
        order.insert(at + 1, p)
    cols: list[_Column] = []
    for p in order:
        if p.control_nodes and all(n in row for n in p.control_nodes):
            cols.append(_Column(None, p))
        cols.append(_Column(p))
    return cols


def _dashed(g: Group, pts: list[tuple[float, float]], cuts: list[tuple[float, float]]) -> None:
    """A dashed polyline, broken around each crossing point in ``cuts``."""
    for (x0, y0), (x1, y1) in zip(pts, pts[1:], strict=False):
        if x0 == x1:  # vertical: break at crossed rails
            lo, hi = sorted((y0, y1))
            stops = sorted(y for x, y in cuts if abs(x - x0) < 0.01 and lo < y < hi)
            y = lo
            for s in stops:
                if s - GAP > y:
                    g.add(
                        Line(
                            x0,
                            y,
                            x0,
                            s - GAP,
                            strokeColor=colors.black,
                            strokeWidth=0.7,
                            strokeDashArray=DASH,
                        )
                    )
                y = s + GAP
            if hi > y:
                g.add(
                    Line(
                        x0,
                        y,
                        x0,
                        hi,
                        strokeColor=colors.black,
                        strokeWidth=0.7,
                        strokeDashArray=DASH,
                    )
                )
        else:
            g.add(
                Line(
                    x0, y0, x1, y1, strokeColor=colors.black, strokeWidth=0.7, strokeDashArray=DASH
                )
            )


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
    cols = _columns(parts, row)

    # rail pitch: room for every label in the gap under its rung's top rail
    def width_of(lines: list[str]) -> float:
        return max(stringWidth(t, font_name, FONT) for t in lines)

    for c in cols:
        if c.part:
            name, value = label_text(c.part)
            c.lines = [f"{name} {value}"]
    longest = max(width_of(c.lines) for c in cols if c.part)
    pitch_cap = (max_height - 60) / max(len(rails) - 1, 1)
    rail = max(RAIL_MIN, min(RAIL_MAX, longest + 2 * LABEL_CLEAR, pitch_cap))
    if rail > pitch_cap + 1e-6:
        return None
    room = rail - 2 * LABEL_CLEAR
    for c in cols:
        if c.part and width_of(c.lines) > room:
            name, value = label_text(c.part)
            c.lines = [name, value]
            if width_of(c.lines) > room and " × " in value:
                gain, _, ctl = value.partition(" × ")
                c.lines = [name, gain + " ×", ctl]
            if width_of(c.lines) > room and ", " in value:  # one threshold or state a line
                c.lines = [name, *value.split(", ")]
            if width_of(c.lines) > room:
                return None
    # column positions: each column leaves room for its own label before the next
    label_w = max(stringWidth(n, font_name, FONT) for n in rails) + 13
    x_of, x = [], label_w + COL / 2
    for k, c in enumerate(cols):
        x_of.append(x)
        if c.part is None:
            x += SENSE_PITCH
            continue
        x += COL + LINE_PITCH * (len(c.lines) - 1)
        nxt = cols[k + 1].part if k + 1 < len(cols) else None
        if nxt is not None and nxt.control_element == c.part.name:
            x += CONTROL_ROOM  # the dashed control line passes between this label and the source
    full_w = x_of[-1] + LABEL_DX + LINE_PITCH * (len(cols[-1].lines) - 1) + 4
    full_h = rail * (len(rails) - 1) + 60
    if full_w > width or full_h > max_height + 1e-6:
        return None
    g = Group()
    ink = colors.black
    y_of = {n: full_h - 20 - rail * row[n] for n in rails}
    x_part = {c.part.name: x for x, c in zip(x_of, cols, strict=True) if c.part}
    spans: dict[str, list[float]] = {}
    for x, c in zip(x_of, cols, strict=True):
        for n in c.part.nodes if c.part else c.of.control_nodes:  # type: ignore[union-attr]
            spans.setdefault(n, []).append(x)
    # rails, with their names and junction dots
    for n, xs in spans.items():
        y, x0 = y_of[n], label_w - 6
        g.add(Line(x0, y, max(xs), y, strokeColor=ink, strokeWidth=1))
        g.add(String(2, y - FONT * 0.35, n, fontName=font_name, fontSize=FONT, fillColor=ink))
        g.add(Circle(x0, y, 1.8, fillColor=colors.white, strokeColor=ink, strokeWidth=0.8))
        for x in xs:
            if x != max(xs):
                g.add(Circle(x, y, 2.0, fillColor=ink, strokeColor=ink, strokeWidth=0))

    def crossings(
        x: float, lo: float, hi: float, joined: Sequence[str]
    ) -> list[tuple[float, float]]:
        return [
            (x, y_of[n])
            for n in rails
            if n not in joined and lo < y_of[n] < hi and n in spans and x <= max(spans[n])
        ]

    sym_y: dict[str, float] = {}
    for x, c in zip(x_of, cols, strict=True):
        if not c.part:
            continue
        p = c.part
        ya, yb = y_of[p.nodes[0]], y_of[p.nodes[1]]
        top, bot = max(ya, yb), min(ya, yb)
        for _, yn in crossings(x, bot, top, p.nodes):  # the rail is broken where the rung passes
            g.add(
                Rect(
                    x - GAP,
                    yn - 1.5,
                    2 * GAP,
                    3,
                    fillColor=colors.white,
                    strokeColor=None,
                    strokeWidth=0,
                )
            )
        below = max((y_of[n] for n in rails if bot <= y_of[n] < top), default=bot)
        mid = (top + below) / 2
        sym_y[p.name] = mid
        g.add(Line(x, top, x, mid + 11, strokeColor=ink, strokeWidth=1))
        g.add(Line(x, mid - 11, x, bot, strokeColor=ink, strokeWidth=1))
        g.add(_symbol(p, x, mid, ya > yb, font_name))
        for k, text in enumerate(c.lines):
            s = String(
                0, 0, text, fontName=font_name, fontSize=FONT, fillColor=ink, textAnchor="middle"
            )
            lab = Group(s)
            lab.translate(x + LABEL_DX + k * LINE_PITCH, mid)
            lab.rotate(90)
            g.add(lab)
    # control connections (dashed, no current)
    for x, c in zip(x_of, cols, strict=True):
        if c.part is None and c.of is not None:
            src = c.of
            cp, cm = src.control_nodes  # type: ignore[misc]
            ys = sym_y[src.name]
            lo = min(y_of[cp], y_of[cm], ys)
            hi = max(y_of[cp], y_of[cm], ys)
            _dashed(g, [(x, lo), (x, hi)], crossings(x, lo, hi, (cp, cm)))
            _dashed(g, [(x, ys), (x_part[src.name] - 9, ys)], [])
            for n, mark in ((cp, "+"), (cm, "−")):
                g.add(
                    Circle(
                        x, y_of[n], 1.8, fillColor=colors.white, strokeColor=ink, strokeWidth=0.8
                    )
                )
                g.add(
                    String(
                        x - 8,
                        y_of[n] + 2.5,
                        mark,
                        fontName=font_name,
                        fontSize=FONT,
                        fillColor=ink,
                        textAnchor="middle",
                    )
                )
        elif c.part is not None and c.part.control_element in x_part:
            src, ctl = c.part, c.part.control_element
            xc, xs_ = x_part[ctl], x
            ctl_part = next(q for q in parts if q.name == ctl)
            top_c = max(y_of[n] for n in ctl_part.nodes)
            yr = top_c - 7
            ys = sym_y[src.name]
            g.add(Circle(xc, yr, 3.2, fillColor=None, strokeColor=ink, strokeWidth=0.7))
            path = [(xc + 3.2, yr), (xs_ - 12, yr), (xs_ - 12, ys), (xs_ - 9, ys)]
            cuts = crossings(xs_ - 12, min(yr, ys), max(yr, ys), ())
            _dashed(g, path, cuts)
    # ground symbol under the reference rail
    yr, xr = y_of[reference], label_w + 4
    g.add(Line(xr, yr, xr, yr - 9, strokeColor=ink, strokeWidth=1))
    for k, half in enumerate((7, 4.5, 2)):
        g.add(
            Line(
                xr - half, yr - 9 - 3 * k, xr + half, yr - 9 - 3 * k, strokeColor=ink, strokeWidth=1
            )
        )
    return Drawing(full_w, full_h, g)


def _symbol(p: DiagramPart, x: float, y: float, a_on_top: bool, font: str) -> Group:
    """The part's symbol: the project's chosen drawing, else its type's (the element table)."""
    from calcdoc.report.symbols import SYMBOLS

    drawing = p.drawing or (KINDS[p.kind].drawing if p.kind in KINDS else "box")
    return SYMBOLS.get(drawing, SYMBOLS["box"])(x, y, a_on_top, p.state, font)
