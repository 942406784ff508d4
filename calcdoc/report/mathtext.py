"""Equations as vector outlines, drawn on the reportlab canvas as filled paths.

:mod:`calcdoc.report.mathbox` lays out the mathematics (fractions, sub- and
superscripts, sized parentheses) and gives the glyph outlines of the
embedded faces; they are filled here (quadratic segments raised to cubic),
never as raster images.  The plain text of each equation is laid under it
in invisible text so that the package stays searchable.
"""

from __future__ import annotations

from dataclasses import dataclass

from reportlab.platypus import Flowable

from calcdoc.report.mathbox import outline

MATH_SIZE = 10.0
LINE_GAP = 0.5  # between lines of equations, ems: a fraction's foot clears the next line


def draw_outline(canv, segs, x: float, y: float) -> None:
    """Fill the glyph outlines on ``canv`` with the baseline origin at (x, y)."""
    p = canv.beginPath()
    cur = (0.0, 0.0)
    start = (0.0, 0.0)
    for pts, code in segs:
        if code == 1:  # MOVETO
            cur = start = (pts[0], pts[1])
            p.moveTo(x + cur[0], y + cur[1])
        elif code == 2:  # LINETO
            cur = (pts[0], pts[1])
            p.lineTo(x + cur[0], y + cur[1])
        elif code == 3:  # CURVE3: raise the quadratic to a cubic
            (qx, qy, ex, ey) = pts
            c1 = (cur[0] + 2 / 3 * (qx - cur[0]), cur[1] + 2 / 3 * (qy - cur[1]))
            c2 = (ex + 2 / 3 * (qx - ex), ey + 2 / 3 * (qy - ey))
            p.curveTo(x + c1[0], y + c1[1], x + c2[0], y + c2[1], x + ex, y + ey)
            cur = (ex, ey)
        elif code == 4:  # CURVE4
            p.curveTo(*(x + v if i % 2 == 0 else y + v for i, v in enumerate(pts)))
            cur = (pts[4], pts[5])
        elif code == 79:  # CLOSEPOLY
            p.close()
            cur = start
    canv.drawPath(p, stroke=0, fill=1)


def width_of(tex: str, size: float = MATH_SIZE) -> float:
    return outline(tex, size)[1]


@dataclass
class _Line:
    tex: str
    indent: float


class MathLines(Flowable):
    """One equation typeset as mathematics, wrapped over several lines if long.

    Parameters
    ----------
    pieces : list of str
        Mathtext fragments (without ``$``) that may be broken between, e.g.
        ``["V_{a}/R_{1}", "+ I_{V1}", "= 0"]``.
    plain : str
        The plain-text equation, laid invisibly under the outlines.
    """

    def __init__(
        self, pieces: list[str], plain: str, *, size: float = MATH_SIZE, font: str = "CalcdocSans"
    ) -> None:
        super().__init__()
        self.pieces = pieces
        self.plain = plain
        self.size = size
        self.font = font
        self.lines: list[_Line] = []

    def wrap(self, avail_w: float, avail_h: float):
        whole = " ".join(self.pieces)
        if width_of(f"${whole}$", self.size) <= avail_w:
            lines = [_Line(whole, 0.0)]
        else:  # greedy fill by the widths of the pieces (each measured once, and cached)
            lines = []
            cur: list[str] = []
            indent, used, gap = 0.0, 0.0, 0.3 * self.size
            for piece in self.pieces:
                w = width_of(f"${piece}$", self.size)
                if cur and used + gap + w + indent > avail_w:
                    lines.append(_Line(" ".join(cur), indent))
                    cur, indent, used = [piece], 2.5 * self.size, w
                else:
                    used += (gap if cur else 0.0) + w
                    cur.append(piece)
            if cur:
                lines.append(_Line(" ".join(cur), indent))
        self.lines = lines
        self.heights = [outline(f"${ln.tex}$", self.size)[2:] for ln in lines]
        self.width = avail_w
        self.height = sum(h + d + LINE_GAP * self.size for h, d in self.heights)
        return self.width, self.height

    def draw(self) -> None:
        c = self.canv
        y = self.height
        first = True
        for ln, (h, d) in zip(self.lines, self.heights, strict=True):
            y -= h + LINE_GAP / 2 * self.size
            segs = outline(f"${ln.tex}$", self.size)[0]
            draw_outline(c, segs, ln.indent, y)
            if first:  # searchable text layer
                t = c.beginText(0, y)
                t.setTextRenderMode(3)
                t.setFont(self.font, self.size * 0.6)
                t.textOut(self.plain)
                c.drawText(t)
                first = False
            y -= d + LINE_GAP / 2 * self.size
