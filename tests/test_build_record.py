"""`calcdoc build --previous` and `--sign`, read back by pypdf and pyHanko's own validation."""

from __future__ import annotations

import datetime as dt
import io
from pathlib import Path

import pytest
from pypdf import PdfReader

from calcdoc.cli import main

ROOT = Path(__file__).resolve().parent
DEMO = ROOT.parent / "projects" / "sensor_supply.toml"


def text(pdf: Path) -> str:
    return " ".join(" ".join(p.extract_text() for p in PdfReader(pdf).pages).split())


@pytest.fixture
def revisions(tmp_path):
    src = DEMO.read_text()
    old = tmp_path / "old.toml"
    old.write_text(
        src.replace('value = "4k7"', 'value = "5k6"').replace('revision = "B"', 'revision = "A"', 1)
    )
    new = tmp_path / "sensor_supply.toml"
    new.write_text(src)
    return old, new


def test_previous_package_gives_a_changes_section(tmp_path, revisions, capsys):
    old, new = revisions
    assert main(["build", str(old), "-q", "-o", str(tmp_path / "old.pdf")]) == 0
    # the fabricated old file keeps revision B in its history: the history check says so
    assert "Revision history error" in capsys.readouterr().err
    assert (
        main(
            [
                "build",
                str(new),
                "-q",
                "-o",
                str(tmp_path / "new.pdf"),
                "--previous",
                str(tmp_path / "old.pdf"),
            ]
        )
        == 0
    )
    flat = text(tmp_path / "new.pdf")
    assert "1 Changes from revision A" in flat
    assert "elements.Rs.value" in flat and "5k6" in flat and "4k7" in flat
    assert "Checks whose status changed" in flat and "Rs power" in flat  # checks named in words
    assert "revision is still" not in capsys.readouterr().err


def test_same_revision_with_changed_inputs_warns(tmp_path, revisions, capsys):
    old, new = revisions
    old.write_text(old.read_text().replace('revision = "A"', 'revision = "B"', 1))
    assert (
        main(["build", str(new), "-q", "-o", str(tmp_path / "n.pdf"), "--previous", str(old)]) == 0
    )
    err = capsys.readouterr().err
    assert "warning" in err and "revision is still 'B'" in err


def _key(tmp_path: Path) -> tuple[Path, Path]:
    from cryptography import x509
    from cryptography.hazmat.primitives import hashes, serialization
    from cryptography.hazmat.primitives.asymmetric import rsa
    from cryptography.hazmat.primitives.serialization import pkcs12
    from cryptography.x509.oid import NameOID

    key = rsa.generate_private_key(public_exponent=65537, key_size=2048)
    name = x509.Name([x509.NameAttribute(NameOID.COMMON_NAME, "C. Checker")])
    start = dt.datetime(2026, 1, 1, tzinfo=dt.timezone.utc)
    cert = (
        x509.CertificateBuilder()
        .subject_name(name)
        .issuer_name(name)
        .public_key(key.public_key())
        .serial_number(7)
        .not_valid_before(start)
        .not_valid_after(start + dt.timedelta(days=3650))
        .add_extension(
            x509.KeyUsage(True, True, False, False, False, False, False, False, False),
            critical=True,
        )
        .sign(key, hashes.SHA256())
    )
    p12 = tmp_path / "key.p12"
    p12.write_bytes(
        pkcs12.serialize_key_and_certificates(
            b"k", key, cert, None, serialization.BestAvailableEncryption(b"pw")
        )
    )
    pem = tmp_path / "cert.pem"
    pem.write_bytes(cert.public_bytes(serialization.Encoding.PEM))
    return p12, pem


def test_signed_build_validates_and_verifies(tmp_path, monkeypatch, capsys):
    from pyhanko.pdf_utils.reader import PdfFileReader
    from pyhanko.sign.validation import validate_pdf_signature
    from pyhanko_certvalidator import ValidationContext
    from pyhanko_certvalidator.context import CertValidationPolicySpec  # noqa: F401 - API presence

    p12, pem = _key(tmp_path)
    monkeypatch.setenv("CALCDOC_KEY_PASSWORD", "pw")
    out = tmp_path / "signed.pdf"
    assert main(["build", str(DEMO), "-q", "-o", str(out), "--sign", str(p12)]) == 0
    # pyHanko's own validation: intact and covering the whole file
    from asn1crypto import pem as asn1_pem
    from asn1crypto import x509 as asn1_x509

    _, _, der = asn1_pem.unarmor(pem.read_bytes())
    vc = ValidationContext(trust_roots=[asn1_x509.Certificate.load(der)], allow_fetching=False)
    sig = PdfFileReader(io.BytesIO(out.read_bytes())).embedded_signatures[0]
    status = validate_pdf_signature(sig, vc)
    assert status.intact and status.coverage.name == "ENTIRE_FILE"
    capsys.readouterr()
    assert main(["verify", str(out), "--trust", str(pem)]) == 0
    assert "VERIFIED" in capsys.readouterr().out
    data = bytearray(out.read_bytes())
    i = data.find(b"stream", len(data) // 3)
    data[i + 40] ^= 0x01  # flip one byte of a page stream, inside the signed range
    bad = tmp_path / "bad.pdf"
    bad.write_bytes(bytes(data))
    assert main(["verify", str(bad), "--trust", str(pem)]) == 1


def test_wrong_password_is_an_input_error(tmp_path, monkeypatch, capsys):
    p12, _ = _key(tmp_path)
    monkeypatch.setenv("CALCDOC_KEY_PASSWORD", "nope")
    out = tmp_path / "s.pdf"
    assert main(["build", str(DEMO), "-q", "-o", str(out), "--sign", str(p12)]) == 2
    assert "cannot sign" in capsys.readouterr().err
    assert not out.exists()
