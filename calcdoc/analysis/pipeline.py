"""The full pipeline used by every command: cases, then the requested analyses.

:func:`analyse` solves the nominal case and each operating case
(:func:`calcdoc.results.solve_project`), then runs the analyses the
project asks for and attaches their results to ``Results.extra``:
``tolerance`` (per case), ``envelope`` (when there are operating cases),
``sensitivity``, ``sweeps``, ``preferred_values`` and, on request,
``closed_form`` (the nominal case's symbolic solution, for the package).
"""

from __future__ import annotations

from dataclasses import replace

from calcdoc.analysis.envelope import envelope
from calcdoc.analysis.preferred import preferred_findings
from calcdoc.analysis.sensitivity import default_outputs, sensitivities
from calcdoc.analysis.stages import (
    EnvelopeStage,
    HistoryStage,
    PreferredStage,
    SensitivityStage,
    SweepStage,
    ToleranceStage,
)
from calcdoc.analysis.sweeps import sweep_result
from calcdoc.analysis.tolerance import tolerance_result
from calcdoc.model.project import Project
from calcdoc.results import Results, solve_project


def analyse(project: Project, *, closed_form: bool = False) -> Results:
    """Solve every case and run the requested analyses.

    Parameters
    ----------
    project : Project
    closed_form : bool
        Also derive the nominal case's closed-form solution (sympy; small
        circuits only). The package asks for it; ``solve`` and ``check`` do not.

    Returns
    -------
    Results
    """
    results = solve_project(project)
    extra: dict = {}
    nominal = results.cases[0]
    closed = None
    a = project.analysis
    wants_sensitivity = bool(a.sensitivity) or a.tolerance != "none"
    # the closed form is derived whenever sensitivities are, so that every command
    # (and a later re-solve by `calcdoc verify`) gets the same results
    if closed_form or wants_sensitivity:
        from calcdoc.mna.symbolic import closed_form as derive_closed

        closed = derive_closed(nominal.solution.formulation, nominal.values)
        if closed is not None and closed_form:
            extra["closed_form"] = closed
    if a.tolerance != "none":
        per_case = tuple(tolerance_result(project, c) for c in results.cases)
        if any(per_case):
            extra["tolerance"] = ToleranceStage(per_case)
    if len(results.cases) > 1:
        extra["envelope"] = EnvelopeStage(envelope(results.cases))
    if wants_sensitivity:
        outs = a.sensitivity or default_outputs(project, nominal)
        extra["sensitivity"] = SensitivityStage(
            "nominal", sensitivities(project, nominal, outs, closed)
        )
    if project.sweeps:
        extra["sweeps"] = SweepStage(
            tuple(sweep_result(project, nominal, s) for s in project.sweeps)
        )
    if any(e.series for e in project.elements):
        extra["preferred_values"] = PreferredStage(preferred_findings(project, nominal.values))
    from calcdoc.record.history import history_findings

    findings = history_findings(project)
    if findings:
        extra["history"] = HistoryStage(findings)
    return replace(results, extra=extra)
