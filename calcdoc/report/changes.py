"""The "Changes from revision X" section (layout of a record Comparison).

Rows changed since that revision also carry a mark in the margin
throughout the record (:class:`calcdoc.report.layout.Grid`).
"""

from __future__ import annotations

from reportlab.platypus import Flowable, Spacer

from calcdoc.format import eng, percent, signed
from calcdoc.report.layout import Layout
from calcdoc.report.words import case_label, check_id_label


def changes_section(lay: Layout, comparison) -> list[Flowable]:
    """Every changed input and its effect, status changes first."""
    c = comparison
    out: list[Flowable] = [
        lay.section("changes", f"Changes from revision {c.old_revision or '(unnumbered)'}")
    ]
    out.append(
        lay.paragraph(
            f"Compared with {c.old_path} (SHA-256 {c.old_sha256[:16]}…). Rows "
            "changed since that revision carry a mark in the margin throughout "
            "this record.",
            "small",
        )
    )
    if not c.changed:
        out.append(lay.paragraph("Nothing changed: the inputs and every result are the same."))
        return out
    if c.status_changes:
        out.append(lay.rich("<b>Checks whose status changed</b>"))
        rows, fails = [], []
        for i, ch in enumerate(c.status_changes):
            if ch.new_status == "fail":
                fails.append(i)
            rows.append(
                (
                    check_id_label(ch.id),
                    case_label(ch.case),
                    (ch.old_status or "—").upper(),
                    (ch.new_status or "—").upper(),
                    percent(ch.old_utilization),
                    percent(ch.new_utilization),
                )
            )
        out.append(
            lay.table(
                ["Check", "Case", "Was", "Now", "Utilisation was", "now"],
                rows,
                [1.6, 1.4, 0.7, 0.7, 1, 1],
                fail_rows=fails,
            )
        )
        out.append(Spacer(1, 4))
    out.append(lay.rich("<b>Changed inputs</b>"))
    rows = [
        (
            ch.key or ch.section,
            ch.kind,
            ch.old if ch.old is not None else "—",
            ch.new if ch.new is not None else "—",
        )
        for ch in c.inputs
    ]
    out.append(
        lay.table(
            ["Input (key)", "Change", "Was", "Now"],
            rows or [("—", "", "", "")],
            [2.2, 0.8, 2, 2],
        )
    )
    if c.check_changes:
        out.append(Spacer(1, 4))
        out.append(lay.rich("<b>Checks with a changed value or utilisation</b>"))
        rows = [
            (
                check_id_label(ch.id),
                case_label(ch.case),
                eng(ch.old_value, ch.unit, lay.sig) if ch.old_value is not None else "—",
                eng(ch.new_value, ch.unit, lay.sig) if ch.new_value is not None else "—",
                percent(ch.old_utilization),
                percent(ch.new_utilization),
            )
            for ch in c.check_changes
        ]
        out.append(
            lay.table(
                ["Check", "Case", "Value was", "now", "Utilisation was", "now"],
                rows,
                [1.6, 1.4, 1, 1, 1, 1],
            )
        )
    if c.results:
        out.append(Spacer(1, 4))
        out.append(lay.rich("<b>Effect on the results</b>"))
        rows = []
        for rc in c.results[:400]:
            what = f"V({rc.subject})" if rc.kind == "node" else f"{rc.subject} {rc.quantity}"
            rel = f"{signed(rc.relative * 100, 3)} %" if rc.relative is not None else "—"
            rows.append(
                (
                    case_label(rc.case),
                    what,
                    eng(rc.old, rc.unit, lay.sig) if rc.old is not None else "—",
                    eng(rc.new, rc.unit, lay.sig) if rc.new is not None else "—",
                    rel,
                )
            )
        out.append(
            lay.table(["Case", "Result", "Was", "Now", "Change"], rows, [1.4, 1.8, 1.2, 1.2, 0.8])
        )
        if len(c.results) > 400:
            out.append(
                lay.paragraph(
                    f"… {len(c.results) - 400} more changed results (calcdoc diff lists them all).",
                    "small",
                )
            )
    return out
