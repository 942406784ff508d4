"""The register of a set of records: ``register.csv`` and ``register.pdf``.

One row per record, in the order the set was given: document number,
revision, title, sign-off state, checks run and failing, the worst
utilisation and where, what the run did (built, unchanged, not built),
and the SHA-256 of each input and package. Paths are relative to the
register's folder and nothing depends on the clock, so the same inputs
give byte-identical files.
"""

from __future__ import annotations

import csv
import io
import os
from collections.abc import Sequence
from pathlib import Path
from xml.sax.saxutils import escape

from calcdoc.commands.records import RecordOutcome

CSV_COLUMNS = (
    "record",
    "project",
    "document",
    "revision",
    "title",
    "signoff",
    "result",
    "checks_run",
    "checks_failing",
    "checks_result",
    "worst_utilisation_percent",
    "worst_at",
    "input_sha256",
    "package",
    "package_sha256",
    "message",
)


def relative(path: str, folder: Path) -> str:
    """``path`` relative to ``folder`` (forward slashes), or as given when it is on another drive."""
    if not path:
        return ""
    try:
        rel = os.path.relpath(os.path.abspath(path), os.path.abspath(folder))
    except ValueError:  # pragma: no cover - Windows, another drive
        return path
    return rel.replace(os.sep, "/")


def _message(o: RecordOutcome, folder: Path) -> str:
    """The record's error with its project path written relative to the register."""
    text = " ".join(o.message.split())
    return text.replace(o.project, relative(o.project, folder)) if o.project else text


def _percent(u: float | None) -> str:
    return "" if u is None else f"{100 * u:.1f}"


def _checks_result(o: RecordOutcome) -> str:
    if o.action == "not built":
        return ""
    return "FAIL" if o.checks_failing else "PASS"


def register_csv(outcomes: Sequence[RecordOutcome], folder: Path) -> bytes:
    """The register as CSV (UTF-8, one header line, ``\\n`` line ends)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CSV_COLUMNS)
    for i, o in enumerate(outcomes, 1):
        built = o.action != "not built"
        w.writerow(
            [
                i,
                relative(o.project, folder),
                o.number,
                o.revision,
                o.title,
                o.signoff,
                o.action,
                o.checks_run if built else "",
                o.checks_failing if built else "",
                _checks_result(o),
                _percent(o.worst_utilisation),
                o.worst_at,
                o.input_sha256,
                relative(o.package, folder),
                o.package_sha256,
                _message(o, folder),
            ]
        )
    return buf.getvalue().encode("utf-8")


def summary_line(outcomes: Sequence[RecordOutcome]) -> str:
    """``N records: a built, b unchanged, c not built; design checks: x pass, y fail``."""
    n = len(outcomes)
    count = {a: sum(o.action == a for o in outcomes) for a in ("built", "unchanged", "not built")}
    passing = sum(_checks_result(o) == "PASS" for o in outcomes)
    failing = sum(_checks_result(o) == "FAIL" for o in outcomes)
    return (
        f"{n} record{'s' if n != 1 else ''}: {count['built']} built, {count['unchanged']} "
        f"unchanged, {count['not built']} not built; design checks: {passing} pass, "
        f"{failing} with failures"
    )


# ---------------------------------------------------------------- PDF


def register_pdf(outcomes: Sequence[RecordOutcome], folder: Path, name: str) -> bytes:
    """The register as a landscape A4 PDF with the package fonts embedded.

    Parameters
    ----------
    outcomes : sequence of RecordOutcome
    folder : Path
        The register's folder (paths are printed relative to it).
    name : str
        What the set is called on the sheet (the folder's name).
    """
    from reportlab.lib import colors
    from reportlab.lib.pagesizes import A4, landscape
    from reportlab.lib.styles import ParagraphStyle
    from reportlab.lib.units import mm
    from reportlab.pdfgen.canvas import Canvas
    from reportlab.platypus import Paragraph, SimpleDocTemplate, Spacer, Table, TableStyle

    from calcdoc import __version__
    from calcdoc.model.assets import Style
    from calcdoc.report.fonts import register_fonts

    fonts = register_fonts()
    colour = {k: colors.HexColor(v) for k, v in Style().colours.items()}
    size = landscape(A4)
    margin = 14 * mm
    width = size[0] - 2 * margin

    def style(font: str = fonts.regular, pt: float = 8, **kw) -> ParagraphStyle:
        return ParagraphStyle("x", fontName=font, fontSize=pt, leading=pt * 1.25, **kw)

    body, small, mono = style(), style(pt=7), style(fonts.mono, 6.6)
    head = style(fonts.bold, 7.5, textColor=colors.white)

    def p(text: str, st: ParagraphStyle = body) -> Paragraph:
        return Paragraph(escape(text), st)

    def table(headers: list[str], rows: list[list], widths: list[float], extra=()) -> Table:
        scale = width / sum(widths)
        t = Table(
            [[Paragraph(h, head) for h in headers], *rows],
            colWidths=[w * scale for w in widths],
            repeatRows=1,
        )
        t.setStyle(
            TableStyle(
                [
                    (
                        "FONT",
                        (0, 0),
                        (-1, -1),
                        fonts.regular,
                        8,
                    ),  # the table's own default is Helvetica
                    ("BACKGROUND", (0, 0), (-1, 0), colour["accent"]),
                    ("VALIGN", (0, 0), (-1, -1), "TOP"),
                    ("LINEBELOW", (0, 1), (-1, -1), 0.25, colors.HexColor("#b8c2cc")),
                    ("TOPPADDING", (0, 0), (-1, -1), 2.5),
                    ("BOTTOMPADDING", (0, 0), (-1, -1), 2.5),
                    ("LEFTPADDING", (0, 0), (-1, -1), 3),
                    ("RIGHTPADDING", (0, 0), (-1, -1), 3),
                    *extra,
                ]
            )
        )
        return t

    story: list = [
        Paragraph(
            "Register of calculation records",
            style(fonts.bold, 15, textColor=colour["accent"], spaceAfter=4),
        ),
        p(f"Set: {name}    ·    {summary_line(outcomes)}", style(pt=9)),
        Spacer(1, 5 * mm),
    ]
    rows, marks = [], []
    for i, o in enumerate(outcomes, 1):
        built = o.action != "not built"
        result = _checks_result(o)
        worst = f"{_percent(o.worst_utilisation)} %" if o.worst_utilisation is not None else ""
        rows.append(
            [
                p(str(i)),
                p(o.number or "—"),
                p(o.revision or "—"),
                p(o.title if built else relative(o.project, folder)),
                p(o.signoff),
                p(str(o.checks_run) if built else ""),
                p(str(o.checks_failing) if built else ""),
                p(worst),
                p(o.worst_at, small),
                p(result or "—", style(fonts.bold)),
                p(
                    {"built": "built", "unchanged": "unchanged, not rebuilt"}.get(
                        o.action, "NOT BUILT"
                    ),
                    style(fonts.bold, textColor=colour["fail"]) if not built else body,
                ),
            ]
        )
        if not built:
            marks.append(("BACKGROUND", (0, i), (-1, i), colour["fail_fill"]))
        elif result == "FAIL":
            marks += [("BACKGROUND", (c, i), (c, i), colour["fail_fill"]) for c in (6, 9)]
    story.append(
        table(
            [
                "No.",
                "Document",
                "Rev.",
                "Title",
                "Sign-off",
                "Checks run",
                "Checks failing",
                "Worst utilisation",
                "at (check [case])",
                "Checks",
                "This run",
            ],
            rows,
            [3.5, 9, 3.5, 27, 7.5, 5, 5.5, 7, 19, 5, 8.5],
            marks,
        )
    )

    notes = [(i, o) for i, o in enumerate(outcomes, 1) if o.action == "not built"]
    if notes:
        story += [Spacer(1, 4 * mm), p("Records not built", style(fonts.bold, 9))]
        story += [p(f"{i}.  {_message(o, folder)}", small) for i, o in notes]

    story += [
        Spacer(1, 5 * mm),
        p("Files and their SHA-256", style(fonts.bold, 9)),
        Spacer(1, 1.5 * mm),
    ]
    files = [
        [
            p(str(i)),
            p(relative(o.project, folder), small),
            p(o.input_sha256 or "—", mono),
            p(relative(o.package, folder) or "—", small),
            p(o.package_sha256 or "—", mono),
        ]
        for i, o in enumerate(outcomes, 1)
    ]
    story.append(
        table(
            ["No.", "Project file", "SHA-256 of input", "Package", "SHA-256 of package"],
            files,
            [3, 17, 40, 17, 40],
        )
    )
    story += [
        Spacer(1, 4 * mm),
        p(
            "Each package in this register is a calculation record for linear steady-state (DC) "
            "behaviour only. Every record must be reviewed by a qualified engineer before it is "
            "relied on; local codes and licensed engineering practice govern. A SHA-256 identifies "
            "the file as listed: a changed file has a different one.",
            small,
        ),
    ]

    class Sheets(Canvas):
        """Holds every page back so that each footer can say "Sheet N of M"."""

        def __init__(self, *a, **kw) -> None:
            kw["initialFontName"] = fonts.regular  # no unembedded standard font enters the file
            kw["initialFontSize"] = 8
            super().__init__(*a, **kw)
            self._held: list[dict] = []

        def showPage(self) -> None:  # noqa: N802 - reportlab API
            self._held.append(dict(self.__dict__))
            self._startPage()

        def save(self) -> None:
            total = len(self._held)
            for state in self._held:
                self.__dict__.update(state)
                self.saveState()
                self.setFont(fonts.regular, 7)
                self.setFillColor(colour["accent"])
                self.drawString(margin, 8 * mm, f"Register of calculation records · {name}")
                self.drawCentredString(size[0] / 2, 8 * mm, f"calcdoc {__version__}")
                self.drawRightString(
                    size[0] - margin, 8 * mm, f"Sheet {self._pageNumber} of {total}"
                )
                self.restoreState()
                super().showPage()
            super().save()

    buf = io.BytesIO()
    doc = SimpleDocTemplate(
        buf,
        pagesize=size,
        leftMargin=margin,
        rightMargin=margin,
        topMargin=margin,
        bottomMargin=16 * mm,
        title=f"Register of calculation records: {name}",
        creator=f"calcdoc {__version__}",
        invariant=1,
        initialFontName=fonts.regular,
        pageCompression=1,
    )
    doc.build(story, canvasmaker=Sheets)
    return buf.getvalue()
