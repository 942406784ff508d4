"""The layout vocabulary every section is written in.

:class:`Layout` holds what the sections share (the results, the style,
fonts, paragraph styles, the section plan and the page records) and offers
the words a section is made of: :meth:`~Layout.paragraph`,
:meth:`~Layout.rich`, :meth:`~Layout.table`, :meth:`~Layout.columns` (a
long list set in side-by-side groups), :meth:`~Layout.figure`,
:meth:`~Layout.keep_together`, :meth:`~Layout.section` and
:meth:`~Layout.subsections`.

Page-break rules live here: a heading is kept with what follows it (the
whole of a short table, or a table's header and first rows), a table never
leaves a single row alone at the top or foot of a sheet, and every
flowable placed is recorded with its sheet (:attr:`Layout.records`) so that
tests can check the breaks from the layout's own account.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any
from xml.sax.saxutils import escape

from reportlab.lib import colors
from reportlab.lib.enums import TA_CENTER, TA_RIGHT
from reportlab.lib.styles import ParagraphStyle
from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.platypus import (
    Flowable,
    KeepTogether,
    Paragraph,
    Spacer,
    TableStyle,
)

from calcdoc.format import eng
from calcdoc.report.flowables import Figure, Grid, Heading, KeepWithFirst
from calcdoc.report.text import printable

NBSP = "\u00a0"
_UNIT_SPACE = re.compile(r"(?<=\d) (?=[fpnµmkMGT]?(?:Ω|V/V|A/A|V|A|W|S|J|°C|%|ppm)(?![A-Za-z]))")


def keep_units(text: str) -> str:
    """Join every number to its unit with a no-break space."""
    return _UNIT_SPACE.sub(NBSP, text)


# ---------------------------------------------------------------- paragraph styles


def paragraph_styles(fonts, style) -> dict[str, ParagraphStyle]:
    acc = colors.HexColor(style.colours["accent"])
    fs = style.font_size
    base = ParagraphStyle(
        "body", fontName=fonts.regular, fontSize=fs, leading=fs * 1.3, spaceAfter=fs * 0.4
    )

    def derived(name: str, **kw: Any) -> ParagraphStyle:
        return ParagraphStyle(name, parent=base, **kw)

    return {
        "body": base,
        "small": derived("small", fontSize=fs * 0.85, leading=fs * 1.1),
        "cell": derived("cell", fontSize=fs * 0.85, leading=fs * 1.05, spaceAfter=0),
        "cell_right": derived(
            "cell_right", fontSize=fs * 0.85, leading=fs * 1.05, spaceAfter=0, alignment=TA_RIGHT
        ),
        "mono": derived(
            "mono", fontName=fonts.mono, fontSize=fs * 0.78, leading=fs * 0.98, spaceAfter=0
        ),
        "h1": derived(
            "h1",
            fontName=fonts.bold,
            fontSize=fs * 1.55,
            leading=fs * 1.9,
            textColor=acc,
            spaceBefore=fs * 0.6,
            spaceAfter=fs * 0.6,
        ),
        "h2": derived(
            "h2",
            fontName=fonts.bold,
            fontSize=fs * 1.15,
            leading=fs * 1.45,
            textColor=acc,
            spaceBefore=fs * 0.8,
            spaceAfter=fs * 0.3,
        ),
        "h3": derived(
            "h3", fontName=fonts.bold, fontSize=fs, leading=fs * 1.3, spaceBefore=fs * 0.5
        ),
        "title": derived(
            "title", fontName=fonts.bold, fontSize=fs * 2.3, leading=fs * 2.8, textColor=acc
        ),
        "status": derived("status", fontName=fonts.bold, fontSize=fs * 1.2, leading=fs * 1.5),
        "caution": derived("caution", fontSize=fs * 0.95, leading=fs * 1.25, leftIndent=6),
        "toc1": derived("toc1", fontSize=fs * 1.05, leading=fs * 1.45, spaceAfter=0),
        "toc2": derived("toc2", fontSize=fs * 0.95, leading=fs * 1.2, leftIndent=14, spaceAfter=0),
        "center": derived("center", alignment=TA_CENTER),
    }


# ---------------------------------------------------------------- the layout


@dataclass
class Section:
    key: str
    title: str
    number: str  # "3" or "Appendix A"


@dataclass
class Layout:
    """What every section shares, and the words it is built from.

    Attributes
    ----------
    results : Results
    style : Style
        From the project's assets.
    fonts : FontSet
    width : float
        The text width (pt).
    sig : int
        Significant figures for every number.
    previous : Comparison or None
        The comparison with an earlier revision (revision marks).
    records : list of (kind, sheet, text)
        Every flowable placed, in order: ``kind`` is ``"heading"`` or
        ``"content"``; filled in while the document is built.
    """

    results: Any
    style: Any
    fonts: Any
    width: float
    sig: int
    previous: Any = None
    height: float = 700.0  # the text height of a sheet (pt)
    styles: dict[str, ParagraphStyle] = field(default_factory=dict)
    records: list[tuple[str, int, str]] = field(default_factory=list)
    plan: dict[str, Section] = field(default_factory=dict)
    summary: Any = None  # the RecordSummary (check set, status, findings, resolutions)
    signature_box: dict[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        if not self.styles:
            self.styles = paragraph_styles(self.fonts, self.style)

    def marks(self, keys: Sequence[str]) -> list[bool]:
        """Which rows changed since the previous revision (by key path)."""
        if self.previous is None:
            return [False] * len(keys)
        return [self.previous.touches(k) for k in keys]

    # ------------------------------------------------------------ text
    def text(self, value: Any) -> str:
        """Plain text made safe for paragraph markup (glyphs, direction, escapes)."""
        return escape(printable(str(value), self.fonts.regular))

    def colour(self, name: str) -> str:
        return self.style.colours[name]

    def num(self, value: float, unit: str, sig: int | None = None) -> str:
        """A value in engineering notation with the project's significant figures."""
        return eng(value, unit, sig or self.sig)

    def paragraph(self, text: str, style: str = "body") -> Paragraph:
        """A paragraph of plain text."""
        return Paragraph(keep_units(self.text(text)), self.styles[style])

    def rich(self, markup: str, style: str = "body") -> Paragraph:
        """A paragraph of markup (``<b>``, ``<font>``) whose text parts are already escaped."""
        return Paragraph(keep_units(markup), self.styles[style])

    def bullets(self, items: Sequence[str], style: str = "body") -> list[Paragraph]:
        return [self.rich("•" + NBSP + " " + self.text(t), style) for t in items]

    def failing(self, markup: str) -> str:
        """Markup in the failure colour, bold."""
        return f"<font color='{self.colour('fail')}'><b>{markup}</b></font>"

    # ------------------------------------------------------------ tables
    def table(
        self,
        header: Sequence[str],
        rows: Sequence[Sequence[Any]],
        widths: Sequence[float] | None = None,
        *,
        fail_rows: Sequence[int] = (),
        marks: Sequence[bool] = (),
        bold_rows: Sequence[int] = (),
        right: Sequence[int] = (),
    ) -> Grid:
        """A table; ``widths`` are relative, ``right`` the columns set flush right."""
        cell = self.styles["cell"]
        if widths is not None:
            total = sum(widths)
            widths = [w * self.width / total for w in widths]
        size = self.style.font_size * 0.85
        font = self.fonts.regular

        def wrap(v: Any, k: int) -> Any:
            # plain strings are much faster to lay out than paragraphs; wrap only what does not fit
            if isinstance(v, Flowable):
                return v
            text = printable(str(v), font)
            room = (widths[k] if widths else self.width / len(header)) - 6
            if "\n" not in text and stringWidth(text, font, size) <= room:
                return text
            style = self.styles["cell_right"] if k in right else cell
            return Paragraph(keep_units(escape(text)).replace("\n", "<br/>"), style)

        head_right = self.styles["cell_right"]
        data = [
            [
                Paragraph(f"<b>{self.text(h)}</b>", head_right if k in right else cell)
                for k, h in enumerate(header)
            ]
        ]
        data += [[wrap(v, k) for k, v in enumerate(row)] for row in rows]
        rev = self.results.project.document.revision
        t = Grid(
            data,
            colWidths=widths,
            repeatRows=1,
            hAlign="LEFT",
            marks=marks,
            mark_text=rev,
            mark_colour=self.colour("mark"),
            mark_font=self.fonts.bold,
        )
        cmds = [
            ("FONT", (0, 0), (-1, -1), font, size),
            ("BACKGROUND", (0, 0), (-1, 0), colors.HexColor(self.colour("shade"))),
            ("LINEBELOW", (0, 0), (-1, 0), 0.6, colors.HexColor(self.colour("accent"))),
            ("LINEBELOW", (0, 1), (-1, -1), 0.25, colors.HexColor("#b8c0cc")),
            ("VALIGN", (0, 0), (-1, -1), "TOP"),
            ("TOPPADDING", (0, 0), (-1, -1), 1.6),
            ("BOTTOMPADDING", (0, 0), (-1, -1), 1.6),
            ("LEFTPADDING", (0, 0), (-1, -1), 3),
            ("RIGHTPADDING", (0, 0), (-1, -1), 3),
        ]
        for k in right:
            cmds.append(("ALIGN", (k, 1), (k, -1), "RIGHT"))
        fill = colors.HexColor(self.colour("fail_fill"))
        cmds += [("BACKGROUND", (0, r + 1), (-1, r + 1), fill) for r in fail_rows]
        cmds += [("FONT", (0, r + 1), (-1, r + 1), self.fonts.bold, size) for r in bold_rows]
        t.setStyle(TableStyle(cmds))
        return t

    def columns(
        self,
        header: Sequence[str],
        rows: Sequence[Sequence[Any]],
        widths: Sequence[float],
        *,
        group: float = 120.0,
        block: int = 45,
        right: Sequence[int] = (),
    ) -> list[Flowable]:
        """A long list of short rows set as side-by-side groups of ``header``.

        As many groups of at least ``group`` points as fit the text width (up
        to four); rows run down the first group, then the next, in blocks of
        at most ``block`` rows so that a block reads top to bottom on one sheet.
        """
        k = max(1, min(4, int((self.width + 8) // (group + 8))))
        if k == 1 or len(rows) <= 12:
            return [self.table(header, rows, widths, right=right)]
        group_w = sum(widths)
        per = min(block, -(-len(rows) // k))
        out: list[Flowable] = []
        step = per * k
        for start in range(0, len(rows), step):
            chunk = rows[start : start + step]
            n = -(-len(chunk) // k)
            merged = []
            for i in range(n):
                row: list[Any] = []
                for g in range(k):
                    j = g * n + i
                    row += list(chunk[j]) if j < len(chunk) else [""] * len(header)
                    if g < k - 1:
                        row.append("")
                merged.append(row)
            head = [h for g in range(k) for h in (*header, *([""] if g < k - 1 else []))]
            ws = [w for g in range(k) for w in (*widths, *([0.06 * group_w] if g < k - 1 else []))]
            span = len(header) + 1
            rr = [g * span + c for g in range(k) for c in right]
            out.append(self.table(head, merged, ws, right=rr))
            out.append(Spacer(1, 4))
        return out[:-1]

    # ------------------------------------------------------------ grouping
    def figure(self, body: Flowable, caption: str = "") -> Flowable:
        return Figure(body, self.paragraph(caption, "small") if caption else None)

    def keep_together(self, items: Sequence[Flowable]) -> Flowable:
        return KeepTogether(list(items))

    def lead(self, items: Sequence[Flowable]) -> Flowable:
        """Keep ``items`` together with the start of their last member."""
        return KeepWithFirst(list(items))

    # ------------------------------------------------------------ sections
    def set_plan(self, sections: Sequence[tuple[str, str]]) -> None:
        """Number the sections that will appear (``key``, ``title``); keys
        starting with ``appendix`` are lettered A, B, …"""
        major = letter = 0
        self.plan = {}
        for key, title in sections:
            if key.startswith("appendix"):
                number = f"Appendix {chr(ord('A') + letter)}"
                letter += 1
            else:
                major += 1
                number = str(major)
            self.plan[key] = Section(key, title, number)

    def has(self, key: str) -> bool:
        return key in self.plan

    def ref(self, key: str) -> str:
        """``"section 6"`` or ``"Appendix C"`` for a planned section."""
        s = self.plan[key]
        return s.number if s.number.startswith("Appendix") else f"section {s.number}"

    def heading(self, text: str, level: int = 0) -> Heading:
        style = self.styles["h1" if level == 0 else "h2"]
        return Heading(self.text(text), style, level, text)

    def section(self, key: str, title: str | None = None) -> Heading:
        """The numbered heading of a planned section."""
        s = self.plan[key]
        return self.heading(f"{s.number}  {title or s.title}")

    def subsections(self, key: str) -> Callable[[str], Heading]:
        """Sub-headings of section ``key``, numbered without gaps; each call
        returns the heading (its number is the ``number`` attribute)."""
        major = self.plan[key].number
        count = 0

        def sub(title: str) -> Heading:
            nonlocal count
            count += 1
            h = self.heading(f"{major}.{count}  {title}", 1)
            h.number = f"{major}.{count}"  # type: ignore[attr-defined]
            return h

        return sub


def group_leads(story: Sequence[Flowable]) -> list[Flowable]:
    """Wrap each heading with what follows it, up to the first table, figure or block.

    Up to two short paragraphs between a heading and its table travel with
    the heading; the group then needs the table's header and first rows to
    fit on the sheet (:class:`KeepWithFirst`).
    """
    out: list[Flowable] = []
    i = 0
    while i < len(story):
        f = story[i]
        i += 1
        if not isinstance(f, Heading):
            out.append(f)
            continue
        group, paragraphs = [f], 0
        while i < len(story):
            g = story[i]
            group.append(g)
            i += 1
            if isinstance(g, (Heading, Spacer)):
                continue
            more = i < len(story) and not isinstance(story[i], Heading)
            if type(g) is Paragraph and paragraphs < 2 and more:
                paragraphs += 1
                continue
            break
        out.append(KeepWithFirst(group))
    return out
