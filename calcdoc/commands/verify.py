"""``calcdoc verify PACKAGE [--trust CERT.pem ...] [--json]``.

Exit 0 when every finding passes (an unsigned package passes when its
embedded input, results and pages check out and no ``--trust`` was given,
and the report says plainly that it is not signed); 1 naming the first
failure, or, when nothing failed but a check could not be made (the pages
could not be compared with a rebuild), saying "NOT VERIFIED" and why; 2 when
the package or a trusted certificate cannot be read.
"""

from __future__ import annotations

from pathlib import Path

from calcdoc.errors import CalcdocError, PackageError
from calcdoc.record.signing import TrustRootError
from calcdoc.record.verify import verify_package

_MARK = {"pass": "PASS", "fail": "FAIL", "note": "NOTE", "unchecked": "OPEN"}


def _read(path: str, what: str) -> bytes:
    try:
        return Path(path).read_bytes()
    except OSError as exc:
        raise CalcdocError(f"{path}: cannot read the {what}: {exc.strerror or exc}") from None


def run(args, term) -> int:
    pdf = _read(args.package, "package")
    trusted = [_read(p, "trusted certificate") for p in args.trust]
    try:
        result = verify_package(pdf, trusted)
    except PackageError as exc:
        raise PackageError(f"{args.package}: {exc}") from None
    except TrustRootError as exc:
        # The message names the certificate by its position among --trust.
        text = str(exc)
        for i, path in enumerate(args.trust, start=1):
            text = text.replace(f"trusted certificate #{i} ", f"trusted certificate {path} ")
        raise CalcdocError(text) from None
    if args.json:
        doc = result.to_json()
        doc["package"] = args.package
        term.json(doc)
    else:
        term.line(f"Package: {args.package}")
        for f in result.findings:
            term.line(f"  {_MARK[f.status]}  {f.message}")
        failure = result.first_failure
        if failure is None:
            state = "VERIFIED" if result.signed else "VERIFIED (NOT SIGNED)"
            term.line(f"RESULT: {state}")
        elif failure.status == "fail":
            term.line(f"RESULT: FAILED: {failure.message}")
        else:
            term.line(f"RESULT: NOT VERIFIED: {failure.message}")
    return 0 if result.ok else 1
