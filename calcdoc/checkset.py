"""The one set of design checks that every summary counts over.

The set holds every design check of every case as solved (scope
``"values"``) and, where a tolerance analysis ran, the same check at that
case's tolerance worst case (scope ``"tolerance"``).  The package's cover
and conclusion, ``calcdoc check``'s summary and its exit status all count
over this set, so their numbers agree with each other and with the JSON
results (``cases[i].checks`` and ``cases[i].tolerance.checks``).

Pure: results in, frozen rows out.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

VALUES = "values"
TOLERANCE = "tolerance"


@dataclass(frozen=True)
class CheckRow:
    """One member of the check set.

    Attributes
    ----------
    case : str
        The operating case's name (``"nominal"`` first).
    scope : str
        ``"values"``: the case as solved; ``"tolerance"``: the same check at
        the case's tolerance worst case.
    check : Check
        The design check (id, value, limit, utilization, margin, status).
    method : str
        The tolerance method for scope ``"tolerance"`` (``extreme``,
        ``montecarlo``, ``rss``); ``""`` otherwise.
    """

    case: str
    scope: str
    check: Any
    method: str = ""

    @property
    def passed(self) -> bool:
        return bool(self.check.passed)

    @property
    def utilization(self) -> float | None:
        return self.check.utilization


@dataclass(frozen=True)
class CheckSummary:
    """Counts over one check set.

    Attributes
    ----------
    rows : tuple of CheckRow
    failed : tuple of CheckRow
        The failing rows, in set order.
    worst : CheckRow or None
        The row with the highest utilization (None when no row has one).
    cases : int
        How many operating cases the set spans.
    """

    rows: tuple[CheckRow, ...]
    failed: tuple[CheckRow, ...]
    worst: CheckRow | None
    cases: int

    @property
    def count(self) -> int:
        return len(self.rows)

    @property
    def passed(self) -> bool:
        return not self.failed

    @property
    def at_tolerance(self) -> int:
        """How many rows are taken at a tolerance worst case."""
        return sum(r.scope == TOLERANCE for r in self.rows)


def _tolerance_per_case(results: Any) -> Sequence[Any]:
    """The tolerance results of each case, in case order (None where none ran).

    The only place this module reaches into the analysis stages.
    """
    stage = results.extra.get("tolerance") if hasattr(results, "extra") else None
    per_case = getattr(stage, "per_case", None)
    return per_case if per_case is not None else [None] * len(results.cases)


def check_set(results: Any) -> tuple[CheckRow, ...]:
    """Every check in every case, each also at its tolerance worst case.

    Parameters
    ----------
    results : Results

    Returns
    -------
    tuple of CheckRow
        Per case: its checks as solved, then the same checks at the
        tolerance worst case (when a tolerance analysis ran for the case).
    """
    out: list[CheckRow] = []
    for case, tol in zip(results.cases, _tolerance_per_case(results), strict=True):
        out += [CheckRow(case.name, VALUES, c) for c in case.checks]
        if tol is not None:
            out += [CheckRow(case.name, TOLERANCE, c, tol.method) for c in tol.checks]
    return tuple(out)


@dataclass(frozen=True)
class RecordedCheck:
    """A check as a results object records it (``id``, ``utilization``, ``status``)."""

    id: str
    utilization: float | None
    status: str

    @property
    def passed(self) -> bool:
        return self.status == "pass"


def document_check_set(doc: dict[str, Any]) -> tuple[CheckRow, ...]:
    """The same set read from a results object (``calcdoc solve --json``, a package's
    embedded ``results.json``): each case's ``checks``, then its ``tolerance.checks``."""

    def recorded(c: dict[str, Any]) -> RecordedCheck:
        return RecordedCheck(c["id"], c.get("utilization"), c.get("status", ""))

    out: list[CheckRow] = []
    for case in doc.get("cases", []):
        out += [CheckRow(case["name"], VALUES, recorded(c)) for c in case.get("checks", [])]
        tol = case.get("tolerance") or {}
        out += [
            CheckRow(case["name"], TOLERANCE, recorded(c), tol.get("method", ""))
            for c in tol.get("checks", [])
        ]
    return tuple(out)


def summarise(rows: Sequence[CheckRow], cases: int) -> CheckSummary:
    """Failing rows and the worst utilization over ``rows``.

    >>> from types import SimpleNamespace as NS
    >>> a = CheckRow("nominal", VALUES, NS(passed=True, utilization=0.5))
    >>> b = CheckRow("nominal", TOLERANCE, NS(passed=False, utilization=1.2), "extreme")
    >>> s = summarise([a, b], 1)
    >>> s.count, len(s.failed), s.worst is b, s.at_tolerance
    (2, 1, True, 1)
    """
    worst = None
    for r in rows:
        u = r.utilization
        if u is not None and (worst is None or u > worst.utilization):
            worst = r
    return CheckSummary(tuple(rows), tuple(r for r in rows if not r.passed), worst, cases)


def check_summary(results: Any) -> CheckSummary:
    """:func:`summarise` over :func:`check_set` of ``results``."""
    return summarise(check_set(results), len(results.cases))
