"""The cover sheet: title block, status, sign-off with seal and signature
boxes, revision history, the results summary over the check set, cautions
and the input's SHA-256."""

from __future__ import annotations

import io
from pathlib import Path

from reportlab.lib import colors
from reportlab.lib.utils import ImageReader
from reportlab.platypus import Flowable, Image, Spacer

from calcdoc.format import counted, percent
from calcdoc.report.layout import Layout
from calcdoc.report.words import case_label, check_label, place

CAUTIONS = (
    "This record models linear steady-state (DC) behaviour only: no transients, "
    "no non-linear or temperature-dependent behaviour beyond what the inputs state.",
    "It must be reviewed by a qualified engineer before it is relied on.",
    "Local codes, standards and licensed engineering practice govern over anything in this record.",
)


class SignoffBlock(Flowable):
    """Sign-off table with a reserved digital-signature box and a seal box."""

    def __init__(self, lay: Layout) -> None:
        super().__init__()
        self.lay = lay

    def wrap(self, aw: float, ah: float):
        self.width, self.height = aw, 142
        return self.width, self.height

    def draw(self) -> None:
        c, lay = self.canv, self.lay
        f = lay.fonts
        so = lay.results.project.signoff
        acc = colors.HexColor(lay.colour("accent"))
        seal_w = 96
        table_w = self.width - seal_w - 8
        xs = [table_w * v for v in (0, 0.22, 0.62, 1.0)]
        row_h = 20
        top = self.height
        c.setStrokeColor(acc)
        c.setLineWidth(0.6)
        c.setFillColor(colors.HexColor(lay.colour("shade")))
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
                c.setFillColor(colors.HexColor(lay.colour("mark")))
                c.drawString(xs[1] + 4, y + 7, "open (not signed)")
                c.setFillColor(colors.black)
            else:
                c.setFont(f.regular, 8.5)
                name = _clip(lay, who.name, xs[2] - xs[1] - 8)
                c.drawString(xs[1] + 4, y + 7, name)
                if who.date:
                    c.drawString(xs[2] + 4, y + 7, who.date.isoformat())
                else:
                    c.setFont(f.italic, 8)
                    c.setFillColor(colors.HexColor(lay.colour("mark")))
                    c.drawString(xs[2] + 4, y + 7, "no date: not signed")
                    c.setFillColor(colors.black)
        bottom = top - row_h * 4
        c.rect(0, bottom, table_w, row_h * 4, stroke=1, fill=0)
        for i in range(1, 4):
            c.line(0, top - row_h * i, table_w, top - row_h * i)
        for x in xs[1:-1]:
            c.line(x, bottom, x, top)
        box_h = self.height - row_h * 4 - 6  # digital signature box below the table
        c.setDash(2, 2)
        c.rect(0, 0, table_w, box_h, stroke=1, fill=0)
        c.setDash()
        c.setFont(f.regular, 6.5)
        c.setFillColor(colors.HexColor("#666666"))
        c.drawString(3, box_h - 8, "Digital signature")
        x0, y0 = c.absolutePosition(0, 0)
        x1, y1 = c.absolutePosition(table_w, box_h)
        lay.signature_box["box"] = (
            c.getPageNumber() - 1,
            (round(x0 + 2, 2), round(y0 + 2, 2), round(x1 - 2, 2), round(y1 - 10, 2)),
        )
        c.setFillColor(colors.black)  # seal / stamp box
        c.setStrokeColor(acc)
        c.rect(table_w + 8, 0, seal_w, self.height, stroke=1, fill=0)
        c.setFont(f.regular, 6.5)
        c.drawString(table_w + 11, self.height - 9, "Seal / stamp")
        seal = lay.results.project.assets.seal
        if seal is not None:
            c.drawImage(
                ImageReader(io.BytesIO(seal.data)),
                table_w + 12,
                4,
                seal_w - 8,
                self.height - 18,
                preserveAspectRatio=True,
                anchor="c",
                mask="auto",
            )


def _clip(lay: Layout, text: str, room: float) -> str:
    from reportlab.pdfbase.pdfmetrics import stringWidth

    from calcdoc.report.text import printable

    text = printable(text, lay.fonts.regular)
    while text and stringWidth(text, lay.fonts.regular, 8.5) > room:
        text = text[:-2] + "…"
    return text


def cover(lay: Layout) -> list[Flowable]:
    r = lay.results
    p = r.project
    d = p.document
    s = lay.summary
    out: list[Flowable] = []
    logo = lay.style.logo
    if logo is not None:
        img = Image(io.BytesIO(logo.data))
        scale = min(1.0, 40 / logo.height, 160 / logo.width)
        img.drawWidth, img.drawHeight = logo.width * scale, logo.height * scale
        img.hAlign = "RIGHT"
        out.append(img)
    org = d.organisation or lay.style.organisation
    head = f"<font color='{lay.colour('accent')}'><b>CALCULATION RECORD</b></font>"
    out.append(lay.rich(head + (f" &nbsp;·&nbsp; {lay.text(org)}" if org else "")))
    out.append(Spacer(1, 6))
    out.append(lay.paragraph(d.title, "title"))
    if d.project:
        out.append(lay.paragraph(d.project, "h3"))
    out.append(Spacer(1, 6))
    cases = ", ".join(case_label(c.name) for c in r.cases)
    block = [
        ("Document number", d.number or "not stated", "Revision", d.revision or "not stated"),
        ("Date", d.date.isoformat() if d.date else "undated", "Organisation", org or "not stated"),
        ("Operating cases", f"{len(r.cases)}: {cases}", "", ""),
    ]
    out.append(lay.table(["", "", "", ""], block, [1.1, 2.2, 0.9, 1.8]))
    out.append(Spacer(1, 6))
    st = s.status
    text = lay.text(f"Status: {st.text}")
    out.append(lay.rich(text if st.fit else lay.failing(text), "status"))
    for problem in st.problems:
        out.append(lay.rich(lay.failing(lay.text("Sign-off: " + problem + ".")), "small"))
    out.append(Spacer(1, 4))
    out.append(lay.rich("<b>Sign-off</b>"))
    out.append(SignoffBlock(lay))
    out.append(Spacer(1, 8))
    out.append(lay.rich("<b>Revision history</b>"))
    if d.history:
        rows = [
            (h.revision, h.date.isoformat() if h.date else "undated", h.description)
            for h in d.history
        ]
        out.append(lay.table(["Revision", "Date", "Description"], rows, [0.8, 1.0, 5]))
    else:
        out.append(lay.paragraph("None stated.", "small"))
    out.append(Spacer(1, 8))
    out.append(lay.rich("<b>Results summary</b>"))
    out.append(results_table(lay))
    out.append(Spacer(1, 8))
    out.append(lay.rich("<b>Cautions.</b> " + " ".join(lay.text(c) for c in CAUTIONS), "caution"))
    out.append(Spacer(1, 4))
    out.append(lay.rich(f"SHA-256 of input: {p.sha256}", "mono"))
    out.append(
        lay.paragraph(
            f"Input file: {Path(p.path).name} ({len(p.source)} bytes), embedded in "
            "this PDF with the results as file attachments.",
            "small",
        )
    )
    return out


def checks_run(lay: Layout) -> str:
    """``"54: 27 design checks in 3 cases, each also at its tolerance worst case"``."""
    s = lay.summary.checks
    solved = s.count - s.at_tolerance
    if not s.count:
        return "none: no ratings or limits are stated"
    text = f"{s.count}: {counted(solved, 'design check')} in {counted(s.cases, 'case')}"
    if s.at_tolerance == solved:
        text += ", each also at its tolerance worst case"
    elif s.at_tolerance:
        text += f", {s.at_tolerance} also at a tolerance worst case"
    return text


def results_table(lay: Layout) -> Flowable:
    s = lay.summary
    c = s.checks
    rows = [("Checks run", checks_run(lay))]
    fails = []
    if c.count:
        if c.failed:
            listed = "; ".join(f"{check_label(x.check)} ({place(x)})" for x in c.failed[:6])
            rows.append(
                (
                    "Checks failing",
                    f"{len(c.failed)}: {listed}" + (" …" if len(c.failed) > 6 else ""),
                )
            )
            fails.append(len(rows) - 1)
        else:
            rows.append(("Checks failing", "none"))
        if c.worst is not None:
            w = c.worst
            where = lay.plan["checks"].number if lay.has("checks") else ""
            rows.append(
                (
                    "Worst utilisation",
                    f"{percent(w.utilization)}: {check_label(w.check)}, "
                    f"{place(w)}" + (f" (section {where})" if where else ""),
                )
            )
    rows.append(
        (
            "Open findings",
            f"{len(s.findings)}: "
            + "; ".join(s.findings[:4])
            + (" …" if len(s.findings) > 4 else "")
            if s.findings
            else "none",
        )
    )
    rows.append(("Consistency", consistency(lay)))
    verdict = (
        f"All {counted(c.count, 'check')} pass"
        if c.count and not c.failed
        else f"{len(c.failed)} of {counted(c.count, 'check')} fail: not fit for approval"
        if c.failed
        else "No design checks: the record shows derived values and their consistency only"
    )
    rows.append(("Verdict", verdict))
    if c.failed:
        fails.append(len(rows) - 1)
    return lay.table(["Item", "Result"], rows, [1.3, 4], fail_rows=fails)


def consistency(lay: Layout) -> str:
    """KCL, KVL and power balance in one sentence, at the print resolution."""
    r = lay.results
    ref = f" ({lay.ref('verification')})" if lay.has("verification") else ""
    if all(x.exact for x in lay.summary.resolutions):
        return (
            "KCL, KVL and the power balance hold exactly: every case was solved in exact "
            f"rational arithmetic{ref}"
        )
    worst_kcl = worst_kvl = 0.0
    res_i = res_v = 0.0
    for case, res in zip(r.cases, lay.summary.resolutions, strict=True):
        kcl = float(abs(case.kcl).max()) if len(case.kcl) else 0.0
        worst_kcl = max(worst_kcl, res.clip(kcl, "A"))
        worst_kvl = max(worst_kvl, res.clip(case.kvl.max_abs_sum, "V"))
        res_i, res_v = max(res_i, res.current), max(res_v, res.voltage)
    return (
        f"largest KCL sum {lay.num(worst_kcl, 'A')} (resolution {lay.num(res_i, 'A', 1)}), "
        f"largest KVL sum {lay.num(worst_kvl, 'V')} (resolution {lay.num(res_v, 'V', 1)}){ref}"
    )
