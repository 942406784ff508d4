"""Parameter sweeps: outputs over a range of one value, and where a limit is crossed.

Each point is a full solution (batched).  Where an output's design limit
(its rating check or node window in the nominal case) is crossed between
two points, the crossing is located by Brent's method on the solved
circuit (scipy.optimize.brentq), giving the design margin in component
terms: "R4 may rise to 372.1 Ω before V(out) exceeds 4.5 V".

Every point is solved in its own device states
(:class:`~calcdoc.mna.stated.StateSolver`); the result lists, per point,
the pivots the state search took and the devices in another state than
in the nominal case.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from calcdoc.mna.batch import patterns
from calcdoc.mna.stated import StateSolver
from calcdoc.model.quantities import Quantity
from calcdoc.model.read_sections import parse_output
from calcdoc.model.values import element_values


@dataclass(frozen=True)
class Crossing:
    output: str
    check: str
    limit: float
    at: float  # target value at the crossing (SI)
    direction: str  # "rising" | "falling" (of the output through the limit)


@dataclass(frozen=True)
class SweepResult:
    name: str
    target: str
    target_kind: str  # element type, or "parameter"
    points: tuple[float, ...]
    scale: str
    series: dict[str, tuple[float, ...]]
    limits: dict[
        str, tuple[tuple[str, float], ...]
    ]  # output -> (check id, limit) drawn on the plot
    crossings: tuple[Crossing, ...]
    unit: str = ""  # the target's unit symbol ("" when dimensionless)
    iterations: tuple[int, ...] = ()  # state-search pivots per point (empty: no diodes)
    states: tuple[tuple[tuple[str, str], ...], ...] = ()  # per point: devices in another state

    def target_text(self, value: float) -> str:
        """A value of the swept quantity for people: with its unit, or in per cent."""
        from calcdoc.format import eng

        return eng(value, self.unit, 5) if self.unit else f"{value * 100:.5g} %"

    def to_json(self) -> dict:
        return {
            "name": self.name,
            "target": self.target,
            "points": list(self.points),
            "scale": self.scale,
            "outputs": {k: list(v) for k, v in self.series.items()},
            "crossings": [
                {
                    "output": c.output,
                    "check": c.check,
                    "limit": c.limit,
                    "at": c.at,
                    "direction": c.direction,
                }
                for c in self.crossings
            ],
            **(
                {
                    "iterations": list(self.iterations),
                    "state_changes": [dict(x) for x in self.states],
                }
                if self.iterations
                else {}
            ),
        }


def _value_rows(project, sweep, pts: np.ndarray) -> np.ndarray:
    names = [e.name for e in project.elements]
    if sweep.target in names:
        base = element_values(project)
        rows = np.tile(np.array([float(base[n]) for n in names]), (len(pts), 1))
        rows[:, names.index(sweep.target)] = pts
        return rows
    dim = next(p.value.dimension for p in project.parameters if p.name == sweep.target)
    rows = []
    for t in pts:
        v = element_values(project, parameter_overrides={sweep.target: Quantity(float(t), dim)})
        rows.append([float(v[n]) for n in names])
    return np.array(rows)


def _series(batch, net, output: str) -> np.ndarray:
    subject, q = parse_output(output)
    if q == "node":
        return batch.node_voltage[:, net.nodes.index(subject)]
    return getattr(batch, q)[:, net.names.index(subject)]


def sweep_result(project, nominal, sweep) -> SweepResult:
    """Solve the sweep of one ``[[sweeps]]`` entry around the nominal case."""
    from scipy.optimize import brentq

    net = nominal.netlist
    pat = patterns(net)
    solver = StateSolver(net)
    a, b = float(sweep.start.magnitude), float(sweep.stop.magnitude)
    pts = (
        np.geomspace(a, b, sweep.points)
        if sweep.scale == "log"
        else np.linspace(a, b, sweep.points)
    )
    stated = solver.solve(pat.main_to_p(_value_rows(project, sweep, pts)))
    batch = stated.batch
    series, limits, crossings = {}, {}, []
    for output in sweep.outputs:
        y = _series(batch, net, output)
        series[output] = tuple(y.tolist())
        subject, q = parse_output(output)
        rel = [
            c
            for c in nominal.checks
            if c.subject == subject
            and (c.quantity == q or (q == "node" and c.id.startswith("nodes.")))
        ]
        limits[output] = tuple((c.id, c.limit) for c in rel)
        for c in rel:
            mag = q != "node"

            def g(t: float, c=c, mag=mag, output=output) -> float:
                rows = pat.main_to_p(_value_rows(project, sweep, np.array([t])))
                yy = _series(solver.solve(rows).batch, net, output)[0]
                return (abs(yy) if mag else yy) - c.limit

            vals = (np.abs(y) if mag else y) - c.limit
            for k in np.flatnonzero(np.sign(vals[:-1]) * np.sign(vals[1:]) < 0):
                t = brentq(g, pts[k], pts[k + 1], xtol=1e-12 * max(abs(pts[k]), 1e-30), rtol=1e-12)
                crossings.append(
                    Crossing(
                        output,
                        c.id,
                        c.limit,
                        float(t),
                        "rising" if vals[k + 1] > vals[k] else "falling",
                    )
                )
    from calcdoc.model.elements import KINDS
    from calcdoc.model.quantities import SI_SYMBOL

    if sweep.target in net.names:
        kind = net.types[net.names.index(sweep.target)]
        unit = KINDS[kind].main.unit if KINDS[kind].main.unit not in ("V/V", "A/A") else ""
    else:
        kind, unit = "parameter", SI_SYMBOL.get(sweep.start.dimension, "")
    name = sweep.name or f"{sweep.target} sweep"
    points = tuple(pts.tolist())
    iterations = states = ()
    if len(solver.pcs):
        iterations = tuple(int(k) for k in stated.iterations)
        states = tuple(tuple(stated.changes(k, net.names).items()) for k in range(len(pts)))
    return SweepResult(
        name,
        sweep.target,
        kind,
        points,
        sweep.scale,
        series,
        limits,
        tuple(crossings),
        unit,
        iterations,
        states,
    )
