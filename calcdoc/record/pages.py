"""Proof of a package's pages: a rebuild from its embedded input, and its later updates.

:func:`page_findings` answers two questions for :func:`calcdoc.record.verify.verify_package`:

(d) **Pages.** Are the pages what calcdoc makes from the embedded input?
    The package is rebuilt (:mod:`calcdoc.record.rebuild`) and compared byte
    for byte: the file must be the rebuild, or begin with exactly the
    rebuild's bytes. A package that cannot be rebuilt here (other software,
    a seal image or style it does not carry, ...) is *not compared*, which is
    not a pass: the verdict says why.
(e) **Updates.** Does anything appended after the build change what a
    reader sees? Every later revision is inspected
    (:mod:`calcdoc.record.revisions`); only signatures in the box kept for
    them, invisible signatures, document timestamps and validation data may
    be added, and the finding names what was added.

Each finding is ``(topic, status, message)``; the caller wraps it.
"""

from __future__ import annotations

from typing import Any

from calcdoc.record.rebuild import rebuild_package, software_difference
from calcdoc.record.revisions import (
    Addition,
    UnreadableUpdatesError,
    UpdateReport,
    compare_documents,
    inspect_updates,
    revision_ending_at,
)
from calcdoc.record.signing import SignatureReport

__all__ = ["NOT_COMPARED", "page_findings"]

NOT_COMPARED = "unchecked"
"""Status of a check that could not be made: not a pass, not a failure."""

_PASS, _FAIL, _NOTE = "pass", "fail", "note"


def _describe(addition: Addition, signers: dict[str, str]) -> str:
    text = addition.describe()
    who = signers.get(addition.field or "")
    if addition.kind == "signature" and who:
        text = text.replace(f"'{addition.field}'", f"'{addition.field}' by {who}", 1)
    return text


def _update_findings(report: UpdateReport, signers: dict[str, str]) -> list[tuple[str, str, str]]:
    if not report.updates:
        return []
    count = len(report.updates)
    if not report.ok:
        return [
            (
                "updates",
                _FAIL,
                f"An update appended after the record was built {report.first_change}.",
            )
        ]
    added = "; ".join(_describe(a, signers) for a in report.added) or "nothing"
    return [
        (
            "updates",
            _PASS,
            f"{count} update(s) appended after the build add only: {added}. "
            "None changes what a reader sees.",
        )
    ]


def page_findings(
    pdf: bytes, name: str, source: bytes, results: dict[str, Any], signatures: SignatureReport
) -> list[tuple[str, str, str]]:
    """Prove the pages of a package and inspect every update appended after its build.

    Parameters
    ----------
    pdf : bytes
        The package.
    name, source : str, bytes
        Its embedded input.
    results : dict
        Its embedded results object.
    signatures : SignatureReport
        Its signatures (to name the signer of each added signature).

    Returns
    -------
    list of (topic, status, message)
        ``pages`` first, then ``updates`` when updates were appended.
    """
    signers = {s.field_name: s.signer_name for s in signatures.signatures if s.signer_name}
    rebuilt = rebuild_package(pdf, name, source, results)
    try:
        if rebuilt.pdf is None:
            found = [
                (
                    "pages",
                    NOT_COMPARED,
                    f"The pages were not compared with a rebuild: {rebuilt.reason}. Nothing "
                    "shows that what the pages print matches the embedded input.",
                )
            ]
            report = inspect_updates(pdf, 0, None, box_known=False)
            return found + _update_findings(report, signers)
        size = len(rebuilt.pdf)
        if pdf == rebuilt.pdf:
            return [
                (
                    "pages",
                    _PASS,
                    f"The pages are what calcdoc makes of the embedded input: a rebuild gives "
                    f"the same {size} bytes.",
                )
            ]
        if pdf.startswith(rebuilt.pdf):
            base = revision_ending_at(pdf, size)
            if base is None:
                return [
                    (
                        "pages",
                        _FAIL,
                        "The file begins with a rebuild of its embedded input, but the updates "
                        "after it do not build on it (a reader would see other pages).",
                    )
                ]
            found = [
                (
                    "pages",
                    _PASS,
                    f"The record as built is what calcdoc makes of the embedded input: the "
                    f"file begins with exactly the {size} bytes a rebuild gives.",
                )
            ]
            report = inspect_updates(pdf, base, rebuilt.signature_box)
            return found + _update_findings(report, signers)
    except UnreadableUpdatesError as exc:
        return [("pages", _FAIL, f"The package's revisions cannot be read: {exc}.")]
    other = software_difference(pdf, rebuilt.pdf)
    if other is not None:
        return [("pages", NOT_COMPARED, f"The pages were not compared with a rebuild: {other}.")]
    try:
        first = next(iter(compare_documents(rebuilt.pdf, pdf, rebuilt.signature_box)), None)
    except UnreadableUpdatesError:
        first = None
    if first is not None:
        return [
            (
                "pages",
                _FAIL,
                f"The pages differ from a rebuild of the embedded input: compared with the "
                f"rebuild, the package {first}.",
            )
        ]
    return [
        (
            "pages",
            _FAIL,
            "The file differs from a rebuild of its embedded input (it was rewritten after it "
            "was built), so its pages cannot be proved.",
        )
    ]
