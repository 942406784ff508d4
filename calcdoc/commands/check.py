"""``calcdoc check FILE``: every design check; exit 1 if any fails."""

from __future__ import annotations

import calcdoc


def run(args, term) -> int:
    project = calcdoc.load(args.file)
    term.project_warnings(project)
    results = calcdoc.solve(project)
    term.check_summary(results)
    return 1 if results.failed else 0
