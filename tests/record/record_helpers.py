"""Helpers for the record tests: a test PKI and a tampering helper.

Certificates are made here with the ``cryptography`` library. The module has
its own name (not ``conftest``) so that importing it cannot shadow another
test folder's conftest.
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
from cryptography.x509.oid import NameOID
from pyhanko.pdf_utils import generic
from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter

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
                b"signer", key, cert, [self.ca_cert],
                serialization.BestAvailableEncryption(KEY_PASSWORD),
            )
        )  # fmt: skip
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
