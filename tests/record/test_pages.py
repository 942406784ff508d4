"""Tests for calcdoc.record.pages and calcdoc.record.rebuild, as a user meets them: ``calcdoc verify``.

Falsified packages are made as an attacker would: incremental updates
written by pyHanko's and pypdf's own writers (an empty signature field whose
appearance paints "ALL CHECKS PASS" on a white box over the cover, a
FreeText annotation, a content stream that paints over a page), a whole
rewrite by pypdf with one printed character changed. Allowed additions are
made the same way: a document timestamp (pyHanko's RFC 3161 test
authority), a further invisible signature. The reference for "the record
is unchanged" is the byte-identical build (design brief, section 7: "Two
builds of the same input give byte-identical files").
"""

from __future__ import annotations

import json
import re
from importlib import metadata

import pytest
from record_helpers import (
    DEMO_PROJECT,
    KEY_PASSWORD,
    SIGNER_NAME,
    add_document_timestamp,
    add_fake_stamp,
    add_free_text,
    foreign_sign,
    paint_over_page,
    rewrite_printed_text,
)

import calcdoc
from calcdoc.cli import main
from calcdoc.record.rebuild import render_package
from calcdoc.record.signing import PASSWORD_ENV_VAR

COVER_SUMMARY = (40.0, 560.0, 420.0, 640.0)  # a white box over the middle of the cover sheet


@pytest.fixture
def run_verify(tmp_path, capsys):
    def run(pdf: bytes, *extra: str) -> tuple[int, str, dict]:
        path = tmp_path / "package.pdf"
        path.write_bytes(pdf)
        code = main(["verify", str(path), *extra])
        out, err = capsys.readouterr()
        assert "Traceback" not in out + err and err == ""
        assert main(["verify", str(path), "--json", *extra]) == code
        doc = json.loads(capsys.readouterr().out)
        return code, out, doc

    return run


def _status(doc: dict, topic: str) -> list[str]:
    return [f["status"] for f in doc["findings"] if f["topic"] == topic]


def _trust(record_pki) -> tuple[str, str]:
    return ("--trust", str(record_pki.ca_pem_path))


# ---------------------------------------------------------------- genuine packages


def test_genuine_unsigned_package_is_its_own_rebuild(built_package, run_verify) -> None:
    code, out, doc = run_verify(built_package.pdf)
    assert code == 0, out
    assert f"a rebuild gives the same {len(built_package.pdf)} bytes" in out
    assert "RESULT: VERIFIED (NOT SIGNED)" in out
    assert _status(doc, "pages") == ["pass"] and _status(doc, "updates") == []


def test_genuine_signed_package_names_what_signing_added(
    signed_package, built_package, record_pki, run_verify
) -> None:
    assert signed_package.startswith(built_package.pdf)  # signing is an incremental update
    code, out, doc = run_verify(signed_package, *_trust(record_pki))
    assert code == 0, out
    assert f"begins with exactly the {len(built_package.pdf)} bytes a rebuild gives" in out
    assert (
        f"signature 'Signature1' by {SIGNER_NAME} (visible, in the box kept for the "
        "signature on sheet 1)"
    ) in out
    assert _status(doc, "updates") == ["pass"] and doc["verified"] is True


def test_document_timestamp_and_invisible_signature_may_follow(
    signed_package, record_pki, tmp_path, run_verify
) -> None:
    later = add_document_timestamp(signed_package)
    later = foreign_sign(later, record_pki.p12_path, box=None, password=KEY_PASSWORD)
    code, out, doc = run_verify(later, *_trust(record_pki))
    assert code == 0, out
    (updates,) = [f["message"] for f in doc["findings"] if f["topic"] == "updates"]
    assert updates.startswith("3 update(s) appended after the build add only:")
    assert re.search(r"timestamp 'Timestamp-[0-9a-f-]+' \(not visible on any page\)", updates)
    assert f"signature 'Foreign3' by {SIGNER_NAME} (not visible on any page)" in updates


# ---------------------------------------------------------------- falsified by a later update

FALSIFICATIONS = {
    "empty signature field painting over the cover": (
        lambda pdf: add_fake_stamp(pdf, COVER_SUMMARY),
        "adds an unsigned signature field 'Approval' whose appearance shows on sheet 1",
    ),
    "FreeText annotation": (
        lambda pdf: add_free_text(pdf, COVER_SUMMARY),
        "adds a FreeText annotation on sheet 1",
    ),
    "content stream painting over the cover": (
        lambda pdf: paint_over_page(pdf, COVER_SUMMARY),
        "changes sheet 1 (its content)",
    ),
}


@pytest.mark.parametrize("trusted", [False, True], ids=["without-trust", "with-trust"])
@pytest.mark.parametrize("how", list(FALSIFICATIONS))
def test_update_over_a_signed_package_fails(
    how, trusted, signed_package, record_pki, run_verify
) -> None:
    falsify, phrase = FALSIFICATIONS[how]
    tampered = falsify(signed_package)
    assert tampered.startswith(signed_package)  # an incremental update: the signature stays intact
    code, out, doc = run_verify(tampered, *(_trust(record_pki) if trusted else ()))
    assert code == 1
    assert f"FAIL  An update appended after the record was built {phrase}" in out
    assert "RESULT: FAILED" in out and doc["verified"] is False
    assert _status(doc, "pages") == ["pass"]  # the record as built is still the rebuild


@pytest.mark.parametrize("how", list(FALSIFICATIONS))
def test_update_over_an_unsigned_package_fails(how, built_package, run_verify) -> None:
    falsify, phrase = FALSIFICATIONS[how]
    code, out, _doc = run_verify(falsify(built_package.pdf))
    assert code == 1
    assert f"RESULT: FAILED: An update appended after the record was built {phrase}" in out


def test_second_visible_signature_over_the_page_fails(signed_package, record_pki, run_verify):
    # A real, valid signature by the trusted signer, but its stamp covers the cover's text.
    tampered = foreign_sign(signed_package, record_pki.p12_path, box=COVER_SUMMARY)
    code, out, _doc = run_verify(tampered, *_trust(record_pki))
    assert code == 1
    assert "adds signature 'Foreign2' whose stamp covers part of sheet 1 outside the box" in out


def test_stamp_in_the_kept_box_but_over_the_first_one_fails(
    signed_package, built_package, record_pki, run_verify
) -> None:
    page, box = built_package.signature_box
    tampered = foreign_sign(signed_package, record_pki.p12_path, box=box, page=page)
    code, out, _doc = run_verify(tampered, *_trust(record_pki))
    assert code == 1
    assert "is drawn over an earlier stamp in the signature box on sheet 1" in out


# ---------------------------------------------------------------- falsified by a rewrite


def test_rewritten_unsigned_package_with_a_changed_character_fails(built_package, run_verify):
    # The embedded input and results are left alone: only a printed character changes.
    tampered = rewrite_printed_text(built_package.pdf, page=6)
    code, out, doc = run_verify(tampered)
    assert code == 1
    assert _status(doc, "input") == ["pass"] and _status(doc, "results") == ["pass"]
    assert "RESULT: FAILED: The pages differ from a rebuild of the embedded input" in out
    assert "changes sheet 7 (its content)" in out


# ---------------------------------------------------------------- packages that cannot be compared


def test_other_software_is_named_not_passed(built_package, run_verify, monkeypatch) -> None:
    real = metadata.version

    def older_reportlab(name: str) -> str:
        return "4.0.0" if name == "reportlab" else real(name)

    monkeypatch.setattr(metadata, "version", older_reportlab)
    code, out, doc = run_verify(built_package.pdf)
    assert code == 1
    assert "RESULT: NOT VERIFIED: The pages were not compared with a rebuild" in out
    assert f"reportlab {real('reportlab')} (here 4.0.0)" in out
    assert _status(doc, "pages") == ["unchecked"]


def test_package_with_previous_revision_is_rebuilt(tmp_path, run_verify) -> None:
    old = calcdoc.load(DEMO_PROJECT)
    text = DEMO_PROJECT.read_text(encoding="utf-8").replace('value = "4k7"', 'value = "5k6"')
    new_path = tmp_path / "supply_C.toml"
    new_path.write_text(text.replace('revision = "B"', 'revision = "C"', 1), encoding="utf-8")
    package = render_package(calcdoc.load(new_path), previous=old)
    code, out, _doc = run_verify(package.pdf)
    assert code == 0, out
    assert "a rebuild gives the same" in out


def test_build_with_previous_carries_its_input_and_verifies(tmp_path, run_verify, capsys) -> None:
    new_path = tmp_path / "supply_C.toml"
    text = DEMO_PROJECT.read_text(encoding="utf-8").replace('revision = "B"', 'revision = "C"', 1)
    new_path.write_text(text, encoding="utf-8")
    out_pdf = tmp_path / "C.pdf"
    assert (
        main(["build", str(new_path), "-o", str(out_pdf), "-q", "--previous", str(DEMO_PROJECT)])
        == 0
    )
    capsys.readouterr()
    from calcdoc.record.package import embedded_previous

    assert embedded_previous(out_pdf.read_bytes()) is not None
    code, out, _doc = run_verify(out_pdf.read_bytes())
    assert code == 0, out


def test_previous_without_its_input_is_not_compared(tmp_path, run_verify) -> None:
    # a package laid out with a comparison but without the earlier input attached
    from calcdoc.pipeline import analyse
    from calcdoc.record.compare import compare
    from calcdoc.report.package import build_package

    new_path = tmp_path / "supply_C.toml"
    text = DEMO_PROJECT.read_text(encoding="utf-8").replace('revision = "B"', 'revision = "C"', 1)
    new_path.write_text(text, encoding="utf-8")
    results = analyse(calcdoc.load(new_path), closed_form=True)
    comparison = compare(analyse(calcdoc.load(DEMO_PROJECT)), results)
    pdf = build_package(results, previous=comparison).pdf
    code, out, _doc = run_verify(pdf)
    assert code == 1
    assert (
        "NOT VERIFIED: The pages were not compared with a rebuild: it was built with a "
        "comparison to an earlier revision (--previous) whose input it does not carry"
    ) in out


def test_build_and_sign_then_verify_through_the_command_line(
    tmp_path, record_pki, monkeypatch, capsys
) -> None:
    monkeypatch.setenv(PASSWORD_ENV_VAR, KEY_PASSWORD.decode())
    out_pdf = tmp_path / "signed.pdf"
    code = main(
        ["build", str(DEMO_PROJECT), "-o", str(out_pdf), "-q", "--sign", str(record_pki.p12_path)]
    )
    assert code == 0
    capsys.readouterr()
    assert main(["verify", str(out_pdf), "--trust", str(record_pki.ca_pem_path)]) == 0
    out = capsys.readouterr().out
    assert "begins with exactly the" in out and "RESULT: VERIFIED" in out
