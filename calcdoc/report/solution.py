"""Sections 5 and 6: the solution of every case, and its verification (KCL,
KVL term by term, power ledger)."""

from __future__ import annotations

from reportlab.lib import colors
from reportlab.platypus import Flowable, Spacer

from calcdoc.format import counted, eng, number, value_text
from calcdoc.report import parts
from calcdoc.report.access import control_value
from calcdoc.report.layout import Layout
from calcdoc.report.resolution import Resolution
from calcdoc.report.words import case_label

ROW_LIMIT = 2000  # rows per table before a table is cut with a note
KVL_TERM_LIMIT = 300  # KVL terms set out one per row; beyond, loops by closing element


def _q(lay: Layout, res: Resolution, value: float, unit: str) -> str:
    """A result at the case's print resolution (smaller magnitudes print as 0)."""
    return eng(res.clip(float(value), unit), unit, lay.sig)


def resolution_note(lay: Layout, res: Resolution, units: str = "AVW") -> str:
    head = "Solved exactly: these sums are zero in exact arithmetic; " if res.exact else ""
    parts = ", ".join(eng(res.of(u), u, 1) for u in units)
    return head + f"values below the print resolution ({parts}) are shown as 0."


def solver_text(case) -> str:
    s = case.solution
    n = counted(len(s.unknowns), "unknown")
    if getattr(s, "exact", None) is not None:
        return (
            f"{n} solved exactly in rational arithmetic: the equations hold with no residual "
            "and no rounding; the values below are rounded only for print."
        )
    return (
        f"{n} solved by {s.method} in double precision, equilibrated and refined "
        f"({counted(s.refinement_steps, 'refinement step')}); relative residual "
        f"{number(s.residual, 2)}, condition number {number(s.condition, 3)} after "
        f"equilibration, estimated relative error {number(s.error_estimate, 2)}."
    )


def solution_section(lay: Layout) -> list[Flowable]:
    out: list[Flowable] = [lay.section("solution")]
    sub = lay.subsections("solution")
    kinds = {e.name: e for e in lay.results.project.elements}
    for c, res in zip(lay.results.cases, lay.summary.resolutions, strict=True):
        net, br = c.netlist, c.branches
        out.append(sub(f"Case {case_label(c.name)}"))
        out.append(lay.paragraph(solver_text(c), "small"))
        for w in c.solution.warnings:
            out.append(lay.rich(lay.failing("Warning: ") + lay.text(w), "small"))
        rows = [
            (n, _q(lay, res, v, "V"))
            for n, v in zip(net.nodes, br.node_voltage.tolist(), strict=True)
        ]
        if len(rows) > 16:
            out += lay.columns(["Node", "Voltage"], rows[:ROW_LIMIT], [1.0, 1.0], right=(1,))
        else:
            out.append(
                lay.table(
                    ["Node", "Voltage from the reference"],
                    rows,
                    [2, 2],
                    marks=lay.marks([f"results.{c.name}.nodes.{n}" for n in net.nodes]),
                )
            )
        out.append(Spacer(1, 4))
        rows = [
            (
                name,
                f"{net.nodes[int(net.a[j])]} → {net.nodes[int(net.b[j])]}",
                _q(lay, res, br.voltage[j], "V"),
                _q(lay, res, br.current[j], "A"),
                _q(lay, res, br.power[j], "W"),
                "absorbs"
                if res.clip(br.power[j], "W") > 0
                else ("delivers" if res.clip(br.power[j], "W") < 0 else "none"),
            )
            for j, name in enumerate(net.names)
        ]
        out.append(
            lay.table(
                ["Element", "a → b", "Voltage V(a) − V(b)", "Current a → b", "Power", "Power is"],
                rows[:ROW_LIMIT],
                [1, 1.4, 1.3, 1.3, 1.3, 0.8],
                right=(2, 3, 4),
                marks=lay.marks([f"results.{c.name}.elements.{n}" for n in net.names[:ROW_LIMIT]]),
            )
        )
        if len(rows) > ROW_LIMIT:
            out.append(
                lay.paragraph(
                    f"… {len(rows) - ROW_LIMIT} more rows in the embedded results.json.", "small"
                )
            )
        dep = [
            (j, e.name)
            for j, e in enumerate(lay.results.project.elements)
            if e.kind.control and e.kind.main.name == "gain"
        ]
        if dep:
            out.append(Spacer(1, 4))
            out.append(
                lay.rich(
                    "<b>Dependent sources</b>: each source's control quantity, its "
                    "value and the gain × control product (the source's voltage "
                    "for a VCVS or CCVS, its current for a VCCS or CCCS).",
                    "small",
                )
            )
            rows = []
            for j, name in dep:
                e = kinds[name]
                unit, ctl = control_value(c, name, e.control_nodes, e.control_element)
                what = (
                    f"V({e.control_nodes[0]}) − V({e.control_nodes[1]})"
                    if e.control_nodes
                    else f"I({e.control_element})"
                )
                fixes_v = br.law_fixes_voltage is None or bool(br.law_fixes_voltage[j])
                out_unit = "V" if fixes_v else "A"
                product = br.law_voltage[j] if out_unit == "V" else br.current[j]
                rows.append(
                    (
                        name,
                        what,
                        _q(lay, res, ctl, unit),
                        value_text(e.kind.main.unit, float(net.values[j]), lay.sig),
                        _q(lay, res, product, out_unit),
                    )
                )
            out.append(
                lay.table(
                    ["Source", "Control quantity", "Control value", "Gain", "Gain × control"],
                    rows,
                    [1, 1.8, 1.2, 1.2, 1.2],
                    right=(2, 4),
                )
            )
    return out


def _control_words(e) -> str:
    return (
        f"V({e.control_nodes[0]},{e.control_nodes[1]})"
        if e.control_nodes
        else f"I({e.control_element})"
    )


def _law(lay: Layout, case, res: Resolution, name: str, kinds) -> str:
    """In words, where an element's own-law voltage in a KVL loop comes from."""
    net, br = case.netlist, case.branches
    j = net.names.index(name)
    e = kinds[name]
    if br.law_fixes_voltage is not None and not br.law_fixes_voltage[j]:
        return "V(a) − V(b) from the node voltages (its law fixes a current, not a voltage)"
    law = e.kind.law(net.state(j))
    text = f"its law {law.text}"
    if e.control_nodes or e.control_element:
        unit, ctl = control_value(case, name, e.control_nodes, e.control_element)
        gain = value_text(e.kind.main.unit, float(net.values[j]), lay.sig)
        return f"{text}: gain × {_control_words(e)} = {gain} × {_q(lay, res, ctl, unit)}"
    if law.i is not None:
        return f"{text} = {value_text(e.kind.main.unit, float(net.values[j]), lay.sig)} × {_q(lay, res, br.current[j], 'A')}"
    return text


def verification_section(lay: Layout) -> list[Flowable]:
    out: list[Flowable] = [lay.section("verification")]
    sub = lay.subsections("verification")
    kinds = {e.name: e for e in lay.results.project.elements}
    for c, res in zip(lay.results.cases, lay.summary.resolutions, strict=True):
        net, br = c.netlist, c.branches
        out.append(sub(f"Case {case_label(c.name)}"))
        out.append(
            lay.rich(
                "<b>KCL at each node</b>: the currents leaving the node through each "
                "element (a current entering counts negative) sum to zero. "
                + lay.text(resolution_note(lay, res, "A")),
                "small",
            )
        )
        leaving: dict[int, list[str]] = {}
        for j, name in enumerate(net.names):
            i = res.clip(float(br.current[j]), "A")
            mag = eng(abs(i), "A", lay.sig)
            leaving.setdefault(int(net.a[j]), []).append(f"{name} {'+' if i >= 0 else '−'}{mag}")
            leaving.setdefault(int(net.b[j]), []).append(f"{name} {'−' if i > 0 else '+'}{mag}")
        rows = [
            (net.nodes[n], "; ".join(leaving.get(n, [])), _q(lay, res, c.kcl[n], "A"))
            for n in range(1, len(net.nodes))
        ]
        out.append(
            lay.table(["Node", "Currents leaving", "Sum"], rows[:ROW_LIMIT], [1, 5, 1], right=(2,))
        )
        out.append(Spacer(1, 4))
        out += _kvl(lay, c, res, kinds)
        out.append(Spacer(1, 4))
        led = c.ledger
        rows = [
            ("Absorbed (sum of positive powers)", _q(lay, res, led.absorbed, "W")),
            ("Delivered (sum of negative powers)", _q(lay, res, led.delivered, "W")),
            ("Imbalance (absorbed − delivered)", _q(lay, res, led.imbalance, "W")),
        ]
        block: list[Flowable] = [
            lay.rich(
                "<b>Power balance</b>: the power absorbed equals the power delivered.", "small"
            ),
            lay.table(["Quantity", "Value"], rows, [3, 2], right=(1,)),
        ]
        if "power_chart" in lay.style.sections and 0 < len(led.by_element) <= 40:
            block.append(LedgerChart(lay, res, list(led.by_element), led.absorbed, led.delivered))
        out.append(lay.keep_together(block))
        out += _part_blocks(lay, parts.case_blocks(c, lay.results.project, lay.sig))
    return out


def _part_blocks(lay: Layout, blocks) -> list[Flowable]:
    """The device-state, op-amp, contact and stored-energy blocks of a case."""
    out: list[Flowable] = []
    for b in blocks:
        if isinstance(b, parts.Grid):
            out.append(
                lay.table(
                    list(b.header),
                    [list(r) for r in b.rows],
                    list(b.widths),
                    fail_rows=list(b.failing),
                )
            )
        elif b.style == "lead":
            out += [Spacer(1, 4), lay.rich(f"<b>{lay.text(b.text)}</b>", "small")]
        else:
            out.append(lay.paragraph(b.text, b.style))
    return out


def _kvl(lay: Layout, c, res: Resolution, kinds) -> list[Flowable]:
    intro = (
        "<b>KVL around each loop</b>: each element's own-law voltage (its source value, gain × "
        "control, or R·i), signed + where the loop runs through it from a to b; the terms sum "
        "to zero. "
    )
    loops = c.kvl
    if not loops.count:
        return [lay.rich(intro + "The circuit has no loops (it is a tree).", "small")]
    terms = sum(len(lp.elements) for lp in loops.loops) if loops.listed else 0
    if loops.listed and terms <= KVL_TERM_LIMIT:
        rows, bold = [], []
        for m, lp in enumerate(loops.loops, 1):
            for k, (e, sg, t) in enumerate(zip(lp.elements, lp.signs, lp.terms, strict=True)):
                rows.append(
                    (
                        f"L{m}" if k == 0 else "",
                        e,
                        "+" if sg > 0 else "−",
                        _law(lay, c, res, e, kinds),
                        _q(lay, res, t, "V"),
                    )
                )
            rows.append(("", f"Sum around L{m}", "", "", _q(lay, res, lp.sum, "V")))
            bold.append(len(rows) - 1)
        return [
            lay.rich(intro + lay.text(resolution_note(lay, res, "V")), "small"),
            lay.table(
                ["Loop", "Element", "Direction", "Own-law voltage", "Term"],
                rows,
                [0.5, 1.1, 0.7, 3.6, 1],
                bold_rows=bold,
                right=(4,),
            ),
        ]
    if loops.listed:
        rows = [
            (f"L{m}", lp.chord, str(len(lp.elements)), _q(lay, res, lp.sum, "V"))
            for m, lp in enumerate(loops.loops, 1)
        ]
    else:
        rows = [
            (f"L{m}", ch, "", _q(lay, res, s, "V"))
            for m, (ch, s) in enumerate(zip(loops.chords, loops.sums, strict=True), 1)
        ]
    note = (
        f"The {loops.count} loops have more than {KVL_TERM_LIMIT} terms in all, so each loop is "
        "listed by the element that closes it, with its number of terms and its sum; every "
        "term is in the embedded results.json. "
    )
    return [
        lay.rich(intro + lay.text(note + resolution_note(lay, res, "V")), "small"),
        *lay.columns(
            ["Loop", "Closed by", "Terms", "Sum"],
            rows[:ROW_LIMIT],
            [0.5, 0.8, 0.5, 0.7],
            group=150,
            right=(2, 3),
        ),
    ]


class LedgerChart(Flowable):
    """Horizontal bars: power absorbed and delivered, per element and in total."""

    def __init__(
        self, lay: Layout, res: Resolution, items, absorbed: float, delivered: float
    ) -> None:
        super().__init__()
        self.lay, self.res, self.items = lay, res, items
        self.absorbed, self.delivered = absorbed, delivered

    def wrap(self, aw: float, ah: float):
        self.width = min(aw, 360)
        self.height = 14 * (len(self.items) + 2) + 16
        return self.width, self.height

    def draw(self) -> None:
        c, f = self.canv, self.lay.fonts
        scale = max(self.absorbed, self.delivered, 1e-300)
        x0, bar_w = 80, self.width - 150
        absorbed, delivered = "#4b6b8f", "#8f6b4b"
        rows = [
            ("Total absorbed", self.absorbed, absorbed),
            ("Total delivered", self.delivered, delivered),
        ]
        rows += [(n, abs(v), absorbed if v > 0 else delivered) for n, v in self.items]
        y = self.height - 14
        c.setFont(f.regular, 7)
        for name, v, col in rows:
            c.setFillColor(colors.black)
            c.drawRightString(x0 - 4, y + 2, name[:18])
            c.setFillColor(colors.HexColor(col))
            c.rect(x0, y, bar_w * v / scale, 9, stroke=0, fill=1)
            c.setFillColor(colors.black)
            c.drawString(
                x0 + bar_w * v / scale + 3, y + 2, eng(self.res.clip(v, "W"), "W", self.lay.sig)
            )
            y -= 14
        c.setFont(f.italic, 7)
        c.drawString(x0, 2, "blue: absorbed   brown: delivered")
