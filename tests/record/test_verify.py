"""Tests for calcdoc.record.verify, calcdoc.record.package and ``calcdoc verify``.

The outside references: pyHanko's own validation API for the signatures
(intact / coverage / difference analysis), the SHA-256 of hashlib for the
input hash, pypdf and reportlab for a hand-made package following the
package contract, and the closed-form divider of the demo project.
"""

from __future__ import annotations

import hashlib
import json
import logging
from io import BytesIO

import pytest
from asn1crypto import x509 as asn1_x509
from pyhanko.pdf_utils.reader import PdfFileReader
from pyhanko.sign.validation import validate_pdf_signature
from pyhanko.sign.validation.status import SignatureCoverageLevel
from pyhanko_certvalidator import ValidationContext
from pypdf import PdfWriter
from record_helpers import DEMO_PROJECT, SIGNER_NAME, replace_attachment
from reportlab.pdfgen import canvas

from calcdoc.cli import main
from calcdoc.errors import PackageError
from calcdoc.record.package import (
    baseline,
    embedded_input,
    embedded_results,
    metadata_input_hash,
    printed_input_hash,
)
from calcdoc.record.verify import first_difference, verify_package

DEMO_SHA = hashlib.sha256(DEMO_PROJECT.read_bytes()).hexdigest()


def _pyhanko_status(pdf: bytes, trust_der: bytes):
    reader = PdfFileReader(BytesIO(pdf))
    (sig,) = reader.embedded_signatures
    context = ValidationContext(
        trust_roots=[asn1_x509.Certificate.load(trust_der)], allow_fetching=False
    )
    return validate_pdf_signature(sig, signer_validation_context=context)


def _flip_metadata_hash(pdf: bytes) -> bytes:
    """Change one hex digit of the input hash stored in the document information."""
    pos = pdf.rindex(b"/CalcdocInputSHA256")  # the latest document information
    digit = pdf.index(DEMO_SHA[:8].encode(), pos) + 2
    new = b"0" if pdf[digit : digit + 1] != b"0" else b"1"
    return pdf[:digit] + new + pdf[digit + 1 :]


def _bump_a_number(results_json: bytes) -> bytes:
    doc = json.loads(results_json)
    doc["cases"][0]["nodes"]["field"] *= 1.01
    return json.dumps(doc, indent=1).encode()


def _contract_package(source: bytes, printed_sha: str, name: str = "demo.toml") -> bytes:
    """A package made by hand to the package contract (not by calcdoc's builder)."""
    import calcdoc

    buf = BytesIO()
    c = canvas.Canvas(buf, invariant=1)
    c.drawString(72, 720, "Calculation record")
    c.drawString(72, 700, f"SHA-256 of input: {printed_sha}")
    c.showPage()
    c.save()
    writer = PdfWriter(clone_from=BytesIO(buf.getvalue()))
    writer.add_attachment(name, source)
    results = calcdoc.to_json(calcdoc.solve(calcdoc.loads(source, name)))
    writer.add_attachment("results.json", json.dumps(results).encode())
    sha = hashlib.sha256(source).hexdigest()
    writer.add_metadata({"/CalcdocInput": name, "/CalcdocInputSHA256": sha})
    out = BytesIO()
    writer.write(out)
    return out.getvalue()


# ---------------------------------------------------------------- reading packages


def test_package_contents_are_read_back(built_package) -> None:
    name, source = embedded_input(built_package.pdf)
    assert name == "sensor_supply.toml"
    assert source == DEMO_PROJECT.read_bytes()
    assert printed_input_hash(built_package.pdf) == DEMO_SHA
    assert metadata_input_hash(built_package.pdf) == DEMO_SHA
    assert embedded_results(built_package.pdf)["input"]["sha256"] == DEMO_SHA


def test_baseline_from_package_or_project(built_package, tmp_path) -> None:
    path = tmp_path / "rev-B.pdf"
    path.write_bytes(built_package.pdf)
    from_pdf = baseline(path)
    from_toml = baseline(DEMO_PROJECT)
    assert from_pdf.sha256 == from_toml.sha256 == DEMO_SHA
    assert from_pdf.path == f"{path}:sensor_supply.toml"
    assert from_pdf.elements == from_toml.elements


@pytest.mark.parametrize("data", [b"", b"schema = 1\n", b"%PDF-1.7\ntruncated"])
def test_non_packages_raise_package_error(data: bytes) -> None:
    with pytest.raises(PackageError):
        embedded_input(data)


def test_pdf_without_attachments_is_not_a_package() -> None:
    buf = BytesIO()
    c = canvas.Canvas(buf, invariant=1)
    c.drawString(72, 720, "just a page")
    c.showPage()
    c.save()
    with pytest.raises(PackageError, match="not a calcdoc package"):
        embedded_results(buf.getvalue())
    with pytest.raises(PackageError):
        verify_package(buf.getvalue())


# ---------------------------------------------------------------- verify_package


def test_signed_package_verifies_with_trusted_ca(signed_package, record_pki) -> None:
    # pyHanko's own validator agrees the signature is sound and covers the file.
    status = _pyhanko_status(signed_package, record_pki.ca_der)
    assert status.intact and status.valid and status.trusted
    assert status.coverage == SignatureCoverageLevel.ENTIRE_FILE
    v = verify_package(signed_package, [record_pki.ca_pem_path.read_bytes()])
    assert v.ok and v.signed
    assert [f.topic for f in v.findings] == [
        "signature",
        "certificate",
        "identity",
        "input",
        "results",
        "pages",
        "updates",
    ]
    assert [f.status for f in v.findings] == ["pass"] * 7
    assert SIGNER_NAME in v.findings[0].message
    assert v.findings[0].message.endswith(": intact, covers the whole file.")
    assert v.input_sha256 == DEMO_SHA


def test_without_trust_identity_is_plainly_not_checked(signed_package) -> None:
    v = verify_package(signed_package)
    assert v.ok
    (identity,) = [f for f in v.findings if f.topic == "identity"]
    assert identity.status == "note"
    assert "Identity not checked" in identity.message


def test_untrusted_signer_fails(signed_package, record_pki) -> None:
    v = verify_package(signed_package, [record_pki.other_pem_path.read_bytes()])
    assert not v.ok
    assert v.first_failure.topic == "identity"
    assert v.first_failure.message.startswith(f"The signer {SIGNER_NAME} of ")
    # the reason, not a stand-in: the chain does not reach the certificate given as trusted
    assert "is not trusted: the certificate does not chain to" in v.first_failure.message


def test_flipped_byte_fails(signed_package, record_pki) -> None:
    tampered = _flip_metadata_hash(signed_package)
    assert len(tampered) == len(signed_package) and tampered != signed_package
    assert not _pyhanko_status(tampered, record_pki.ca_der).intact
    v = verify_package(tampered, [record_pki.ca_pem_path.read_bytes()])
    assert not v.ok
    assert v.first_failure.topic == "signature"
    assert "changed after signing" in v.first_failure.message
    # The hash check sees the same change on its own.
    (inp,) = [f for f in v.findings if f.topic == "input"]
    assert inp.status == "fail"


def test_appended_update_changing_a_number_fails(signed_package, record_pki) -> None:
    tampered = replace_attachment(signed_package, "results.json", _bump_a_number)
    # pyHanko keeps intact/valid true for the signed revision; its coverage
    # and difference analysis show the later change.
    status = _pyhanko_status(tampered, record_pki.ca_der)
    assert status.intact and status.valid
    assert status.coverage == SignatureCoverageLevel.ENTIRE_REVISION
    v = verify_package(tampered, [record_pki.ca_pem_path.read_bytes()])
    assert not v.ok
    assert v.first_failure.topic == "signature"
    results = [f for f in v.findings if f.topic == "results" and f.status == "fail"]
    assert results and "nodes.field" in results[0].message


def test_unsigned_package_verifies_input_and_results(built_package) -> None:
    v = verify_package(built_package.pdf)
    assert v.ok and not v.signed
    assert v.findings[0].status == "note" and "Not signed" in v.findings[0].message
    assert [f.status for f in v.findings if f.topic in ("input", "results")][:1] == ["pass"]


def test_unsigned_package_fails_when_identity_was_asked_for(built_package, record_pki) -> None:
    v = verify_package(built_package.pdf, [record_pki.ca_pem_path.read_bytes()])
    assert not v.ok and v.first_failure.topic == "signature"


def test_altered_results_json_fails(built_package) -> None:
    tampered = replace_attachment(built_package.pdf, "results.json", _bump_a_number)
    v = verify_package(tampered)
    assert not v.ok
    assert v.first_failure.topic == "results"
    assert "cases[nominal].nodes.field" in v.first_failure.message


def test_altered_check_status_fails(built_package) -> None:
    def flip(data: bytes) -> bytes:
        doc = json.loads(data)
        check = doc["cases"][0]["checks"][0]
        check["status"] = "fail" if check["status"] == "pass" else "pass"
        return json.dumps(doc).encode()

    v = verify_package(replace_attachment(built_package.pdf, "results.json", flip))
    assert not v.ok and ".status" in v.first_failure.message


def test_altered_input_fails_the_hash_check(built_package) -> None:
    tampered = replace_attachment(
        built_package.pdf, "sensor_supply.toml", lambda b: b.replace(b'"4k7"', b'"5k6"')
    )
    v = verify_package(tampered)
    assert not v.ok and v.first_failure.topic == "input"
    assert "does not match the cover" in v.first_failure.message


def test_hand_made_contract_package(tmp_path) -> None:
    source = DEMO_PROJECT.read_bytes()
    good = _contract_package(source, hashlib.sha256(source).hexdigest())
    v = verify_package(good)
    # Input and results follow the contract, but these are not the pages calcdoc
    # makes of that input, so the package does not verify.
    assert [f.status for f in v.findings if f.topic in ("input", "results")] == ["pass", "pass"]
    assert not v.ok and v.first_failure.topic == "pages"
    assert "differ from a rebuild of the embedded input" in v.first_failure.message
    bad = _contract_package(source, "0" * 64)
    v = verify_package(bad)
    assert v.first_failure.topic == "input" and "0" * 64 in v.first_failure.message


def test_first_difference_tolerances() -> None:
    # Round-off measures compare loosely, physical results tightly.
    assert first_difference({"kcl": {"a": 1e-17}}, {"kcl": {"a": -3e-14}}) is None
    assert first_difference({"v": 1e-17}, {"v": -3e-14}) is not None
    assert first_difference({"v": 24.0}, {"v": 24.0 * (1 + 1e-12)}) is None
    assert first_difference({"s": "pass"}, {"s": "fail"}) == "s: embedded 'pass', recomputed 'fail'"
    absent: list[str] = []
    assert first_difference({"a": 1}, {"a": 1, "b": 2}, absent=absent) is None
    assert absent == ["b"]
    assert "have 'b'" in first_difference({"a": 1, "b": 2}, {"a": 1}, absent=[])


def test_first_difference_shapes_and_infinities() -> None:
    # a list where a table was expected is a difference at that key, not inside it
    assert first_difference({"v": [1]}, {"v": {"a": 1}}) == "v: embedded [1], recomputed {'a': 1}"
    # a tampered results.json may carry Infinity (JSON never does from calcdoc): equal
    # infinities agree, an infinity against a number does not
    inf = float("inf")
    assert first_difference({"v": inf}, {"v": inf}) is None
    assert first_difference({"v": inf}, {"v": 1.0}) == "v: embedded inf, recomputed 1.0"
    assert (
        first_difference({"v": [1.0, 2.0]}, {"v": [1.0]}) == "v: embedded 2 entries, recomputed 1"
    )


def test_keys_a_fresh_solve_adds_are_listed_not_compared(built_package) -> None:
    dropped = ("residual", "condition", "error_estimate", "refinement_steps")

    def older(data: bytes) -> bytes:  # as if built by a calcdoc that did not give these
        doc = json.loads(data)
        for key in dropped:
            del doc["cases"][0]["solver"][key]
        return json.dumps(doc).encode()

    v = verify_package(replace_attachment(built_package.pdf, "results.json", older))
    notes = [f.message for f in v.findings if f.topic == "results" and f.status == "note"]
    first = "cases[nominal].solver"
    assert notes == [
        f"A fresh solve also gives {first}.residual, {first}.condition, "
        f"{first}.error_estimate and 1 more, which the embedded results do not contain "
        "(not compared)."
    ]


# ---------------------------------------------------------------- command line


def test_cli_verify_good_signed(signed_package, record_pki, tmp_path, capsys, caplog) -> None:
    pdf = tmp_path / "signed.pdf"
    pdf.write_bytes(signed_package)
    with caplog.at_level(logging.DEBUG):
        code = main(["verify", str(pdf), "--trust", str(record_pki.ca_pem_path)])
    out, err = capsys.readouterr()
    assert code == 0, out + err
    assert SIGNER_NAME in out and "signed 20" in out
    assert "RESULT: VERIFIED" in out and err == ""


def test_cli_verify_tampered_exits_1_without_tracebacks(
    signed_package, record_pki, tmp_path, capsys, caplog
) -> None:
    pdf = tmp_path / "tampered.pdf"
    pdf.write_bytes(replace_attachment(signed_package, "results.json", _bump_a_number))
    with caplog.at_level(logging.DEBUG):
        code = main(["verify", str(pdf), "--trust", str(record_pki.ca_pem_path)])
    out, err = capsys.readouterr()
    assert code == 1
    assert "RESULT: FAILED" in out and "changed after signature" in out
    assert "Traceback" not in out + err
    assert [r for r in caplog.records if r.levelno >= logging.WARNING] == []


def test_cli_verify_unsigned_and_json(built_package, tmp_path, capsys) -> None:
    pdf = tmp_path / "unsigned.pdf"
    pdf.write_bytes(built_package.pdf)
    assert main(["verify", str(pdf)]) == 0
    assert "VERIFIED (NOT SIGNED)" in capsys.readouterr().out
    assert main(["verify", str(pdf), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["verified"] is True and doc["signed"] is False
    assert doc["input"]["sha256"] == DEMO_SHA


def test_cli_verify_unreadable_exits_2(tmp_path, capsys, record_pki) -> None:
    junk = tmp_path / "junk.pdf"
    junk.write_bytes(b"%PDF-1.7\nnothing here")
    assert main(["verify", str(junk)]) == 2
    err = capsys.readouterr().err
    assert str(junk) in err and "Traceback" not in err
    assert main(["verify", str(tmp_path / "absent.pdf")]) == 2
    assert "absent.pdf" in capsys.readouterr().err
    bad_cert = tmp_path / "bad.pem"
    bad_cert.write_bytes(b"not a certificate")
    good = tmp_path / "good.pdf"
    good.write_bytes(b"%PDF-1.7\n")
    assert main(["verify", str(good), "--trust", str(bad_cert)]) == 2
    assert str(bad_cert) in capsys.readouterr().err


def test_cli_diff_accepts_a_package_as_old(built_package, tmp_path, capsys) -> None:
    pdf = tmp_path / "rev-B.pdf"
    pdf.write_bytes(built_package.pdf)
    assert main(["diff", str(pdf), str(DEMO_PROJECT), "--exit-code"]) == 0
    assert "No differences" in capsys.readouterr().out
