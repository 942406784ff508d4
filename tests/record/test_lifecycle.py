"""A record's life through the command line: build, revise, compare, sign, verify.

Outside references: pyHanko's validation (through ``calcdoc verify``, whose
own agreement with pyHanko is tested in test_verify.py), the closed-form
divider of the demo project (see test_compare.py) and pypdf text extraction.
"""

from __future__ import annotations

import json
from io import BytesIO

from pypdf import PdfReader
from record_helpers import DEMO_PROJECT, KEY_PASSWORD, SIGNER_NAME, replace_attachment

from calcdoc.cli import main
from calcdoc.record.package import embedded_previous
from calcdoc.record.signing import PASSWORD_ENV_VAR


def _revision_c(text: str) -> str:
    text = text.replace('value = "4k7"', 'value = "5k6"')
    head, _sep, rest = text.partition('revision = "B"')
    entry = (
        '\n[[document.history]]\nrevision = "C"\ndate = 2026-12-01\n'
        'description = "Sensor load changed to 5k6"\n'
    )
    return (head + 'revision = "C"' + rest).replace("\n[signoff]", entry + "\n[signoff]", 1)


def test_revise_compare_sign_and_verify(tmp_path, record_pki, monkeypatch, capsys) -> None:
    old_toml = tmp_path / "supply_B.toml"
    new_toml = tmp_path / "supply_C.toml"
    old_toml.write_bytes(DEMO_PROJECT.read_bytes())
    new_toml.write_text(_revision_c(DEMO_PROJECT.read_text(encoding="utf-8")), encoding="utf-8")
    old_pdf, new_pdf = tmp_path / "B.pdf", tmp_path / "C.pdf"
    monkeypatch.setenv(PASSWORD_ENV_VAR, KEY_PASSWORD.decode())

    assert main(["build", str(old_toml), "-o", str(old_pdf), "-q"]) == 0
    assert (
        main(
            [
                "build",
                str(new_toml),
                "-o",
                str(new_pdf),
                "-q",
                "--previous",
                str(old_pdf),
                "--sign",
                str(record_pki.p12_path),
            ]
        )
        == 0
    )
    err = capsys.readouterr().err
    assert "still" not in err  # the revision was raised: no same-revision warning

    text = "\n".join(p.extract_text() for p in PdfReader(BytesIO(new_pdf.read_bytes())).pages)
    assert "Changes from revision B" in text

    # Two packages compared: the diff names the resistor and the changed check.
    assert main(["diff", str(old_pdf), str(new_pdf), "--json", "--exit-code"]) == 1
    doc = json.loads(capsys.readouterr().out)
    assert [
        (i["subject"], i["old"], i["new"]) for i in doc["inputs"] if i["section"] == "element"
    ] == [("Rs", "4k7", "5k6")]
    assert [(s["case"], s["id"]) for s in doc["status_changes"]] == [("High line", "Rs.power")]

    code = main(["verify", str(new_pdf), "--trust", str(record_pki.ca_pem_path)])
    out = capsys.readouterr().out
    assert SIGNER_NAME in out and "PASS  Signature 'Signature1'" in out
    if embedded_previous(new_pdf.read_bytes()) is None:
        # Built by a `calcdoc build` that does not attach the earlier input: the
        # pages cannot be rebuilt, and the verdict says so rather than passing.
        assert code == 1 and "RESULT: NOT VERIFIED" in out and "--previous" in out
    else:
        assert code == 0 and "RESULT: VERIFIED" in out

    def bump(data: bytes) -> bytes:
        return data.replace(b'"5k6"', b'"6k8"')

    tampered = tmp_path / "C-tampered.pdf"
    tampered.write_bytes(replace_attachment(new_pdf.read_bytes(), "supply_C.toml", bump))
    assert main(["verify", str(tampered), "--trust", str(record_pki.ca_pem_path)]) == 1
    out = capsys.readouterr().out
    assert "RESULT: FAILED" in out and "changed after signature" in out
