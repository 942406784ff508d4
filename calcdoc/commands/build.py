"""``calcdoc build FILE [-o OUT.pdf]``: write the PDF calculation package."""

from __future__ import annotations

from pathlib import Path

import calcdoc
from calcdoc.errors import CalcdocError
from calcdoc.fileio import write_atomic


def run(args, term) -> int:
    from calcdoc.report.package import build_package, default_output

    if args.sign or args.previous:
        raise CalcdocError("--sign and --previous are not available yet")
    project = calcdoc.load(args.file)
    from calcdoc.analysis.pipeline import analyse

    results = analyse(project, closed_form=True)
    show = None if args.quiet else term.progress
    package = build_package(results, progress=show)
    term.progress_done()
    out = Path(args.output) if args.output else default_output(project, Path(args.file))
    write_atomic(out, package.pdf)
    term.line(f"wrote {out} ({len(package.pdf)} bytes)")
    return 0
