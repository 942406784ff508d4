"""``calcdoc check FILE``: every check of the check set (:mod:`calcdoc.checkset`); exit 1 if any fails."""

from __future__ import annotations

import calcdoc


def run(args, term) -> int:
    from calcdoc.checkset import check_summary

    project = calcdoc.load(args.file)
    term.project_warnings(project)
    results = calcdoc.solve(project)
    summary = check_summary(results)
    term.check_summary(results, summary)
    return 0 if summary.passed else 1
