"""What the cover, the footer and the conclusion all say, gathered once.

The check set's counts (:mod:`calcdoc.checkset`), the open findings, the
record's status and each case's print resolution: the cover and the
conclusion read the same object, so they cannot disagree.
"""

from __future__ import annotations

from dataclasses import dataclass

from calcdoc.checkset import CheckSummary, check_summary
from calcdoc.format import eng
from calcdoc.report.access import stage
from calcdoc.report.resolution import Resolution, case_resolution
from calcdoc.report.words import Status, case_label, record_status


@dataclass(frozen=True)
class RecordSummary:
    checks: CheckSummary
    findings: tuple[str, ...]  # open items other than failing checks
    status: Status
    resolutions: tuple[Resolution, ...]  # per case, in case order
    open_roles: tuple[str, ...]


def open_findings(results) -> tuple[str, ...]:
    """Findings a checker must clear besides failing checks, in words."""
    out = []
    pref = stage(results, "preferred_values")
    if pref is not None:
        for f in pref.findings:
            if not f.in_series:
                out.append(
                    f"{f.element}: {eng(f.value, 'Ω')} is not an {f.series} preferred value "
                    f"(nearest {eng(f.below, 'Ω')} and {eng(f.above, 'Ω')})"
                )
    hist = stage(results, "history")
    if hist is not None:
        out += [f"Revision history {f.severity}: {f.message} ({f.key})" for f in hist.findings]
    out += [f"Input warning: {w}" for w in results.project.warnings]
    for c in results.cases:
        out += [f"Solver warning, case {case_label(c.name)}: {w}" for w in c.solution.warnings]
    return tuple(out)


def record_summary(results) -> RecordSummary:
    checks = check_summary(results)
    findings = open_findings(results)
    so = results.project.signoff
    status = record_status(so, len(checks.failed), checks.count, len(findings))
    roles = tuple(r for r in ("prepared", "checked", "approved") if getattr(so, r) is None)
    return RecordSummary(
        checks, findings, status, tuple(case_resolution(c) for c in results.cases), roles
    )
