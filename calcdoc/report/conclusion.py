"""The conclusion, written from the results: the verdict over the check set,
the smallest margin and where, consistency, and the open items."""

from __future__ import annotations

from reportlab.platypus import Flowable

from calcdoc.format import UNITS, counted, eng, percent
from calcdoc.report.access import stage
from calcdoc.report.cover import CAUTIONS, checks_run, consistency
from calcdoc.report.layout import Layout
from calcdoc.report.words import check_id_label, check_label, place


def _row_text(lay: Layout, row) -> str:
    c = row.check
    unit = UNITS[c.quantity]
    rel = "≤" if c.bound == "max" else "≥"
    return (
        f"{check_label(c)} ({place(row)}): {eng(c.value, unit, lay.sig)} against {rel} "
        f"{eng(c.limit, unit, lay.sig)}, {percent(c.utilization)} used, margin "
        f"{eng(c.margin, unit, lay.sig)}"
    )


def conclusion_section(lay: Layout) -> list[Flowable]:
    r = lay.results
    p = r.project
    s = lay.summary
    c = s.checks
    out: list[Flowable] = [lay.section("conclusion")]
    where = f" ({lay.ref('checks')})" if lay.has("checks") else ""
    if not c.count:
        out.append(
            lay.paragraph(
                "No ratings or limits are stated, so there are no design checks: "
                "the record shows the derived values and their consistency only."
            )
        )
    elif not c.failed:
        ref = f"; {lay.ref('checks')}" if lay.has("checks") else ""
        out.append(
            lay.rich(
                f"<b>All {counted(c.count, 'check')} pass</b>"
                + lay.text(f" ({checks_run(lay).split(': ', 1)[1]}{ref}).")
            )
        )
    else:
        out.append(
            lay.rich(
                lay.failing(f"{len(c.failed)} of {counted(c.count, 'check')} fail")
                + lay.text(
                    f"{where}: the design does not meet its ratings and limits "
                    "as it stands, and the record is not fit for approval."
                )
            )
        )
        out += lay.bullets([_row_text(lay, x) + "." for x in c.failed])
    if c.worst is not None and not c.failed:
        out.append(
            lay.paragraph(
                "The smallest margin (the highest utilisation) is " + _row_text(lay, c.worst) + "."
            )
        )
    out.append(lay.paragraph("Consistency: " + consistency(lay) + "."))
    sweeps = stage(r, "sweeps")
    if sweeps is not None:
        from calcdoc.report.analysis_sections import output_label, swept

        notes = [
            f"{output_label(x.output)} crosses the {check_id_label(x.check)} limit at "
            f"{sw.target} = {swept(x.at, sw.unit, lay.sig)}"
            for sw in sweeps.sweeps
            for x in sw.crossings
        ]
        if notes:
            out.append(lay.paragraph(f"Sweeps ({lay.ref('sweeps')}): " + "; ".join(notes) + "."))
    items = [f"The {counted(len(c.failed), 'failing check')} listed above"] if c.failed else []
    items += list(s.findings)
    nouns = {"prepared": "preparer", "checked": "checker", "approved": "approver"}
    items += [f"The {nouns[role]} has not signed" for role in s.open_roles]
    items += [f"Sign-off: {x}" for x in s.status.problems]
    out.append(lay.rich("<b>Open items</b>"))
    out += lay.bullets(items) if items else [lay.paragraph("None.")]
    for text in (p.document.conclusion, p.report.conclusion):
        if text.strip():
            out.append(lay.paragraph(text))
    out.append(lay.rich("<b>Cautions.</b> " + " ".join(lay.text(x) for x in CAUTIONS), "caution"))
    return out
