"""Sections 1 and 2: purpose, scope, method and cautions; the design inputs."""

from __future__ import annotations

from reportlab.platypus import Flowable

from calcdoc import __version__
from calcdoc.format import eng, number, percent, value_text
from calcdoc.model.elements import RATING_KEYS
from calcdoc.model.expressions import Literal
from calcdoc.report import parts
from calcdoc.report.access import solver_limits
from calcdoc.report.cover import CAUTIONS
from calcdoc.report.layout import Layout
from calcdoc.report.words import case_label

METHOD = (
    "The circuit is solved by Modified Nodal Analysis (MNA). The unknowns are the voltage of every "
    "node measured from the reference node, and the current of every element whose own law does "
    "not give its current (voltage sources, VCVS, CCVS, ideal shorts) or whose current controls "
    "another element. One equation is written for each unknown: Kirchhoff's current law (KCL) at "
    "every node other than the reference (the currents leaving the node through its elements sum "
    "to zero) and the law of each element whose current is an unknown. The equations are "
    "collected as A·x = z and solved: up to {exact} unknowns in exact rational arithmetic, which "
    "leaves no residual and no rounding; up to {dense} by dense LU factorisation in double "
    "precision, and beyond that by sparse LU. The floating-point solves first scale the rows and "
    "columns of A by powers of two (equilibration) and then refine the solution iteratively with "
    "the residual computed in extended precision; the relative residual, the condition number "
    "and the estimated relative error are reported, and a solution whose estimated error exceeds "
    "10⁻⁹ is marked with a warning. Before solving, a circuit without a unique solution is refused "
    "with the nodes or elements at fault named. Each element's voltage, current and power then "
    "follow from the unknowns. The results are checked independently: KCL at every node from "
    "the element currents, Kirchhoff's voltage law (KVL) around every loop of a fundamental loop "
    "set using each element's own law, and the power balance (power delivered equals power "
    "absorbed). Closed-form expressions come from symbolic elimination (for small circuits); "
    "sensitivities from the exact derivative of the closed form where it exists, otherwise from "
    "the adjoint of the MNA system (per cent per per cent; for an output that is zero, the change "
    "of the output per 1 % change of each value). Temperature: power ratings are derated with "
    "the ambient temperature; a resistance temperature coefficient shifts a value linearly from "
    "the reference temperature at which it is stated (25 °C unless the project says otherwise) to "
    "the element temperature the project states; self-heating is not computed."
)

CONVENTIONS = (
    "Sign conventions: every element has terminals a and b (listed as a → b). Its voltage is "
    "V(a) − V(b); its current flows through it from a to b; its power v·i is positive when "
    "absorbed and negative when delivered. For a voltage source a is the + terminal; a current "
    "source drives its value from a to b."
)

TYPESETTING = (
    "Typesetting: a node voltage is written V with the node's name beside it (V(out) in text, "
    "V with an upright subscript in equations) and an element current I(R1); the quantity letters "
    "V and I are italic, every element and node name is upright and printed as written in the "
    "project file. In an equation an element's name stands for its value (R1 for its resistance, "
    "Vex for its voltage, Amp for its gain); a product is written with a centre dot."
)


def numbers_policy(lay: Layout) -> str:
    return (
        f"Numbers: every value is printed to {lay.sig} significant figures in engineering "
        "notation (SI prefixes, the exponent a multiple of three, never e-notation), with one "
        "minus sign (−); ratios and sensitivities to the same figures, shares and utilisations as "
        "per cent to 0.1 %. A value smaller than the resolution of its case (10⁻⁹ of the largest "
        "value of its kind, or the solver's rounding bound when larger) cannot be told from zero "
        "and is printed as 0; each table that could show one states the resolution."
    )


def method_section(lay: Layout) -> list[Flowable]:
    d = lay.results.project.document
    out: list[Flowable] = [lay.section("method")]
    sub = lay.subsections("method")
    out += [sub("Purpose"), lay.paragraph(d.purpose or "None stated.")]
    out += [sub("Scope"), lay.paragraph(d.scope or "None stated.")]
    out.append(sub("Assumptions"))
    out += lay.bullets(d.assumptions) if d.assumptions else [lay.paragraph("None stated.")]
    out.append(sub("References"))
    if d.references:
        out += [lay.rich(f"[{i}]&nbsp; " + lay.text(a)) for i, a in enumerate(d.references, 1)]
    else:
        out.append(lay.paragraph("None stated."))
    exact, dense = solver_limits(lay.results)
    out += [sub("Method"), lay.paragraph(METHOD.format(exact=exact, dense=dense))]
    out += [lay.paragraph(t) for t in parts.method_notes(lay.results)]
    out.append(
        lay.paragraph(
            f"Software: the calculation and this record were produced by calcdoc {__version__}; "
            f"{lay.ref('appendix_software') if lay.has('appendix_software') else 'the software record'} "
            "lists it with the versions of the libraries it used."
        )
    )
    out += [
        lay.paragraph(CONVENTIONS),
        lay.paragraph(TYPESETTING),
        lay.paragraph(numbers_policy(lay)),
    ]
    out += [sub("Cautions"), *lay.bullets(CAUTIONS, "caution")]
    return out


def tolerance_text(e) -> str:
    if not e.tolerance:
        return "none stated"
    t = e.tolerance
    if t.minus == t.plus:
        return f"±{number(float(t.plus) * 100)} %"
    return f"−{number(float(t.minus) * 100)} % / +{number(float(t.plus) * 100)} %"


def rating_text(e) -> str:
    """Every rating given; the unit names power, voltage and current, a word the others."""
    given = e.rating.given()
    if not given:
        return "none stated"
    return ", ".join(
        eng(float(v), RATING_KEYS[q].unit)
        + ("" if q in ("power", "voltage", "current") else " " + RATING_KEYS[q].words.split()[0])
        for q, v in given
    )


def source_text(e) -> str:
    parts = [x for x in (e.source, e.basis) if x]
    return "; ".join(parts) if parts else "not stated"


def parameter_text(lay: Layout, q) -> str:
    """A parameter value with an SI unit (``21.00 mΩ/m``); a dimensionless one as a share or number."""
    from calcdoc.model.quantities import METRE, NONE, SI_SYMBOL, dim_div, dim_mul

    value = float(q.value.magnitude)
    dim = q.value.dimension
    if dim == NONE:
        text = q.text.strip()
        if text.endswith("%"):
            return f"{number(value * 100, lay.sig)} %"
        if text.endswith("ppm"):
            return f"{number(value * 1e6, lay.sig)} ppm"
        return number(value, lay.sig)
    if dim in SI_SYMBOL:
        return eng(value, SI_SYMBOL[dim], lay.sig)
    for base, sym in SI_SYMBOL.items():
        if base == NONE:
            continue
        for other, osym in SI_SYMBOL.items():
            if other in (NONE, base):
                continue
            if dim_div(base, other) == dim:
                return eng(value, f"{sym}/{osym}", lay.sig)
            if dim_mul(base, other) == dim and other == METRE:
                return eng(value, f"{sym}·{osym}", lay.sig)
    return f"{number(value, lay.sig)} (SI base units)"


def inputs_section(lay: Layout) -> list[Flowable]:
    p = lay.results.project
    out: list[Flowable] = [lay.section("inputs")]
    sub = lay.subsections("inputs")
    out.append(sub("Elements"))
    out.append(
        lay.paragraph(
            "Each element with its value, tolerance and rating, and where the value and rating come "
            "from (the project file's source and basis entries).",
            "small",
        )
    )
    rows = []
    for e in p.elements:
        kind = e.kind.words
        if e.control_nodes:
            kind += f"; control V({e.control_nodes[0]}) − V({e.control_nodes[1]})"
        elif e.control_element:
            kind += f"; control I({e.control_element})"
        if e.description:
            kind += "\n" + e.description
        val = parts.value_text(e, lay.sig, value_text(e.kind.main.unit, float(e.value), lay.sig))
        if not isinstance(e.value_expr, Literal):
            val += f"\n= {e.value_text}"
        rows.append(
            (
                e.name,
                kind,
                f"{e.nodes[0]} → {e.nodes[1]}",
                val,
                tolerance_text(e),
                rating_text(e),
                source_text(e),
            )
        )
    out.append(
        lay.table(
            [
                "Element",
                "Type and description",
                "Nodes a → b",
                "Value",
                "Tolerance",
                "Rating",
                "Source of value and rating",
            ],
            rows,
            [0.75, 2.1, 1.0, 1.2, 0.95, 1.0, 1.9],
            marks=lay.marks([f"elements.{e.name}" for e in p.elements]),
        )
    )
    out.append(sub("Parameters"))
    if p.parameters:
        rows = [(q.name, q.text, parameter_text(lay, q), q.description or "") for q in p.parameters]
        out.append(
            lay.table(
                ["Parameter", "Given as", "Value", "Description"],
                rows,
                [1.2, 2, 1.3, 3],
                marks=lay.marks([f"parameters.{q.name}" for q in p.parameters]),
            )
        )
    else:
        out.append(lay.paragraph("None stated."))
    lim = p.limits
    out.append(sub("Limits and design policy"))
    rows = [
        ("Allowed share of rated power", percent(float(lim.power_fraction), 0)),
        ("Allowed share of rated voltage", percent(float(lim.voltage_fraction), 0)),
        ("Allowed share of rated current", percent(float(lim.current_fraction), 0)),
    ]
    if lim.ambient is not None:
        rows.append(("Ambient temperature for derating", f"{number(float(lim.ambient))} °C"))
    if lim.derating is not None:
        rows.append(
            (
                "Derating curve",
                f"full rating to {number(float(lim.derating.knee))} °C, "
                f"zero at {number(float(lim.derating.zero))} °C",
            )
        )
    rated = [e.name for e in p.elements if e.rating.given()]
    rows.append(("Element ratings", f"stated for {', '.join(rated)}" if rated else "none stated"))
    for w in lim.nodes:
        rng = " and ".join(
            x
            for x in (
                w.min is not None and f"≥ {eng(float(w.min), 'V', lay.sig)}",
                w.max is not None and f"≤ {eng(float(w.max), 'V', lay.sig)}",
            )
            if x
        )
        rows.append((f"Node {w.node} window", rng))
    if not lim.nodes:
        rows.append(("Node voltage windows", "none stated"))
    rows += parts.across_rows(lim, lay.sig)
    out.append(lay.table(["Limit", "Value"], rows, [2.5, 4]))
    out.append(sub("Operating cases"))
    if p.cases:
        rows = [("Nominal", f"values as in {lay.ref('inputs')}", "")]
        rows += [
            (
                case_label(c.name),
                ", ".join(f"{s.target} = {s.text}" for s in c.settings) or "none",
                c.description or "",
            )
            for c in p.cases
        ]
        out.append(lay.table(["Case", "Changes from nominal", "Description"], rows, [1.3, 3, 3]))
    else:
        out.append(lay.paragraph("None stated: only the nominal case is solved."))
    a = p.analysis
    out.append(sub("Analysis settings"))
    methods = {
        "none": "none asked for",
        "extreme": "extreme values (vertices of the tolerance box)",
        "montecarlo": "Monte Carlo (random value sets)",
        "rss": "root-sum-square",
    }
    rows = [("Tolerance analysis", methods.get(a.tolerance, a.tolerance))]
    if a.tolerance == "montecarlo":
        rows += [
            ("Samples", str(a.samples)),
            ("Seed", str(a.seed)),
            ("Distribution", a.distribution),
        ]
    if a.temperature is not None:
        rows.append(("Operating temperature (for tcr)", f"{number(float(a.temperature))} °C"))
    out.append(lay.table(["Setting", "Value"], rows, [2.5, 4]))
    return out
