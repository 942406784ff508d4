"""``calcdoc diff OLD NEW [--json] [--exit-code]``: compare two revisions.

Each of OLD and NEW is a project file or a package PDF (whose embedded input
is used). Exit 0 when compared, changed or not; with ``--exit-code``, 1 when
anything changed; 2 on bad input (raised as ProjectError / PackageError /
CalcdocError naming the file, mapped by :mod:`calcdoc.cli`).
"""

from __future__ import annotations

import math

import calcdoc
from calcdoc.errors import CalcdocError, SingularCircuitError
from calcdoc.format import MINUS, percent
from calcdoc.record.compare import Comparison, compare
from calcdoc.record.package import baseline


def _solve(path: str):
    project = baseline(path)
    try:
        return calcdoc.solve(project)
    except SingularCircuitError as exc:
        from calcdoc.cli import singular_message

        raise CalcdocError(singular_message(exc, project.path)) from None


def run(args, term) -> int:
    old = _solve(args.old)
    new = _solve(args.new)
    comparison = compare(old, new)
    if args.json:
        term.json(comparison.to_json())
    else:
        show(comparison, term)
    return 1 if args.exit_code and comparison.changed else 0


def _status(s: str | None) -> str:
    return "—" if s is None else s.upper()


def _signed(term, value: float | None, unit: str) -> str:
    if value is None:
        return "—"
    text = term.eng(value, unit)
    return text if value < 0 or text.startswith(("-", "−")) else "+" + text


def _rel(term, value: float | None) -> str:
    if value is None or not math.isfinite(value):
        return "—"
    text = f"{value * 100:+.3g} %"
    return text if term.ascii_only else text.replace("-", MINUS)


def show(c: Comparison, term) -> None:
    """Print the comparison: checks whose status changed first, then inputs and results."""
    term.line(f"Old: revision {c.old_revision or '(none)'}  {c.old_path}")
    term.line(f"New: revision {c.new_revision or '(none)'}  {c.new_path}")
    term.line()
    if not c.changed:
        term.line("No differences: the two revisions have the same input file and results.")
        return

    if c.status_changes:
        term.line("Checks whose status changed")
        rows = [
            (
                x.case,
                x.id,
                _status(x.old_status),
                _status(x.new_status),
                percent(x.old_utilization),
                percent(x.new_utilization),
            )
            for x in c.status_changes
        ]
        term.table(["case", "check", "was", "now", "utilisation was", "now"], rows, "llllrr")
    else:
        term.line("No check changed status.")
    term.line()

    term.line("Changed inputs")
    rows = []
    for x in c.inputs:
        if x.section == "input file":
            continue
        what = " ".join(s for s in (x.subject, x.field) if s)
        old = x.old if x.old is not None else "—"
        new = x.new if x.new is not None else "—"
        rows.append((x.section, what, x.kind, old, new))
    if rows:
        term.table(["section", "item", "change", "was", "now"], rows, "lllll")
    else:
        term.line("No input changed except the file text (comments or layout).")
    if c.old_sha256 != c.new_sha256:
        term.line(f"Input SHA-256: {c.old_sha256} -> {c.new_sha256}")
    term.line()

    if c.results:
        for case in c.cases_compared:
            mine = [r for r in c.results if r.case == case]
            if not mine:
                continue
            term.line(f"Effect on results, case {case}")
            rows = [
                (
                    f"{'node' if r.kind == 'node' else 'element'} {r.subject}",
                    r.quantity,
                    "—" if r.old is None else term.eng(r.old, r.unit),
                    "—" if r.new is None else term.eng(r.new, r.unit),
                    _signed(term, r.delta, r.unit),
                    _rel(term, r.relative),
                )
                for r in mine
            ]
            term.table(["item", "quantity", "was", "now", "change", "relative"], rows, "llrrrr")
            term.line()
    else:
        term.line("No result changed.")
        term.line()

    if c.check_changes:
        term.line("Checks with the same status and a changed utilisation")
        rows = [
            (
                x.case,
                x.id,
                _status(x.new_status),
                percent(x.old_utilization),
                percent(x.new_utilization),
            )
            for x in c.check_changes
        ]
        term.table(["case", "check", "status", "utilisation was", "now"], rows, "lllrr")
        term.line()

    inputs = sum(1 for x in c.inputs if x.section != "input file")
    term.line(
        f"CHANGED: {inputs} input(s), {len(c.status_changes)} check status change(s), "
        f"{len(c.results)} result(s) in {len(c.cases_compared)} compared case(s)"
    )
