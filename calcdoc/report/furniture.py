"""What every sheet carries: header (title, number, revision), footer (date,
status, "Sheet N of M") and, until the record is approved, its marking."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.pdfgen.canvas import Canvas
from reportlab.platypus import BaseDocTemplate, Flowable

from calcdoc.report.text import printable

TITLE_SIZE = 8.0
SMALL_TITLE = 7.0


class SheetCanvas(Canvas):
    """Defers each page so the footer can say "Sheet N of M"."""

    furniture: Callable[[Canvas, int, int], None] | None = None

    def __init__(self, *args: Any, **kw: Any) -> None:
        kw["initialFontName"] = kw.get("initialFontName") or "CalcdocSans"
        kw["initialFontSize"] = kw.get("initialFontSize") or 9
        kw.setdefault("invariant", 1)
        super().__init__(*args, **kw)
        self._pages: list[dict] = []

    def showPage(self) -> None:  # noqa: N802 - reportlab API
        self._pages.append(dict(self.__dict__))
        self._startPage()

    def save(self) -> None:
        total = len(self._pages)
        for state in self._pages:
            self.__dict__.update(state)
            if self.furniture:
                self.furniture(self, self._pageNumber, total)
            super().showPage()
        super().save()


class RecordingDoc(BaseDocTemplate):
    """Enters headings in the contents and records every flowable's sheet."""

    def __init__(self, *args: Any, records: list, **kw: Any) -> None:
        super().__init__(*args, **kw)
        self.records = records

    def beforeDocument(self) -> None:  # noqa: N802 - reportlab API: each pass starts afresh
        self.records.clear()

    def afterFlowable(self, flowable: Flowable) -> None:  # noqa: N802 - reportlab API
        level = getattr(flowable, "toc_level", None)
        if level is not None:
            self.notify("TOCEntry", (level, flowable.toc_text, self.page))
        kind = getattr(flowable, "record_kind", "content")
        if getattr(flowable, "height", 1) or kind == "heading":
            self.records.append((kind, self.page, getattr(flowable, "toc_text", "")))


def fit_title(title: str, font: str, room: float) -> tuple[str, float]:
    """The header title at 8 pt, or 7 pt, or shortened with an ellipsis to fit ``room``.

    >>> fit_title("Short", "Helvetica", 200)
    ('Short', 8.0)
    """
    for size in (TITLE_SIZE, SMALL_TITLE):
        if stringWidth(title, font, size) <= room:
            return title, size
    words = title.split()
    text = ""
    for w in words:
        trial = (text + " " + w).strip()
        if stringWidth(trial + " …", font, SMALL_TITLE) > room:
            break
        text = trial
    if not text:  # one long word: cut by characters
        for k in range(len(title), 0, -1):
            if stringWidth(title[:k] + "…", font, SMALL_TITLE) <= room:
                return title[:k] + "…", SMALL_TITLE
        return "…", SMALL_TITLE
    return text + " …", SMALL_TITLE


def furniture(project, style, fonts, status, page_size) -> Callable[[Canvas, int, int], None]:
    """The drawing of header, footer and marking for each sheet."""
    d = project.document
    f = fonts
    top, bottom, left, right = (m * mm for m in style.margin_mm)
    w, h = page_size
    acc = colors.HexColor(style.colours["accent"])
    mark = colors.HexColor(style.colours["mark"])
    date = d.date.isoformat() if d.date else "undated"
    ident = "   ".join(
        x for x in (d.number and f"Doc. {d.number}", d.revision and f"Rev. {d.revision}") if x
    )
    ident = printable(ident, f.regular)
    ident_w = stringWidth(ident, f.regular, 7.5)
    title, title_size = fit_title(
        printable(d.title, f.bold), f.bold, w - left - right - ident_w - 12
    )
    org = printable(d.organisation or style.organisation, f.regular)
    status_text = printable(f"Status: {status.text}", f.regular)
    if not status.fit:
        label = status.text.upper().replace(":", " –")
    else:
        label = "NOT APPROVED – FOR REVIEW ONLY"
    side = "NOT APPROVED"

    def draw(c: Canvas, n: int, total: int) -> None:
        c.saveState()
        c.setStrokeColor(acc)
        c.setLineWidth(0.6)
        y = h - top + 6 * mm
        c.setFont(f.bold, title_size)
        c.setFillColor(acc)
        c.drawString(left, y + 3, title)
        c.setFont(f.regular, 7.5)
        c.setFillColor(colors.black)
        c.drawRightString(w - right, y + 3, ident)
        label_w = stringWidth(label, f.bold, 7.5) + 8 if not status.approved else 0
        if org:
            org_text, _ = fit_title(org, f.regular, w - left - right - label_w - 12)
            c.setFont(f.regular, 7.5)
            c.drawString(left, y - 7, org_text)
        c.line(left, y - 10, w - right, y - 10)
        yb = bottom - 7 * mm
        c.line(left, yb + 9, w - right, yb + 9)
        c.setFont(f.regular, 7.5)
        c.drawString(left, yb, f"Date {date}")
        c.drawCentredString(w / 2, yb, status_text)
        c.setFont(f.bold, 8)
        c.drawRightString(w - right, yb, f"Sheet {n} of {total}")
        if not status.approved:
            c.setFillColor(mark)
            c.setStrokeColor(mark)
            c.setFont(f.bold, 7.5)
            c.rect(w - right - label_w, y - 9, label_w, 10.5, stroke=1, fill=0)
            c.drawRightString(w - right - 4, y - 6, label)
            c.saveState()  # a light mark along the binding edge of every sheet
            c.setFillColor(colors.HexColor("#f3c7c7"))
            c.setFont(f.bold, 11)
            c.translate(left - 5 * mm, h / 2)
            c.rotate(90)
            c.drawCentredString(0, 0, side)
            c.restoreState()
        c.restoreState()

    return draw
