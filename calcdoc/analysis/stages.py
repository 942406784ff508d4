"""Analysis stages attached to ``Results.extra``, each with its JSON, failures and notes."""

from __future__ import annotations

from dataclasses import dataclass

from calcdoc.analysis.envelope import Envelope
from calcdoc.analysis.preferred import PreferredFinding
from calcdoc.analysis.sensitivity import Sensitivity
from calcdoc.analysis.sweeps import SweepResult
from calcdoc.analysis.tolerance import ToleranceResult
from calcdoc.format import eng, percent


@dataclass(frozen=True)
class ToleranceStage:
    per_case: tuple[ToleranceResult | None, ...]

    def per_case_json(self) -> list[dict | None]:
        return [t.to_json() if t else None for t in self.per_case]

    def failed_checks(self):
        return tuple(
            (f"{t.case} (tolerance {t.method})", c)
            for t in self.per_case
            if t
            for c in t.checks
            if not c.passed
        )

    def notes(self) -> tuple[str, ...]:
        out = []
        for t in self.per_case:
            if t:
                worst = max(
                    (c for c in t.checks if c.utilization is not None),
                    key=lambda c: c.utilization,
                    default=None,
                )
                fails = sum(not c.passed for c in t.checks)
                out.append(
                    f"Tolerance ({t.method}) [{t.case}]: {t.solved} solutions, {fails} check(s) fail at the worst case"
                    + (f"; worst {percent(worst.utilization)} at {worst.id}" if worst else "")
                )
        return tuple(out)


@dataclass(frozen=True)
class EnvelopeStage:
    envelope: Envelope

    def project_json(self) -> dict:
        return self.envelope.to_json()


@dataclass(frozen=True)
class SensitivityStage:
    case: str
    items: tuple[Sensitivity, ...]

    def project_json(self) -> dict:
        return {
            "case": self.case,
            "outputs": {
                s.output: {
                    "value": s.value,
                    "method": s.method,
                    "normalised": {n: v for n, _, v in s.ranked},
                }
                for s in self.items
            },
        }


@dataclass(frozen=True)
class SweepStage:
    sweeps: tuple[SweepResult, ...]

    def project_json(self) -> list[dict]:
        return [s.to_json() for s in self.sweeps]

    def notes(self) -> tuple[str, ...]:
        out = []
        for s in self.sweeps:
            for c in s.crossings:
                out.append(
                    f"Sweep {s.name}: {c.output} crosses the {c.check} limit at {s.target} = {s.target_text(c.at)}"
                )
        return tuple(out)


@dataclass(frozen=True)
class PreferredStage:
    findings: tuple[PreferredFinding, ...]

    def project_json(self) -> list[dict]:
        return [
            {
                "element": f.element,
                "series": f.series,
                "value": f.value,
                "in_series": f.in_series,
                "below": f.below,
                "above": f.above,
            }
            for f in self.findings
        ]

    def notes(self) -> tuple[str, ...]:
        return tuple(
            f"{f.element}: {eng(f.value, 'Ω')} is not an {f.series} preferred value "
            f"(nearest {eng(f.below, 'Ω')} and {eng(f.above, 'Ω')})"
            for f in self.findings
            if not f.in_series
        )


@dataclass(frozen=True)
class HistoryStage:
    """Findings of the revision-history check (:func:`calcdoc.model.history.history_findings`)."""

    findings: tuple

    def project_json(self) -> list[dict]:
        return [{"severity": f.severity, "key": f.key, "message": f.message} for f in self.findings]

    def notes(self) -> tuple[str, ...]:
        return tuple(f"Revision history {f.severity}: {f.key}: {f.message}" for f in self.findings)
