"""The flowables the layout vocabulary is built from, with their page-break rules.

A :class:`Heading` enters the contents and the page records; a
:class:`Grid` (every table) repeats its header, never leaves a single row
alone at the foot or head of a sheet, and can mark changed rows;
:class:`KeepWithFirst` keeps headings and short notes with the start of
what follows; a :class:`Figure` is a drawing with its caption.
"""

from __future__ import annotations

from collections.abc import Sequence

from reportlab.lib import colors
from reportlab.lib.styles import ParagraphStyle
from reportlab.platypus import Flowable, KeepTogether, Paragraph, Table

MIN_ROWS = 2  # rows a table keeps together at the foot and at the head of a sheet
LEAD_ROWS = 3  # rows of a table that must fit under its heading


class Heading(Paragraph):
    """A numbered heading that enters the contents and the page records."""

    record_kind = "heading"

    def __init__(self, text: str, style: ParagraphStyle, level: int, plain: str) -> None:
        super().__init__(text, style)
        self.toc_level = level
        self.toc_text = plain


class Grid(Table):
    """A table whose header repeats on each sheet, that leaves no single row
    alone at the foot or head of a sheet, and that can mark changed rows."""

    def __init__(
        self,
        data,
        *,
        marks: Sequence[bool] = (),
        mark_text: str = "",
        mark_colour: str = "#c62828",
        mark_font: str = "",
        **kw,
    ) -> None:
        super().__init__(data, **kw)
        self._marks = tuple(marks)
        self._mark_text = mark_text
        self._mark_colour = mark_colour
        self._mark_font = mark_font

    @property
    def data_rows(self) -> int:
        return len(self._cellvalues) - self.repeatRows

    def split(self, availWidth, availHeight):  # noqa: N803 - reportlab API
        parts = super().split(availWidth, availHeight)
        if len(parts) != 2:
            return parts
        first = len(parts[0]._cellvalues) - self.repeatRows
        total = self.data_rows
        if first < MIN_ROWS:
            return []
        if total - first < MIN_ROWS:  # shorten the first part so the last keeps MIN_ROWS
            keep = total - MIN_ROWS
            if keep < MIN_ROWS:
                return []
            heights = self._rowHeights
            h = sum(heights[: self.repeatRows + keep]) + 0.01
            parts = super().split(availWidth, h)
            if len(parts) != 2:
                return []
        first = len(parts[0]._cellvalues) - self.repeatRows
        for part, marks in ((parts[0], self._marks[:first]), (parts[1], self._marks[first:])):
            part.__class__ = Grid
            part._marks, part._mark_text = marks, self._mark_text
            part._mark_colour, part._mark_font = self._mark_colour, self._mark_font
        return parts

    def min_height(self, aw: float) -> float:
        """Header and the first rows that must fit under a heading."""
        self.wrap(aw, 1e6)
        n = self.data_rows
        rows = n if n <= LEAD_ROWS + MIN_ROWS else LEAD_ROWS
        return sum(self._rowHeights[: self.repeatRows + rows])

    def draw(self) -> None:
        super().draw()
        if not any(self._marks):
            return
        c = self.canv
        c.saveState()
        c.setFillColor(colors.HexColor(self._mark_colour))
        pos = self._rowpositions  # y of each row boundary, top first
        for r, marked in enumerate(self._marks, start=self.repeatRows):
            if marked and r + 1 < len(pos):
                top, bottom = pos[r], pos[r + 1]
                c.rect(-9, bottom + 1, 2.2, top - bottom - 2, stroke=0, fill=1)
                c.setFont(self._mark_font, 5.5)
                c.drawRightString(-11, (top + bottom) / 2 - 2, self._mark_text)
        c.restoreState()


def _min_height(f: Flowable, aw: float, canv) -> float:
    if isinstance(f, Grid):
        f.canv = canv
        return f.min_height(aw)
    if isinstance(f, KeepTogether):
        f.wrapOn(canv, aw, 1e6)
        return f._H
    _, h = f.wrapOn(canv, aw, 1e6)
    if isinstance(f, Paragraph) and not isinstance(f, Heading):
        lead = f.style.leading
        return min(h, 3 * lead)
    return h


class KeepWithFirst(KeepTogether):
    """Headings and short notes kept with the start of what follows them.

    Everything but the last flowable must fit together with the last one's
    minimum (a table's header and first rows, three lines of a paragraph,
    the whole of a figure); otherwise the group starts on the next sheet.
    """

    def wrap(self, aW, aH):  # noqa: N803 - reportlab API
        w, h = super().wrap(aW, aH)
        head = sum(
            f.wrapOn(self.canv, aW, 1e6)[1] + f.getSpaceBefore() + f.getSpaceAfter()
            for f in self._content[:-1]
        )
        self._need = head + _min_height(self._content[-1], aW, self.canv)
        return w, h

    def split(self, aW, aH):  # noqa: N803 - reportlab API
        if getattr(self, "_wrapInfo", None) != (aW, aH):
            self.wrap(aW, aH)
        frame = getattr(self, "_frame", None)
        at_top = getattr(frame, "_atTop", False) if frame else False
        content = self._content[:]
        if self._need > aH and not at_top:
            content.insert(0, self.FrameBreak())
        return content


class Figure(Flowable):
    """A drawing (or any flowable) with an optional caption line under it."""

    def __init__(self, body: Flowable, caption: Paragraph | None = None) -> None:
        super().__init__()
        self.body, self.caption = body, caption

    def wrap(self, aw, ah):
        bw, bh = self.body.wrap(aw, ah)
        ch = self.caption.wrap(aw, ah)[1] if self.caption else 0.0
        self.width, self.height, self._bh = aw, bh + ch + (3 if self.caption else 0), bh
        return self.width, self.height

    def draw(self) -> None:
        ch = self.height - self._bh
        self.body.drawOn(self.canv, 0, ch)
        if self.caption:
            self.caption.drawOn(self.canv, 0, 0)
