"""Tests for calcdoc.record.signing (PAdES B-B signing and signature checks).

The reference for "signed correctly" is outside calcdoc: pyHanko's own
validation API, the certificates made here with the cryptography library,
and pypdf reading the signed file.
"""

from __future__ import annotations

import datetime as dt
import logging
from collections.abc import Iterator
from dataclasses import FrozenInstanceError
from io import BytesIO
from pathlib import Path

import matplotlib
import pytest
from asn1crypto import x509 as asn1_x509
from cryptography import x509
from cryptography.hazmat.primitives import hashes, serialization
from cryptography.hazmat.primitives.asymmetric import ec
from cryptography.hazmat.primitives.serialization import pkcs12
from cryptography.x509.oid import NameOID
from pyhanko.pdf_utils import generic
from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter
from pyhanko.pdf_utils.reader import PdfFileReader
from pyhanko.sign.validation import validate_pdf_signature
from pyhanko.sign.validation.status import SignatureCoverageLevel
from pyhanko_certvalidator import ValidationContext
from pypdf import PdfReader, PdfWriter
from pypdf.generic import DictionaryObject, NameObject, StreamObject
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.ttfonts import TTFont
from reportlab.pdfgen import canvas

from calcdoc.record.signing import (
    PASSWORD_ENV_VAR,
    SignatureReport,
    SigningError,
    TrustRootError,
    UnreadablePackageError,
    key_password,
    sign_package,
    signature_findings,
)

FONT = Path(matplotlib.get_data_path()) / "fonts" / "ttf" / "DejaVuSans.ttf"
PASSWORD = b"correct horse"
SIGNER_CN = "Ada Engineer"
PAGE_TEXT = "Sheet 1: R1 = 10 k\u03a9 \u00b1 1 %"
BOX = (320.0, 40.0, 560.0, 110.0)


# ---------------------------------------------------------------------------
# Test PKI and documents
# ---------------------------------------------------------------------------


def _name(cn: str) -> x509.Name:
    return x509.Name([x509.NameAttribute(NameOID.COMMON_NAME, cn)])


def _key_usage(*, sign_certs: bool) -> x509.KeyUsage:
    return x509.KeyUsage(
        digital_signature=not sign_certs,
        content_commitment=not sign_certs,
        key_encipherment=False,
        data_encipherment=False,
        key_agreement=False,
        key_cert_sign=sign_certs,
        crl_sign=sign_certs,
        encipher_only=False,
        decipher_only=False,
    )


def _make_ca(cn: str) -> tuple[ec.EllipticCurvePrivateKey, x509.Certificate]:
    key = ec.generate_private_key(ec.SECP256R1())
    now = dt.datetime.now(dt.timezone.utc)
    cert = (
        x509.CertificateBuilder()
        .subject_name(_name(cn))
        .issuer_name(_name(cn))
        .public_key(key.public_key())
        .serial_number(x509.random_serial_number())
        .not_valid_before(now - dt.timedelta(days=1))
        .not_valid_after(now + dt.timedelta(days=365))
        .add_extension(x509.BasicConstraints(ca=True, path_length=None), critical=True)
        .add_extension(_key_usage(sign_certs=True), critical=True)
        .add_extension(x509.SubjectKeyIdentifier.from_public_key(key.public_key()), critical=False)
        .sign(key, hashes.SHA256())
    )
    return key, cert


class Pki:
    """A test CA, a signer certificate it issued, and that signer's PKCS#12."""

    def __init__(self, p12_path: Path) -> None:
        self.ca_key, self.ca_cert = _make_ca("calcdoc test CA")
        _other_key, self.other_ca_cert = _make_ca("unrelated test CA")
        self.signer_key = ec.generate_private_key(ec.SECP256R1())
        now = dt.datetime.now(dt.timezone.utc)
        self.signer_cert = (
            x509.CertificateBuilder()
            .subject_name(_name(SIGNER_CN))
            .issuer_name(self.ca_cert.subject)
            .public_key(self.signer_key.public_key())
            .serial_number(x509.random_serial_number())
            .not_valid_before(now - dt.timedelta(days=1))
            .not_valid_after(now + dt.timedelta(days=365))
            .add_extension(x509.BasicConstraints(ca=False, path_length=None), critical=True)
            .add_extension(_key_usage(sign_certs=False), critical=True)
            .add_extension(
                x509.AuthorityKeyIdentifier.from_issuer_public_key(self.ca_key.public_key()),
                critical=False,
            )
            .sign(self.ca_key, hashes.SHA256())
        )
        p12_path.write_bytes(
            pkcs12.serialize_key_and_certificates(
                b"signer",
                self.signer_key,
                self.signer_cert,
                [self.ca_cert],
                serialization.BestAvailableEncryption(PASSWORD),
            )
        )
        self.p12_path = p12_path

    @property
    def ca_pem(self) -> bytes:
        return self.ca_cert.public_bytes(serialization.Encoding.PEM)

    @property
    def ca_der(self) -> bytes:
        return self.ca_cert.public_bytes(serialization.Encoding.DER)

    @property
    def other_ca_pem(self) -> bytes:
        return self.other_ca_cert.public_bytes(serialization.Encoding.PEM)


def _reportlab_pdf(pages: int = 2) -> bytes:
    """A small PDF whose only font is DejaVu Sans, embedded by reportlab."""
    pdfmetrics.registerFont(TTFont("DejaVuSans", str(FONT)))
    buf = BytesIO()
    # pageCompression=0 keeps the page text readable in the file, so a test
    # can change a byte of it; initialFontName keeps Helvetica out.
    c = canvas.Canvas(
        buf, pageCompression=0, invariant=1, initialFontName="DejaVuSans", initialFontSize=11
    )
    for n in range(pages):
        c.drawString(72, 720, PAGE_TEXT if n == 0 else f"Sheet {n + 1}")
        c.showPage()
    c.save()
    return buf.getvalue()


@pytest.fixture(scope="module")
def pki(tmp_path_factory: pytest.TempPathFactory) -> Pki:
    return Pki(tmp_path_factory.mktemp("pki") / "signer.p12")


@pytest.fixture(scope="module")
def unsigned_pdf() -> bytes:
    return _reportlab_pdf()


@pytest.fixture(scope="module")
def signed(pki: Pki, unsigned_pdf: bytes) -> tuple[bytes, dt.datetime, dt.datetime]:
    before = dt.datetime.now(dt.timezone.utc).replace(microsecond=0)
    data = sign_package(
        unsigned_pdf,
        pki.p12_path,
        PASSWORD,
        page=1,
        box=BOX,
        font_path=FONT,
        reason="Prepared",
        location="Test bench",
    )
    after = dt.datetime.now(dt.timezone.utc) + dt.timedelta(seconds=1)
    return data, before, after


@pytest.fixture(scope="module")
def signed_pdf(signed: tuple[bytes, dt.datetime, dt.datetime]) -> bytes:
    return signed[0]


def _pyhanko_status(pdf: bytes, trust_der: bytes):
    reader = PdfFileReader(BytesIO(pdf))
    (sig,) = reader.embedded_signatures
    context = ValidationContext(
        trust_roots=[asn1_x509.Certificate.load(trust_der)], allow_fetching=False
    )
    return sig, validate_pdf_signature(sig, signer_validation_context=context)


def _changed_page_content(signed_pdf: bytes) -> bytes:
    """Append an incremental update that changes the value printed on page 1."""
    writer = IncrementalPdfFileWriter(BytesIO(signed_pdf))
    page = writer.root["/Pages"]["/Kids"][0].get_object()
    old = page["/Contents"].get_object().data
    assert b"= 10 k" in old
    page["/Contents"] = writer.add_object(
        generic.StreamObject(stream_data=old.replace(b"= 10 k", b"= 99 k"))
    )
    writer.update_container(page)
    out = BytesIO()
    writer.write(out)
    return out.getvalue()


# ---------------------------------------------------------------------------
# Signing, checked by pyHanko's own validator
# ---------------------------------------------------------------------------


def test_pyhanko_reports_signature_intact_trusted_and_covering_whole_file(
    pki: Pki, signed_pdf: bytes
) -> None:
    # Source: pyHanko's validation API (validate_pdf_signature / PdfSignatureStatus).
    sig, status = _pyhanko_status(signed_pdf, pki.ca_der)
    assert status.intact
    assert status.valid
    assert status.trusted
    assert status.coverage == SignatureCoverageLevel.ENTIRE_FILE
    # PAdES baseline signatures use this sub-filter (ETSI EN 319 142-1, 5.3).
    assert sig.sig_object["/SubFilter"] == "/ETSI.CAdES.detached"
    # The certificate in the signature is the one the cryptography library made.
    assert sig.signer_cert.dump() == pki.signer_cert.public_bytes(serialization.Encoding.DER)


def test_visible_field_is_on_requested_page_and_box(signed_pdf: bytes) -> None:
    reader = PdfReader(BytesIO(signed_pdf))
    assert "/Annots" not in reader.pages[0]
    widgets = [a.get_object() for a in reader.pages[1]["/Annots"]]
    sig_widgets = [w for w in widgets if w.get("/FT") == "/Sig"]
    assert len(sig_widgets) == 1
    assert [float(v) for v in sig_widgets[0]["/Rect"]] == pytest.approx(list(BOX))


def _stamp_text(signed_pdf: bytes) -> str:
    """Text of the signature stamp, extracted by pypdf from its appearance stream."""
    reader = PdfReader(BytesIO(signed_pdf))
    widget = next(
        a.get_object() for a in reader.pages[1]["/Annots"] if a.get_object().get("/FT") == "/Sig"
    )
    appearance = widget["/AP"]["/N"].get_object()
    x1, y1, x2, y2 = (float(v) for v in appearance["/BBox"])
    writer = PdfWriter()
    page = writer.add_blank_page(width=x2 - x1, height=y2 - y1)
    form = appearance.clone(writer)
    assert form.indirect_reference is not None
    page[NameObject("/Resources")] = DictionaryObject(
        {NameObject("/XObject"): DictionaryObject({NameObject("/Stamp"): form.indirect_reference})}
    )
    content = StreamObject()
    content.set_data(b"q /Stamp Do Q")
    page.replace_contents(content)
    out = BytesIO()
    writer.write(out)
    return PdfReader(out).pages[0].extract_text()


def test_stamp_names_signer_and_signing_time(
    signed: tuple[bytes, dt.datetime, dt.datetime],
) -> None:
    signed_pdf, before, _after = signed
    text = _stamp_text(signed_pdf)
    # The stamp names the key holder: the common name of the certificate made above.
    assert f"Digitally signed by {SIGNER_CN}" in text
    report = signature_findings(signed_pdf)
    when = report.signatures[0].signing_time
    assert when is not None
    assert when.strftime("%Y-%m-%d %H:%M:%S") in text
    assert before.strftime("%Y-%m-%d") in text


def _font_problems(resources, seen: set[int], where: str) -> Iterator[str]:
    """Yield a description of every font in ``resources`` that is not embedded."""
    resources = resources.get_object() if resources is not None else None
    if not resources:
        return
    fonts = resources.get("/Font")
    for key, ref in (fonts.get_object() if fonts else {}).items():
        font = ref.get_object()
        targets = [font]
        if font.get("/Subtype") == "/Type0":
            targets = [d.get_object() for d in font["/DescendantFonts"]]
        for target in targets:
            descriptor = target.get("/FontDescriptor")
            descriptor = descriptor.get_object() if descriptor is not None else {}
            if not any(k in descriptor for k in ("/FontFile", "/FontFile2", "/FontFile3")):
                yield f"{where}: font {key} ({target.get('/BaseFont')}) is not embedded"
    xobjects = resources.get("/XObject")
    for key, ref in (xobjects.get_object() if xobjects else {}).items():
        xobj = ref.get_object()
        if id(xobj) in seen or xobj.get("/Subtype") != "/Form":
            continue
        seen.add(id(xobj))
        yield from _font_problems(xobj.get("/Resources"), seen, f"{where}/{key}")


def _all_font_problems(pdf: bytes) -> tuple[list[str], int]:
    reader = PdfReader(BytesIO(pdf))
    problems: list[str] = []
    appearances = 0
    seen: set[int] = set()
    for number, page in enumerate(reader.pages):
        problems += _font_problems(page.get("/Resources"), seen, f"page {number}")
        for annot_ref in page.get("/Annots", []):
            annot = annot_ref.get_object()
            for state in ("/N", "/R", "/D"):
                ap = annot.get("/AP", {}).get(state)
                if ap is None:
                    continue
                appearances += 1
                problems += _font_problems(
                    ap.get_object().get("/Resources"), seen, f"page {number} annot {state}"
                )
    return problems, appearances


def test_every_font_in_signed_file_is_embedded(signed_pdf: bytes) -> None:
    # PDF fonts are embedded when their descriptor holds /FontFile, /FontFile2
    # or /FontFile3 (ISO 32000-1, 9.8 and 9.9).
    problems, appearances = _all_font_problems(signed_pdf)
    assert appearances >= 1  # the stamp's appearance stream was examined
    assert problems == []


def test_font_walk_detects_a_non_embedded_font() -> None:
    # The checker above must be able to fail: a plain reportlab page uses
    # non-embedded Helvetica.
    buf = BytesIO()
    c = canvas.Canvas(buf)
    c.drawString(72, 720, "Helvetica")
    c.showPage()
    c.save()
    problems, _ = _all_font_problems(buf.getvalue())
    assert any("Helvetica" in p for p in problems)


# ---------------------------------------------------------------------------
# signature_findings
# ---------------------------------------------------------------------------


def test_findings_for_good_signature_with_trusted_ca(
    pki: Pki, signed: tuple[bytes, dt.datetime, dt.datetime]
) -> None:
    signed_pdf, before, after = signed
    report = signature_findings(signed_pdf, [pki.ca_pem])
    assert isinstance(report, SignatureReport)
    assert report.ok
    assert report.first_failure is None
    assert report.identity_checked is True
    (finding,) = report.signatures
    assert finding.signer_name == SIGNER_CN
    assert finding.intact
    assert finding.covers_whole_file
    assert finding.coverage == "ENTIRE_FILE"
    assert finding.modification_level == "NONE"
    assert finding.trusted is True
    assert finding.field_name
    assert finding.signing_time is not None
    assert before <= finding.signing_time <= after
    with pytest.raises(FrozenInstanceError):
        finding.intact = False  # type: ignore[misc]


def test_der_trust_root_is_accepted(pki: Pki, signed_pdf: bytes) -> None:
    report = signature_findings(signed_pdf, [pki.ca_der])
    assert report.signatures[0].trusted is True


def test_unrelated_ca_is_not_trusted(pki: Pki, signed_pdf: bytes) -> None:
    report = signature_findings(signed_pdf, [pki.other_ca_pem])
    assert report.identity_checked is True
    assert report.signatures[0].trusted is False
    assert report.signatures[0].intact
    assert not report.ok
    assert "not trusted" in report.first_failure


def test_without_trust_roots_identity_is_not_checked(signed_pdf: bytes) -> None:
    report = signature_findings(signed_pdf)
    assert report.identity_checked is False
    assert report.signatures[0].trusted is None
    assert report.ok


def test_unsigned_pdf_has_no_signatures_and_is_ok(unsigned_pdf: bytes) -> None:
    report = signature_findings(unsigned_pdf)
    assert report.signatures == ()
    assert report.ok
    assert report.first_failure is None


def test_flipped_byte_in_signed_range_is_detected(pki: Pki, signed_pdf: bytes) -> None:
    reader = PdfFileReader(BytesIO(signed_pdf))
    (sig,) = reader.embedded_signatures
    start, length = sig.byte_range[0], sig.byte_range[1]
    pos = signed_pdf.index(b"Sheet 1: R1")
    assert start <= pos < start + length  # the byte lies inside the signed range
    tampered = signed_pdf[:pos] + b"X" + signed_pdf[pos + 1 :]
    # Cross-check with pyHanko's own validator first.
    _sig, status = _pyhanko_status(tampered, pki.ca_der)
    assert not status.intact
    report = signature_findings(tampered, [pki.ca_pem])
    assert not report.ok
    assert not report.signatures[0].intact
    assert "changed after signing" in report.first_failure


def test_incremental_update_changing_page_content_is_detected(pki: Pki, signed_pdf: bytes) -> None:
    tampered = _changed_page_content(signed_pdf)
    _sig, status = _pyhanko_status(tampered, pki.ca_der)
    # pyHanko keeps intact/valid true here (the signed revision is unchanged);
    # only its coverage and difference analysis show the change.
    assert status.intact and status.valid
    assert status.coverage == SignatureCoverageLevel.ENTIRE_REVISION
    assert status.docmdp_ok is False
    report = signature_findings(tampered, [pki.ca_pem])
    assert not report.ok
    finding = report.signatures[0]
    assert finding.intact
    assert not finding.covers_whole_file
    assert finding.modification_level == "OTHER"
    assert finding.modification_detail
    assert "changed after signature" in report.first_failure
    assert "alters the signed document" in report.first_failure


def test_no_warning_logs_escape_on_tampered_file(
    pki: Pki, signed_pdf: bytes, caplog: pytest.LogCaptureFixture
) -> None:
    tampered = _changed_page_content(signed_pdf)
    # Without silencing, pyHanko logs a WARNING with traceback for this file
    # (so the check below is able to fail).
    with caplog.at_level(logging.DEBUG):
        _pyhanko_status(tampered, pki.other_ca_cert.public_bytes(serialization.Encoding.DER))
    assert any(r.levelno >= logging.WARNING for r in caplog.records)
    caplog.clear()
    with caplog.at_level(logging.DEBUG):
        report = signature_findings(tampered, [pki.other_ca_pem])
        signature_findings(tampered)
    assert not report.ok
    assert [r for r in caplog.records if r.levelno >= logging.WARNING] == []
    # The logging configuration is restored afterwards.
    assert logging.getLogger("pyhanko").propagate is True


def test_second_signature_keeps_first_one_valid(pki: Pki, signed_pdf: bytes) -> None:
    twice = sign_package(
        signed_pdf,
        pki.p12_path,
        PASSWORD,
        page=0,
        box=(72.0, 40.0, 300.0, 110.0),
        font_path=FONT,
        reason="Checked",
    )
    report = signature_findings(twice, [pki.ca_pem])
    assert len(report.signatures) == 2
    first, second = report.signatures
    assert first.field_name != second.field_name
    assert first.coverage == "ENTIRE_REVISION"
    assert first.covers_whole_file
    assert second.coverage == "ENTIRE_FILE"
    assert report.ok, report.first_failure
    assert _all_font_problems(twice)[0] == []


@pytest.mark.parametrize(
    "data",
    [b"", b"garbage, not a PDF", b"%PDF-1.7\nnot really a PDF\n%%EOF\n"],
    ids=["empty", "garbage", "pdf-header-only"],
)
def test_unparseable_file_raises_unreadable_package_error(data: bytes) -> None:
    with pytest.raises(UnreadablePackageError):
        signature_findings(data)


def test_truncated_pdf_raises_unreadable_package_error(unsigned_pdf: bytes) -> None:
    with pytest.raises(UnreadablePackageError):
        signature_findings(unsigned_pdf[: len(unsigned_pdf) // 2])


# ---------------------------------------------------------------------------
# Key handling
# ---------------------------------------------------------------------------


def test_wrong_password_raises_signing_error(pki: Pki, unsigned_pdf: bytes) -> None:
    with pytest.raises(SigningError, match=r"^wrong password for the signing key .*signer\.p12$"):
        sign_package(
            unsigned_pdf,
            pki.p12_path,
            b"wrong password",
            page=0,
            box=BOX,
            font_path=FONT,
            reason="Prepared",
        )


def test_missing_key_file_raises_signing_error(tmp_path: Path, unsigned_pdf: bytes) -> None:
    with pytest.raises(SigningError, match=r"^the signing key file .*absent\.p12 does not exist$"):
        sign_package(
            unsigned_pdf,
            tmp_path / "absent.p12",
            PASSWORD,
            page=0,
            box=BOX,
            font_path=FONT,
            reason="Prepared",
        )


def test_non_pkcs12_key_file_raises_signing_error(tmp_path: Path, unsigned_pdf: bytes) -> None:
    bogus = tmp_path / "bogus.p12"
    bogus.write_bytes(b"this is not a key")
    with pytest.raises(SigningError, match=r"bogus\.p12 is not a PKCS#12 \(\.p12\) file$"):
        sign_package(
            unsigned_pdf,
            bogus,
            PASSWORD,
            page=0,
            box=BOX,
            font_path=FONT,
            reason="Prepared",
        )


def test_page_out_of_range_raises_signing_error(pki: Pki, unsigned_pdf: bytes) -> None:
    with pytest.raises(SigningError, match="page 5 does not exist"):
        sign_package(
            unsigned_pdf,
            pki.p12_path,
            PASSWORD,
            page=5,
            box=BOX,
            font_path=FONT,
            reason="Prepared",
        )


def test_key_password_from_environment() -> None:
    def must_not_ask(_text: str) -> str:
        raise AssertionError("prompt used although the variable is set")

    env = {PASSWORD_ENV_VAR: "s\u00e9cret"}
    assert key_password(env, interactive=True, prompt=must_not_ask) == "s\u00e9cret".encode()
    assert key_password(env, interactive=False, prompt=must_not_ask) == "s\u00e9cret".encode()


def test_key_password_prompts_only_when_interactive() -> None:
    asked: list[str] = []

    def prompt(text: str) -> str:
        asked.append(text)
        return "typed"

    assert key_password({}, interactive=True, prompt=prompt) == b"typed"
    assert len(asked) == 1 and "password" in asked[0].lower()
    assert key_password({}, interactive=False, prompt=prompt) is None
    assert len(asked) == 1


def test_key_password_from_environment_opens_the_key(pki: Pki, unsigned_pdf: bytes) -> None:
    password = key_password({PASSWORD_ENV_VAR: PASSWORD.decode()}, interactive=False)
    signed = sign_package(
        unsigned_pdf,
        pki.p12_path,
        password,
        page=0,
        box=BOX,
        font_path=FONT,
        reason="Prepared",
    )
    assert signature_findings(signed, [pki.ca_pem]).ok


def test_unreadable_trust_root_raises_trust_root_error(signed_pdf: bytes) -> None:
    with pytest.raises(TrustRootError, match="#1"):
        signature_findings(signed_pdf, [b"not a certificate"])


# ---------------------------------------------------------------------------
# Key messages through the command line (issue 13, item 13)
# ---------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("case", "expected"),
    [
        ("missing", "the signing key file {key} does not exist"),
        ("wrong password", "wrong password for the signing key {key}"),
        (
            "no password",
            "the signing key {key} is protected by a password: set CALCDOC_KEY_PASSWORD",
        ),
        ("not a key", "the signing key {key} is not a PKCS#12 (.p12) file"),
    ],
)
def test_build_sign_key_messages(
    case: str, expected: str, pki: Pki, tmp_path: Path, monkeypatch, capsys
) -> None:
    from record_helpers import DEMO_PROJECT

    from calcdoc.cli import main

    key = {"missing": tmp_path / "absent.p12", "not a key": tmp_path / "notes.p12"}.get(
        case, pki.p12_path
    )
    if case == "not a key":
        key.write_bytes(b"")
    monkeypatch.delenv(PASSWORD_ENV_VAR, raising=False)
    if case == "wrong password":
        monkeypatch.setenv(PASSWORD_ENV_VAR, "not the password")
    out = tmp_path / "record.pdf"
    code = main(["build", str(DEMO_PROJECT), "-o", str(out), "-q", "--sign", str(key)])
    err = capsys.readouterr().err
    assert code == 2
    assert err.count("\n") == 1 and expected.format(key=key) in err
    assert "Traceback" not in err and "internal error" not in err
    assert not out.exists()
