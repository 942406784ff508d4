"""Helpers for the record tests: a test PKI, certificates of every kind, and tampering.

Certificates are made here with the ``cryptography`` library; incremental
updates with pyHanko's and pypdf's own writers, as an attacker would make
them. The module has its own name (not ``conftest``) so that importing it
cannot shadow another test folder's conftest.
"""

from __future__ import annotations

import datetime as dt
from io import BytesIO
from pathlib import Path

import matplotlib
from cryptography import x509
from cryptography.hazmat.primitives import hashes, serialization
from cryptography.hazmat.primitives.asymmetric import ec
from cryptography.hazmat.primitives.serialization import pkcs12
from cryptography.x509.oid import ExtendedKeyUsageOID, NameOID
from pyhanko.pdf_utils import generic
from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter
from pyhanko.sign import fields, signers

ROOT = Path(__file__).resolve().parents[2]
DEMO_PROJECT = ROOT / "projects" / "sensor_supply.toml"
STAMP_FONT = Path(matplotlib.get_data_path()) / "fonts" / "ttf" / "DejaVuSans.ttf"
KEY_PASSWORD = b"record test key"
SIGNER_NAME = "Rita Reviewer"


def _name(cn: str) -> x509.Name:
    return x509.Name([x509.NameAttribute(NameOID.COMMON_NAME, cn)])


def _usage(*, ca: bool) -> x509.KeyUsage:
    return x509.KeyUsage(
        digital_signature=not ca,
        content_commitment=not ca,
        key_encipherment=False,
        data_encipherment=False,
        key_agreement=False,
        key_cert_sign=ca,
        crl_sign=ca,
        encipher_only=False,
        decipher_only=False,
    )


def _ca(cn: str) -> tuple[ec.EllipticCurvePrivateKey, x509.Certificate]:
    key = ec.generate_private_key(ec.SECP256R1())
    now = dt.datetime.now(dt.timezone.utc)
    cert = (
        x509.CertificateBuilder()
        .subject_name(_name(cn))
        .issuer_name(_name(cn))
        .public_key(key.public_key())
        .serial_number(x509.random_serial_number())
        .not_valid_before(now - dt.timedelta(days=1))
        .not_valid_after(now + dt.timedelta(days=30))
        .add_extension(x509.BasicConstraints(ca=True, path_length=None), critical=True)
        .add_extension(_usage(ca=True), critical=True)
        .add_extension(x509.SubjectKeyIdentifier.from_public_key(key.public_key()), critical=False)
        .sign(key, hashes.SHA256())
    )
    return key, cert


class RecordPki:
    """A test CA, an unrelated CA, and a signer certificate (PKCS#12) from the first."""

    def __init__(self, folder: Path) -> None:
        ca_key, self.ca_cert = _ca("record test CA")
        _k, self.other_ca_cert = _ca("unrelated record CA")
        key = ec.generate_private_key(ec.SECP256R1())
        now = dt.datetime.now(dt.timezone.utc)
        cert = (
            x509.CertificateBuilder()
            .subject_name(_name(SIGNER_NAME))
            .issuer_name(self.ca_cert.subject)
            .public_key(key.public_key())
            .serial_number(x509.random_serial_number())
            .not_valid_before(now - dt.timedelta(days=1))
            .not_valid_after(now + dt.timedelta(days=30))
            .add_extension(x509.BasicConstraints(ca=False, path_length=None), critical=True)
            .add_extension(_usage(ca=False), critical=True)
            .add_extension(
                x509.AuthorityKeyIdentifier.from_issuer_public_key(ca_key.public_key()),
                critical=False,
            )
            .sign(ca_key, hashes.SHA256())
        )
        self.p12_path = folder / "signer.p12"
        self.p12_path.write_bytes(
            pkcs12.serialize_key_and_certificates(
                b"signer",
                key,
                cert,
                [self.ca_cert],
                serialization.BestAvailableEncryption(KEY_PASSWORD),
            )
        )
        self.ca_pem_path = folder / "ca.pem"
        self.ca_pem_path.write_bytes(self.ca_cert.public_bytes(serialization.Encoding.PEM))
        self.other_pem_path = folder / "other.pem"
        self.other_pem_path.write_bytes(self.other_ca_cert.public_bytes(serialization.Encoding.PEM))

    @property
    def ca_der(self) -> bytes:
        return self.ca_cert.public_bytes(serialization.Encoding.DER)


def replace_attachment(pdf: bytes, name: str, change) -> bytes:
    """Append an incremental update replacing attachment ``name`` by ``change(old bytes)``."""
    writer = IncrementalPdfFileWriter(BytesIO(pdf), strict=False)
    names = writer.root["/Names"]["/EmbeddedFiles"]["/Names"]
    for i in range(0, len(names), 2):
        if str(names[i]) == name:
            spec = names[i + 1].get_object()
            old = spec["/EF"]["/F"].data
            stream = generic.StreamObject(
                {generic.NameObject("/Type"): generic.NameObject("/EmbeddedFile")},
                stream_data=change(old),
            )
            spec["/EF"] = generic.DictionaryObject(
                {generic.NameObject("/F"): writer.add_object(stream)}
            )
            writer.update_container(spec)
            out = BytesIO()
            writer.write(out)
            return out.getvalue()
    raise AssertionError(f"no attachment {name}")


# ---------------------------------------------------------------- certificates of every kind

DAY = dt.timedelta(days=1)
SERVER_ONLY = [ExtendedKeyUsageOID.SERVER_AUTH]


def key_usage(**bits: bool) -> x509.KeyUsage:
    """A key usage extension with only the named bits set (cryptography's names)."""
    names = (
        "digital_signature",
        "content_commitment",
        "key_encipherment",
        "data_encipherment",
        "key_agreement",
        "key_cert_sign",
        "crl_sign",
        "encipher_only",
        "decipher_only",
    )
    return x509.KeyUsage(**{n: bits.get(n, False) for n in names})


def make_ca(cn: str, *, before: dt.timedelta = DAY, after: dt.timedelta = 30 * DAY):
    """A self-signed CA valid from ``now - before`` to ``now + after``."""
    key = ec.generate_private_key(ec.SECP256R1())
    now = dt.datetime.now(dt.timezone.utc)
    cert = (
        x509.CertificateBuilder()
        .subject_name(_name(cn))
        .issuer_name(_name(cn))
        .public_key(key.public_key())
        .serial_number(x509.random_serial_number())
        .not_valid_before(now - before)
        .not_valid_after(now + after)
        .add_extension(x509.BasicConstraints(ca=True, path_length=None), critical=True)
        .add_extension(key_usage(key_cert_sign=True, crl_sign=True), critical=True)
        .add_extension(x509.SubjectKeyIdentifier.from_public_key(key.public_key()), critical=False)
        .sign(key, hashes.SHA256())
    )
    return key, cert


def make_signer(
    folder: Path,
    cn: str,
    *,
    issuer=None,
    usage: x509.KeyUsage | None = None,
    purposes: list | None = None,
    before: dt.timedelta = DAY,
    after: dt.timedelta = 30 * DAY,
    password: bytes | None = KEY_PASSWORD,
) -> tuple[Path, Path]:
    """A signing key as PKCS#12 and its certificate as PEM.

    ``issuer`` is ``(ca_key, ca_cert)``, or None for a self-signed certificate;
    ``usage`` / ``purposes`` add a key usage / extended key usage extension;
    the certificate is valid from ``now - before`` to ``now + after`` (a
    negative ``after`` makes an expired one).
    """
    key = ec.generate_private_key(ec.SECP256R1())
    ca_key, ca_cert = issuer if issuer else (key, None)
    now = dt.datetime.now(dt.timezone.utc)
    builder = (
        x509.CertificateBuilder()
        .subject_name(_name(cn))
        .issuer_name(ca_cert.subject if ca_cert else _name(cn))
        .public_key(key.public_key())
        .serial_number(x509.random_serial_number())
        .not_valid_before(now - before)
        .not_valid_after(now + after)
    )
    if usage is not None:
        builder = builder.add_extension(usage, critical=True)
    if purposes is not None:
        builder = builder.add_extension(x509.ExtendedKeyUsage(purposes), critical=False)
    cert = builder.sign(ca_key, hashes.SHA256())
    stem = cn.lower().replace(" ", "-")
    p12 = folder / f"{stem}.p12"
    encryption = (
        serialization.BestAvailableEncryption(password)
        if password
        else serialization.NoEncryption()
    )
    p12.write_bytes(
        pkcs12.serialize_key_and_certificates(
            b"signer", key, cert, [ca_cert] if ca_cert else None, encryption
        )
    )
    pem_path = folder / f"{stem}.pem"
    pem_path.write_bytes(cert.public_bytes(serialization.Encoding.PEM))
    return p12, pem_path


def write_pem(folder: Path, cert: x509.Certificate, stem: str) -> Path:
    path = folder / f"{stem}.pem"
    path.write_bytes(cert.public_bytes(serialization.Encoding.PEM))
    return path


def foreign_sign(
    pdf: bytes, p12: Path, *, box=None, page: int = 0, password: bytes | None = KEY_PASSWORD
) -> bytes:
    """Sign with pyHanko directly, as another program would (none of calcdoc's checks).

    ``box`` None makes an invisible signature.
    """
    signer = signers.SimpleSigner.load_pkcs12(str(p12), passphrase=password)
    writer = IncrementalPdfFileWriter(BytesIO(pdf), strict=False)
    name = fields.enumerate_sig_fields(writer.prev, filled_status=None)
    field = f"Foreign{sum(1 for _ in name) + 1}"
    spec = fields.SigFieldSpec(sig_field_name=field, on_page=page, box=box)
    meta = signers.PdfSignatureMetadata(field_name=field, md_algorithm="sha256")
    out = BytesIO()
    signers.PdfSigner(meta, signer=signer, new_field_spec=spec).sign_pdf(writer, output=out)
    return out.getvalue()


def add_document_timestamp(pdf: bytes) -> bytes:
    """Append a document timestamp (RFC 3161 token from a test time-stamping authority)."""
    from asn1crypto import keys as asn1_keys
    from asn1crypto import x509 as asn1_x509
    from cryptography.hazmat.primitives.asymmetric import rsa
    from pyhanko.sign.timestamps.dummy_client import DummyTimeStamper

    tsa_key = rsa.generate_private_key(
        public_exponent=65537, key_size=2048
    )  # pyHanko's test TSA is RSA-only
    now = dt.datetime.now(dt.timezone.utc)
    tsa = (
        x509.CertificateBuilder()
        .subject_name(_name("record test TSA"))
        .issuer_name(_name("record test TSA"))
        .public_key(tsa_key.public_key())
        .serial_number(x509.random_serial_number())
        .not_valid_before(now - DAY)
        .not_valid_after(now + 30 * DAY)
        .add_extension(x509.ExtendedKeyUsage([ExtendedKeyUsageOID.TIME_STAMPING]), critical=True)
        .sign(tsa_key, hashes.SHA256())
    )
    stamper = DummyTimeStamper(
        tsa_cert=asn1_x509.Certificate.load(tsa.public_bytes(serialization.Encoding.DER)),
        tsa_key=asn1_keys.PrivateKeyInfo.load(
            tsa_key.private_bytes(
                serialization.Encoding.DER,
                serialization.PrivateFormat.PKCS8,
                serialization.NoEncryption(),
            )
        ),
    )
    writer = IncrementalPdfFileWriter(BytesIO(pdf), strict=False)
    out = BytesIO()
    signers.PdfTimeStamper(stamper).timestamp_pdf(writer, "sha256", output=out)
    return out.getvalue()


# ---------------------------------------------------------------- falsifications

_N = generic.NameObject


def _num(v: float) -> generic.FloatObject:
    return generic.FloatObject(f"{v:.2f}")


def add_fake_stamp(pdf: bytes, rect, *, page: int = 0, text: bytes = b"ALL CHECKS PASS") -> bytes:
    """Append an update adding an *empty* signature field whose appearance paints a white box
    with ``text`` at ``rect`` on ``page`` (the falsification of issue 13)."""
    w = IncrementalPdfFileWriter(BytesIO(pdf), strict=False)
    x1, y1, x2, y2 = rect
    font = w.add_object(
        generic.DictionaryObject(
            {
                _N("/Type"): _N("/Font"),
                _N("/Subtype"): _N("/Type1"),
                _N("/BaseFont"): _N("/Helvetica"),
            }
        )
    )
    paint = b"1 1 1 rg 0 0 %.2f %.2f re f 0 0.4 0 rg BT /F1 20 Tf 8 8 Td (%s) Tj ET" % (
        x2 - x1,
        y2 - y1,
        text,
    )
    appearance = generic.StreamObject(
        {
            _N("/Type"): _N("/XObject"),
            _N("/Subtype"): _N("/Form"),
            _N("/BBox"): generic.ArrayObject([_num(0), _num(0), _num(x2 - x1), _num(y2 - y1)]),
            _N("/Resources"): generic.DictionaryObject(
                {_N("/Font"): generic.DictionaryObject({_N("/F1"): font})}
            ),
        },
        stream_data=paint,
    )
    page_ref = w.root["/Pages"]["/Kids"][page]
    page_obj = page_ref.get_object()
    widget = w.add_object(
        generic.DictionaryObject(
            {
                _N("/Type"): _N("/Annot"),
                _N("/Subtype"): _N("/Widget"),
                _N("/FT"): _N("/Sig"),
                _N("/T"): generic.TextStringObject("Approval"),
                _N("/F"): generic.NumberObject(4),
                _N("/Rect"): generic.ArrayObject([_num(v) for v in rect]),
                _N("/P"): page_ref,
                _N("/AP"): generic.DictionaryObject({_N("/N"): w.add_object(appearance)}),
            }
        )
    )
    annots = generic.ArrayObject(list(page_obj.get("/Annots", [])))
    annots.append(widget)
    page_obj[_N("/Annots")] = annots
    w.update_container(page_obj)
    if "/AcroForm" in w.root:
        form = w.root["/AcroForm"]
        form["/Fields"].append(widget)
        w.update_container(form)
    else:
        w.root[_N("/AcroForm")] = w.add_object(
            generic.DictionaryObject({_N("/Fields"): generic.ArrayObject([widget])})
        )
        w.update_root()
    out = BytesIO()
    w.write(out)
    return out.getvalue()


def add_free_text(pdf: bytes, rect, *, page: int = 0, text: str = "ALL CHECKS PASS") -> bytes:
    """Append an update (pypdf, incremental) adding a FreeText annotation with ``text``."""
    from pypdf import PdfWriter
    from pypdf.annotations import FreeText

    writer = PdfWriter(BytesIO(pdf), incremental=True)
    note = FreeText(text=text, rect=rect, font_size="20pt", background_color="ffffff")
    writer.add_annotation(page_number=page, annotation=note)
    out = BytesIO()
    writer.write(out)
    return out.getvalue()


def paint_over_page(pdf: bytes, rect, *, page: int = 0) -> bytes:
    """Append an update replacing ``page``'s content stream by one that also paints a white box."""
    w = IncrementalPdfFileWriter(BytesIO(pdf), strict=False)
    page_obj = w.root["/Pages"]["/Kids"][page].get_object()
    contents = page_obj["/Contents"]
    parts = contents if isinstance(contents, list) else [contents]
    data = b"\n".join(c.get_object().data for c in parts)
    x1, y1, x2, y2 = rect
    data += b"\nq 1 1 1 rg %.2f %.2f %.2f %.2f re f Q\n" % (x1, y1, x2 - x1, y2 - y1)
    page_obj[_N("/Contents")] = w.add_object(generic.StreamObject(stream_data=data))
    w.update_container(page_obj)
    out = BytesIO()
    w.write(out)
    return out.getvalue()


def first_text_run(data: bytes) -> tuple[int, int]:
    """Position of the first literal string shown with ``Tj`` in a content stream."""
    import re

    match = re.search(rb"\(((?:[^()\\]|\\.)+)\)\s*Tj", data)
    assert match, "no text run in the content stream"
    return match.start(1), match.end(1)


def rewrite_printed_text(pdf: bytes, page: int) -> bytes:
    """Rewrite the whole file (pypdf, not incremental) with one printed character of ``page`` changed."""
    from pypdf import PdfReader, PdfWriter
    from pypdf.generic import ContentStream

    writer = PdfWriter(clone_from=PdfReader(BytesIO(pdf)))
    target = writer.pages[page]
    data = target.get_contents().get_data()
    start, _end = first_text_run(data)
    changed = data[:start] + bytes([data[start] ^ 0x01]) + data[start + 1 :]
    stream = ContentStream(None, writer)
    stream.set_data(changed)
    target.replace_contents(stream)
    out = BytesIO()
    writer.write(out)
    return out.getvalue()


def stamp_text(signed_pdf: bytes, page: int = 0) -> str:
    """Text of the signature stamp on ``page``, extracted by pypdf from its appearance stream
    drawn alone on a blank page."""
    from pypdf import PdfReader, PdfWriter
    from pypdf.generic import DictionaryObject, NameObject, StreamObject

    reader = PdfReader(BytesIO(signed_pdf))
    widget = next(
        a.get_object() for a in reader.pages[page]["/Annots"] if a.get_object().get("/FT") == "/Sig"
    )
    appearance = widget["/AP"]["/N"].get_object()
    x1, y1, x2, y2 = (float(v) for v in appearance["/BBox"])
    writer = PdfWriter()
    blank = writer.add_blank_page(width=abs(x2 - x1), height=abs(y2 - y1))
    form = appearance.clone(writer)
    blank[NameObject("/Resources")] = DictionaryObject(
        {NameObject("/XObject"): DictionaryObject({NameObject("/Stamp"): form.indirect_reference})}
    )
    content = StreamObject()
    content.set_data(b"q /Stamp Do Q")
    blank.replace_contents(content)
    out = BytesIO()
    writer.write(out)
    return PdfReader(out).pages[0].extract_text()
