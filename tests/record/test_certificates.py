"""Tests for calcdoc.record.certificates, as a user meets them: ``calcdoc build --sign`` and ``calcdoc verify``.

Every certificate is made here with the ``cryptography`` library. The
rules they are checked against: RFC 5280 (validity period 4.1.2.5, key usage
4.2.1.3, extended key usage 4.2.1.12) and RFC 9336 (id-kp-documentSigning).
Packages signed *despite* the rules are signed with pyHanko directly, as
another program would sign them.
"""

from __future__ import annotations

from io import BytesIO

import pytest
from asn1crypto import x509 as asn1_x509
from cryptography import x509
from cryptography.hazmat.primitives import serialization
from cryptography.x509.oid import ExtendedKeyUsageOID, ObjectIdentifier
from pyhanko.pdf_utils.reader import PdfFileReader
from pyhanko.sign.validation import validate_pdf_signature
from pyhanko_certvalidator import ValidationContext
from record_helpers import (
    DAY,
    DEMO_PROJECT,
    KEY_PASSWORD,
    SERVER_ONLY,
    foreign_sign,
    key_usage,
    make_ca,
    make_signer,
    stamp_text,
    write_pem,
)

from calcdoc.cli import main
from calcdoc.record.certificates import usage_problem
from calcdoc.record.signing import PASSWORD_ENV_VAR

SIGNING_BITS = key_usage(digital_signature=True)
EXPIRED = {"before": 60 * DAY, "after": -30 * DAY}


@pytest.fixture(scope="module")
def ca(tmp_path_factory):
    folder = tmp_path_factory.mktemp("ca")
    key, cert = make_ca("certificate test CA")
    return key, cert, write_pem(folder, cert, "ca")


def _asn1(pem_path) -> asn1_x509.Certificate:
    cert = x509.load_pem_x509_certificate(pem_path.read_bytes())
    return asn1_x509.Certificate.load(cert.public_bytes(serialization.Encoding.DER))


def _build_signed(tmp_path, p12, monkeypatch, capsys) -> tuple[int, str, object]:
    monkeypatch.setenv(PASSWORD_ENV_VAR, KEY_PASSWORD.decode())
    out = tmp_path / "signed.pdf"
    code = main(["build", str(DEMO_PROJECT), "-o", str(out), "-q", "--sign", str(p12)])
    return code, capsys.readouterr().err, out


def _verify(tmp_path, pdf: bytes, capsys, *trust) -> tuple[int, str]:
    path = tmp_path / "received.pdf"
    path.write_bytes(pdf)
    args = ["verify", str(path)]
    for t in trust:
        args += ["--trust", str(t)]
    code = main(args)
    out, err = capsys.readouterr()
    assert "Traceback" not in out + err
    return code, out


def _kept(built_package) -> dict:
    page, box = built_package.signature_box
    return {"page": page, "box": box}


# ---------------------------------------------------------------- refused when signing

REFUSED = {
    "expired": (dict(usage=SIGNING_BITS, **EXPIRED), "expired on "),
    "not yet valid": (
        dict(usage=SIGNING_BITS, before=-2 * DAY, after=30 * DAY),
        "is not valid before ",
    ),
    "server only": (
        dict(usage=SIGNING_BITS, purposes=SERVER_ONLY),
        "may not sign documents: its extended key usage (TLS server authentication) does "
        "not include signing documents",
    ),
    "key encipherment only": (
        dict(usage=key_usage(key_encipherment=True)),
        "may not sign documents: its key usage (key encipherment) does not allow signing "
        "documents: it needs digital signature or non-repudiation",
    ),
}


@pytest.mark.parametrize("kind", list(REFUSED))
def test_signing_refuses_a_certificate_that_may_not_sign(
    kind, ca, tmp_path, monkeypatch, capsys
) -> None:
    options, phrase = REFUSED[kind]
    p12, _pem = make_signer(tmp_path, "Kim Keyholder", issuer=ca[:2], **options)
    code, err, out = _build_signed(tmp_path, p12, monkeypatch, capsys)
    assert code == 2
    assert f"the certificate of Kim Keyholder {phrase}" in err
    assert str(p12) in err and "Traceback" not in err and "internal error" not in err
    assert len(err.strip().splitlines()) == 1
    assert not out.exists()


def test_stamp_names_the_key_holder_not_the_sign_off(ca, tmp_path, monkeypatch, capsys) -> None:
    p12, _pem = make_signer(tmp_path, "Kim Keyholder", issuer=ca[:2], usage=SIGNING_BITS)
    code, err, out = _build_signed(tmp_path, p12, monkeypatch, capsys)
    assert code == 0, err
    # pypdf reads the stamp's text back (its font carries a ToUnicode map).
    text = stamp_text(out.read_bytes())
    assert "Digitally signed by Kim Keyholder" in text
    signoff = DEMO_PROJECT.read_text(encoding="utf-8")
    for person in ("A. Author", "C. Checker"):
        assert person in signoff and person not in text


# ---------------------------------------------------------------- checked when verifying


@pytest.mark.parametrize("kind", ["expired", "server only", "key encipherment only"])
@pytest.mark.parametrize("trusted", [False, True], ids=["without-trust", "trusted-directly"])
def test_verify_rejects_a_certificate_that_may_not_sign(
    kind, trusted, built_package, tmp_path, capsys
) -> None:
    options, phrase = REFUSED[kind]
    p12, pem = make_signer(tmp_path, "Kim Keyholder", **options)  # self-signed
    signed = foreign_sign(built_package.pdf, p12, **_kept(built_package))
    code, out = _verify(tmp_path, signed, capsys, *([pem] if trusted else []))
    assert code == 1
    assert (
        f"FAIL  The certificate of signature 'Foreign1' may not sign this record: "
        f"the certificate of Kim Keyholder {phrase}"
    ) in out
    assert "RESULT: FAILED" in out


def test_ca_issued_signing_certificate_verifies(ca, built_package, tmp_path, capsys) -> None:
    # A leaf with digitalSignature only, issued by a CA that is given as trusted.
    p12, _pem = make_signer(tmp_path, "Kim Keyholder", issuer=ca[:2], usage=SIGNING_BITS)
    signed = foreign_sign(built_package.pdf, p12, **_kept(built_package))
    # pyHanko's default policy demands non-repudiation and calls the miss an
    # untrusted chain: this was the wrong reason calcdoc used to give.
    sig = PdfFileReader(BytesIO(signed)).embedded_regular_signatures[0]
    context = ValidationContext(trust_roots=[_asn1(ca[2])], allow_fetching=False)
    assert validate_pdf_signature(sig, signer_validation_context=context).trusted is False
    code, out = _verify(tmp_path, signed, capsys, ca[2])
    assert code == 0, out
    assert "PASS  Signer Kim Keyholder of 'Foreign1' is trusted" in out


def test_ca_issued_certificate_fails_for_the_right_reason(
    ca, built_package, tmp_path, capsys
) -> None:
    p12, _pem = make_signer(tmp_path, "Kim Keyholder", issuer=ca[:2], usage=SIGNING_BITS)
    signed = foreign_sign(built_package.pdf, p12, **_kept(built_package))
    _key, other = make_ca("another CA")
    code, out = _verify(tmp_path, signed, capsys, write_pem(tmp_path, other, "other"))
    assert code == 1
    assert "does not chain to any of the given trusted certificates" in out

    # A CA whose own certificate had expired when the leaf signed.
    old_key, old_ca = make_ca("lapsed CA", before=400 * DAY, after=-1 * DAY)
    p12, _pem = make_signer(tmp_path, "Lee Leaf", issuer=(old_key, old_ca), usage=SIGNING_BITS)
    signed = foreign_sign(built_package.pdf, p12, **_kept(built_package))
    code, out = _verify(tmp_path, signed, capsys, write_pem(tmp_path, old_ca, "lapsed"))
    assert code == 1
    assert (
        "is not trusted: the certificate chains to lapsed CA, whose certificate expired on" in out
    )


# ---------------------------------------------------------------- the policy itself


@pytest.mark.parametrize(
    ("purposes", "allowed"),
    [
        ([ExtendedKeyUsageOID.EMAIL_PROTECTION, ExtendedKeyUsageOID.CLIENT_AUTH], True),
        ([ObjectIdentifier("1.3.6.1.5.5.7.3.36")], True),  # id-kp-documentSigning, RFC 9336
        ([ExtendedKeyUsageOID.ANY_EXTENDED_KEY_USAGE], True),  # RFC 5280 4.2.1.12
        ([ExtendedKeyUsageOID.CLIENT_AUTH], False),
        ([ExtendedKeyUsageOID.CODE_SIGNING, ExtendedKeyUsageOID.TIME_STAMPING], False),
    ],
    ids=["e-mail", "document-signing", "any", "client-only", "code-and-time"],
)
def test_extended_key_usage_policy(tmp_path, purposes, allowed) -> None:
    _p12, pem = make_signer(tmp_path, "Policy Case", purposes=purposes)
    assert (usage_problem(_asn1(pem)) is None) is allowed


def test_no_key_usage_extension_means_no_restriction(tmp_path) -> None:
    # RFC 5280 4.2.1.3: without the extension the key is not restricted.
    _p12, pem = make_signer(tmp_path, "Plain Holder")
    assert usage_problem(_asn1(pem)) is None
    _p12, pem = make_signer(tmp_path, "Commitment Holder", usage=key_usage(content_commitment=True))
    assert usage_problem(_asn1(pem)) is None


def test_a_certificate_expired_since_signing_is_a_note(
    ca, built_package, tmp_path, capsys, monkeypatch
) -> None:
    # valid when it signed (RFC 5280 4.1.2.5 judges validity at the signing time),
    # expired by the time the package is checked: worth saying, not a failure
    import datetime as dt

    import calcdoc.record.signing as signing

    p12, pem = make_signer(tmp_path, "Kim Keyholder", issuer=ca[:2], usage=SIGNING_BITS)
    signed = foreign_sign(built_package.pdf, p12, **_kept(built_package))
    expiry = x509.load_pem_x509_certificate(pem.read_bytes()).not_valid_after_utc

    class Later(dt.datetime):  # the checker's clock, 60 days on (the leaf lives 30)
        @classmethod
        def now(cls, tz=None):
            return dt.datetime.now(tz) + 60 * DAY

    monkeypatch.setattr(signing, "datetime", Later)
    code, out = _verify(tmp_path, signed, capsys, ca[2])
    assert code == 0, out
    assert (
        "NOTE The certificate of Kim Keyholder was valid at the signing time but has expired "
        f"since ({expiry:%Y-%m-%d}); the signing time is the signer's own statement, "
        "not a timestamp."
    ) in " ".join(out.split())
