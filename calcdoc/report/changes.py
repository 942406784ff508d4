"""The "Changes from revision X" section and the revision marks (layout of a Comparison)."""

from __future__ import annotations

from reportlab.lib import colors
from reportlab.platypus import Flowable, Spacer, Table

from calcdoc.format import eng, percent


class MarkedTable(Table):
    """A table that draws a revision mark in the margin beside changed rows."""

    def __init__(
        self, *args, marks=(), mark_text: str = "", mark_colour: str = "#c62828", **kw
    ) -> None:
        super().__init__(*args, **kw)
        self._marks = tuple(marks)
        self._mark_text = mark_text
        self._mark_colour = mark_colour

    def draw(self) -> None:
        super().draw()
        if not any(self._marks):
            return
        c = self.canv
        c.saveState()
        c.setFillColor(colors.HexColor(self._mark_colour))
        pos = self._rowpositions  # y of each row boundary, top first
        for r, marked in enumerate(self._marks, start=1):  # row 0 is the header
            if marked and r < len(pos):
                top, bottom = pos[r], pos[r + 1] if r + 1 < len(pos) else 0
                c.rect(-9, bottom + 1, 2.2, top - bottom - 2, stroke=0, fill=1)
                c.setFont("CalcdocSans-Bold", 5.5)
                c.drawRightString(-11, (top + bottom) / 2 - 2, self._mark_text)
        c.restoreState()

    def split(self, availWidth, availHeight):  # noqa: N803 - reportlab API
        parts = super().split(availWidth, availHeight)
        if (
            len(parts) == 2
        ):  # keep the marks with their rows (the header repeats on the second part)
            first_rows = len(parts[0]._cellvalues) - 1
            for part, marks in (
                (parts[0], self._marks[:first_rows]),
                (parts[1], self._marks[first_rows:]),
            ):
                part.__class__ = MarkedTable
                part._marks, part._mark_text, part._mark_colour = (
                    marks,
                    self._mark_text,
                    self._mark_colour,
                )
        return parts


def section_changes(ctx, comparison) -> list[Flowable]:
    """Every changed input and its effect, status changes first."""
    from calcdoc.report.package import _p, _section, _t, _table

    c = comparison
    out: list[Flowable] = [
        _section(ctx, f"Changes from revision {c.old_revision or '(unnumbered)'}")
    ]
    out.append(_p(_t(f"Compared with {c.old_path} (SHA-256 {c.old_sha256[:16]}…). Rows changed since that "
                     f"revision carry a mark in the margin throughout this record."), ctx, "small"))  # fmt: skip
    if not c.changed:
        out.append(_p("Nothing changed: the inputs and every result are the same.", ctx))
        return out
    fail = ctx.style.colours["fail"]
    if c.status_changes:
        out.append(_p("<b>Checks whose status changed</b>", ctx))
        rows, fails = [], []
        for i, ch in enumerate(c.status_changes):
            if ch.new_status == "fail":
                fails.append(i)
            rows.append((ch.id, ch.case, (ch.old_status or "—").upper(), (ch.new_status or "—").upper(),
                         percent(ch.old_utilization), percent(ch.new_utilization)))  # fmt: skip
        out.append(
            _table(
                ctx,
                ["Check", "Case", "Was", "Now", "Utilisation was", "now"],
                rows,
                [1.6, 1.4, 0.7, 0.7, 1, 1],
                fail_rows=fails,
            )
        )
        out.append(Spacer(1, 4))
    out.append(_p("<b>Changed inputs</b>", ctx))
    rows = [(ch.key or ch.section, ch.kind, ch.old if ch.old is not None else "—", ch.new if ch.new is not None else "—")
            for ch in c.inputs]  # fmt: skip
    out.append(
        _table(
            ctx,
            ["Input (key)", "Change", "Was", "Now"],
            rows or [("—", "", "", "")],
            [2.2, 0.8, 2, 2],
        )
    )
    if c.check_changes:
        out.append(Spacer(1, 4))
        out.append(_p("<b>Checks with a changed value or utilisation</b>", ctx))
        rows = [(ch.id, ch.case, eng(ch.old_value, ch.unit, ctx.sig) if ch.old_value is not None else "—",
                 eng(ch.new_value, ch.unit, ctx.sig) if ch.new_value is not None else "—",
                 percent(ch.old_utilization), percent(ch.new_utilization)) for ch in c.check_changes]  # fmt: skip
        out.append(
            _table(
                ctx,
                ["Check", "Case", "Value was", "now", "Utilisation was", "now"],
                rows,
                [1.6, 1.4, 1, 1, 1, 1],
            )
        )
    if c.results:
        out.append(Spacer(1, 4))
        out.append(_p("<b>Effect on the results</b>", ctx))
        rows = []
        for rc in c.results[:400]:
            what = f"V({rc.subject})" if rc.kind == "node" else f"{rc.quantity} of {rc.subject}"
            rel = f"{rc.relative * 100:+.3g} %" if rc.relative is not None else "—"
            rows.append((rc.case, what, eng(rc.old, rc.unit, ctx.sig) if rc.old is not None else "—",
                         eng(rc.new, rc.unit, ctx.sig) if rc.new is not None else "—", rel))  # fmt: skip
        out.append(
            _table(ctx, ["Case", "Result", "Was", "Now", "Change"], rows, [1.4, 1.8, 1.2, 1.2, 0.8])
        )
        if len(c.results) > 400:
            out.append(
                _p(
                    _t(
                        f"… {len(c.results) - 400} more changed results (calcdoc diff lists them all)."
                    ),
                    ctx,
                    "small",
                )
            )
    del fail
    return out
