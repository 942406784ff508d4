"""The one pipeline: load → netlist → solve → derive → verify → analyse → results.

Every command and the Python API go through :func:`analyse` (or
:func:`run` from a file).  Each stage is a pure function of what the stage
before it returned; nothing here reads or writes files except :func:`run`,
which loads the project.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import replace
from pathlib import Path
from typing import Any

from calcdoc.errors import SingularCircuitError
from calcdoc.mna.netlist import netlist
from calcdoc.mna.proof import solve_in_states
from calcdoc.mna.stamps import structure
from calcdoc.model.derating import tcr_value
from calcdoc.model.history import history_findings
from calcdoc.model.project import Case, Project
from calcdoc.model.quantities import Number
from calcdoc.model.values import element_values
from calcdoc.results import CaseResult, Results
from calcdoc.verify.balance import kcl_residuals, kvl_loops, power_ledger
from calcdoc.verify.checks import design_checks


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
    """Solve, derive and verify one case.

    Raises
    ------
    SingularCircuitError
        With ``case`` set to the case name.
    """
    name = case.name if case else "nominal"
    vals = dict(values) if values is not None else operating_values(project, case)
    states = {s.target: s.text for s in case.settings if s.state} if case else None
    net = netlist(project, vals, states)
    try:
        net, sol, br, proof = solve_in_states(net)
    except SingularCircuitError as exc:
        exc.case = name  # type: ignore[attr-defined]
        raise
    st = structure(net)
    # the symbols' values, for the printed equations and the closed form (kept when they are)
    keep = sol.formulation is not None
    symbols = dict(zip((s.name for s in st.symbols), st.p, strict=True)) if keep else {}
    return CaseResult(
        name,
        case,
        vals,
        net,
        sol,
        br,
        kcl_residuals(net, br),
        kvl_loops(net, br),
        power_ledger(net, br),
        design_checks(project, net, br),
        symbols,
        proof,
    )


def solve_cases(project: Project) -> tuple[CaseResult, ...]:
    """The nominal case, then every ``[[cases]]`` entry."""
    return (solve_case(project, None), *(solve_case(project, c) for c in project.cases))


def analyse(project: Project, *, closed_form: bool = False) -> Results:
    """Solve every case and run the analyses the project asks for.

    Parameters
    ----------
    project : Project
    closed_form : bool
        Also keep the nominal case's closed-form solution (sympy; small
        circuits only) for the package.  It is derived whenever
        sensitivities are, so that every command gets the same results.

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
    >>> float(analyse(p).cases[0].branches.node_voltage[2])
    5.0
    """
    cases = solve_cases(project)
    extra: dict = {}
    nominal = cases[0]
    a = project.analysis
    wants_sensitivity = bool(a.sensitivity) or a.tolerance != "none"
    # each analysis module is imported only when the project asks for it
    closed = None
    if closed_form or wants_sensitivity:
        from calcdoc.mna.symbolic import closed_form as derive_closed

        closed = derive_closed(nominal.solution.formulation, nominal.symbol_values)
        if closed is not None and closed_form:
            extra["closed_form"] = closed
    if a.tolerance != "none":
        from calcdoc.analysis.stages import ToleranceStage
        from calcdoc.analysis.tolerance import tolerance_result

        per_case = tuple(tolerance_result(project, c) for c in cases)
        if any(per_case):
            extra["tolerance"] = ToleranceStage(per_case)
    if len(cases) > 1:
        from calcdoc.analysis.envelope import envelope
        from calcdoc.analysis.stages import EnvelopeStage

        extra["envelope"] = EnvelopeStage(envelope(cases))
    if wants_sensitivity:
        from calcdoc.analysis.sensitivity import default_outputs, sensitivities
        from calcdoc.analysis.stages import SensitivityStage

        outs = a.sensitivity or default_outputs(project, nominal)
        extra["sensitivity"] = SensitivityStage(
            "nominal", sensitivities(project, nominal, outs, closed)
        )
    if project.sweeps:
        from calcdoc.analysis.stages import SweepStage
        from calcdoc.analysis.sweeps import sweep_result

        extra["sweeps"] = SweepStage(
            tuple(sweep_result(project, nominal, s) for s in project.sweeps)
        )
    if any(e.series for e in project.elements):
        from calcdoc.analysis.preferred import preferred_findings
        from calcdoc.analysis.stages import PreferredStage

        # a preferred value is judged on the value as stated, not shifted by temperature
        extra["preferred_values"] = PreferredStage(
            preferred_findings(project, element_values(project))
        )
    findings = history_findings(project)
    if findings:
        from calcdoc.analysis.stages import HistoryStage

        extra["history"] = HistoryStage(findings)
    return replace(Results(project, cases), extra=extra)


def run(path: str | Path, *, closed_form: bool = False) -> Results:
    """Load a project file and analyse it."""
    from calcdoc.model.load import read_project

    return analyse(read_project(path), closed_form=closed_form)
