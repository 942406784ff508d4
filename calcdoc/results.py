"""The pipeline from a validated project to verified results, and the JSON form.

:func:`solve_project` runs assemble → solve → derive → verify for the
nominal case and every ``[[cases]]`` entry; :func:`results_document` turns
the results into the design.md section 6 object (plain floats, SI units).
Both are pure.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from calcdoc import __version__
from calcdoc.analysis.derating import tcr_value
from calcdoc.errors import SingularCircuitError
from calcdoc.mna.branches import Branches, branches
from calcdoc.mna.netlist import Netlist, netlist
from calcdoc.mna.solve import Solution, solve
from calcdoc.model.project import Case, Project
from calcdoc.model.quantities import Number
from calcdoc.model.values import element_values
from calcdoc.verify.balance import Ledger, LoopCheck, kcl_residuals, kvl_loops, power_ledger
from calcdoc.verify.checks import Check, design_checks


@dataclass(frozen=True)
class CaseResult:
    """Everything computed for one operating case."""

    name: str
    case: Case | None
    values: Mapping[str, Number]
    netlist: Netlist
    solution: Solution
    branches: Branches
    kcl: np.ndarray
    kvl: LoopCheck
    ledger: Ledger
    checks: tuple[Check, ...]

    @property
    def failed(self) -> tuple[Check, ...]:
        return tuple(c for c in self.checks if not c.passed)


@dataclass(frozen=True)
class Results:
    """Results of every case of a project.

    ``extra`` holds the results of further analysis stages (tolerance,
    sensitivity, sweeps), keyed by stage name.
    """

    project: Project
    cases: tuple[CaseResult, ...]
    extra: Mapping[str, Any] = field(default_factory=dict)

    @property
    def checks(self) -> tuple[Check, ...]:
        return tuple(c for r in self.cases for c in r.checks)

    @property
    def failed(self) -> tuple[tuple[str, Check], ...]:
        """Failing checks as (case name, check), analysis stages included.

        An analysis stage in ``extra`` may add its own failures (e.g. a
        check failing at a tolerance extreme) through a ``failed_checks()``
        method returning the same pairs.
        """
        out = [(r.name, c) for r in self.cases for c in r.failed]
        for data in self.extra.values():
            more = getattr(data, "failed_checks", None)
            if more is not None:
                out.extend(more())
        return tuple(out)

    @property
    def notes(self) -> tuple[str, ...]:
        """One-line summaries from analysis stages, for the terminal."""
        out: list[str] = []
        for data in self.extra.values():
            more = getattr(data, "notes", None)
            if more is not None:
                out.extend(more())
        return tuple(out)

    @property
    def worst(self) -> tuple[str, Check] | None:
        """The check with the highest utilisation, with its case name."""
        best = None
        for r in self.cases:
            for c in r.checks:
                if c.utilization is not None and (
                    best is None or c.utilization > best[1].utilization
                ):
                    best = (r.name, c)
        return best


def operating_values(
    project: Project, case: Case | None = None, **overrides: Any
) -> dict[str, Number]:
    """Element values for a case, with the resistance temperature coefficient applied."""
    values = element_values(project, case, **overrides)
    temp = project.analysis.temperature
    if temp is not None:
        ref = project.analysis.reference_temperature
        for e in project.elements:
            if e.tcr is not None:
                values[e.name] = tcr_value(values[e.name], e.tcr, temp, ref)
    return values


def solve_case(
    project: Project, case: Case | None = None, values: Mapping[str, Number] | None = None
) -> CaseResult:
    """Solve and verify one case.

    Raises
    ------
    SingularCircuitError
        With ``case`` set to the case name.
    """
    name = case.name if case else "nominal"
    vals = dict(values) if values is not None else operating_values(project, case)
    net = netlist(project, vals)
    try:
        sol = solve(net)
    except SingularCircuitError as exc:
        exc.case = name  # type: ignore[attr-defined]
        raise
    br = branches(net, sol)
    return CaseResult(
        name, case, vals, net, sol, br, kcl_residuals(net, br), kvl_loops(net, br),
        power_ledger(net, br), design_checks(project, net, br),
    )  # fmt: skip


def solve_project(project: Project) -> Results:
    """Solve the nominal case and every operating case.

    Parameters
    ----------
    project : Project

    Returns
    -------
    Results

    >>> from calcdoc.model.load import parse_project
    >>> p = parse_project('''
    ... [elements.V1]
    ... type = "voltage_source"
    ... nodes = ["in", "gnd"]
    ... value = "10 V"
    ... [elements.R1]
    ... type = "resistor"
    ... nodes = ["in", "out"]
    ... value = "1 kohm"
    ... [elements.R2]
    ... type = "resistor"
    ... nodes = ["out", "gnd"]
    ... value = "1 kohm"
    ... ''')
    >>> r = solve_project(p)
    >>> float(r.cases[0].branches.node_voltage[2])
    5.0
    """
    cases = [solve_case(project, None)]
    cases += [solve_case(project, c) for c in project.cases]
    return Results(project, tuple(cases))


def _f(x: Any) -> float | None:
    if x is None:
        return None
    v = float(x)
    return v if np.isfinite(v) else None


def case_document(r: CaseResult) -> dict[str, Any]:
    """The JSON object of one case (design.md section 6)."""
    net, br = r.netlist, r.branches
    nodes = dict(zip(net.nodes, br.node_voltage.tolist(), strict=True))
    elements = {
        name: {"voltage": v, "current": i, "power": p}
        for name, v, i, p in zip(
            net.names, br.voltage.tolist(), br.current.tolist(), br.power.tolist(), strict=True
        )
    }
    kcl = dict(zip(net.nodes[1:], r.kcl[1:].tolist(), strict=True))
    if r.kvl.listed:
        kvl = [{"loop": list(lp.elements), "sum": lp.sum} for lp in r.kvl.loops]
    else:
        kvl = [{"chord": c, "sum": v} for c, v in zip(r.kvl.chords, r.kvl.sums, strict=True)]
    return {
        "name": r.name,
        "nodes": nodes,
        "elements": elements,
        "power": {
            "absorbed": r.ledger.absorbed,
            "delivered": r.ledger.delivered,
            "imbalance": r.ledger.imbalance,
        },
        "kcl": kcl,
        "kvl": kvl,
        "checks": [
            {
                "id": c.id,
                "subject": c.subject,
                "quantity": c.quantity,
                "value": c.value,
                "limit": c.limit,
                "utilization": _f(c.utilization),
                "margin": c.margin,
                "bound": c.bound,
                "status": c.status,
            }
            for c in r.checks
        ],
        "solver": {
            "method": r.solution.method,
            "unknowns": len(r.solution.unknowns),
            "residual": r.solution.residual,
            "condition": _f(r.solution.condition),
            "kcl_max": float(np.max(np.abs(r.kcl))) if len(r.kcl) else 0.0,
            "kvl_max": r.kvl.max_abs_sum,
            "warnings": list(r.solution.warnings),
        },
    }


def results_document(results: Results) -> dict[str, Any]:
    """The whole ``calcdoc solve --json`` object."""
    p = results.project
    cases = [case_document(r) for r in results.cases]
    for stage, data in results.extra.items():
        per_case = getattr(data, "per_case_json", None)
        if per_case is not None:
            for doc, extra in zip(cases, per_case(), strict=True):
                if extra is not None:
                    doc[stage] = extra
    out: dict[str, Any] = {
        "tool": {"name": "calcdoc", "version": __version__},
        "input": {"path": p.path, "sha256": p.sha256},
        "cases": cases,
    }
    for stage, data in results.extra.items():
        whole = getattr(data, "project_json", None)
        if whole is not None:
            out[stage] = whole()
    return out
