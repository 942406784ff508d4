"""Section 7: the design checks, the whole check set, case by case.

Each row is one check of :mod:`calcdoc.checkset`: its value as solved and,
where a tolerance analysis ran, at the case's tolerance worst case.  The
counts printed here are the counts on the cover and in the conclusion.
"""

from __future__ import annotations

from reportlab.platypus import Flowable, Paragraph

from calcdoc.checkset import TOLERANCE
from calcdoc.format import UNITS, counted, eng, percent
from calcdoc.report.layout import Layout
from calcdoc.report.words import case_label, check_label


def checks_section(lay: Layout) -> list[Flowable]:
    out: list[Flowable] = [lay.section("checks")]
    sub = lay.subsections("checks")
    s = lay.summary.checks
    tol = s.at_tolerance > 0
    out.append(
        lay.paragraph(
            "Each rating and limit against the result: utilisation = value / limit (for a lower limit, "
            "limit / value); margin = how far the value is inside the limit, negative when it fails."
            + (
                " Each check is taken as solved and again at the case's tolerance worst case (the most "
                "unfavourable value the tolerance analysis found); both must pass."
                if tol
                else ""
            ),
            "small",
        )
    )
    by_case: dict[str, dict[str, list]] = {}
    for row in s.rows:
        by_case.setdefault(row.case, {}).setdefault(row.check.id, []).append(row)
    for case, res in zip(lay.results.cases, lay.summary.resolutions, strict=True):
        out.append(sub(f"Case {case_label(case.name)}"))
        checks = by_case.get(case.name, {})
        if not checks:
            out.append(
                lay.paragraph(
                    "None stated: no ratings or limits are given, so there is "
                    "nothing to check in this case."
                )
            )
            continue
        rows, fails, n_fail, n_rows = [], [], 0, 0
        for pair in checks.values():
            solved = next(r for r in pair if r.scope != TOLERANCE)
            worst = next((r for r in pair if r.scope == TOLERANCE), None)
            ch = solved.check
            unit = UNITS[ch.quantity]
            rel = "≤" if ch.bound == "max" else "≥"
            label = Paragraph(
                f"{lay.text(check_label(ch))}<br/><font size='{lay.style.font_size * 0.75:.2f}' "
                f"color='#555555'>{lay.text(ch.basis)}</font>",
                lay.styles["cell"],
            )
            unit_res = unit if unit in ("A", "V", "W") else "V"

            def q(v: float, unit: str = unit, unit_res: str = unit_res, res=res) -> str:
                return eng(res.clip(v, unit_res), unit, lay.sig)

            row = [
                label,
                f"{rel} {eng(ch.limit, unit, lay.sig)}",
                f"{q(ch.value)} ({percent(ch.utilization)})",
                q(ch.margin),
            ]
            bad = [r for r in pair if not r.passed]
            n_fail += len(bad)
            n_rows += len(pair)
            if worst is not None:
                w = worst.check
                row += [
                    f"{eng(w.value, unit, lay.sig)} ({percent(w.utilization)})",
                    eng(w.margin, unit, lay.sig),
                ]
            if not bad:
                status = "<b>PASS</b>"
            else:
                status = lay.failing("FAIL" if not solved.passed else "FAIL at worst case")
                fails.append(len(rows))
            row.append(Paragraph(status, lay.styles["cell"]))
            rows.append(row)
        head = ["Check and limit basis", "Limit", "Value (utilisation)", "Margin"]
        widths = [2.3, 1.1, 1.6, 1.0]
        if tol:
            head += ["Worst-case value (utilisation)", "Worst-case margin"]
            widths += [1.6, 1.0]
        head.append("Status")
        widths.append(0.75)
        marks = lay.marks([f"results.{case.name}.checks.{cid}" for cid in checks])
        out.append(
            lay.table(
                head,
                rows,
                widths,
                fail_rows=fails,
                marks=marks,
                right=tuple(range(1, len(head) - 1)),
            )
        )
        msg = f"{counted(n_rows, 'check')} in this case" + (
            " (as solved and at the worst case)" if tol else ""
        )
        tail = lay.failing(f"{n_fail} fail") if n_fail else "all pass"
        out.append(lay.rich(lay.text(msg) + ": " + tail + ".", "small"))
    return out
