"""Diagram symbols for contacts, diodes, LEDs, zeners, op-amps, capacitors and coils.

Each symbol is drawn on a vertical branch centred at (x, y) and spans
y − 11 … y + 11, where the branch's wire stops; terminal a is at the top
when ``a_on_top``.  Shapes follow the usual forms of IEC 60617 (diode:
triangle and bar; capacitor: two plates; coil: a row of half-turns;
make contact: a blade), drawn in our own proportions.  Labels go to the
right of the branch, so every mark a symbol adds (LED arrows, an open
blade, the op-amp's input signs) sits on its left or inside it.

:data:`SYMBOLS` maps the element table's ``drawing`` names (and the
``symbol`` variants a project may choose) to the drawing functions; the
diagram looks a part up there.
"""

from __future__ import annotations

import math
from collections.abc import Callable

from reportlab.graphics.shapes import Circle, Group, Line, Polygon, PolyLine, Rect, String
from reportlab.lib import colors

INK = colors.black
REACH = 11.0  # half the height a symbol occupies on its branch
MARK_FONT = 7.0  # the + and − marks of a voltage source (the smallest label size)


def _line(g: Group, x0: float, y0: float, x1: float, y1: float, w: float = 1.0) -> None:
    g.add(Line(x0, y0, x1, y1, strokeColor=INK, strokeWidth=w))


def _diode_body(g: Group, x: float, y: float, down: bool, fill=colors.white) -> float:
    """Triangle from anode to cathode and the cathode bar; returns the bar's y."""
    s = -1.0 if down else 1.0  # direction of conduction along y
    ya, yk = y - 5.5 * s, y + 5.5 * s
    _line(g, x, y + REACH * (1 if down else -1), x, ya)
    _line(g, x, yk, x, y - REACH * (1 if down else -1))
    g.add(Polygon([x - 6, ya, x + 6, ya, x, yk], fillColor=fill, strokeColor=INK, strokeWidth=1))
    return yk


def diode(x: float, y: float, a_on_top: bool, state: str = "", font: str = "") -> Group:
    """Triangle pointing from the anode (terminal a) to the cathode, bar at the cathode."""
    g = Group()
    yk = _diode_body(g, x, y, a_on_top)
    _line(g, x - 6.5, yk, x + 6.5, yk, 1.2)
    return g


def zener(x: float, y: float, a_on_top: bool, state: str = "", font: str = "") -> Group:
    """A diode whose cathode bar has bent ends (conducts in reverse at its breakdown voltage)."""
    g = Group()
    yk = _diode_body(g, x, y, a_on_top)
    s = -1.0 if a_on_top else 1.0
    _line(g, x - 6.5, yk, x + 6.5, yk, 1.2)
    _line(g, x - 6.5, yk, x - 6.5, yk - 3 * s, 1.2)
    _line(g, x + 6.5, yk, x + 6.5, yk + 3 * s, 1.2)
    return g


def led(x: float, y: float, a_on_top: bool, state: str = "", font: str = "") -> Group:
    """A diode with two arrows leaving it to the left (light emitted)."""
    g = diode(x, y, a_on_top)
    for dy in (3.0, -2.0):
        x0, y0, x1, y1 = x - 7, y + dy, x - 13, y + dy + 5
        _line(g, x0, y0, x1, y1, 0.8)
        ang = math.atan2(y1 - y0, x1 - x0)
        tip = [x1, y1]
        for da in (2.6, -2.6):
            tip += [x1 - 3 * math.cos(ang + da / 6), y1 - 3 * math.sin(ang + da / 6)]
        g.add(Polygon(tip, fillColor=INK, strokeColor=INK, strokeWidth=0.3))
    return g


def contact(x: float, y: float, a_on_top: bool, state: str = "", font: str = "") -> Group:
    """A make contact: a pivot at y − 7 and a fixed contact at y + 7; the blade
    meets the fixed contact when closed and stands off to the left when open
    (as in the case drawn)."""
    g = Group()
    _line(g, x, y + REACH, x, y + 7)
    _line(g, x, y - REACH, x, y - 7)
    _line(g, x - 5, y + 7, x + 1, y + 7, 1.2)  # the fixed contact
    g.add(Circle(x, y - 7, 1.4, fillColor=INK, strokeColor=INK, strokeWidth=0))
    if state == "open":
        _line(g, x, y - 7, x - 9, y + 5, 1.3)
    else:
        _line(g, x, y - 7, x - 3, y + 7, 1.3)
    return g


def capacitor(x: float, y: float, a_on_top: bool, state: str = "", font: str = "") -> Group:
    """Two plates across the branch."""
    g = Group()
    _line(g, x, y + REACH, x, y + 2.5)
    _line(g, x, y - REACH, x, y - 2.5)
    _line(g, x - 7, y + 2.5, x + 7, y + 2.5, 1.6)
    _line(g, x - 7, y - 2.5, x + 7, y - 2.5, 1.6)
    return g


def coil(x: float, y: float, a_on_top: bool, state: str = "", font: str = "") -> Group:
    """Four half-turns bulging to the left."""
    g = Group()
    turns, top, bottom = 4, y + REACH - 1, y - REACH + 1
    _line(g, x, y + REACH, x, top)
    _line(g, x, bottom, x, y - REACH)
    h = (top - bottom) / turns
    for k in range(turns):
        y0 = top - k * h
        pts = []
        for t in range(13):
            a = math.pi * t / 12
            pts += [x - (h / 2) * math.sin(a), y0 - (h / 2) * (1 - math.cos(a))]
        g.add(PolyLine(pts, strokeColor=INK, strokeWidth=1))
    return g


def opamp(x: float, y: float, a_on_top: bool, state: str = "", font: str = "") -> Group:
    """A triangle pointing at the output terminal (a), its inputs marked + and − at the base."""
    g = Group()
    s = 1.0 if a_on_top else -1.0
    apex, base = y + 9 * s, y - 9 * s
    _line(g, x, y + REACH * s, x, apex)
    _line(g, x, y - REACH * s, x, base)
    g.add(
        Polygon(
            [x - 9, base, x + 9, base, x, apex],
            fillColor=colors.white,
            strokeColor=INK,
            strokeWidth=1,
        )
    )
    baseline = base + 1.5 if s > 0 else base - 6.0  # just inside the base
    for dx, mark in ((-4.0, "+"), (4.0, "−")):
        g.add(
            String(
                x + dx,
                baseline,
                mark,
                fontName=font or "Helvetica",
                fontSize=6,
                textAnchor="middle",
                fillColor=INK,
            )
        )
    return g


def _box(g: Group, x: float, y: float) -> None:
    g.add(Rect(x - 4.5, y - 11, 9, 22, fillColor=colors.white, strokeColor=INK, strokeWidth=1))


def _circle(g: Group, x: float, y: float) -> None:
    g.add(Circle(x, y, 10, fillColor=colors.white, strokeColor=INK, strokeWidth=1))


def _diamond(g: Group, x: float, y: float) -> None:
    g.add(
        Polygon(
            [x, y + 11, x + 9, y, x, y - 11, x - 9, y],
            fillColor=colors.white,
            strokeColor=INK,
            strokeWidth=1,
        )
    )


def _polarity(g: Group, x: float, y: float, a_on_top: bool, font: str) -> None:
    sa, sb = (5.5, -5.5) if a_on_top else (-5.5, 5.5)
    for dy, mark in ((sa, "+"), (sb, "−")):
        g.add(
            String(
                x,
                y + dy - 2.5,
                mark,
                fontName=font,
                fontSize=MARK_FONT,
                textAnchor="middle",
                fillColor=INK,
            )
        )


def _arrow(g: Group, x: float, y: float, a_on_top: bool) -> None:
    """Current flows a → b: the arrow points at b."""
    d = -1 if a_on_top else 1
    _line(g, x, y - 6 * d, x, y + 5 * d)
    g.add(
        Polygon(
            [x, y + 7 * d, x - 3, y + 2.5 * d, x + 3, y + 2.5 * d],
            fillColor=INK,
            strokeColor=INK,
            strokeWidth=0.5,
        )
    )


def resistor(x: float, y: float, a_on_top: bool, state: str = "", font: str = "") -> Group:
    """A rectangle (also the symbol of any type without one of its own)."""
    g = Group()
    _box(g, x, y)
    return g


def source(voltage: bool, dependent: bool) -> Callable[..., Group]:
    """A source: a circle (independent) or a diamond (dependent), with + and − marks
    (a voltage source) or an arrow pointing at terminal b (a current source)."""

    def draw(x: float, y: float, a_on_top: bool, state: str = "", font: str = "") -> Group:
        g = Group()
        (_diamond if dependent else _circle)(g, x, y)
        if voltage:
            _polarity(g, x, y, a_on_top, font)
        else:
            _arrow(g, x, y, a_on_top)
        return g

    return draw


SYMBOLS: dict[str, Callable[..., Group]] = {
    "resistor": resistor,
    "box": resistor,
    "voltage_source": source(voltage=True, dependent=False),
    "current_source": source(voltage=False, dependent=False),
    "dependent_voltage": source(voltage=True, dependent=True),
    "dependent_current": source(voltage=False, dependent=True),
    "diode": diode,
    "zener": zener,
    "led": led,
    "contact": contact,
    "capacitor": capacitor,
    "coil": coil,
    "opamp": opamp,
}
"""Drawing name (the element table's ``drawing`` or a chosen ``symbol``) → function."""

WORDS: dict[str, str] = {
    "resistor": "Rectangle: resistor (or an element without a symbol of its own).",
    "box": "Rectangle: resistor (or an element without a symbol of its own).",
    "voltage_source": "Circle with + and −: voltage source (+ at terminal a).",
    "current_source": "Circle with an arrow: current source, the arrow pointing from a to b.",
    "dependent_voltage": "Diamond with + and −: dependent voltage source (+ at terminal a).",
    "dependent_current": "Diamond with an arrow: dependent current source, from a to b.",
    "diode": "Triangle and bar: diode, conducting from the anode (triangle) to the cathode (bar).",
    "zener": "Triangle and bent bar: zener diode, which also conducts in reverse at its breakdown voltage.",
    "led": "Diode with two arrows: light-emitting diode.",
    "contact": "Blade: switch or relay contact, drawn open or closed as in the nominal case.",
    "capacitor": "Two plates: capacitor (open at DC).",
    "coil": "Row of half-turns: coil (a short through its winding resistance at DC).",
    "opamp": "Triangle: ideal operational amplifier, inputs marked + and −, output at the tip.",
}
"""What each symbol means, for the diagram's legend (only the symbols drawn are listed)."""


def part_label(element, state: str, value: str) -> str:
    """The text beside a part: its value, and what a symbol alone does not say
    (the op-amp's inputs, each threshold of a piecewise-linear device, a
    contact's state in the case drawn)."""
    from calcdoc.format import eng

    kind = element.kind
    if kind.control == "nodes" and element.control_nodes and not kind.has_value:
        plus, minus = element.control_nodes
        return f"+ {plus}, − {minus}"
    if kind.knees:
        given = dict(element.numbers)
        return ", ".join(
            f"{k.symbol} {eng(float(given[k.threshold]), 'V', 3)}"
            for k in kind.knees
            if k.threshold in given
        )
    if kind.settable and state:
        return f"{value}, {state}" if element.main_given else state
    return value


__all__ = ["SYMBOLS", "WORDS", "part_label"]
