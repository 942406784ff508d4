"""``calcdoc build FILE [-o OUT.pdf] [--previous OLD] [--sign KEY.p12]``: write the package."""

from __future__ import annotations

import getpass
import os
import sys
from pathlib import Path

import calcdoc
from calcdoc.errors import CalcdocError
from calcdoc.fileio import write_atomic


def run(args, term) -> int:
    from calcdoc.pipeline import analyse
    from calcdoc.record.rebuild import render_package
    from calcdoc.report.package import default_output

    show = None if args.quiet else term.progress
    project = calcdoc.load(args.file)
    results = analyse(project, closed_form=True)
    before, comparison = _previous(args.previous, results, term) if args.previous else (None, None)
    package = render_package(
        project, previous=before, progress=show, results=results, comparison=comparison
    )
    pdf = package.pdf
    if args.sign:
        pdf = _sign(pdf, package.signature_box, Path(args.sign), project, show)
    term.progress_done()
    for warning in package.warnings:
        term.warning(warning)
    for note in results.notes:
        if note.startswith("Revision history"):
            term.warning(note)
    out = Path(args.output) if args.output else default_output(project, Path(args.file))
    write_atomic(out, pdf)
    term.line(f"wrote {out} ({len(pdf)} bytes)")
    return 0


def _previous(path: str, results, term):
    """The earlier revision (a package or a project file) and the comparison with it."""
    from calcdoc.model.history import same_revision_warning
    from calcdoc.pipeline import analyse
    from calcdoc.record.compare import compare
    from calcdoc.record.package import baseline

    before = baseline(path)
    comparison = compare(analyse(before), results)
    inputs_changed = any(c.section != "input file" for c in comparison.inputs)
    warning = same_revision_warning(before, results.project, inputs_changed)
    if warning:
        term.warning(warning)
    return before, comparison


def _sign(pdf: bytes, box, key: Path, project, progress) -> bytes:
    from calcdoc.record.signing import SigningError, key_password, sign_package
    from calcdoc.report.fonts import register_fonts

    if progress:
        progress("signing")
    try:
        password = key_password(os.environ, interactive=sys.stdin.isatty(), prompt=getpass.getpass)
        d = project.document
        return sign_package(
            pdf, key, password, page=box[0], box=box[1],
            font_path=register_fonts().regular_path,
            reason=f"Calculation record {d.number} revision {d.revision}".strip(),
        )  # fmt: skip
    except SigningError as exc:
        raise CalcdocError(f"{key}: cannot sign: {exc}") from None
