"""``calcdoc check FILE``: every check of the check set (:mod:`calcdoc.checkset`); exit 1 if any fails."""

from __future__ import annotations

import calcdoc


def run(args, term) -> int:
    from calcdoc.checkset import check_summary

    results = calcdoc.solve(calcdoc.load(args.file))
    summary = check_summary(results)
    term.check_summary(results, summary)
    return 0 if summary.passed else 1
