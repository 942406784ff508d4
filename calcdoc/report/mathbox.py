"""Our own small math typesetter: the equation subset the report writes, as glyph outlines.

The equations of a record use a small part of TeX's math notation:
groups ``{…}``, upright names ``\\mathrm{…}``, sub- and superscripts,
fractions ``\\frac{…}{…}``, parentheses sized to what they enclose
(``\\left( … \\right)``), the thin space ``\\,`` and a few symbols
(``\\cdot``, ``\\times``, ``\\Omega``, ``\\mu``, ``\\_``).  This module reads
exactly that subset and lays it out in boxes, TeX style: letters outside
``\\mathrm`` italic, operators spaced by their class (relation, binary,
unary), fraction bars on the maths axis.  Glyph outlines come from the
DejaVu faces the package embeds, read with fontTools.  Anything outside
the subset is typeset as its plain characters, never refused: the text
comes from the engine and from sympy, and a record must not fail on a
symbol.

:func:`outline` returns path segments in points with the same codes as
a vector path (1 move, 2 line, 3 quadratic, 4 cubic, 79 close), drawn by
:func:`calcdoc.report.mathtext.draw_outline`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from functools import lru_cache

MOVE, LINE, QUAD, CUBIC, CLOSE = 1, 2, 3, 4, 79

SCRIPT = 0.7  # size of a sub- or superscript, relative to its base
SUB_DROP = 0.22  # subscript baseline below the base's, in ems of the base
SUP_RISE = 0.42  # superscript baseline above the base's, in ems of the base
RULE = 0.055  # fraction bar thickness, ems
RULE_GAP = 0.12  # clearance between the bar and the numerator or denominator, ems
THIN, MEDIUM, THICK = 3 / 18, 4 / 18, 5 / 18  # TeX's math spaces, ems (common practice, no source)

SYMBOLS = {  # command -> character
    "cdot": "\u22c5",
    "times": "\u00d7",
    "Omega": "\u03a9",
    "mu": "\u03bc",
    "_": "_",
    "{": "{",
    "}": "}",
    "%": "%",
    "#": "#",
    "&": "&",
    "$": "$",
}
SPACES = {",": THIN, ":": MEDIUM, ";": THICK, " ": 1 / 3, "quad": 1.0}
RELATIONS = set("=<>\u2264\u2265\u2248")
BINARIES = set("+-\u22c5\u00d7\u00b1")
OPENING, CLOSING = set("(["), set(")]")

_TOKEN = re.compile(r"\\[A-Za-z]+|\\.|[{}^_]|\s+|.", re.S)


# --------------------------------------------------------------------------
# reading
# --------------------------------------------------------------------------


@dataclass
class Char:
    text: str
    upright: bool  # set in the upright face (a name, a digit, an operator, capital Greek)
    in_name: bool = False  # part of a name (``\mathrm{…}``): text, never an operator


@dataclass
class Group:
    items: list = field(default_factory=list)


@dataclass
class Frac:
    num: Group
    den: Group


@dataclass
class Scripts:
    base: object
    sub: Group | None = None
    sup: Group | None = None


@dataclass
class Fenced:
    left: str
    body: Group
    right: str


@dataclass
class Space:
    ems: float


class _Reader:
    def __init__(self, tex: str) -> None:
        self.tokens = [t for t in _TOKEN.findall(tex) if not t.isspace()]
        self.at = 0

    def peek(self) -> str | None:
        return self.tokens[self.at] if self.at < len(self.tokens) else None

    def take(self) -> str | None:
        t = self.peek()
        self.at += t is not None
        return t

    def group(self, name: bool, until: str | None = None) -> Group:
        """Items up to ``until`` (``}`` or ``\\right``) or the end of the text."""
        g = Group()
        while (t := self.peek()) is not None:
            if t == until:
                self.take()
                return g
            if t == "}":  # a stray closing brace: dropped
                self.take()
                continue
            item = self.atom(name)
            while self.peek() in ("_", "^"):
                mark = self.take()
                script = self.argument(name)
                if not isinstance(item, Scripts):
                    item = Scripts(item)
                if mark == "_":
                    item.sub = script
                else:
                    item.sup = script
            g.items.append(item)
        return g

    def argument(self, name: bool) -> Group:
        """A braced group, or a single atom."""
        if self.peek() == "{":
            self.take()
            return self.group(name, "}")
        return Group([self.atom(name)] if self.peek() is not None else [])

    def delimiter(self) -> str:
        """The character after ``\\left`` or ``\\right`` ("" for none or ``.``)."""
        t = self.take() or ""
        if t.startswith("\\"):
            t = SYMBOLS.get(t[1:], "")
        return "" if t == "." else t

    def atom(self, name: bool):
        """One item; ``name`` is true inside ``\\mathrm{…}``."""
        t = self.take()
        if t == "{":
            return self.group(name, "}")
        if t in ("^", "_"):  # a script with no base: on an empty base
            self.at -= 1
            return Group()
        if not t.startswith("\\"):
            return Char(t, name or not t.isalpha(), name)
        command = t[1:]
        if command in ("mathrm", "text"):
            return self.argument(True)
        if command in ("frac", "dfrac", "tfrac"):
            return Frac(self.argument(name), self.argument(name))
        if command == "left":
            left = self.delimiter()
            body = self.group(name, "\\right")
            return Fenced(left, body, self.delimiter())
        if command == "right":  # unmatched: its delimiter as a plain character
            return Char(self.delimiter(), True)
        if command in SPACES:
            return Space(SPACES[command])
        if command in SYMBOLS:
            ch = SYMBOLS[command]
            return Char(ch, name or not ch.islower(), name)
        return Group([Char(c, True, True) for c in command])  # outside the subset: its letters


# --------------------------------------------------------------------------
# the faces
# --------------------------------------------------------------------------


class Face:
    """One TrueType face: glyph outlines (font units) and metrics."""

    def __init__(self, path: str) -> None:
        from fontTools.ttLib import TTFont

        self.font = TTFont(path, lazy=True)
        self.cmap = self.font.getBestCmap()
        self.glyphs = self.font.getGlyphSet()
        self.upm = self.font["head"].unitsPerEm
        self.hmtx = self.font["hmtx"]
        self.cache: dict[str, tuple] = {}

    def glyph(self, ch: str) -> str:
        """The glyph of one character (the question mark's if the face has none)."""
        return (
            (self.cmap.get(ord(ch)) if len(ch) == 1 else None)
            or self.cmap.get(ord("?"))
            or ".notdef"
        )

    def advance(self, name: str) -> float:
        return self.hmtx[name][0] / self.upm

    def path(self, name: str) -> tuple:
        """Outline of one glyph, in ems: ((points...), code) segments."""
        if name not in self.cache:
            from fontTools.pens.basePen import BasePen

            segs: list = []
            k = 1.0 / self.upm

            class Pen(BasePen):
                def _moveTo(self, p):  # noqa: N802 - fontTools pen protocol
                    segs.append(((p[0] * k, p[1] * k), MOVE))

                def _lineTo(self, p):  # noqa: N802
                    segs.append(((p[0] * k, p[1] * k), LINE))

                def _qCurveToOne(self, p1, p2):  # noqa: N802
                    segs.append(((p1[0] * k, p1[1] * k, p2[0] * k, p2[1] * k), QUAD))

                def _curveToOne(self, p1, p2, p3):  # noqa: N802
                    pts = (*p1, *p2, *p3)
                    segs.append((tuple(v * k for v in pts), CUBIC))

                def _closePath(self):  # noqa: N802
                    segs.append(((), CLOSE))

            self.glyphs[name].draw(Pen(self.glyphs))
            self.cache[name] = tuple(segs)
        return self.cache[name]

    def bounds(self, name: str) -> tuple[float, float]:
        """(lowest, highest) point of a glyph, in ems (0, 0 for a blank)."""
        ys = [v for pts, _ in self.path(name) for v in pts[1::2]]
        return (min(ys), max(ys)) if ys else (0.0, 0.0)


@lru_cache(maxsize=1)
def faces() -> tuple[Face, Face]:
    """The upright and the italic face (the package's embedded fonts)."""
    from calcdoc.report.fonts import register_fonts

    fs = register_fonts()
    return Face(str(fs.regular_path)), Face(str(fs.italic_path))


# --------------------------------------------------------------------------
# laying out
# --------------------------------------------------------------------------


@dataclass
class Box:
    """Width, height above and depth below the baseline (points) and what to draw.

    ``marks`` holds (face, glyph, x, y, size, y scale) and ``rules`` (x, y, w, h).
    """

    width: float = 0.0
    height: float = 0.0
    depth: float = 0.0
    marks: list = field(default_factory=list)
    rules: list = field(default_factory=list)

    def place(self, other: Box, x: float, y: float) -> None:
        """Set ``other`` with its origin at (x, y) of this box."""
        self.marks += [(f, g, gx + x, gy + y, s, sy) for f, g, gx, gy, s, sy in other.marks]
        self.rules += [(rx + x, ry + y, w, h) for rx, ry, w, h in other.rules]
        self.width = max(self.width, x + other.width)
        self.height = max(self.height, y + other.height)
        self.depth = max(self.depth, other.depth - y)


def _axis() -> float:
    """Height of the maths axis (the middle of the minus sign), ems."""
    up, _ = faces()
    lo, hi = up.bounds(up.glyph("\u2212"))
    return (lo + hi) / 2


def _char_box(ch: str, upright: bool, size: float, y_scale: float = 1.0) -> Box:
    up, it = faces()
    face = up if upright else it
    name = face.glyph(ch)
    lo, hi = face.bounds(name)
    return Box(
        face.advance(name) * size,
        max(hi * size * y_scale, 0.0),
        max(-lo * size * y_scale, 0.0),
        [(face, name, 0.0, 0.0, size, y_scale)],
    )


def _kind(item, previous: str | None) -> str:
    """TeX's atom class of an item: ord, bin, rel, open, close or punct."""
    if isinstance(item, Char) and not item.in_name:
        c = item.text
        if c in RELATIONS:
            return "rel"
        if c in BINARIES:  # a sign at the start or after an operator is unary
            return "ord" if previous in (None, "bin", "rel", "open", "punct") else "bin"
        if c in OPENING:
            return "open"
        if c in CLOSING:
            return "close"
        if c in ",;":
            return "punct"
    return "ord"


def _gap(left: str | None, right: str) -> float:
    if left is None:
        return 0.0
    if "rel" in (left, right) and left != right:
        return THICK
    if "bin" in (left, right):
        return MEDIUM
    if left == "punct":
        return THIN
    return 0.0


def layout(item, size: float) -> Box:
    """The box of one item at ``size`` points."""
    if isinstance(item, Char):
        if not item.text:  # an unmatched \right with nothing after it
            return Box()
        minus = item.text == "-" and not item.in_name  # a hyphen in a name stays one
        return _char_box("\u2212" if minus else item.text, item.upright, size)
    if isinstance(item, Space):
        return Box(item.ems * size)
    if isinstance(item, Group):
        return _row(item.items, size)
    if isinstance(item, Frac):
        return _fraction(item, size)
    if isinstance(item, Scripts):
        return _scripts(item, size)
    if isinstance(item, Fenced):
        return _fenced(item, size)
    raise TypeError(type(item).__name__)  # pragma: no cover - the reader makes no other


def _row(items: list, size: float) -> Box:
    box = Box()
    previous: str | None = None
    for item in items:
        kind = _kind(item, previous)
        x = box.width + _gap(previous, kind) * size
        box.place(layout(item, size), x, 0.0)
        previous = kind
    return box


def _fraction(item: Frac, size: float) -> Box:
    num, den = layout(item.num, size), layout(item.den, size)
    up, _ = faces()
    cap = up.bounds(up.glyph("H"))[1] * size
    axis, rule, gap = _axis() * size, RULE * size, RULE_GAP * size
    width = max(num.width, den.width) + 2 * THIN * size
    box = Box(width)
    box.place(num, (width - num.width) / 2, axis + rule / 2 + gap + num.depth)
    box.place(den, (width - den.width) / 2, axis - rule / 2 - gap - max(den.height, cap))
    box.rules.append((0.0, axis - rule / 2, width, rule))
    box.height = max(box.height, axis + rule / 2)
    return box


def _scripts(item: Scripts, size: float) -> Box:
    base = layout(item.base, size)
    box = Box()
    box.place(base, 0.0, 0.0)
    small = size * SCRIPT
    right = base.width
    if item.sup is not None:
        sup = layout(item.sup, small)
        rise = max(SUP_RISE * size, base.height - 0.3 * size)
        box.place(sup, right, rise)
    if item.sub is not None:
        sub = layout(item.sub, small)
        box.place(sub, right, -SUB_DROP * size)
    return box


def _fenced(item: Fenced, size: float) -> Box:
    body = layout(item.body, size)
    axis = _axis() * size
    half = max(body.height - axis, body.depth + axis) + 0.05 * size
    box = Box()
    for side, ch in (("left", item.left), ("body", None), ("right", item.right)):
        if side == "body":
            box.place(body, box.width, 0.0)
            continue
        if not ch:
            continue
        natural = _char_box(ch, True, size)
        lo, hi = -natural.depth, natural.height
        scale = max(1.0, 2 * half / (hi - lo)) if hi > lo else 1.0
        shift = axis - (lo + hi) / 2 * scale  # centred on the axis
        box.place(_char_box(ch, True, size, scale), box.width, shift)
    return box


def read(tex: str) -> Group:
    """The items of one equation (``$`` signs around it are dropped)."""
    text = tex.strip()
    if len(text) >= 2 and text[0] == text[-1] == "$":
        text = text[1:-1]
    return _Reader(text).group(False)


@lru_cache(maxsize=4096)
def outline(tex: str, size: float) -> tuple[tuple, float, float, float]:
    """Path segments (points, baseline origin), width, height and depth of an equation."""
    box = layout(read(tex), size)
    segs: list = []
    for face, name, x, y, s, sy in box.marks:
        for pts, code in face.path(name):
            segs.append(
                (
                    tuple(
                        round(x + v * s if i % 2 == 0 else y + v * s * sy, 2)
                        for i, v in enumerate(pts)
                    ),
                    code,
                )
            )
    for x, y, w, h in box.rules:
        x0, y0, x1, y1 = (round(v, 2) for v in (x, y, x + w, y + h))
        segs += [
            ((x0, y0), MOVE),
            ((x1, y0), LINE),
            ((x1, y1), LINE),
            ((x0, y1), LINE),
            ((), CLOSE),
        ]
    return tuple(segs), box.width, box.height, box.depth
