"""Sections 3 and 4: the circuit diagram, and the formulation (unknowns,
equations in symbols and with values, the matrix A·x = z, the closed form)."""

from __future__ import annotations

from reportlab.graphics.shapes import Drawing, Group
from reportlab.platypus import Flowable, KeepTogether

from calcdoc.format import eng, number, value_text
from calcdoc.report import parts
from calcdoc.report.access import stage
from calcdoc.report.diagram import DiagramPart, circuit_drawing, connection_rows
from calcdoc.report.diagram import legend as diagram_legend
from calcdoc.report.equations import closed_form_tex, equation_pieces, tex_quantity, tex_unknown
from calcdoc.report.layout import Layout
from calcdoc.report.mathtext import MathLines
from calcdoc.report.symbols import part_label

SUBSTITUTE_LIMIT = 150  # equations shown with values substituted (beyond: symbols only)
MATRIX_INLINE_LIMIT = 8  # unknowns for the matrix set out in full on the page
MATRIX_LISTING_LIMIT = 60  # unknowns for the listing of non-zero entries in an appendix


def diagram_parts(p, net=None) -> list[DiagramPart]:
    """The parts to draw, each contact in its state in ``net`` (the case drawn)."""
    out = []
    for j, e in enumerate(p.elements):
        state = net.state(j) if net is not None else ""
        label = part_label(e, state, value_text(e.kind.main.unit, float(e.value), 3))
        out.append(
            DiagramPart(
                e.name, e.type, e.nodes, label, e.control_nodes, e.control_element, e.drawing, state
            )
        )
    return out


def quarter_turn(d: Drawing) -> Drawing:
    """The drawing turned a quarter turn clockwise: its node lines run down the sheet (names
    at the top, the reference at the left) and its element labels read across."""
    g = Group(*d.contents)
    g.transform = (0, -1, 1, 0, 0, d.width)
    return Drawing(d.height, d.width, g)


def diagram_section(lay: Layout) -> list[Flowable]:
    r = lay.results
    p = r.project
    nominal = r.cases[0]
    levels = dict(zip(nominal.netlist.nodes, nominal.branches.node_voltage.tolist(), strict=True))
    parts = diagram_parts(p, nominal.netlist)
    out: list[Flowable] = [lay.section("diagram")]
    sub = lay.subsections("diagram")
    drawing = circuit_drawing(
        parts,
        p.reference,
        width=lay.width,
        max_height=lay.height - 200,
        font_name=lay.fonts.regular,
        levels=levels,
    )
    turned = False
    if drawing is None:  # too wide for the sheet: drawn along the sheet's length, turned
        wide = circuit_drawing(
            parts,
            p.reference,
            width=lay.height - 60,
            max_height=lay.width - 10,
            font_name=lay.fonts.regular,
            levels=levels,
        )
        if wide is not None:
            drawing, turned = quarter_turn(wide), True
    if drawing is not None:
        out.append(
            lay.paragraph(
                f"Drawn from the project file: each node is a horizontal line (the reference "
                f"{p.reference} at the bottom, higher nominal potentials above), each element a vertical "
                "branch between its two nodes."
                + (
                    " Turned a quarter turn to fit the sheet: the node lines run down the sheet, named "
                    "at the top, the reference at the left, higher potentials to the right."
                    if turned
                    else ""
                ),
                "small",
            )
        )
        legend = lay.bullets(diagram_legend(parts, turned), "small")
        # a turned drawing fills a sheet of its own; its legend follows it
        out += [drawing, *legend] if turned else [lay.keep_together([drawing, *legend])]
    else:
        out.append(
            lay.paragraph(
                f"The circuit has {len(parts)} elements, too many for a readable drawing on one sheet; "
                "its connections are listed instead.",
                "small",
            )
        )
    out.append(sub("Connections"))
    rows = connection_rows(parts)
    out.append(
        lay.paragraph(
            "Terminal marks: + and − of a voltage-defined source; a and b of "
            "every other element (current flows a → b).",
            "small",
        )
    )
    out += (
        lay.columns(["Node", "Elements joined (terminal)"], rows, [0.9, 3.2], group=230)
        if len(rows) > 40
        else [lay.table(["Node", "Elements joined (terminal)"], rows, [1, 6])]
    )
    return out


def _entry_unit(row_kind: str, unknown: str) -> str:
    """SI unit of a matrix entry: KCL rows are in A, branch rows in V."""
    voltage = unknown.startswith("V(")
    if row_kind == "kcl":
        return "S" if voltage else ""
    return "" if voltage else "Ω"


def _entry(value: float, unit: str, sig: int) -> str:
    if value == 0:
        return "0"
    return eng(value, unit, sig) if unit else number(value, sig)


def _plain(lay: Layout, units):
    """Plain-text number format for the searchable layer under an equation."""

    def fmt(name: str, v) -> str:
        unit = units[name]
        return number(float(v), lay.sig) + (" " + unit if unit not in ("V/V", "A/A") else "")

    return fmt


def formulation_section(lay: Layout) -> tuple[list[Flowable], list[Flowable]]:
    """The formulation section, and the matrix appendix when there is one."""
    r = lay.results
    case = r.cases[0]
    sol = case.solution
    out: list[Flowable] = [lay.section("formulation")]
    sub = lay.subsections("formulation")
    appendix: list[Flowable] = []
    h = sub("Unknowns")
    unknowns_number = h.number
    out.append(h)
    rows = []
    for i, u in enumerate(sol.unknowns, 1):
        inner = u[2:-1]
        meaning = (
            f"voltage of node {inner} from {case.netlist.reference}"
            if u.startswith("V(")
            else f"current through {inner}, a → b"
        )
        rows.append((f"x{i}", u, meaning, "V" if u.startswith("V(") else "A"))
    if len(rows) > 40:
        out += lay.columns(
            ["", "Unknown", "Unit"], [(a, b, d) for a, b, _, d in rows], [0.5, 1.4, 0.5]
        )
    else:
        out.append(lay.table(["", "Unknown", "Meaning", "Unit"], rows, [0.4, 1.4, 4, 0.5]))
    form = sol.formulation
    if form is None:
        out.append(
            lay.paragraph(
                f"The system has {len(sol.unknowns)} unknowns; it was assembled directly in sparse form "
                "and is not printed equation by equation. KCL is written at every node and each "
                f"voltage-defined element's law as described in {lay.ref('method')}."
            )
        )
        return out, appendix
    out.append(sub("Equations"))
    substitute = len(form.equations) <= SUBSTITUTE_LIMIT
    out.append(
        lay.paragraph(
            "Each equation in symbols (an element's name stands for its value), "
            + (
                "then with the values substituted. "
                if substitute
                else f"without values: beyond {SUBSTITUTE_LIMIT} equations values are not substituted. "
            )
            + "KCL: the currents leaving a node through its elements sum to zero.",
            "small",
        )
    )
    out += [lay.paragraph(t, "small") for t in parts.formulation_notes(case)]
    units = form.units()
    fmt = _plain(lay, units)
    for k, eq in enumerate(form.equations, 1):
        title = f"KCL at node {eq.subject}" if eq.kind == "kcl" else f"Law of element {eq.subject}"
        block: list[Flowable] = [
            lay.rich(f"<b>({k})</b> {lay.text(title)}", "h3"),
            MathLines(equation_pieces(eq), eq.text(), font=lay.fonts.regular),
        ]
        if substitute:
            block.append(
                MathLines(
                    equation_pieces(eq, case.symbol_values, units, lay.sig),
                    eq.text(case.symbol_values, fmt),
                    font=lay.fonts.regular,
                )
            )
        out.append(KeepTogether(block))
    n = len(sol.unknowns)
    if sol.matrix is not None and "matrix" in lay.style.sections:
        A, z = sol.matrix
        out.append(sub("Matrix form A·x = z"))
        units = (
            f"Rows are the equations above in order, columns the unknowns x1 … x{n} of "
            f"{unknowns_number}. KCL rows are in amperes (entries in S against a voltage, "
            "plain numbers against a current); element-law rows in volts (plain numbers "
            "against a voltage, Ω against a current)."
        )
        out.append(lay.paragraph(units, "small"))
        row_kinds = [eq.kind for eq in form.equations]
        if n <= MATRIX_INLINE_LIMIT:
            head = ["Row", *sol.unknowns, "z"]
            rows = [
                [
                    str(i + 1),
                    *(
                        _entry(float(A[i][j]), _entry_unit(row_kinds[i], u), lay.sig)
                        for j, u in enumerate(sol.unknowns)
                    ),
                    _entry(float(z[i]), "A" if row_kinds[i] == "kcl" else "V", lay.sig),
                ]
                for i in range(n)
            ]
            out.append(lay.table(head, rows, [0.5, *([1.0] * n), 1.0]))
        elif n <= MATRIX_LISTING_LIMIT:
            out.append(
                lay.paragraph(
                    f"A has {n} rows; its non-zero entries are listed in "
                    f"{lay.ref('appendix_matrix')}."
                )
            )
            rows = [
                (
                    str(i + 1),
                    sol.unknowns[j],
                    _entry(float(A[i][j]), _entry_unit(row_kinds[i], sol.unknowns[j]), lay.sig),
                )
                for i in range(n)
                for j in range(n)
                if A[i][j] != 0
            ]
            rows += [
                (
                    str(i + 1),
                    "z",
                    _entry(float(z[i]), "A" if row_kinds[i] == "kcl" else "V", lay.sig),
                )
                for i in range(n)
                if z[i] != 0
            ]
            appendix += [
                lay.section("appendix_matrix"),
                lay.paragraph(
                    f"The non-zero entries of A and z for the nominal case, row by "
                    f"row (listed up to {MATRIX_LISTING_LIMIT} unknowns).",
                    "small",
                ),
                *lay.columns(["Row", "Column", "Entry"], rows, [0.5, 1.3, 1.1], group=150),
            ]
        else:
            out.append(
                lay.paragraph(
                    f"A has {n} rows and is not printed: beyond {MATRIX_LISTING_LIMIT} unknowns a listing "
                    "of its entries is too long to check by hand. Each of its rows is one of the "
                    "equations above."
                )
            )
    cf = stage(r, "closed_form")
    if cf is not None and "closed_form" in lay.style.sections:
        out.append(sub("Closed-form solution"))
        out.append(
            lay.paragraph(
                "Each unknown as an expression in the element values, for "
                "checking by hand; then its value.",
                "small",
            )
        )
        for u, expr, val in zip(cf.unknowns, cf.expressions, cf.values, strict=True):
            unit = "V" if u.startswith("V(") else "A"
            pieces = [
                tex_unknown(u) + " = " + closed_form_tex(expr),
                "= " + tex_quantity(val, unit, lay.sig),
            ]
            out.append(
                MathLines(pieces, f"{u} = {eng(val, unit, lay.sig)}", font=lay.fonts.regular)
            )
    return out, appendix
