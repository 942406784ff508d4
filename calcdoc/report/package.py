"""The PDF calculation package: lays out the engine's results, computes nothing.

:func:`build_package` returns the finished bytes (and where the digital
signature belongs); writing the file is the command's job.
"""

from __future__ import annotations

import datetime as dt
import io
import json
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any
from xml.sax.saxutils import escape

from reportlab.lib import colors
from reportlab.lib.enums import TA_CENTER
from reportlab.lib.pagesizes import A4, LETTER
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.pdfgen.canvas import Canvas
from reportlab.platypus import (
    BaseDocTemplate,
    CondPageBreak,
    Flowable,
    Frame,
    KeepTogether,
    NextPageTemplate,
    PageBreak,
    PageTemplate,
    Paragraph,
    Spacer,
    Table,
    TableStyle,
)
from reportlab.platypus.tableofcontents import TableOfContents

from calcdoc import __version__
from calcdoc.format import UNITS, eng, percent, value_text
from calcdoc.model.expressions import Literal
from calcdoc.report import parts
from calcdoc.report.diagram import DiagramPart, circuit_drawing, connection_rows
from calcdoc.report.equations import equation_pieces, tex_unknown
from calcdoc.report.fonts import register_fonts
from calcdoc.report.mathtext import MathLines
from calcdoc.report.style import Style, load_style

SUBSTITUTE_LIMIT = 150  # equations shown with values substituted (beyond: symbols + matrix listing)
MATRIX_INLINE_LIMIT = 10  # unknowns for the bracketed matrix on the page (beyond: sparse listing)
ROW_LIMIT = 2000  # table rows per case before a table is cut with a note

CAUTIONS = (
    "This record models linear steady-state (DC) behaviour only: no transients, "
    "no non-linear or temperature-dependent behaviour beyond what the inputs state.",
    "It must be reviewed by a qualified engineer before it is relied on.",
    "Local codes, standards and licensed engineering practice govern over anything in this record.",
)

METHOD = (
    "The circuit is solved by Modified Nodal Analysis (MNA). The unknowns are the voltage of every "
    "node measured from the reference node, and the current of every element whose own law fixes a "
    "voltage (voltage sources, VCVS, CCVS) or whose current controls another source. One equation "
    "is written for each unknown: Kirchhoff's current law (KCL) at every node other than the "
    "reference — the currents leaving the node through its elements sum to zero — and the law of "
    "each element whose current is an unknown. The equations are collected as A·x = z and solved; "
    "up to {exact} unknowns in exact rational arithmetic, otherwise in double precision with the "
    "residual and condition number reported. Each element's voltage, current and power then follow "
    "from the node voltages. The results are checked independently: KCL at every node from the "
    "element currents, Kirchhoff's voltage law (KVL) around every loop of a fundamental loop set, "
    "using each element's own law, and the power balance (power delivered equals power absorbed)."
)

CONVENTIONS = (
    "Sign conventions: every element has terminals a and b (listed as a → b). Its voltage is "
    "V(a) − V(b); its current flows through it from a to b; its power v·i is positive when "
    "absorbed and negative when delivered. For a voltage source a is the + terminal; a current "
    "source drives its value from a to b."
)


@dataclass(frozen=True)
class PackageOutput:
    """The finished package.

    Attributes
    ----------
    pdf : bytes
    signature_box : (int, (float, float, float, float))
        Page index and rectangle (x1, y1, x2, y2, PDF points) kept empty in
        the cover's sign-off block for a digital signature appearance.
    """

    pdf: bytes
    signature_box: tuple[int, tuple[float, float, float, float]]


@dataclass
class _Ctx:
    results: Any
    style: Style
    fonts: Any
    sig: int
    styles: dict[str, ParagraphStyle]
    width: float
    sigbox: dict[str, Any]
    base_dir: Path
    major: int = 0
    previous: Any = None  # a record Comparison with the earlier revision

    def marks(self, keys: Sequence[str]) -> list[bool]:
        """Which rows changed since the previous revision (by key path)."""
        if self.previous is None:
            return [False] * len(keys)
        return [self.previous.touches(k) for k in keys]


# ---------------------------------------------------------------- helpers


def _styles(fonts, style: Style) -> dict[str, ParagraphStyle]:
    acc = colors.HexColor(style.colours["accent"])
    fs = style.font_size
    base = ParagraphStyle(
        "body", fontName=fonts.regular, fontSize=fs, leading=fs * 1.3, spaceAfter=fs * 0.4
    )
    return {
        "body": base,
        "small": ParagraphStyle("small", parent=base, fontSize=fs * 0.85, leading=fs * 1.1),
        "cell": ParagraphStyle(
            "cell", parent=base, fontSize=fs * 0.85, leading=fs * 1.05, spaceAfter=0
        ),
        "mono": ParagraphStyle(
            "mono",
            parent=base,
            fontName=fonts.mono,
            fontSize=fs * 0.78,
            leading=fs * 0.98,
            spaceAfter=0,
        ),
        "h1": ParagraphStyle(
            "h1",
            parent=base,
            fontName=fonts.bold,
            fontSize=fs * 1.55,
            leading=fs * 1.9,
            textColor=acc,
            spaceBefore=fs * 0.6,
            spaceAfter=fs * 0.6,
        ),  # fmt: skip
        "h2": ParagraphStyle(
            "h2",
            parent=base,
            fontName=fonts.bold,
            fontSize=fs * 1.15,
            leading=fs * 1.45,
            textColor=acc,
            spaceBefore=fs * 0.8,
            spaceAfter=fs * 0.3,
        ),  # fmt: skip
        "h3": ParagraphStyle(
            "h3",
            parent=base,
            fontName=fonts.bold,
            fontSize=fs,
            leading=fs * 1.3,
            spaceBefore=fs * 0.5,
        ),
        "title": ParagraphStyle(
            "title",
            parent=base,
            fontName=fonts.bold,
            fontSize=fs * 2.3,
            leading=fs * 2.8,
            textColor=acc,
        ),
        "caution": ParagraphStyle(
            "caution", parent=base, fontSize=fs * 0.95, leading=fs * 1.25, leftIndent=6
        ),
        "toc1": ParagraphStyle("toc1", parent=base, fontSize=fs * 1.05, leading=fs * 1.6),
        "toc2": ParagraphStyle(
            "toc2", parent=base, fontSize=fs * 0.95, leading=fs * 1.3, leftIndent=14
        ),
        "center": ParagraphStyle("center", parent=base, alignment=TA_CENTER),
    }


def _p(text: str, ctx: _Ctx, style: str = "body") -> Paragraph:
    return Paragraph(text, ctx.styles[style])


def _t(text: Any) -> str:
    return escape(str(text))


class _Heading(Paragraph):
    """A numbered heading that enters the contents."""

    def __init__(self, text: str, style: ParagraphStyle, level: int) -> None:
        super().__init__(text, style)
        self.toc_level = level
        self.toc_text = text


def _h(ctx: _Ctx, text: str, level: int = 0) -> Flowable:
    return _Heading(_t(text), ctx.styles["h1" if level == 0 else "h2"], level)


def _table(ctx: _Ctx, header: Sequence[str], rows: Sequence[Sequence[Any]], widths: Sequence[float] | None = None,
           *, align_right: Sequence[int] = (), fail_rows: Sequence[int] = (), bold_rows: Sequence[int] = (),
           marks: Sequence[bool] = ()) -> Table:  # fmt: skip
    """A table whose header row repeats on every sheet it spans."""
    cell = ctx.styles["cell"]

    if widths is not None:
        total = sum(widths)
        widths = [w * ctx.width / total for w in widths]
    size = ctx.style.font_size * 0.85
    font = ctx.fonts.regular
    from reportlab.pdfbase.pdfmetrics import stringWidth

    def wrap(v: Any, k: int) -> Any:
        # plain strings are much faster to lay out than paragraphs; wrap only what does not fit
        if isinstance(v, Flowable):
            return v
        text = str(v)
        room = (widths[k] if widths else ctx.width / len(header)) - 6
        if "\n" not in text and stringWidth(text, font, size) <= room:
            return text
        return Paragraph(_t(text).replace("\n", "<br/>"), cell)

    data = [[Paragraph(f"<b>{_t(h)}</b>", cell) for h in header]]
    data += [[wrap(v, k) for k, v in enumerate(row)] for row in rows]
    if any(marks):
        from calcdoc.report.changes import MarkedTable

        rev = ctx.results.project.document.revision
        t = MarkedTable(data, colWidths=widths, repeatRows=1, hAlign="LEFT", marks=marks, mark_text=rev,
                        mark_colour=ctx.style.colours["mark"])  # fmt: skip
    else:
        t = Table(data, colWidths=widths, repeatRows=1, hAlign="LEFT")
    shade = colors.HexColor(ctx.style.colours["shade"])
    cmds = [
        ("FONT", (0, 0), (-1, -1), ctx.fonts.regular, ctx.style.font_size * 0.85),
        ("BACKGROUND", (0, 0), (-1, 0), shade),
        ("LINEBELOW", (0, 0), (-1, 0), 0.6, colors.HexColor(ctx.style.colours["accent"])),
        ("LINEBELOW", (0, 1), (-1, -1), 0.25, colors.HexColor("#b8c0cc")),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("TOPPADDING", (0, 0), (-1, -1), 1.6),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 1.6),
        ("LEFTPADDING", (0, 0), (-1, -1), 3),
        ("RIGHTPADDING", (0, 0), (-1, -1), 3),
    ]
    for r in fail_rows:
        cmds.append(
            ("BACKGROUND", (0, r + 1), (-1, r + 1), colors.HexColor(ctx.style.colours["fail_fill"]))
        )
    t.setStyle(TableStyle(cmds))
    return t


def _num(ctx: _Ctx, value: float, unit: str) -> str:
    return eng(value, unit, ctx.sig)


def _status(project) -> str:
    s = project.signoff
    if s.approved:
        return "Approved"
    if s.checked:
        return "Checked, awaiting approval"
    if s.prepared:
        return "Prepared, for checking"
    return "Draft"


# ---------------------------------------------------------------- page furniture


class _SheetCanvas(Canvas):
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


def _furniture(ctx: _Ctx, page_size: tuple[float, float]) -> Callable[[Canvas, int, int], None]:
    p = ctx.results.project
    d = p.document
    f = ctx.fonts
    st = ctx.style
    top, bottom, left, right = (m * mm for m in st.margin_mm)
    w, h = page_size
    acc = colors.HexColor(st.colours["accent"])
    approved = p.signoff.is_approved
    date = d.date.isoformat() if d.date else "undated"
    status = _status(p)

    def draw(c: Canvas, n: int, total: int) -> None:
        c.saveState()
        c.setStrokeColor(acc)
        c.setLineWidth(0.6)
        y = h - top + 6 * mm
        c.setFont(f.bold, 8)
        c.setFillColor(acc)
        c.drawString(left, y + 3, d.title[:95])
        c.setFont(f.regular, 7.5)
        c.setFillColor(colors.black)
        ident = "   ".join(
            x for x in (d.number and f"Doc. {d.number}", d.revision and f"Rev. {d.revision}") if x
        )
        c.drawRightString(w - right, y + 3, ident)
        org = d.organisation or st.organisation
        if org:
            c.drawString(left, y - 7, org[:120])
        c.line(left, y - 10, w - right, y - 10)
        yb = bottom - 7 * mm
        c.line(left, yb + 9, w - right, yb + 9)
        c.setFont(f.regular, 7.5)
        c.drawString(left, yb, f"Date {date}")
        c.drawCentredString(w / 2, yb, f"Status: {status}")
        c.setFont(f.bold, 8)
        c.drawRightString(w - right, yb, f"Sheet {n} of {total}")
        if not approved:
            c.setFillColor(colors.HexColor(st.colours["mark"]))
            c.setStrokeColor(colors.HexColor(st.colours["mark"]))
            c.setFont(f.bold, 7.5)
            label = "NOT APPROVED – FOR REVIEW ONLY"
            tw = c.stringWidth(label, f.bold, 7.5)
            c.rect(w - right - tw - 8, y - 9, tw + 8, 10.5, stroke=1, fill=0)
            c.drawRightString(w - right - 4, y - 6, label)
            # a light mark along the binding edge of every sheet
            c.saveState()
            c.setFillColor(colors.HexColor("#f3c7c7"))
            c.setFont(f.bold, 11)
            c.translate(left - 5 * mm, h / 2)
            c.rotate(90)
            c.drawCentredString(0, 0, "NOT APPROVED")
            c.restoreState()
        c.restoreState()

    return draw


class _Doc(BaseDocTemplate):
    def afterFlowable(self, flowable: Flowable) -> None:  # noqa: N802 - reportlab API
        level = getattr(flowable, "toc_level", None)
        if level is not None:
            self.notify("TOCEntry", (level, flowable.toc_text, self.page))


# ---------------------------------------------------------------- cover


class _SignoffBlock(Flowable):
    """Sign-off table with a reserved digital-signature box and a seal box."""

    def __init__(self, ctx: _Ctx) -> None:
        super().__init__()
        self.ctx = ctx

    def wrap(self, aw: float, ah: float):
        self.width, self.height = aw, 142
        return self.width, self.height

    def draw(self) -> None:
        c, ctx = self.canv, self.ctx
        f = ctx.fonts
        so = ctx.results.project.signoff
        acc = colors.HexColor(ctx.style.colours["accent"])
        shade = colors.HexColor(ctx.style.colours["shade"])
        seal_w = 96
        table_w = self.width - seal_w - 8
        cols = [0, 0.22, 0.62, 1.0]
        xs = [table_w * v for v in cols]
        row_h = 20
        top = self.height
        c.setStrokeColor(acc)
        c.setLineWidth(0.6)
        c.setFillColor(shade)
        c.rect(0, top - row_h, table_w, row_h, stroke=0, fill=1)
        c.setFillColor(colors.black)
        c.setFont(f.bold, 8)
        for x, head in zip(xs, ("Role", "Name", "Date"), strict=False):
            c.drawString(x + 4, top - 13, head)
        roles = (("Prepared", so.prepared), ("Checked", so.checked), ("Approved", so.approved))
        for i, (role, who) in enumerate(roles):
            y = top - row_h * (i + 2)
            c.setFont(f.bold, 8)
            c.drawString(4, y + 7, role)
            if who is None:
                c.setFont(f.italic, 8)
                c.setFillColor(colors.HexColor(ctx.style.colours["mark"]))
                c.drawString(xs[1] + 4, y + 7, "open (not signed)")
                c.setFillColor(colors.black)
            else:
                c.setFont(f.regular, 8.5)
                c.drawString(xs[1] + 4, y + 7, who.name[:40])
                c.drawString(xs[2] + 4, y + 7, who.date.isoformat() if who.date else "undated")
        bottom = top - row_h * 4
        c.rect(0, bottom, table_w, row_h * 4, stroke=1, fill=0)
        for i in range(1, 4):
            c.line(0, top - row_h * i, table_w, top - row_h * i)
        for x in xs[1:-1]:
            c.line(x, bottom, x, top)
        # digital signature box below the table
        box_h = self.height - row_h * 4 - 6
        c.setDash(2, 2)
        c.rect(0, 0, table_w, box_h, stroke=1, fill=0)
        c.setDash()
        c.setFont(f.regular, 6.5)
        c.setFillColor(colors.HexColor("#666666"))
        c.drawString(3, box_h - 8, "Digital signature")
        x0, y0 = c.absolutePosition(0, 0)
        x1, y1 = c.absolutePosition(table_w, box_h)
        ctx.sigbox["box"] = (
            c.getPageNumber() - 1,
            (round(x0 + 2, 2), round(y0 + 2, 2), round(x1 - 2, 2), round(y1 - 10, 2)),
        )
        # seal / stamp box
        c.setFillColor(colors.black)
        c.setStrokeColor(acc)
        c.rect(table_w + 8, 0, seal_w, self.height, stroke=1, fill=0)
        c.setFont(f.regular, 6.5)
        c.drawString(table_w + 11, self.height - 9, "Seal / stamp")
        if so.seal:
            path = Path(so.seal)
            if not path.is_absolute():
                path = ctx.base_dir / path
            try:
                c.drawImage(str(path), table_w + 12, 4, seal_w - 8, self.height - 18,
                            preserveAspectRatio=True, anchor="c", mask="auto")  # fmt: skip
            except (OSError, ValueError):
                c.setFont(f.italic, 6.5)
                c.drawString(table_w + 11, self.height / 2, "(seal image unreadable)")


def _cover(ctx: _Ctx) -> list[Flowable]:
    r = ctx.results
    p = r.project
    d = p.document
    out: list[Flowable] = []
    org = d.organisation or ctx.style.organisation
    logo = ctx.style.logo
    if logo is not None and logo.is_file():
        from reportlab.platypus import Image

        try:
            img = Image(str(logo))
            scale = min(1.0, 40 / img.imageHeight, 160 / img.imageWidth)
            img.drawWidth, img.drawHeight = img.imageWidth * scale, img.imageHeight * scale
            img.hAlign = "RIGHT"
            out.append(img)
        except OSError:
            out.append(_p(_t(f"(logo {logo.name} could not be read)"), ctx, "small"))
    out.append(_p(f"<font color='{ctx.style.colours['accent']}'><b>CALCULATION RECORD</b></font>"
                  + (f" &nbsp;·&nbsp; {_t(org)}" if org else ""), ctx))  # fmt: skip
    out.append(Spacer(1, 6))
    out.append(_p(_t(d.title), ctx, "title"))
    if d.project:
        out.append(_p(_t(d.project), ctx, "h3"))
    out.append(Spacer(1, 6))
    block = [
        ("Document number", d.number or "—", "Revision", d.revision or "—"),
        ("Date", d.date.isoformat() if d.date else "undated", "Status", _status(p)),
        ("Calculated by", f"calcdoc {__version__}", "Cases", str(len(r.cases))),
    ]
    out.append(_table(ctx, ["", "", "", ""], block, [1.1, 1.6, 0.8, 1.6]))
    out.append(Spacer(1, 8))
    out.append(_p("<b>Sign-off</b>", ctx))
    out.append(_SignoffBlock(ctx))
    out.append(Spacer(1, 8))
    if d.history:
        out.append(_p("<b>Revision history</b>", ctx))
        rows = [
            (h.revision, h.date.isoformat() if h.date else "—", h.description) for h in d.history
        ]
        out.append(_table(ctx, ["Revision", "Date", "Description"], rows, [0.8, 1.0, 5]))
        hist = r.extra.get("history")
        if hist is not None:
            for f in hist.findings:
                out.append(_p(f"<font color='{ctx.style.colours['fail']}'><b>History {f.severity}:</b> "
                              f"{_t(f.key)}: {_t(f.message)}</font>", ctx, "small"))  # fmt: skip
        out.append(Spacer(1, 8))
    out.append(_p("<b>Results summary</b>", ctx))
    checks = r.checks
    failed = r.failed
    worst = r.worst
    rows = [
        ("Design checks run", f"{len(checks)} in {len(r.cases)} case(s)"),
        (
            "Checks failing",
            f"{len(failed)}"
            + (
                ": "
                + ", ".join(f"{c.id} [{n}]" for n, c in failed[:6])
                + (" …" if len(failed) > 6 else "")
                if failed
                else ""
            ),
        ),
        (
            "Worst utilisation",
            f"{percent(worst[1].utilization)} at {worst[1].id} [{worst[0]}]" if worst else "—",
        ),
        (
            "Largest KCL residual",
            eng(max(float(abs(c.kcl).max()) if len(c.kcl) else 0.0 for c in r.cases), "A"),
        ),
        ("Largest KVL loop sum", eng(max(c.kvl.max_abs_sum for c in r.cases), "V")),
        ("Largest power imbalance", eng(max(abs(c.ledger.imbalance) for c in r.cases), "W")),
        ("Verdict", "ALL CHECKS PASS" if not failed else f"{len(failed)} CHECK(S) FAIL"),
    ]
    t = _table(ctx, ["Item", "Result"], rows, [1.3, 4], fail_rows=[1, 6] if failed else [])
    out.append(t)
    out.append(Spacer(1, 8))
    out.append(_p("<b>Cautions.</b> " + " ".join(_t(c) for c in CAUTIONS), ctx, "caution"))
    out.append(Spacer(1, 4))
    out.append(_p(f"SHA-256 of input: {p.sha256}", ctx, "mono"))
    out.append(_p(f"Input file: {_t(Path(p.path).name)} ({len(p.source)} bytes), embedded in this PDF "
                  "with the results as file attachments.", ctx, "small"))  # fmt: skip
    return out


# ---------------------------------------------------------------- sections


def _section(ctx: _Ctx, title: str) -> Flowable:
    """A numbered top-level heading (sections are numbered in the order they appear)."""
    ctx.major += 1
    return _h(ctx, f"{ctx.major}  {title}")


def _numbering(ctx: _Ctx) -> Callable[[str], Flowable]:
    """Sub-headings of the current section, numbered without gaps."""
    major = ctx.major
    n = 0

    def sub(title: str) -> Flowable:
        nonlocal n
        n += 1
        return _h(ctx, f"{major}.{n}  {title}", 1)

    return sub


def _quantity_text(ctx: _Ctx, q) -> str:
    """A parameter value with an SI unit (``21.00 mΩ/m``)."""
    from calcdoc.model.quantities import METRE, NONE, SI_SYMBOL, dim_div, dim_mul

    if q.dimension in SI_SYMBOL:
        return eng(float(q.magnitude), SI_SYMBOL[q.dimension], ctx.sig)
    for base, sym in SI_SYMBOL.items():
        if base == NONE:
            continue
        for other, osym in SI_SYMBOL.items():
            if other in (NONE, base):
                continue
            if dim_div(base, other) == q.dimension:
                return eng(float(q.magnitude), f"{sym}/{osym}", ctx.sig)
            if dim_mul(base, other) == q.dimension and other == METRE:
                return eng(float(q.magnitude), f"{sym}·{osym}", ctx.sig)
    return f"{float(q.magnitude):.{ctx.sig}g} (SI base units)"


def _section_method(ctx: _Ctx) -> list[Flowable]:
    d = ctx.results.project.document
    out: list[Flowable] = [_section(ctx, "Purpose, scope and method")]
    sub = _numbering(ctx)

    if d.purpose:
        out += [sub("Purpose"), _p(_t(d.purpose), ctx)]
    if d.scope:
        out += [sub("Scope"), _p(_t(d.scope), ctx)]
    if d.assumptions:
        out += [sub("Assumptions")]
        out += [_p("•&nbsp; " + _t(a), ctx) for a in d.assumptions]
    if d.references:
        out += [sub("References")]
        out += [_p(f"[{i}]&nbsp; " + _t(a), ctx) for i, a in enumerate(d.references, 1)]
    limits = ctx.results.cases[0].solution.limits
    EXACT_LIMIT, DENSE_LIMIT = limits["exact"], limits["dense"]  # noqa: N806
    out += [
        sub("Method"),
        _p(_t(METHOD.format(exact=EXACT_LIMIT)), ctx),
        _p(_t(CONVENTIONS), ctx),
        *(_p(_t(t), ctx) for t in parts.method_notes(ctx.results)),  # hook: report/parts.py
    ]
    out.append(_p(_t(
        f"Presentation: equations are printed in symbols for every system kept in symbolic form "
        f"(up to {DENSE_LIMIT} unknowns) and with values substituted for up to {SUBSTITUTE_LIMIT} "
        f"equations; the matrix A·x = z is printed in full up to {MATRIX_INLINE_LIMIT} unknowns and as "
        "a listing of its non-zero entries beyond that. Numbers carry "
        f"{ctx.sig} significant figures and SI prefixes."), ctx))  # fmt: skip
    out += [sub("Cautions")]
    out += [_p("•&nbsp; " + _t(c), ctx, "caution") for c in CAUTIONS]
    return out


def _rating_text(e) -> str:
    parts = []
    if e.rating.power is not None:
        parts.append(eng(float(e.rating.power), "W"))
    if e.rating.voltage is not None:
        parts.append(eng(float(e.rating.voltage), "V"))
    if e.rating.current is not None:
        parts.append(eng(float(e.rating.current), "A"))
    return ", ".join(parts) or "—"


def _section_inputs(ctx: _Ctx) -> list[Flowable]:
    p = ctx.results.project
    out: list[Flowable] = [_section(ctx, "Design inputs")]
    sub = _numbering(ctx)
    out.append(sub("Elements"))
    rows = []
    for e in p.elements:
        ctrl = ""
        if e.control_nodes:
            ctrl = f"\ncontrol V({e.control_nodes[0]}) − V({e.control_nodes[1]})"
        elif e.control_element:
            ctrl = f"\ncontrol I({e.control_element})"
        val = parts.value_text(e, ctx.sig, value_text(e.type, float(e.value), ctx.sig))  # hook
        expr = "" if isinstance(e.value_expr, Literal) else e.value_text
        tol = "—"
        if e.tolerance:
            t = e.tolerance
            tol = (
                f"±{float(t.plus) * 100:g} %"
                if t.minus == t.plus
                else f"−{float(t.minus) * 100:g} / +{float(t.plus) * 100:g} %"
            )
        rows.append((e.name, e.kind.words + ctrl, f"{e.nodes[0]} → {e.nodes[1]}",
                     val + (f"\n= {expr}" if expr else ""), tol, parts.rating_text(e, _rating_text(e)),
                     e.description or ""))  # fmt: skip
    out.append(_table(ctx, ["Element", "Type", "Nodes a → b", "Value", "Tolerance", "Rating", "Description"],
                      rows, [0.8, 1.5, 1.1, 1.3, 0.95, 1.1, 2.1],
                      marks=ctx.marks([f"elements.{e.name}" for e in p.elements])))  # fmt: skip
    if p.parameters:
        out.append(sub("Parameters"))
        rows = []
        for q in p.parameters:
            rows.append((q.name, q.text, _quantity_text(ctx, q.value), q.description))
        out.append(
            _table(
                ctx,
                ["Parameter", "Given as", "Value", "Description"],
                rows,
                [1.2, 2, 1.3, 3],
                marks=ctx.marks([f"parameters.{q.name}" for q in p.parameters]),
            )  # fmt: skip
        )
    lim = p.limits
    out.append(sub("Limits and design policy"))
    rows = [
        ("Allowed share of rated power", percent(float(lim.power_fraction), 0)),
        ("Allowed share of rated voltage", percent(float(lim.voltage_fraction), 0)),
        ("Allowed share of rated current", percent(float(lim.current_fraction), 0)),
    ]
    if lim.ambient is not None:
        rows.append(("Ambient temperature for derating", f"{float(lim.ambient):g} °C"))
    if lim.derating is not None:
        rows.append(
            (
                "Derating curve",
                f"full rating to {float(lim.derating.knee):g} °C, zero at {float(lim.derating.zero):g} °C",
            )
        )
    for w in lim.nodes:
        rng = " to ".join(x for x in (w.min is not None and f"≥ {eng(float(w.min), 'V', ctx.sig)}",
                                      w.max is not None and f"≤ {eng(float(w.max), 'V', ctx.sig)}") if x)  # fmt: skip
        rows.append((f"Node {w.node} window", rng))
    rows += parts.across_rows(lim, ctx.sig)  # hook: report/parts.py
    out.append(_table(ctx, ["Limit", "Value"], rows, [2.5, 4]))
    if p.cases:
        out.append(sub("Operating cases"))
        rows = [("nominal", "values as in 2.1 and 2.2", "")]
        rows += [
            (c.name, ", ".join(f"{s.target} = {s.text}" for s in c.settings) or "—", c.description)
            for c in p.cases
        ]
        out.append(_table(ctx, ["Case", "Changes from nominal", "Description"], rows, [1.3, 3, 3]))
    a = p.analysis
    if a.tolerance != "none" or a.temperature is not None:
        out.append(sub("Analysis settings"))
        rows = [("Tolerance analysis", a.tolerance)]
        if a.tolerance == "montecarlo":
            rows += [
                ("Samples", str(a.samples)),
                ("Seed", str(a.seed)),
                ("Distribution", a.distribution),
            ]
        if a.temperature is not None:
            rows.append(("Operating temperature (for tcr)", f"{float(a.temperature):g} °C"))
        out.append(_table(ctx, ["Setting", "Value"], rows, [2.5, 4]))
    return out


def _diagram_parts(p, states=None) -> list[DiagramPart]:
    from calcdoc.report.symbols import part_label  # hook: symbols of the newer parts

    parts = []
    for j, e in enumerate(p.elements):
        label = value_text(e.type, float(e.value), 3)
        if e.control_nodes and e.kind.has_value:
            label += f" × V({e.control_nodes[0]},{e.control_nodes[1]})"
        elif e.control_element:
            label += f" × I({e.control_element})"
        state = states.state(j) if states is not None else ""
        label = part_label(e, state, label)
        parts.append(DiagramPart(e.name, e.type, e.nodes, label, e.drawing, state))
    return parts


def _section_diagram(ctx: _Ctx) -> list[Flowable]:
    r = ctx.results
    p = r.project
    nominal = r.cases[0]
    levels = dict(zip(nominal.netlist.nodes, nominal.branches.node_voltage.tolist(), strict=True))
    parts = _diagram_parts(p, nominal.netlist)
    head: list[Flowable] = [_section(ctx, "Circuit diagram")]
    sub = _numbering(ctx)
    out: list[Flowable] = []
    drawing = circuit_drawing(
        parts,
        p.reference,
        width=ctx.width,
        max_height=560,
        font_name=ctx.fonts.regular,
        levels=levels,
    )
    if drawing is not None:
        head.append(_p(_t(f"Drawn from the project file: each node is a horizontal line (the reference {p.reference!r} "
                          "at the bottom, higher potentials above), each element a vertical branch between its two "
                          "nodes; a branch crossing a node line it does not join is drawn through a gap; dots mark "
                          "junctions."), ctx, "small"))  # fmt: skip
        out.append(KeepTogether([*head, drawing]))
    else:
        out += head
        out.append(_p(_t(f"The circuit has {len(parts)} elements, too many for a readable drawing; "
                         "its connections are listed instead."), ctx))  # fmt: skip
    out.append(sub("Connections"))
    out.append(_table(ctx, ["Node", "Elements joined (terminal)"], connection_rows(parts), [1, 6]))
    return out


def _matrix_flowable(ctx: _Ctx, A, z, unknowns) -> Flowable:
    n = len(unknowns)
    head = ["", *[u for u in unknowns], "z"]
    rows = []
    for i in range(n):
        rows.append(
            [
                f"{i + 1}",
                *[("0" if A[i][j] == 0 else f"{A[i][j]:.{ctx.sig}g}") for j in range(n)],
                f"{z[i]:.{ctx.sig}g}",
            ]
        )
    t = _table(ctx, head, rows, [0.5, *([1.0] * n), 1.1])
    return t


def _section_formulation(ctx: _Ctx) -> tuple[list[Flowable], list[Flowable]]:
    r = ctx.results
    case = r.cases[0]
    sol = case.solution
    out: list[Flowable] = [_section(ctx, "Formulation (nominal case)")]
    sub = _numbering(ctx)
    appendix: list[Flowable] = []
    out.append(sub("Unknowns"))
    rows = []
    for i, u in enumerate(sol.unknowns, 1):
        inner = u[2:-1]
        meaning = (f"voltage of node {inner} from {case.netlist.reference}" if u.startswith("V(")
                   else f"current through {inner}, a → b")  # fmt: skip
        rows.append((f"x{i}", u, meaning, "V" if u.startswith("V(") else "A"))
    out.append(
        _table(ctx, ["", "Unknown", "Meaning", "Unit"], rows[:ROW_LIMIT], [0.4, 1.4, 4, 0.5])
    )
    form = sol.formulation
    if form is None:
        out.append(_p(_t(f"The system has {len(sol.unknowns)} unknowns; it was assembled directly in sparse form "
                         "and is not printed equation by equation. KCL is written at every node and each "
                         "voltage-defined element's law as described in section 1.5."), ctx))  # fmt: skip
        return out, appendix
    out.append(sub("Equations"))
    out.append(_p(_t("Each equation in symbols (element names stand for their values), then with the values "
                     "substituted. KCL: the currents leaving a node through its elements sum to zero."), ctx, "small"))  # fmt: skip
    out += [_p(_t(t), ctx, "small") for t in parts.formulation_notes(case)]  # hook: report/parts.py
    substitute = len(form.equations) <= SUBSTITUTE_LIMIT
    for k, eq in enumerate(form.equations, 1):
        block = [_p(f"<b>({k})</b> {_t(eq.title)}", ctx, "h3"),
                 MathLines(equation_pieces(eq), eq.text(), font=ctx.fonts.regular)]  # fmt: skip
        if substitute:
            block.append(
                MathLines(
                    equation_pieces(eq, case.symbol_values, form.units(), ctx.sig),
                    eq.text(case.symbol_values),
                    font=ctx.fonts.regular,
                )
            )
        out.append(KeepTogether(block))
    if sol.matrix is not None and "matrix" in ctx.style.sections:
        A, z = sol.matrix
        out.append(sub("Matrix form A·x = z"))
        out.append(_p(_t("Rows are the equations above in order; columns the unknowns x1 … xn of 4.1 "
                         "(SI units: S, dimensionless or Ω entries; z in A or V)."), ctx, "small"))  # fmt: skip
        if len(sol.unknowns) <= MATRIX_INLINE_LIMIT:
            out.append(_matrix_flowable(ctx, A, z, sol.unknowns))
        else:
            out.append(
                _p(
                    _t(
                        f"A has {len(sol.unknowns)} rows; its non-zero entries are listed in Appendix C."
                    ),
                    ctx,
                )
            )
            rows = [
                (str(i + 1), str(j + 1), f"{A[i][j]:.{ctx.sig + 2}g}")
                for i in range(len(A))
                for j in range(len(A))
                if A[i][j] != 0
            ]
            rows += [
                (str(i + 1), "z", f"{z[i]:.{ctx.sig + 2}g}") for i in range(len(z)) if z[i] != 0
            ]
            appendix += [_h(ctx, "Appendix C  Matrix listing (nominal case)"),
                         _table(ctx, ["Row", "Column", "Value"], rows, [1, 1, 2])]  # fmt: skip
    cf = ctx.results.extra.get("closed_form")
    if cf is not None and "closed_form" in ctx.style.sections:
        out.append(sub("Closed-form solution"))
        out.append(
            _p(
                _t("Each unknown as an expression in the element values, for checking by hand."),
                ctx,
                "small",
            )
        )
        for u, tex, val in zip(cf.unknowns, cf.latex, cf.values, strict=True):
            unit = "V" if u.startswith("V(") else "A"
            out.append(MathLines([tex_unknown(u) + " = " + tex, r"= \mathrm{" + eng(val, unit, ctx.sig).replace("µ", r"\mu ").replace("−", "-").replace(" ", r"\ ") + "}"],
                                 f"{u} = {val}", font=ctx.fonts.regular))  # fmt: skip
    return out, appendix


def _section_solution(ctx: _Ctx) -> list[Flowable]:
    out: list[Flowable] = [_section(ctx, "Solution")]
    sub = _numbering(ctx)
    for c in ctx.results.cases:
        net, br, s = c.netlist, c.branches, c.solution
        out.append(sub(f"Case: {c.name}"))
        if s.exact is not None:
            how = "exact: no rounding, so no residual or condition number"
        else:
            how = (f"relative residual {s.residual:.1e}, condition number {s.condition:.3g} "
                   f"after equilibration, estimated relative error {s.error_estimate:.1e} after "
                   f"{s.refinement_steps} refinement steps")  # fmt: skip
        out.append(
            _p(_t(f"{len(s.unknowns)} unknowns solved by {s.method} ({how})."), ctx, "small")
        )
        for w in s.warnings:
            out.append(
                _p(
                    f"<font color='{ctx.style.colours['fail']}'><b>Warning:</b> {_t(w)}</font>",
                    ctx,
                    "small",
                )
            )
        rows = [
            (n, _num(ctx, v, "V")) for n, v in zip(net.nodes, br.node_voltage.tolist(), strict=True)
        ]
        out.append(_table(ctx, ["Node", "Voltage from reference"], rows[:ROW_LIMIT], [2, 2],
                          marks=ctx.marks([f"results.{c.name}.nodes.{n}" for n in net.nodes[:ROW_LIMIT]])))  # fmt: skip
        out.append(Spacer(1, 4))
        rows = [(name, f"{net.nodes[int(net.a[j])]} → {net.nodes[int(net.b[j])]}", _num(ctx, br.voltage[j], "V"),
                 _num(ctx, br.current[j], "A"), _num(ctx, br.power[j], "W"),
                 "absorbs" if br.power[j] > 0 else ("delivers" if br.power[j] < 0 else "—"))
                for j, name in enumerate(net.names)]  # fmt: skip
        out.append(
            _table(
                ctx,
                ["Element", "a → b", "Voltage V(a)−V(b)", "Current a→b", "Power", ""],
                rows[:ROW_LIMIT],
                [1, 1.4, 1.3, 1.3, 1.3, 0.8],
                marks=ctx.marks([f"results.{c.name}.elements.{n}" for n in net.names[:ROW_LIMIT]]),
            )
        )
        if len(rows) > ROW_LIMIT:
            out.append(
                _p(
                    _t(f"… {len(rows) - ROW_LIMIT} more rows in the embedded results.json."),
                    ctx,
                    "small",
                )
            )
    return out


class _LedgerChart(Flowable):
    """Horizontal bars: power absorbed and delivered, per element and in total."""

    def __init__(
        self, ctx: _Ctx, items: list[tuple[str, float]], absorbed: float, delivered: float
    ) -> None:
        super().__init__()
        self.ctx, self.items, self.absorbed, self.delivered = ctx, items, absorbed, delivered

    def wrap(self, aw: float, ah: float):
        self.width = min(aw, 360)
        self.height = 14 * (len(self.items) + 2) + 16
        return self.width, self.height

    def draw(self) -> None:
        c, f = self.canv, self.ctx.fonts
        scale = max(self.absorbed, self.delivered, 1e-300)
        x0, bar_w = 80, self.width - 150
        rows = [
            ("Total absorbed", self.absorbed, "#4b6b8f"),
            ("Total delivered", self.delivered, "#8f6b4b"),
        ]
        rows += [(n, abs(v), "#4b6b8f" if v > 0 else "#8f6b4b") for n, v in self.items]
        y = self.height - 14
        c.setFont(f.regular, 7)
        for name, v, col in rows:
            c.setFillColor(colors.black)
            c.drawRightString(x0 - 4, y + 2, name[:18])
            c.setFillColor(colors.HexColor(col))
            c.rect(x0, y, bar_w * v / scale, 9, stroke=0, fill=1)
            c.setFillColor(colors.black)
            c.drawString(x0 + bar_w * v / scale + 3, y + 2, eng(v, "W", self.ctx.sig))
            y -= 14
        c.setFont(f.italic, 6.5)
        c.drawString(x0, 2, "blue: absorbed   brown: delivered")


def _section_verification(ctx: _Ctx) -> list[Flowable]:
    out: list[Flowable] = [_section(ctx, "Verification")]
    sub = _numbering(ctx)
    for c in ctx.results.cases:
        net, br = c.netlist, c.branches
        out.append(sub(f"Case: {c.name}"))
        out.append(_p("<b>KCL at each node</b> — currents leaving the node through each element (a current "
                      "entering counts negative); the sum must be zero.", ctx, "small"))  # fmt: skip
        leaving: dict[int, list[str]] = {}
        for j, name in enumerate(net.names):
            i = float(br.current[j])
            leaving.setdefault(int(net.a[j]), []).append(
                f"{name} {'+' if i >= 0 else '−'}{_num(ctx, abs(i), 'A')}"
            )
            leaving.setdefault(int(net.b[j]), []).append(
                f"{name} {'−' if i >= 0 else '+'}{_num(ctx, abs(i), 'A')}"
            )
        rows = [
            (net.nodes[n], "; ".join(leaving.get(n, [])), eng(float(c.kcl[n]), "A", 3))
            for n in range(1, len(net.nodes))
        ]
        out.append(_table(ctx, ["Node", "Currents leaving", "Sum"], rows[:ROW_LIMIT], [1, 5, 1]))
        out.append(Spacer(1, 4))
        out.append(_p("<b>KVL around each loop</b> — each element's own-law voltage (source value, gain × control, "
                      "R·i), signed + where the loop runs a → b; the sum must be zero.", ctx, "small"))  # fmt: skip
        if c.kvl.listed:
            rows = []
            for m, lp in enumerate(c.kvl.loops, 1):
                terms = "  ".join(
                    f"{'+' if sg > 0 else '−'}{e} ({_num(ctx, t, 'V')})"
                    for e, sg, t in zip(lp.elements, lp.signs, lp.terms, strict=True)
                )
                rows.append((f"L{m}", terms, eng(lp.sum, "V", 3)))
            out.append(
                _table(
                    ctx,
                    ["Loop", "Terms", "Sum"],
                    rows[:ROW_LIMIT] or [("—", "no loops (the circuit is a tree)", "—")],
                    [0.6, 6, 1],
                )
            )
        else:
            out.append(
                _p(
                    _t(
                        f"{c.kvl.count} loops; largest sum {eng(c.kvl.max_abs_sum, 'V', 3)} (listed by closing element in results.json)."
                    ),
                    ctx,
                )
            )
        out.append(Spacer(1, 4))
        led = c.ledger
        out.append(_p("<b>Power ledger</b>", ctx, "small"))
        rows = [("Absorbed (sum of positive powers)", _num(ctx, led.absorbed, "W")),
                ("Delivered (sum of negative powers)", _num(ctx, led.delivered, "W")),
                ("Imbalance (absorbed − delivered)", eng(led.imbalance, "W", 3)),
                ("Relative imbalance", f"{led.relative:.3g}")]  # fmt: skip
        out.append(_table(ctx, ["Quantity", "Value"], rows, [3, 2]))
        if "power_chart" in ctx.style.sections and 0 < len(led.by_element) <= 40:
            out.append(_LedgerChart(ctx, list(led.by_element), led.absorbed, led.delivered))
        out += _parts_flowables(ctx, parts.case_blocks(c, ctx.results.project, ctx.sig))  # hook
    return out


def _parts_flowables(ctx: _Ctx, blocks) -> list[Flowable]:
    """Lay out the blocks of report/parts.py (hook: the layout vocabulary will take this over)."""
    out: list[Flowable] = []
    for b in blocks:
        if isinstance(b, parts.Grid):
            out.append(_table(ctx, b.header, b.rows, b.widths, fail_rows=b.failing))
        elif b.style == "lead":
            out += [Spacer(1, 4), _p(f"<b>{_t(b.text)}</b>", ctx, "small")]
        else:
            out.append(_p(_t(b.text), ctx, b.style))
    return out


def _section_checks(ctx: _Ctx) -> list[Flowable]:
    out: list[Flowable] = [_section(ctx, "Design checks")]
    sub = _numbering(ctx)
    r = ctx.results
    out.append(_p(_t("Each rating and limit against the result: utilisation = value / limit (for a minimum, "
                     "limit / value); margin = how far the value is inside the limit. A negative margin fails."), ctx, "small"))  # fmt: skip
    fail = ctx.style.colours["fail"]
    for c in r.cases:
        out.append(sub(f"Case: {c.name}"))
        if not c.checks:
            out.append(_p("No ratings or limits are given, so there is nothing to check.", ctx))
            continue
        rows, fails = [], []
        for i, ch in enumerate(c.checks):
            unit = UNITS[ch.quantity]
            rel = "≤" if ch.bound == "max" else "≥"
            status = Paragraph(
                f"<font color='{fail}'><b>FAIL</b></font>" if not ch.passed else "<b>PASS</b>",
                ctx.styles["cell"],
            )
            if not ch.passed:
                fails.append(i)
            rows.append((ch.id, _num(ctx, ch.value, unit), f"{rel} {_num(ctx, ch.limit, unit)}", percent(ch.utilization),
                         _num(ctx, ch.margin, unit), status, ch.basis))  # fmt: skip
        out.append(_table(ctx, ["Check", "Value", "Limit", "Utilisation", "Margin", "Status", "Limit basis"], rows,
                          [1.4, 1, 1.1, 1.0, 1, 0.6, 2.4], fail_rows=fails,
                          marks=ctx.marks([f"results.{c.name}.checks.{ch.id}" for ch in c.checks])))  # fmt: skip
        n_fail = len(fails)
        msg = (
            f"{len(c.checks)} checks: all pass."
            if not n_fail
            else f"{len(c.checks)} checks: <font color='{fail}'><b>{n_fail} FAIL</b></font>."
        )
        out.append(_p(msg, ctx, "small"))
    return out


def _section_conclusion(ctx: _Ctx) -> list[Flowable]:
    r = ctx.results
    p = r.project
    out: list[Flowable] = [_section(ctx, "Conclusion")]
    failed, worst = r.failed, r.worst
    if not r.checks:
        out.append(
            _p(
                "No ratings or limits were given; the record shows the derived values and their consistency only.",
                ctx,
            )
        )
    elif not failed:
        out.append(_p(_t(f"All {len(r.checks)} design checks pass in all {len(r.cases)} case(s). "
                         + (f"The highest utilisation is {percent(worst[1].utilization)} ({worst[1].id}, case {worst[0]})." if worst else "")), ctx))  # fmt: skip
    else:
        out.append(_p(f"<font color='{ctx.style.colours['fail']}'><b>{len(failed)} of {len(r.checks)} design checks fail.</b></font> "
                      "The design does not meet its ratings and limits as it stands:", ctx))  # fmt: skip
        out += [_p(_t(f"•  {c.id} in case {n}: {eng(c.value, UNITS[c.quantity], ctx.sig)} against "
                      f"{'≤' if c.bound == 'max' else '≥'} {eng(c.limit, UNITS[c.quantity], ctx.sig)} ({percent(c.utilization)})."), ctx)
                for n, c in failed]  # fmt: skip
    out.append(_p(_t("The solution satisfies KCL at every node, KVL around every loop and the power balance within "
                     f"the residuals shown in section 6 (largest KCL residual "
                     f"{eng(max(float(abs(c.kcl).max()) if len(c.kcl) else 0.0 for c in r.cases), 'A', 3)}, "
                     f"largest KVL sum {eng(max(c.kvl.max_abs_sum for c in r.cases), 'V', 3)})."), ctx))  # fmt: skip
    for text in (p.document.conclusion, p.report.conclusion):
        if text.strip():
            out.append(_p(_t(text), ctx))
    out.append(_p("<b>Cautions.</b> " + " ".join(_t(c) for c in CAUTIONS), ctx, "caution"))
    return out


def _appendix_input(ctx: _Ctx) -> list[Flowable]:
    p = ctx.results.project
    out: list[Flowable] = [_h(ctx, f"Appendix A  Input file: {Path(p.path).name}")]
    out.append(_p(f"SHA-256 {p.sha256}; the same bytes are attached to this PDF.", ctx, "small"))
    lines = p.source.decode("utf-8").splitlines()
    width = len(str(len(lines)))
    rows = []
    for i, line in enumerate(lines, 1):
        rows.append(
            Paragraph(
                f"<font color='#888888'>{i:>{width}}</font>  {_t(line).replace(' ', '&nbsp;') or '&nbsp;'}",
                ctx.styles["mono"],
            )
        )
    out.extend(rows)
    return out


def _appendix_versions(ctx: _Ctx) -> list[Flowable]:
    import platform
    from importlib import metadata

    rows = [("calcdoc", __version__), ("Python", platform.python_version())]
    for lib in (
        "numpy",
        "scipy",
        "sympy",
        "pint",
        "networkx",
        "reportlab",
        "matplotlib",
        "pypdf",
        "tomli",
        "pyHanko",
    ):
        try:
            rows.append((lib, metadata.version(lib)))
        except metadata.PackageNotFoundError:
            rows.append((lib, "not installed"))
    return [_h(ctx, "Appendix B  Software"), _table(ctx, ["Component", "Version"], rows, [2, 2])]


# ---------------------------------------------------------------- assembly

SectionBuilder = Callable[[_Ctx], list[Flowable]]


def build_package(
    results,
    *,
    previous=None,
    template: str | None = None,
    base_dir: Path | None = None,
    progress: Callable[[str], None] | None = None,
    extra_sections: Sequence[tuple[int, SectionBuilder]] = (),
) -> PackageOutput:
    """Lay out the calculation package.

    Parameters
    ----------
    results : Results
        From :func:`calcdoc.solve`.
    previous : Comparison, optional
        The comparison with an earlier revision (:func:`calcdoc.record.compare.compare`):
        adds a "Changes from revision X" section first and revision marks
        beside every changed row.
    template : str, optional
        Report style name or path (default: the project's ``[report] template``).
    base_dir : Path, optional
        Where relative paths (seal image, style files) are resolved.
    progress : callable, optional
        Called with a short message at each stage.
    extra_sections : sequence of (position, builder)
        Further sections, inserted before the section list entry at ``position``.

    Returns
    -------
    PackageOutput
    """
    say = progress or (lambda _m: None)
    p = results.project
    base = base_dir or Path(p.path).resolve().parent
    style = load_style(template or p.report.template, base)
    paper = p.report.paper or style.paper
    size = A4 if paper == "A4" else LETTER
    fonts = register_fonts()
    top, bottom, left, right = (m * mm for m in style.margin_mm)
    width = size[0] - left - right
    ctx = _Ctx(
        results, style, fonts, p.report.significant_figures, _styles(fonts, style), width, {}, base
    )
    ctx.previous = previous
    say("laying out the cover")
    story: list[Flowable] = [NextPageTemplate("body"), *_cover(ctx), PageBreak()]
    toc_style = TableStyle([("FONT", (0, 0), (-1, -1), fonts.regular, 9), ("VALIGN", (0, 0), (-1, -1), "TOP"),
                            ("LEFTPADDING", (0, 0), (-1, -1), 0), ("RIGHTPADDING", (0, 0), (-1, -1), 0)])  # fmt: skip
    toc = TableOfContents(
        levelStyles=[ctx.styles["toc1"], ctx.styles["toc2"]], dotsMinLevel=0, tableStyle=toc_style
    )
    story += [_p("<b>Contents</b>", ctx, "h1"), toc, PageBreak()]
    builders: list[SectionBuilder] = []
    if previous is not None:
        from calcdoc.report.changes import section_changes

        def changes(c: _Ctx) -> list[Flowable]:
            return section_changes(c, previous)

        builders.append(changes)
    builders += [_section_method, _section_inputs]
    if "diagram" in style.sections:
        builders.append(_section_diagram)
    appendix_c: list[Flowable] = []

    def formulation(c: _Ctx) -> list[Flowable]:
        body, app = _section_formulation(c)
        appendix_c.extend(app)
        return body

    builders += [formulation, _section_solution, _section_verification, _section_checks]
    builders += results_sections(results)
    builders.append(_section_conclusion)
    for pos, b in sorted(extra_sections, key=lambda t: t[0], reverse=True):
        builders.insert(pos, b)
    for b in builders:
        say(f"laying out {b.__name__.strip('_').replace('section_', '')}")
        story += b(ctx)
        story.append(CondPageBreak(120))
    if "input_listing" in style.sections:
        story += [PageBreak(), *_appendix_input(ctx)]
    if "versions" in style.sections:
        story += [CondPageBreak(200), *_appendix_versions(ctx)]
    if appendix_c:
        story += [PageBreak(), *appendix_c]

    say("typesetting")
    buf = io.BytesIO()
    d = p.document
    doc = _Doc(buf, pagesize=size, leftMargin=left, rightMargin=right, topMargin=top, bottomMargin=bottom,
               title=d.title, author=(p.signoff.prepared.name if p.signoff.prepared else d.organisation),
               subject=f"Calculation record {d.number} revision {d.revision}".strip(),
               creator=f"calcdoc {__version__}", invariant=1, initialFontName=fonts.regular,
               pageCompression=1)  # fmt: skip
    frame = Frame(
        left,
        bottom,
        width,
        size[1] - top - bottom,
        id="body",
        leftPadding=0,
        rightPadding=0,
        topPadding=0,
        bottomPadding=0,
    )
    doc.addPageTemplates([PageTemplate("cover", [frame]), PageTemplate("body", [frame])])
    canvas_cls = type(
        "SheetCanvas", (_SheetCanvas,), {"furniture": staticmethod(_furniture(ctx, size))}
    )
    doc.multiBuild(story, canvasmaker=canvas_cls)
    say("attaching the input and results")
    pdf = _attach(buf.getvalue(), results)
    return PackageOutput(pdf, ctx.sigbox.get("box", (0, (0.0, 0.0, 0.0, 0.0))))


def results_sections(results) -> list[SectionBuilder]:
    """Sections for the analysis stages present in ``results.extra``, numbered 9, 10, ..."""
    from calcdoc.report.analysis_sections import SECTIONS

    out: list[SectionBuilder] = []
    for build in SECTIONS:

        def one(ctx: _Ctx, build=build) -> list[Flowable]:
            return build(ctx, results)

        one.__name__ = build.__name__
        out.append(one)
    return out


def _attach(pdf: bytes, results) -> bytes:
    """Embed the input file and the results JSON; set the document-info keys."""
    from pypdf import PdfReader, PdfWriter

    from calcdoc.results_json import results_document

    p = results.project
    name = Path(p.path).name or "project.toml"
    writer = PdfWriter(clone_from=PdfReader(io.BytesIO(pdf)))
    writer.add_attachment(name, p.source)
    body = (
        json.dumps(results_document(results), indent=1, ensure_ascii=False, allow_nan=False) + "\n"
    )
    writer.add_attachment("results.json", body.encode("utf-8"))
    meta = dict(writer.metadata or {})
    meta.update({"/CalcdocInput": name, "/CalcdocInputSHA256": p.sha256})
    writer.add_metadata(meta)
    out = io.BytesIO()
    writer.write(out)
    return out.getvalue()


def default_output(project, project_path: Path) -> Path:
    """``NUMBER-revREV.pdf`` beside the project file (the project's stem when unnumbered)."""
    d = project.document
    import re

    stem = (
        f"{d.number}-rev{d.revision}"
        if d.number and d.revision
        else (d.number or project_path.stem)
    )
    stem = re.sub(r"[^A-Za-z0-9_.\-]+", "_", stem)
    return project_path.resolve().parent / f"{stem}.pdf"


_ = dt  # dates come from the project file, never the clock
