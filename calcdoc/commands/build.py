"""``calcdoc build``: one package, or a set of records and their register.

``calcdoc build FILE [-o OUT.pdf] [--previous OLD] [--strict] [--sign KEY.p12] [--changed]``
writes one package; ``calcdoc build FILE FILE... | FOLDER [-j N] [--changed]``
builds every project given (see :mod:`calcdoc.commands.batch`).
"""

from __future__ import annotations

import getpass
import os
import sys
from pathlib import Path

from calcdoc.commands.records import RecordJob, Signer, make_record
from calcdoc.errors import CalcdocError


def run(args, term) -> int:
    paths = [args.file, *args.more]
    if len(paths) > 1 or Path(args.file).is_dir():
        single_only = [
            flag
            for flag, given in (
                ("-o", args.output),
                ("--previous", args.previous),
                ("--sign", args.sign),
            )
            if given
        ]
        if single_only:
            raise CalcdocError(
                f"{', '.join(single_only)}: for one project file only; a set of records writes "
                "each package at its default name beside its project"
            )
        from calcdoc.commands.batch import run_batch

        return run_batch(
            paths,
            jobs=args.jobs,
            changed=args.changed,
            strict=args.strict,
            term=term,
            quiet=args.quiet,
        )
    job = RecordJob(args.file, args.output, args.previous, args.strict, args.changed)
    show = None if args.quiet else term.progress
    outcome = make_record(job, progress=show, sign=_signer(Path(args.sign)) if args.sign else None)
    term.progress_done()
    for warning in outcome.warnings:
        term.warning(warning)
    if outcome.action == "unchanged":
        term.line(f"{outcome.package}: unchanged (same input, same calcdoc version); not rebuilt")
    else:
        term.line(f"wrote {outcome.package} ({outcome.package_bytes} bytes)")
    return outcome.status


def _signer(key: Path) -> Signer:
    def sign(pdf: bytes, box, project, progress) -> bytes:
        return _sign(pdf, box, key, project, progress)

    return sign


def _sign(pdf: bytes, box, key: Path, project, progress) -> bytes:
    from calcdoc.record.signing import SigningError, key_password, sign_package
    from calcdoc.report.fonts import register_fonts

    if progress:
        progress("signing")
    try:
        password = key_password(os.environ, interactive=sys.stdin.isatty(), prompt=getpass.getpass)
        d = project.document
        return sign_package(
            pdf,
            key,
            password,
            page=box[0],
            box=box[1],
            font_path=register_fonts().regular_path,
            reason=f"Calculation record {d.number} revision {d.revision}".strip(),
        )
    except SigningError as exc:
        raise CalcdocError(f"{key}: cannot sign: {exc}") from None
