"""Package sections for the analysis stages (cases envelope, tolerance, sensitivity, sweeps, preferred values).

Layout only: every number comes from the stage objects in ``Results.extra``.
"""

from __future__ import annotations

from reportlab.graphics.charts.lineplots import LinePlot
from reportlab.graphics.shapes import Drawing, Line, Rect, String
from reportlab.lib import colors
from reportlab.platypus import Flowable, KeepTogether, Spacer

from calcdoc.format import UNITS, eng, percent
from calcdoc.model.load import parse_output


def _unit(output: str) -> str:
    return "V" if parse_output(output)[1] == "node" else UNITS[parse_output(output)[1]]


def _label(output: str) -> str:
    subject, q = parse_output(output)
    return f"V({subject})" if q == "node" else f"{q} of {subject}"


def _target(value: float, unit: str, sig: int) -> str:
    """A swept value: with its unit, or as a percentage when dimensionless."""
    return eng(value, unit, sig) if unit else f"{value * 100:.{sig}g} %"


def _dev(d: float) -> str:
    return f"{d * 100:+.3g} %"


def section_tolerance(ctx, r) -> list[Flowable]:
    from calcdoc.report.package import _numbering, _p, _section, _t, _table

    env = r.extra.get("envelope")
    tol = r.extra.get("tolerance")
    if env is None and tol is None:
        return []
    out: list[Flowable] = [_section(ctx, "Tolerance and operating cases")]
    sub = _numbering(ctx)
    if env is not None:
        e = env.envelope
        out.append(sub("Envelope across operating cases"))
        out.append(_p(_t("For each node voltage and element power, the lowest and highest value over all cases "
                         "and the case that gives it; for each check, its highest utilisation."), ctx, "small"))  # fmt: skip
        rows = [
            (
                w.subject,
                f"{eng(w.min, 'V', ctx.sig)} ({w.min_case})",
                f"{eng(w.max, 'V', ctx.sig)} ({w.max_case})",
            )
            for w in e.nodes
        ]
        out.append(_table(ctx, ["Node", "Lowest (case)", "Highest (case)"], rows, [1.2, 2.5, 2.5]))
        out.append(Spacer(1, 4))
        rows = [
            (
                w.subject,
                f"{eng(w.min, 'W', ctx.sig)} ({w.min_case})",
                f"{eng(w.max, 'W', ctx.sig)} ({w.max_case})",
            )
            for w in e.powers
        ]
        out.append(
            _table(ctx, ["Element power", "Lowest (case)", "Highest (case)"], rows, [1.2, 2.5, 2.5])
        )
        out.append(Spacer(1, 4))
        fails = [i for i, c in enumerate(e.checks) if c[3] == "fail"]
        rows = [(cid, percent(u), case, st.upper()) for cid, u, case, st in e.checks]
        if rows:
            out.append(
                _table(
                    ctx,
                    ["Check", "Highest utilisation", "Case", "Status there"],
                    rows,
                    [2, 1.3, 2, 1],
                    fail_rows=fails,
                )
            )
    if tol is not None:
        for t in tol.per_case:
            if t is None:
                continue
            out.append(sub(f"Tolerance, case {t.case}: {t.method}"))
            out.append(_p(_t(f"Method: {t.note}."), ctx, "small"))
            rows = [
                (q.name, q.kind, f"−{q.minus * 100:g} % / +{q.plus * 100:g} %")
                for q in t.quantities
            ]
            out.append(_table(ctx, ["Toleranced quantity", "Kind", "Band"], rows, [2, 1.2, 2]))
            out.append(Spacer(1, 4))
            names = [q.name for q in t.quantities]

            def at(devs: tuple[float, ...], names=names) -> str:
                return (
                    ", ".join(f"{n} {_dev(d)}" for n, d in zip(names, devs, strict=True))
                    if len(names) <= 6
                    else "see results.json"
                )

            mc = t.method == "montecarlo"
            head = ["Node", "Nominal", "Min", "Max"] + (
                ["Mean", "Std. dev.", "1 % / 99 %"] if mc else ["Min at", "Max at"]
            )
            rows = []
            for n, x in t.nodes.items():
                row = [
                    n,
                    eng(x.nominal, "V", ctx.sig),
                    eng(x.min, "V", ctx.sig),
                    eng(x.max, "V", ctx.sig),
                ]
                row += ([eng(x.mean, "V", ctx.sig), eng(x.std, "V", 3), f"{eng(x.p01, 'V', ctx.sig)} / {eng(x.p99, 'V', ctx.sig)}"] if mc
                        else [at(x.min_at), at(x.max_at)])  # fmt: skip
                rows.append(row)
            out.append(
                _table(
                    ctx, head, rows, [1, 1, 1, 1, 1.6, 1.6] if not mc else [1, 1, 1, 1, 1, 1, 1.6]
                )
            )
            out.append(Spacer(1, 4))
            rows = [(e, eng(d["power"].nominal, "W", ctx.sig), eng(d["power"].min, "W", ctx.sig), eng(d["power"].max, "W", ctx.sig),
                     eng(d["current"].min, "A", ctx.sig), eng(d["current"].max, "A", ctx.sig)) for e, d in t.elements.items()]  # fmt: skip
            out.append(
                _table(
                    ctx,
                    [
                        "Element",
                        "Power nominal",
                        "Power min",
                        "Power max",
                        "Current min",
                        "Current max",
                    ],
                    rows,
                    [1, 1, 1, 1, 1, 1],
                )
            )
            if t.checks:
                out.append(Spacer(1, 4))
                out.append(_p("<b>Design checks at the worst case</b>", ctx, "small"))
                fails, rows = [], []
                for i, c in enumerate(t.checks):
                    unit = UNITS[c.quantity]
                    if not c.passed:
                        fails.append(i)
                    rows.append((c.id, eng(c.value, unit, ctx.sig), f"{'≤' if c.bound == 'max' else '≥'} {eng(c.limit, unit, ctx.sig)}",
                                 percent(c.utilization), eng(c.margin, unit, ctx.sig), "PASS" if c.passed else "FAIL"))  # fmt: skip
                out.append(
                    _table(
                        ctx,
                        ["Check", "Worst value", "Limit", "Utilisation", "Margin", "Status"],
                        rows,
                        [1.6, 1, 1.1, 1, 1, 0.7],
                        fail_rows=fails,
                    )
                )
            if t.histogram is not None:
                out.append(_Histogram(ctx, *t.histogram))
    return out


class _Histogram(Flowable):
    def __init__(self, ctx, label, edges, counts) -> None:
        super().__init__()
        self.ctx, self.label, self.edges, self.counts = ctx, label, edges, counts

    def wrap(self, aw, ah):
        self.width, self.height = min(aw, 360), 120
        return self.width, self.height

    def draw(self) -> None:
        c, f = self.canv, self.ctx.fonts
        x0, y0, w, h = 30, 22, self.width - 40, self.height - 40
        peak = max(self.counts) or 1
        bw = w / len(self.counts)
        c.setFillColor(colors.HexColor("#4b6b8f"))
        for k, n in enumerate(self.counts):
            c.rect(x0 + k * bw, y0, bw * 0.92, h * n / peak, stroke=0, fill=1)
        c.setFillColor(colors.black)
        c.setStrokeColor(colors.black)
        c.line(x0, y0, x0 + w, y0)
        c.setFont(f.regular, 6.5)
        c.drawString(x0, y0 - 9, eng(self.edges[0], "V", 4))
        c.drawRightString(x0 + w, y0 - 9, eng(self.edges[-1], "V", 4))
        c.drawCentredString(
            x0 + w / 2,
            y0 - 9,
            f"{self.label}: Monte Carlo distribution ({sum(self.counts)} samples)",
        )


class _Bars(Flowable):
    """Ranked horizontal bars of normalised sensitivities."""

    def __init__(self, ctx, ranked) -> None:
        super().__init__()
        self.ctx, self.ranked = ctx, ranked

    def wrap(self, aw, ah):
        self.width, self.height = min(aw, 400), 12 * len(self.ranked) + 14
        return self.width, self.height

    def draw(self) -> None:
        c, f = self.canv, self.ctx.fonts
        big = max((abs(v) for _, _, v in self.ranked), default=1.0) or 1.0
        mid, half = self.width / 2 + 20, self.width / 2 - 70
        y = self.height - 12
        c.setFont(f.regular, 7)
        for name, _, v in self.ranked:
            c.setFillColor(colors.black)
            c.drawRightString(mid - half - 6, y + 1.5, name[:16])
            c.setFillColor(colors.HexColor("#4b6b8f" if v >= 0 else "#8f6b4b"))
            wbar = half * abs(v) / big
            c.rect(mid if v >= 0 else mid - wbar, y, wbar, 8, stroke=0, fill=1)
            c.setFillColor(colors.black)
            c.drawString(mid + half + 6, y + 1.5, f"{v:+.4g}")
            y -= 12
        c.setStrokeColor(colors.black)
        c.line(mid, 2, mid, self.height - 2)


def section_sensitivity(ctx, r) -> list[Flowable]:
    from calcdoc.report.package import _numbering, _p, _section, _t, _table

    st = r.extra.get("sensitivity")
    if st is None:
        return []
    out: list[Flowable] = [_section(ctx, "Sensitivity")]
    sub = _numbering(ctx)
    out.append(_p(_t("Normalised sensitivity S = (∂y/∂p)·(p/y): the per-cent change of the output for a 1 % change of "
                     "each element value or parameter, in the nominal case; ranked by magnitude. Method per output: "
                     "exact derivative of the closed-form solution, or the adjoint of the MNA system."), ctx, "small"))  # fmt: skip
    for s in st.items:
        rows = [(n, k, f"{v:+.4g}") for n, k, v in s.ranked[:25]]
        block = [sub(f"{_label(s.output)} = {eng(s.value, _unit(s.output), ctx.sig)} ({s.method})")]
        block.append(
            _table(
                ctx, ["Quantity", "Kind", "S"], rows or [("—", "", "no dependence")], [2, 1.2, 1]
            )
        )
        if rows:
            block.append(_Bars(ctx, s.ranked[:15]))
        out.append(KeepTogether(block))
    return out


def _plot(ctx, sweep, output) -> Drawing:
    w, h = min(ctx.width, 420), 170
    d = Drawing(w, h)
    lp = LinePlot()
    lp.x, lp.y, lp.width, lp.height = 50, 30, w - 70, h - 50
    xs = sweep.points
    ys = sweep.series[output]
    lp.data = [list(zip(xs, ys, strict=True))]
    lims = sweep.limits.get(output, ())
    for _, lim in lims:
        lp.data.append([(xs[0], lim), (xs[-1], lim)])
    lp.lines[0].strokeColor = colors.HexColor("#1f3a5f")
    lp.lines[0].strokeWidth = 1.2
    for k in range(1, len(lp.data)):
        lp.lines[k].strokeColor = colors.HexColor(ctx.style.colours["fail"])
        lp.lines[k].strokeDashArray = [3, 2]
    allv = [v for series in lp.data for _, v in series]
    lo, hi = min(allv), max(allv)
    pad = (hi - lo) * 0.08 or abs(hi) * 0.1 or 1.0
    lp.yValueAxis.valueMin, lp.yValueAxis.valueMax = lo - pad, hi + pad
    lp.xValueAxis.valueMin, lp.xValueAxis.valueMax = xs[0], xs[-1]
    unit_x = sweep.unit
    unit_y = _unit(output)
    lp.xValueAxis.labelTextFormat = lambda v: _target(v, unit_x, 3)
    lp.yValueAxis.labelTextFormat = lambda v: eng(v, unit_y, 3)
    for ax in (lp.xValueAxis, lp.yValueAxis):
        ax.labels.fontName = ctx.fonts.regular
        ax.labels.fontSize = 6.5
    lp.xValueAxis.labels.angle = 0
    d.add(lp)
    d.add(
        String(
            50,
            h - 12,
            f"{_label(output)} against {sweep.target}",
            fontName=ctx.fonts.bold,
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
                strokeColor=colors.HexColor(ctx.style.colours["fail"]),
                strokeDashArray=[3, 2],
            )
        )
        d.add(String(w - 130, h - 12, "design limit", fontName=ctx.fonts.regular, fontSize=7))
    d.add(Rect(0, 0, 0.1, 0.1, strokeColor=None, fillColor=None))
    return d


def section_sweeps(ctx, r) -> list[Flowable]:
    from calcdoc.report.package import _numbering, _p, _section, _t, _table

    st = r.extra.get("sweeps")
    if st is None:
        return []
    out: list[Flowable] = [_section(ctx, "Parameter sweeps")]
    sub = _numbering(ctx)
    for s in st.sweeps:
        out.append(sub(s.name))
        unit = s.unit
        out.append(_p(_t(f"{s.target} from {_target(s.points[0], unit, ctx.sig)} to {_target(s.points[-1], unit, ctx.sig)} "
                         f"({len(s.points)} points, {s.scale} scale); every point is a full solution."), ctx, "small"))  # fmt: skip
        for output in s.series:
            out.append(_plot(ctx, s, output))
        if s.crossings:
            rows = [(c.output, c.check, eng(c.limit, _unit(c.output), ctx.sig), _target(c.at, unit, ctx.sig + 1),
                     c.direction) for c in s.crossings]  # fmt: skip
            out.append(
                _table(
                    ctx,
                    [
                        "Output",
                        "Limit crossed",
                        "Limit",
                        f"{s.target} at the crossing",
                        "Output there",
                    ],
                    rows,
                    [1.2, 1.6, 1, 1.6, 0.9],
                )
            )
        else:
            out.append(_p("No design limit is crossed within the range.", ctx, "small"))
    return out


def section_preferred(ctx, r) -> list[Flowable]:
    from calcdoc.report.package import _section, _table

    st = r.extra.get("preferred_values")
    if st is None:
        return []
    rows, fails = [], []
    for i, f in enumerate(st.findings):
        if not f.in_series:
            fails.append(i)
        rows.append((f.element, f.series, eng(f.value, "Ω", 4), "yes" if f.in_series else "NO",
                     "—" if f.in_series else f"{eng(f.below, 'Ω', 3)} / {eng(f.above, 'Ω', 3)}"))  # fmt: skip
    return [_section(ctx, "Preferred values (IEC 60063)"),
            _table(ctx, ["Element", "Series", "Value", "In series", "Nearest below / above"], rows, [1, 0.8, 1, 0.8, 2], fail_rows=fails)]  # fmt: skip


SECTIONS = (section_tolerance, section_sensitivity, section_sweeps, section_preferred)
