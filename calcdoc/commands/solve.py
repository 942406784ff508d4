"""``calcdoc solve FILE [--json]``: print the results."""

from __future__ import annotations

import calcdoc


def run(args, term) -> int:
    project = calcdoc.load(args.file)
    term.project_warnings(project)
    results = calcdoc.solve(project)
    if args.json:
        term.json(calcdoc.to_json(results))
    else:
        term.case_results(results)
    return 0
