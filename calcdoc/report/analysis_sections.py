"""Sections for the analysis stages: envelope and tolerance, sensitivity,
sweeps, preferred values.  Layout only: every number comes from the stage
results (through :mod:`calcdoc.report.access`) or the check set."""

from __future__ import annotations

from reportlab.graphics.charts.lineplots import LinePlot
from reportlab.graphics.shapes import Drawing, Line, Rect, String
from reportlab.lib import colors
from reportlab.platypus import Flowable, Spacer

from calcdoc.format import UNITS, eng, number, percent, signed
from calcdoc.model.read_sections import parse_output
from calcdoc.report.access import stage
from calcdoc.report.layout import Layout
from calcdoc.report.words import case_label, check_id_label, check_label, place


def output_unit(output: str) -> str:
    q = parse_output(output)[1]
    return "V" if q == "node" else UNITS[q]


def output_label(output: str) -> str:
    """``out`` → ``V(out)``; ``RL.power`` → ``RL power``."""
    subject, q = parse_output(output)
    return f"V({subject})" if q == "node" else f"{subject} {q}"


def swept(value: float, unit: str, sig: int) -> str:
    """A swept value: with its unit, or in per cent when dimensionless."""
    return eng(value, unit, sig) if unit else f"{number(value * 100, sig)} %"


def _dev(d: float) -> str:
    return f"{signed(d * 100, 3)} %"


def found(x) -> str:
    """How an output's extremes were found: proved at vertices, or where the search ended."""
    if x.how == "vertices, proved":
        return "vertices (proved)"
    if x.min_where == x.max_where:
        return "both " + ("inside" if x.min_where == "inside" else "at vertices")
    return f"low {x.min_where}, high {x.max_where}".replace("vertex", "at a vertex")


def tolerance_method(t) -> str:
    if t.method == "extreme":
        hows = {x.how for x in t.nodes.values()} | {
            x.how for d in t.elements.values() for x in d.values()
        }
        where = (
            f"all {t.solved} vertices of the tolerance box are solved (every toleranced "
            "quantity at either end of its band)"
            if t.solved == 2 ** len(t.quantities)
            else f"{t.solved} vertices are solved, picked for each output by the signs of its "
            "gradient (too many toleranced quantities to solve every vertex) and improved one "
            "quantity at a time"
        )
        text = f"Extreme values: {where}."
        if "vertices, proved" in hows:
            text += (
                " An output marked 'vertices (proved)' (a node voltage, an element voltage or "
                "current, with every toleranced quantity an element's own value) is a ratio of "
                "functions affine in each value, hence monotonic in each value across its band, "
                "so its extremes lie at vertices: the values shown are the exact extremes."
            )
        if "vertices and local search" in hows:
            text += (
                " Every other output (element powers, which can peak inside the box when a load "
                "matches its source, and outputs of parameters shared by several elements) is "
                "searched further: where its gradient at the best vertex points into the box, a "
                "bounded quasi-Newton search continues from there, and the table says whether "
                "the extreme lies at a vertex or inside. The search is local: an interior "
                "extreme not reached by ascent from the best vertex could be missed."
            )
        return text
    if t.method == "montecarlo":
        return (
            f"Monte Carlo: {t.note}. The lowest and highest values are those of the samples, not "
            "bounds: a sample extreme, not a worst case."
        )
    return (
        "Root-sum-square: first-order deviations (direct differentiation of the solution) "
        "combined as the square root of their sum of squares; a statistical estimate, not a bound."
    )


def tolerance_section(lay: Layout) -> list[Flowable]:
    r = lay.results
    env = stage(r, "envelope")
    tol = stage(r, "tolerance")
    out: list[Flowable] = [lay.section("tolerance")]
    sub = lay.subsections("tolerance")
    if env is not None:
        e = env.envelope
        out.append(sub("Envelope across operating cases"))
        out.append(
            lay.paragraph(
                "For each node voltage and element power, the lowest and highest "
                "value over all cases and the case that gives it.",
                "small",
            )
        )
        rows = [
            (
                w.subject,
                f"{lay.num(w.min, 'V')} ({case_label(w.min_case)})",
                f"{lay.num(w.max, 'V')} ({case_label(w.max_case)})",
            )
            for w in e.nodes
        ]
        out.append(lay.table(["Node", "Lowest (case)", "Highest (case)"], rows, [1.2, 2.5, 2.5]))
        out.append(Spacer(1, 4))
        rows = [
            (
                w.subject,
                f"{lay.num(w.min, 'W')} ({case_label(w.min_case)})",
                f"{lay.num(w.max, 'W')} ({case_label(w.max_case)})",
            )
            for w in e.powers
        ]
        out.append(
            lay.table(["Element power", "Lowest (case)", "Highest (case)"], rows, [1.2, 2.5, 2.5])
        )
    s = lay.summary.checks
    if s.count and (env is not None or tol is not None):
        out.append(sub("Highest utilisation of each check"))
        out.append(
            lay.paragraph(
                "Over the whole check set: every case, as solved and at its tolerance worst case.",
                "small",
            )
        )
        best: dict[str, object] = {}
        for row in s.rows:
            u = row.utilization
            cur = best.get(row.check.id)
            if cur is None or (u is not None and (cur.utilization is None or u > cur.utilization)):  # type: ignore[attr-defined]
                best[row.check.id] = row
        rows, fails = [], []
        for row in best.values():
            bad = [x for x in s.failed if x.check.id == row.check.id]  # type: ignore[attr-defined]
            if bad:
                fails.append(len(rows))
            rows.append(
                (
                    check_label(row.check),
                    percent(row.utilization),
                    place(row),  # type: ignore[attr-defined]
                    "FAIL in " + ", ".join(dict.fromkeys(case_label(x.case) for x in bad))
                    if bad
                    else "PASS",
                )
            )
        out.append(
            lay.table(
                ["Check", "Highest utilisation", "Where", "Status"],
                rows,
                [2, 1.1, 3, 1],
                fail_rows=fails,
                right=(1,),
            )
        )
    if tol is not None:
        for i, (t, _case) in enumerate(zip(tol.per_case, r.cases, strict=True)):
            if t is None:
                continue
            res = lay.summary.resolutions[i]
            out.append(sub(f"Tolerance, case {case_label(t.case)}"))
            out.append(lay.paragraph(tolerance_method(t), "small"))
            rows = [
                (q.name, q.kind, f"−{number(q.minus * 100)} % / +{number(q.plus * 100)} %")
                for q in t.quantities
            ]
            out.append(lay.table(["Toleranced quantity", "Kind", "Band"], rows, [2, 1.2, 2]))
            out.append(Spacer(1, 4))
            names = [q.name for q in t.quantities]
            mc = t.method == "montecarlo"
            show_at = not mc and len(names) <= 4
            extreme = t.method == "extreme"
            head = ["Node", "Nominal", "Lowest", "Highest"]
            if extreme:
                head += ["Found"]
            if mc:
                head += ["Mean", "Std. dev.", "1 % / 99 %"]
            elif show_at:
                head += ["Lowest at", "Highest at"]
            rows = []
            for n, x in t.nodes.items():
                row = [n, *(lay.num(res.clip(v, "V"), "V") for v in (x.nominal, x.min, x.max))]
                if extreme:
                    row.append(found(x))
                if mc:
                    row += [
                        lay.num(res.clip(x.mean, "V"), "V"),
                        lay.num(res.clip(x.std, "V"), "V", 3),
                        f"{lay.num(res.clip(x.p01, 'V'), 'V')} / {lay.num(res.clip(x.p99, 'V'), 'V')}",
                    ]
                elif show_at:
                    row += [
                        ", ".join(f"{k} {_dev(d)}" for k, d in zip(names, devs, strict=True))
                        for devs in (x.min_at, x.max_at)
                    ]
                rows.append(row)
            widths = (
                [1, 1, 1, 1]
                + ([1.1] if extreme else [])
                + ([1, 1, 1.6] if mc else ([1.8, 1.8] if show_at else []))
            )
            out.append(lay.table(head, rows, widths, right=(1, 2, 3)))
            out.append(Spacer(1, 4))
            rows = [
                (
                    el,
                    *(
                        lay.num(res.clip(v, u), u)
                        for v, u in (
                            (d["power"].nominal, "W"),
                            (d["power"].min, "W"),
                            (d["power"].max, "W"),
                        )
                    ),
                    *((found(d["power"]),) if extreme else ()),
                    *(lay.num(res.clip(v, "A"), "A") for v in (d["current"].min, d["current"].max)),
                )
                for el, d in t.elements.items()
            ]
            out.append(
                lay.table(
                    [
                        "Element",
                        "Power nominal",
                        "Power lowest",
                        "Power highest",
                        *(["Power found"] if extreme else []),
                        "Current lowest",
                        "Current highest",
                    ],
                    rows,
                    [1, 1, 1, 1, *([1.1] if extreme else []), 1, 1],
                    right=(1, 2, 3, 5, 6) if extreme else (1, 2, 3, 4, 5),
                )
            )
            if t.checks and lay.has("checks"):
                number_ = f"{lay.plan['checks'].number}.{i + 1}"
                out.append(
                    lay.paragraph(
                        f"The design checks at this case's worst case are set "
                        f"out beside the checks as solved in {number_}.",
                        "small",
                    )
                )
            if t.histogram is not None:
                label, edges, counts = t.histogram
                if sum(n > 0 for n in counts) > 1:
                    out.append(lay.keep_together([Histogram(lay, label, edges, counts)]))
                else:
                    out.append(
                        lay.paragraph(
                            f"{label} does not vary across the samples (every "
                            "sample falls in one bin), so no distribution is "
                            "drawn.",
                            "small",
                        )
                    )
    return out


class Histogram(Flowable):
    def __init__(self, lay: Layout, label, edges, counts) -> None:
        super().__init__()
        self.lay, self.label, self.edges, self.counts = lay, label, edges, counts

    def wrap(self, aw, ah):
        self.width, self.height = min(aw, 360), 124
        return self.width, self.height

    def draw(self) -> None:
        c, f = self.canv, self.lay.fonts
        x0, y0, w, h = 30, 26, self.width - 40, self.height - 40
        peak = max(self.counts) or 1
        bw = w / len(self.counts)
        c.setFillColor(colors.HexColor("#4b6b8f"))
        for k, n in enumerate(self.counts):
            c.rect(x0 + k * bw, y0, bw * 0.92, h * n / peak, stroke=0, fill=1)
        c.setFillColor(colors.black)
        c.setStrokeColor(colors.black)
        c.line(x0, y0, x0 + w, y0)
        c.setFont(f.regular, 7)
        c.drawString(x0, y0 - 10, eng(self.edges[0], "V", self.lay.sig))
        c.drawRightString(x0 + w, y0 - 10, eng(self.edges[-1], "V", self.lay.sig))
        c.drawCentredString(
            x0 + w / 2,
            y0 - 20,
            f"{self.label}: distribution over {sum(self.counts)} Monte Carlo samples",
        )


def sensitivity_section(lay: Layout) -> list[Flowable]:
    st = stage(lay.results, "sensitivity")
    out: list[Flowable] = [lay.section("sensitivity")]
    items = list(st.items)
    by_method: dict[str, list[str]] = {}
    for s in items:
        by_method.setdefault(s.method, []).append(output_label(s.output))
    how = {
        "closed form": "the exact derivative of the closed-form solution",
        "adjoint": "the adjoint of the MNA system (one transposed solve per output)",
    }
    methods = "; ".join(
        f"for {', '.join(outs)} from {how.get(m, m)}" for m, outs in by_method.items()
    )
    out.append(
        lay.paragraph(
            "Normalised sensitivity S = (∂y/∂p)·(p/y): the per-cent change of each output for a 1 % "
            "change of an element value or parameter, nominal case. Rows are ranked by the largest "
            f"magnitude over the outputs; 0 means no dependence. Computed {methods}.",
            "small",
        )
    )
    table: dict[tuple[str, str], dict[str, float]] = {}
    for s in items:
        for n, k, v in s.ranked:
            table.setdefault((n, k), {})[s.output] = v
    order = sorted(table, key=lambda key: -max(abs(v) for v in table[key].values()))
    per = -(-len(items) // -(-len(items) // 5))  # at most 5 outputs a table, evenly shared
    for start in range(0, len(items), per):
        chunk = items[start : start + per]
        head = [
            "Quantity",
            "Kind",
            *(
                f"{output_label(s.output)} = {lay.num(s.value, output_unit(s.output))}"
                for s in chunk
            ),
        ]
        rows = [
            (n, k, *(signed(table[(n, k)].get(s.output, 0.0), lay.sig) for s in chunk))
            for n, k in order
        ]
        out.append(
            lay.table(
                head, rows, [1.2, 0.9, *([1.2] * len(chunk))], right=tuple(range(2, 2 + len(chunk)))
            )
        )
        out.append(Spacer(1, 4))
    return out[:-1]


def _plot(lay: Layout, sweep, output) -> Drawing:
    w, h = min(lay.width, 420), 170
    d = Drawing(w, h)
    lp = LinePlot()
    lp.x, lp.y, lp.width, lp.height = 56, 30, w - 76, h - 50
    xs = sweep.points
    lp.data = [list(zip(xs, sweep.series[output], strict=True))]
    lims = sweep.limits.get(output, ())
    for _, lim in lims:
        lp.data.append([(xs[0], lim), (xs[-1], lim)])
    lp.lines[0].strokeColor = colors.HexColor("#1f3a5f")
    lp.lines[0].strokeWidth = 1.2
    for k in range(1, len(lp.data)):
        lp.lines[k].strokeColor = colors.HexColor(lay.colour("fail"))
        lp.lines[k].strokeDashArray = [3, 2]
    allv = [v for series in lp.data for _, v in series]
    lo, hi = min(allv), max(allv)
    pad = (hi - lo) * 0.08 or abs(hi) * 0.1 or 1.0
    lp.yValueAxis.valueMin, lp.yValueAxis.valueMax = lo - pad, hi + pad
    lp.xValueAxis.valueMin, lp.xValueAxis.valueMax = xs[0], xs[-1]
    unit_y = output_unit(output)
    lp.xValueAxis.labelTextFormat = lambda v: swept(v, sweep.unit, 3)
    lp.yValueAxis.labelTextFormat = lambda v: eng(v, unit_y, 3)
    for ax in (lp.xValueAxis, lp.yValueAxis):
        ax.labels.fontName = lay.fonts.regular
        ax.labels.fontSize = 7
    d.add(lp)
    d.add(
        String(
            56,
            h - 12,
            f"{output_label(output)} against {sweep.target}",
            fontName=lay.fonts.bold,
            fontSize=8,
        )
    )
    if lims:
        d.add(
            Line(
                w - 150,
                h - 9,
                w - 135,
                h - 9,
                strokeColor=colors.HexColor(lay.colour("fail")),
                strokeDashArray=[3, 2],
            )
        )
        d.add(String(w - 130, h - 12, "design limit", fontName=lay.fonts.regular, fontSize=7))
    d.add(Rect(0, 0, 0.1, 0.1, strokeColor=None, fillColor=None))
    return d


def sweeps_section(lay: Layout) -> list[Flowable]:
    st = stage(lay.results, "sweeps")
    out: list[Flowable] = [lay.section("sweeps")]
    sub = lay.subsections("sweeps")
    for s in st.sweeps:
        out.append(sub(s.name or f"Sweep of {s.target}"))
        unit = s.unit
        out.append(
            lay.paragraph(
                f"{s.target} from {swept(s.points[0], unit, lay.sig)} to "
                f"{swept(s.points[-1], unit, lay.sig)} ({len(s.points)} points, "
                f"{s.scale} scale); every point is a full solution.",
                "small",
            )
        )
        plots = [_plot(lay, s, output) for output in s.series]
        if s.crossings:
            rows = [
                (
                    output_label(c.output),
                    check_id_label(c.check),
                    eng(c.limit, output_unit(c.output), lay.sig),
                    swept(c.at, unit, lay.sig + 1),
                    c.direction,
                )
                for c in s.crossings
            ]
            table = lay.table(
                ["Output", "Limit crossed", "Limit", f"{s.target} at the crossing", "Output is"],
                rows,
                [1.2, 1.8, 1, 1.6, 0.8],
            )
        else:
            table = lay.paragraph("No design limit is crossed within the range.", "small")
        for p in plots[:-1]:
            out.append(lay.keep_together([p]))
        out.append(lay.keep_together([*plots[-1:], table]))
    return out


def preferred_section(lay: Layout) -> list[Flowable]:
    st = stage(lay.results, "preferred_values")
    rows, fails = [], []
    for i, f in enumerate(st.findings):
        if not f.in_series:
            fails.append(i)
        rows.append(
            (
                f.element,
                f.series,
                lay.num(f.value, "Ω"),
                "yes" if f.in_series else "NO",
                "—" if f.in_series else f"{lay.num(f.below, 'Ω')} / {lay.num(f.above, 'Ω')}",
            )
        )
    return [
        lay.section("preferred"),
        lay.paragraph(
            "Each element given a preferred-value series, checked against the "
            "series of IEC 60063; a value outside it is an open finding.",
            "small",
        ),
        lay.table(
            ["Element", "Series", "Value", "In the series", "Nearest below / above"],
            rows,
            [1, 0.8, 1, 0.8, 2],
            fail_rows=fails,
        ),
    ]
