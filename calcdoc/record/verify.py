"""Verification of a calculation package received from someone else.

:func:`verify_package` answers three questions, in this order, each as one
or more findings:

(a) **Signatures.** Every embedded signature must be intact (the signed
    bytes are unchanged and the signature value verifies) and cover the
    whole file (no later update changes the document itself). This rests on
    pyHanko's intact / coverage / modification results, never on its
    ``valid`` flag alone (see :mod:`calcdoc.record.signing`). With trusted
    certificates, each signer must chain to one of them; without, a note
    says plainly that identity was not checked. An unsigned package gets a
    "not signed" note and still has (b) and (c) checked; it passes only when
    no trusted certificates were asked for (asking for identity and getting
    no signature is a failure).
(b) **Input hash.** The SHA-256 of the embedded input must equal the one
    printed on the cover, the one in the document information and the one
    in the embedded results.
(c) **Results.** Solving the embedded input again must reproduce the
    embedded ``results.json``: same structure, texts and check statuses,
    numbers within ``|a - b| <= 1e-9 * max(|a|, |b|) + 1e-15`` (SI units).
    Round-off measures (KCL residuals, KVL loop sums, the power imbalance
    and the solver's residual and condition figures) are held to
    ``1e-6 * max(|a|, |b|) + 1e-9`` instead: they are noise of order 1e-15
    whose exact value depends on the floating-point library. The input path
    (where the file was when built) and the tool version are not compared;
    a different version is noted, and so are results a fresh solve gives
    that the embedded object lacks (a later calcdoc may compute more);
    everything the embedded object states must be reproduced.

(d) **Pages** and (e) **updates** (:mod:`calcdoc.record.pages`): the package
    is rebuilt from its embedded input and compared byte for byte, and every
    update appended after the build is inspected for anything a reader
    would see. A package that cannot be rebuilt here is reported as *not
    compared* (status ``unchecked``), which does not pass.

The package passes when every finding passes or is a note. Everything here
is pure (the rebuild writes nothing; it reads only the installed report
styles).
"""

from __future__ import annotations

import hashlib
import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from calcdoc import __version__
from calcdoc.errors import CalcdocError, PackageError, ProjectError
from calcdoc.record.package import (
    embedded_input,
    embedded_results,
    is_pdf,
    metadata_input_hash,
    printed_input_hash,
)
from calcdoc.record.pages import NOT_COMPARED, page_findings
from calcdoc.record.signing import (
    SignatureFinding,
    SignatureReport,
    UnreadablePackageError,
    signature_findings,
)

__all__ = ["Finding", "Verification", "first_difference", "verify_package"]

REL_TOL = 1e-9
ABS_TOL = 1e-15
NOISE_REL_TOL = 1e-6
NOISE_ABS_TOL = 1e-9
_NOISE_KEYS = frozenset({"residual", "condition", "kcl_max", "kvl_max", "imbalance"})

PASS, FAIL, NOTE, UNCHECKED = "pass", "fail", "note", NOT_COMPARED


@dataclass(frozen=True)
class Finding:
    """One verification finding.

    Attributes
    ----------
    topic : str
        ``signature``, ``certificate``, ``identity``, ``input``, ``results``,
        ``pages`` or ``updates``.
    status : str
        ``pass``, ``fail``, ``note`` (information that does not fail) or
        ``unchecked`` (the check could not be made; this does not pass).
    message : str
        A plain sentence.
    """

    topic: str
    status: str
    message: str

    @property
    def ok(self) -> bool:
        """bool: the finding passed or is only a note."""
        return self.status in (PASS, NOTE)


@dataclass(frozen=True)
class Verification:
    """Every finding about one package, in the order they were checked.

    Attributes
    ----------
    findings : tuple of Finding
        Signatures (a), input hash (b), results (c).
    signatures : SignatureReport
        pyHanko-based findings for each signature (empty when unsigned).
    input_name : str or None
        Attachment name of the embedded input.
    input_sha256 : str or None
        SHA-256 of the embedded input bytes.
    """

    findings: tuple[Finding, ...]
    signatures: SignatureReport
    input_name: str | None
    input_sha256: str | None

    @property
    def signed(self) -> bool:
        """bool: the package carries at least one signature."""
        return bool(self.signatures.signatures)

    @property
    def ok(self) -> bool:
        """bool: no finding failed."""
        return all(f.ok for f in self.findings)

    @property
    def first_failure(self) -> Finding | None:
        """Finding or None: the first failed finding, else the first check not made."""
        failed = next((f for f in self.findings if f.status == FAIL), None)
        return failed or next((f for f in self.findings if not f.ok), None)

    def to_json(self) -> dict[str, Any]:
        """The findings as a JSON-ready object."""
        return {
            "verified": self.ok,
            "signed": self.signed,
            "identity_checked": self.signatures.identity_checked,
            "input": {"name": self.input_name, "sha256": self.input_sha256},
            "signatures": [
                {
                    "field": s.field_name,
                    "signer": s.signer_name,
                    "signing_time": s.signing_time.isoformat() if s.signing_time else None,
                    "intact": s.intact,
                    "covers_whole_file": s.covers_whole_file,
                    "coverage": s.coverage,
                    "modification_level": s.modification_level,
                    "trusted": s.trusted,
                }
                for s in self.signatures.signatures
            ],
            "findings": [
                {"topic": f.topic, "status": f.status, "message": f.message} for f in self.findings
            ],
            "first_failure": None if self.first_failure is None else self.first_failure.message,
        }


# ---------------------------------------------------------------- (a) signatures


def _who(s: SignatureFinding) -> str:
    name = s.signer_name or "an unnamed signer"
    when = s.signing_time.isoformat(sep=" ", timespec="seconds") if s.signing_time else None
    return f"signature '{s.field_name}' by {name}" + (f", signed {when}" if when else "")


def _signature_findings(report: SignatureReport, identity_wanted: bool) -> list[Finding]:
    if not report.signatures:
        if identity_wanted:
            return [
                Finding(
                    "signature",
                    FAIL,
                    "Not signed: trusted certificates were given, but the package carries "
                    "no digital signature, so its issuer cannot be established.",
                )
            ]
        return [
            Finding(
                "signature",
                NOTE,
                "Not signed: the package carries no digital signature, so nothing shows "
                "who issued it; its embedded input, results and pages were checked.",
            )
        ]
    out = []
    for s in report.signatures:
        who = _who(s)
        if s.intact and s.covers_whole_file:
            scope = (
                "covers the whole file"
                if s.coverage == "ENTIRE_FILE"
                else "covers its revision; the updates appended after it are inspected below"
            )
            out.append(Finding("signature", PASS, f"{who[0].upper()}{who[1:]}: intact, {scope}."))
        else:
            problem = s.problem or "it does not cover the file as signed."
            out.append(Finding("signature", FAIL, f"{problem} ({who})"))
    for s in report.signatures:
        who = s.signer_name or "(unnamed)"
        if s.certificate_problem is not None:
            out.append(
                Finding(
                    "certificate",
                    FAIL,
                    f"The certificate of signature '{s.field_name}' may not sign this record: "
                    f"{s.certificate_problem}.",
                )
            )
        elif s.intact:
            out.append(
                Finding(
                    "certificate",
                    PASS,
                    f"The certificate of {who} was valid at the signing time and its key "
                    "usage allows signing documents.",
                )
            )
        if s.certificate_note is not None:
            out.append(
                Finding(
                    "certificate",
                    NOTE,
                    s.certificate_note[:1].upper() + s.certificate_note[1:] + ".",
                )
            )
    for s in report.signatures:
        if not report.identity_checked:
            continue
        if s.trusted:
            out.append(
                Finding(
                    "identity",
                    PASS,
                    f"Signer {s.signer_name or '(unnamed)'} of '{s.field_name}' is trusted: "
                    "the certificate chains to a given trusted certificate.",
                )
            )
        else:
            out.append(
                Finding(
                    "identity",
                    FAIL,
                    f"The signer {s.signer_name or '(unnamed)'} of '{s.field_name}' is not "
                    f"trusted: the certificate {s.trust_problem or 'cannot be checked'}.",
                )
            )
    if not report.identity_checked:
        out.append(
            Finding(
                "identity",
                NOTE,
                "Identity not checked: no trusted certificates were given (--trust), so the "
                "signer's name is only what the signing certificate claims.",
            )
        )
    return out


# ---------------------------------------------------------------- (b) input hash


def _hash_findings(source_sha: str, name: str, pdf: bytes, results: dict[str, Any]) -> Finding:
    printed = printed_input_hash(pdf)
    meta = metadata_input_hash(pdf)
    recorded = (
        results.get("input", {}).get("sha256") if isinstance(results.get("input"), dict) else None
    )
    if printed is None:
        return Finding("input", FAIL, "The cover shows no 'SHA-256 of input' line.")
    if printed != source_sha:
        return Finding(
            "input",
            FAIL,
            f"The embedded input {name} does not match the cover: its SHA-256 is "
            f"{source_sha}, the cover prints {printed}.",
        )
    if meta != source_sha:
        return Finding(
            "input",
            FAIL,
            f"The embedded input {name} does not match the document information: its "
            f"SHA-256 is {source_sha}, the document information records {meta}.",
        )
    if recorded != source_sha:
        return Finding(
            "input",
            FAIL,
            f"The embedded results were not made from the embedded input {name}: they "
            f"record SHA-256 {recorded}, the input's is {source_sha}.",
        )
    return Finding(
        "input",
        PASS,
        f"Embedded input {name}: SHA-256 {source_sha} matches the cover, the document "
        "information and the embedded results.",
    )


# ---------------------------------------------------------------- (c) results


def _label(item: Any, index: int) -> str:
    if isinstance(item, dict):
        for key in ("name", "id", "chord"):
            if isinstance(item.get(key), str):
                return f"[{item[key]}]"
    return f"[{index}]"


def _is_number(x: Any) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool)


def _close(a: float, b: float, noise: bool) -> bool:
    a, b = float(a), float(b)
    if not (math.isfinite(a) and math.isfinite(b)):
        return a == b
    rel, tol = (NOISE_REL_TOL, NOISE_ABS_TOL) if noise else (REL_TOL, ABS_TOL)
    return abs(a - b) <= rel * max(abs(a), abs(b)) + tol


def first_difference(
    embedded: Any,
    recomputed: Any,
    path: str = "",
    noise: bool = False,
    absent: list[str] | None = None,
) -> str | None:
    """Where two results objects first differ, or None if they agree.

    Parameters
    ----------
    embedded, recomputed : JSON values
        The results object from the package and from a fresh solve.
    path : str
        Location of these values, for the message.
    noise : bool
        Compare numbers with the round-off tolerance (see module notes).
    absent : list of str, optional
        When given, keys that a fresh solve produces but the embedded
        results lack are appended here (as paths) instead of counting as a
        difference: a later calcdoc may compute more than the one that built
        the package. Keys the embedded results have and a fresh solve does
        not always count.

    Returns
    -------
    str or None
        ``"<path>: embedded X, recomputed Y"`` for the first difference.

    >>> first_difference({"v": 1.0, "s": "pass"}, {"v": 1.0 + 1e-13, "s": "pass"}) is None
    True
    >>> first_difference({"v": [1.0, 2.0]}, {"v": [1.0, 2.5]})
    'v[1]: embedded 2.0, recomputed 2.5'
    """
    where = path or "(top)"
    if _is_number(embedded) and _is_number(recomputed):
        if _close(embedded, recomputed, noise):
            return None
        return f"{where}: embedded {embedded!r}, recomputed {recomputed!r}"
    if isinstance(embedded, dict) and isinstance(recomputed, dict):
        missing = [k for k in recomputed if k not in embedded]
        extra = [k for k in embedded if k not in recomputed]
        if missing and absent is None:
            return f"{where}: embedded results lack {missing[0]!r}"
        if absent is not None:
            absent += [f"{path}.{k}" if path else str(k) for k in missing]
        if extra:
            return f"{where}: embedded results have {extra[0]!r}, which a fresh solve does not"
        for key in embedded:
            sub = f"{path}.{key}" if path else str(key)
            flag = noise or key in _NOISE_KEYS or key in ("kcl", "sum")
            found = first_difference(embedded[key], recomputed[key], sub, flag, absent)
            if found:
                return found
        return None
    if isinstance(embedded, list) and isinstance(recomputed, list):
        if len(embedded) != len(recomputed):
            return f"{where}: embedded {len(embedded)} entries, recomputed {len(recomputed)}"
        for i, (a, b) in enumerate(zip(embedded, recomputed, strict=True)):
            found = first_difference(a, b, f"{path}{_label(b, i)}", noise, absent)
            if found:
                return found
        return None
    if embedded == recomputed and type(embedded) is type(recomputed):
        return None
    return f"{where}: embedded {embedded!r}, recomputed {recomputed!r}"


def _comparable(doc: dict[str, Any]) -> dict[str, Any]:
    out = {k: v for k, v in doc.items() if k != "tool"}
    if isinstance(out.get("input"), dict):
        out["input"] = {k: v for k, v in out["input"].items() if k != "path"}
    return out


def _results_findings(name: str, source: bytes, embedded: dict[str, Any]) -> list[Finding]:
    import calcdoc

    out: list[Finding] = []
    try:
        fresh = calcdoc.to_json(calcdoc.solve(calcdoc.loads(source, name)))
    except ProjectError as exc:
        return [
            Finding("results", FAIL, f"The embedded input is not a valid project: {exc.message}")
        ]
    except CalcdocError as exc:
        return [Finding("results", FAIL, f"The embedded input cannot be solved again: {exc}")]
    tool = embedded.get("tool")
    version = tool.get("version") if isinstance(tool, dict) else None
    if version != __version__:
        out.append(
            Finding(
                "results",
                NOTE,
                f"The package was built with calcdoc {version}; it is verified with "
                f"calcdoc {__version__}.",
            )
        )
    absent: list[str] = []
    diff = first_difference(_comparable(embedded), _comparable(fresh), absent=absent)
    if diff is not None:
        out.append(
            Finding(
                "results",
                FAIL,
                f"Solving the embedded input again does not reproduce the embedded "
                f"results.json: {diff}.",
            )
        )
        return out
    if absent:
        shown = ", ".join(absent[:3]) + (f" and {len(absent) - 3} more" if len(absent) > 3 else "")
        out.append(
            Finding(
                "results",
                NOTE,
                f"A fresh solve also gives {shown}, which the embedded results do not "
                "contain (not compared).",
            )
        )
    cases = fresh.get("cases", [])
    checks = sum(len(c.get("checks", [])) for c in cases)
    out.append(
        Finding(
            "results",
            PASS,
            f"Solving the embedded input again reproduces the embedded results.json "
            f"({len(cases)} case(s), {checks} check(s), same statuses).",
        )
    )
    return out


# ---------------------------------------------------------------- all together


def verify_package(pdf: bytes, trusted: Sequence[bytes] = ()) -> Verification:
    """Check a package's signatures, embedded input hash and embedded results.

    Parameters
    ----------
    pdf : bytes
        The package file.
    trusted : Sequence[bytes]
        Trusted signer or CA certificates (PEM or DER). Empty: identity is
        not checked.

    Returns
    -------
    Verification
        Ordered findings; ``ok`` is True when none failed.

    Raises
    ------
    PackageError
        If the data is not a readable PDF, or (with every signature found
        sound) it carries no calcdoc input or results, i.e. it is not a
        package at all.
    TrustRootError
        If a trusted certificate cannot be read.
    """
    if not is_pdf(pdf):
        raise PackageError("not a PDF file")
    try:
        report = signature_findings(pdf, trusted)
    except UnreadablePackageError as exc:
        raise PackageError(str(exc)) from None
    findings = _signature_findings(report, identity_wanted=bool(trusted))
    try:
        name, source = embedded_input(pdf)
        results = embedded_results(pdf)
    except PackageError as exc:
        if all(f.ok for f in findings):
            raise
        # A signed package that was tampered with may have lost its data:
        # the signature failure stays the first one named.
        findings.append(Finding("input", FAIL, f"The embedded data cannot be read: {exc}."))
        return Verification(tuple(findings), report, None, None)
    sha = hashlib.sha256(source).hexdigest()
    findings.append(_hash_findings(sha, name, pdf, results))
    findings += _results_findings(name, source, results)
    findings += [Finding(*f) for f in page_findings(pdf, name, source, results, report)]
    return Verification(tuple(findings), report, name, sha)
