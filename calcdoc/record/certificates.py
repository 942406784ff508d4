"""Whether a certificate may sign a calculation record, and whether it chains to trust.

Used both when signing (a certificate that may not sign is refused before
anything is signed) and when verifying (the same rules, applied at the
signing time the signature states). The rules:

- **Validity.** The signing time lies within the certificate's validity
  period (RFC 5280, 4.1.2.5).
- **Key usage.** When the certificate has a key usage extension, it asserts
  ``digitalSignature`` or ``nonRepudiation`` (``contentCommitment``): the
  two bits RFC 5280, 4.2.1.3 gives for keys that sign anything other than
  certificates and revocation lists. No extension: no restriction (RFC 5280).
- **Extended key usage.** When the certificate has an extended key usage
  extension (RFC 5280, 4.2.1.12: it restricts the key to the purposes
  listed), one purpose must cover signing documents: ``anyExtendedKeyUsage``
  (RFC 5280), ``id-kp-documentSigning`` (RFC 9336), ``id-kp-emailProtection``
  (RFC 5280; the usual purpose of personal signing certificates), Adobe's
  Authentic Documents Trust purpose and Microsoft's Document Signing purpose
  (OIDs from memory, as listed by the PDF signing profiles of those
  vendors). A certificate for TLS servers or clients only, or for code
  signing or time stamping only, may not sign a record.
- **Trust** (only when trusted certificates are given): the certificate
  chains to one of them, every certificate on the path, the trusted one
  included, valid at the signing time (path validation by
  ``pyhanko_certvalidator``, offline; revocation is not checked because
  nothing is fetched).

Everything here is pure.
"""

from __future__ import annotations

import asyncio
from collections.abc import Sequence
from datetime import datetime, timezone

from asn1crypto import x509 as asn1_x509

__all__ = [
    "DOCUMENT_SIGNING_PURPOSES",
    "certificate_problem",
    "chain_problem",
    "holder_name",
    "usage_problem",
    "validity_problem",
]

DOCUMENT_SIGNING_PURPOSES = {
    "2.5.29.37.0": "any purpose",  # anyExtendedKeyUsage, RFC 5280 4.2.1.12
    "1.3.6.1.5.5.7.3.36": "document signing",  # id-kp-documentSigning, RFC 9336
    "1.3.6.1.5.5.7.3.4": "e-mail protection",  # id-kp-emailProtection, RFC 5280
    "1.2.840.113583.1.1.5": "Adobe authentic documents",  # from memory
    "1.3.6.1.4.1.311.10.3.12": "Microsoft document signing",  # from memory
}
"""Extended key usage purposes (dotted OID -> plain name) that allow signing a record."""

_PURPOSE_NAMES = {
    "1.3.6.1.5.5.7.3.1": "TLS server authentication",
    "1.3.6.1.5.5.7.3.2": "TLS client authentication",
    "1.3.6.1.5.5.7.3.3": "code signing",
    "1.3.6.1.5.5.7.3.8": "time stamping",
    "1.3.6.1.5.5.7.3.9": "OCSP signing",
}

_KEY_USAGE_NAMES = {
    "digital_signature": "digital signature",
    "non_repudiation": "non-repudiation",
    "key_encipherment": "key encipherment",
    "data_encipherment": "data encipherment",
    "key_agreement": "key agreement",
    "key_cert_sign": "certificate signing",
    "crl_sign": "revocation-list signing",
    "encipher_only": "encipher only",
    "decipher_only": "decipher only",
}


def holder_name(cert: asn1_x509.Certificate) -> str:
    """The name of the certificate's holder: the subject's common name, else the whole subject.

    >>> from asn1crypto.x509 import Name
    >>> class C: subject = Name.build({"common_name": "Rita Reviewer", "country_name": "NZ"})
    >>> holder_name(C())
    'Rita Reviewer'
    """
    name = cert.subject.native.get("common_name")
    if isinstance(name, list):
        name = name[0] if name else None
    if name:
        return str(name)
    return cert.subject.human_friendly or "(no subject name)"


def _when(t: datetime) -> str:
    return t.astimezone(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")


def validity_problem(cert: asn1_x509.Certificate, at: datetime) -> str | None:
    """Why ``cert`` is not valid at ``at`` (a phrase), or None.

    Returns
    -------
    str or None
        ``"expired on 2025-01-31 00:00 UTC"`` or
        ``"is not valid before 2031-01-01 00:00 UTC"``; None when valid.
    """
    before, after = cert.not_valid_before, cert.not_valid_after
    if at < before:
        return f"is not valid before {_when(before)}"
    if at > after:
        return f"expired on {_when(after)}"
    return None


def usage_problem(cert: asn1_x509.Certificate) -> str | None:
    """Why ``cert``'s key usage or extended key usage does not allow signing a record.

    Returns
    -------
    str or None
        A phrase such as ``"its key usage (key encipherment) does not allow
        signing documents"``; None when signing is allowed.
    """
    ku = cert.key_usage_value
    if ku is not None:
        bits = set(ku.native)
        if not bits & {"digital_signature", "non_repudiation"}:
            shown = ", ".join(sorted(_KEY_USAGE_NAMES.get(b, b) for b in bits)) or "none"
            return (
                f"its key usage ({shown}) does not allow signing documents: it needs "
                "digital signature or non-repudiation"
            )
    eku = cert.extended_key_usage_value
    if eku is not None:
        purposes = [p.dotted for p in eku]
        if not any(p in DOCUMENT_SIGNING_PURPOSES for p in purposes):
            shown = ", ".join(_PURPOSE_NAMES.get(p, p) for p in purposes) or "none"
            return f"its extended key usage ({shown}) does not include signing documents"
    return None


def certificate_problem(cert: asn1_x509.Certificate, at: datetime) -> str | None:
    """Why ``cert`` may not sign a record at time ``at`` (validity, then usage), or None.

    The phrase starts with the holder's name, e.g. ``"the certificate of
    Rita Reviewer expired on 2025-01-31 00:00 UTC"``.
    """
    who = f"the certificate of {holder_name(cert)}"
    problem = validity_problem(cert, at)
    if problem is not None:
        return f"{who} {problem}"
    problem = usage_problem(cert)
    if problem is not None:
        return f"{who} may not sign documents: {problem}"
    return None


def chain_problem(
    cert: asn1_x509.Certificate,
    others: Sequence[asn1_x509.Certificate],
    roots: Sequence[asn1_x509.Certificate],
    at: datetime,
) -> str | None:
    """Why ``cert`` does not chain to one of ``roots`` at time ``at``, or None.

    Parameters
    ----------
    cert : Certificate
        The signer's certificate.
    others : sequence of Certificate
        Further certificates carried by the signature (possible intermediates).
    roots : sequence of Certificate
        Trusted certificates (a CA, or the signer's own certificate).
    at : datetime
        The signing time; every certificate on the path must be valid then.

    Returns
    -------
    str or None
        A phrase (``"does not chain to any of the given trusted
        certificates"``, ``"its chain is not valid at the signing time: ..."``)
        or None when a valid path exists.
    """
    from pyhanko_certvalidator import CertificateValidator, ValidationContext
    from pyhanko_certvalidator.errors import (
        ExpiredError,
        NotYetValidError,
        PathBuildingError,
        PathValidationError,
        RevokedError,
    )

    context = ValidationContext(
        trust_roots=list(roots),
        other_certs=list(others),
        moment=at,
        allow_fetching=False,
        revocation_mode="soft-fail",
    )
    validator = CertificateValidator(
        cert, intermediate_certs=list(others), validation_context=context
    )
    try:
        path = asyncio.run(validator.async_validate_path())
    except PathBuildingError:
        return "does not chain to any of the given trusted certificates"
    except (ExpiredError, NotYetValidError) as exc:
        return f"its chain is not valid at the signing time {_when(at)}: {_sentence(exc)}"
    except RevokedError as exc:
        return f"a certificate on its chain is revoked: {_sentence(exc)}"
    except PathValidationError as exc:
        return f"its chain to the trusted certificate is not valid: {_sentence(exc)}"
    except Exception as exc:  # the validator raises assorted types on odd certificates
        return f"its chain could not be validated: {_sentence(exc)}"
    # RFC 5280 path validation does not test the trust anchor's own validity
    # period; a trusted certificate that had lapsed by the signing time is
    # refused here all the same.
    for link in path.iter_certs(include_root=True):
        problem = validity_problem(link, at)
        if problem is not None:
            return (
                f"chains to {holder_name(link)}, whose certificate {problem}, before the "
                f"signing time {_when(at)}"
            )
    return None


def _sentence(exc: Exception) -> str:
    text = str(exc).strip().rstrip(".")
    return text[:1].lower() + text[1:] if text else type(exc).__name__
