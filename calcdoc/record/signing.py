"""Signing and signature verification of the PDF package.

The package is signed last, as a PAdES baseline B-B signature (CMS
sub-filter ``ETSI.CAdES.detached``) made with a PKCS#12 key through pyHanko.
The signature has a visible field whose stamp is drawn with an embedded
TrueType font, so that every font in the signed file stays embedded.

Verification reads every embedded signature and reports, in plain terms,
whether the signed bytes are unchanged, whether the signature covers the
whole file (or only harmless later additions such as further signatures),
and, when trusted certificates are supplied, whether the signer's
certificate chains to one of them. Nothing here reaches the network.
"""

from __future__ import annotations

import contextlib
import getpass
import hashlib
import logging
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from datetime import datetime, timezone
from io import BytesIO
from pathlib import Path

from asn1crypto import pem
from asn1crypto import pkcs12 as asn1_pkcs12
from asn1crypto import x509 as asn1_x509
from fontTools import subset as ft_subset
from fontTools import ttLib
from pyhanko.pdf_utils import generic
from pyhanko.pdf_utils.font.api import FontEngine, FontEngineFactory, ShapeResult
from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter
from pyhanko.pdf_utils.reader import PdfFileReader
from pyhanko.pdf_utils.text import TextBoxStyle
from pyhanko.pdf_utils.writer import BasePdfFileWriter
from pyhanko.sign import fields, signers
from pyhanko.sign.diff_analysis import DiffResult, ModificationLevel
from pyhanko.sign.validation import validate_pdf_signature
from pyhanko.sign.validation.pdf_embedded import EmbeddedPdfSignature
from pyhanko.sign.validation.settings import KeyUsageConstraints
from pyhanko.sign.validation.status import PdfSignatureStatus, SignatureCoverageLevel
from pyhanko.stamp import TextStampStyle
from pyhanko_certvalidator import ValidationContext

from calcdoc.record.certificates import certificate_problem, chain_problem, holder_name

__all__ = [
    "PASSWORD_ENV_VAR",
    "SignatureFinding",
    "SignatureReport",
    "SigningError",
    "TrustRootError",
    "UnreadablePackageError",
    "key_password",
    "sign_package",
    "signature_findings",
]

PASSWORD_ENV_VAR = "CALCDOC_KEY_PASSWORD"
"""Environment variable that carries the password of the signing key."""

_PROMPT_TEXT = "Password for the signing key: "

# Loggers through which pyHanko and its certificate validator report
# problems with suspicious files (often with a traceback attached), and
# through which fontTools reports font tables it drops while subsetting.
_QUIET_LOGGERS = ("pyhanko", "pyhanko_certvalidator", "fontTools")

# Modification levels that pyHanko's difference analysis may report for
# updates appended after a signature without those updates altering what was
# signed: security-store / timestamp updates and further signatures or form
# field values (see pyhanko.sign.diff_analysis.ModificationLevel).
_BENIGN_LEVELS = frozenset(
    {ModificationLevel.NONE, ModificationLevel.LTA_UPDATES, ModificationLevel.FORM_FILLING}
)


class SigningError(Exception):
    """The package could not be signed (key unreadable, wrong password, bad input)."""


class UnreadablePackageError(Exception):
    """The file is not a PDF that can be read for signature checking."""


class TrustRootError(Exception):
    """A certificate given as a trust root is neither PEM nor DER X.509."""


# ---------------------------------------------------------------------------
# Password
# ---------------------------------------------------------------------------


def key_password(
    environ: Mapping[str, str],
    *,
    interactive: bool,
    prompt: Callable[[str], str] | None = None,
) -> bytes | None:
    """Find the password of the signing key.

    The password is never taken from a command-line argument. It comes from
    the environment variable ``CALCDOC_KEY_PASSWORD`` if that is set;
    otherwise, in an interactive session, it is asked for.

    Parameters
    ----------
    environ : Mapping[str, str]
        The process environment (normally ``os.environ``).
    interactive : bool
        Whether a person is at the terminal who can be asked.
    prompt : Callable[[str], str] or None, optional
        Function that shows its argument and returns what was typed without
        echoing it; ``getpass.getpass`` when None.

    Returns
    -------
    bytes or None
        The password as UTF-8 bytes, or None for a key without password
        (variable unset in a non-interactive session, or an empty answer).
    """
    value = environ.get(PASSWORD_ENV_VAR)
    if value is None:
        if not interactive:
            return None
        ask = getpass.getpass if prompt is None else prompt
        value = ask(_PROMPT_TEXT)
    return value.encode("utf-8") if value else None


# ---------------------------------------------------------------------------
# Embedded TrueType font engine for the signature stamp
# ---------------------------------------------------------------------------


def _name(value: str) -> generic.NameObject:
    return generic.NameObject("/" + value)


def _postscript_name(font: ttLib.TTFont) -> str:
    raw = font["name"].getDebugName(6) or ""
    cleaned = "".join(ch for ch in raw if ch.isascii() and ch.isalnum() or ch in "-_")
    return cleaned or "EmbeddedFont"


class _EmbeddedTrueTypeEngine(FontEngine):
    """Font engine that writes a TrueType font as an embedded CID font.

    Text is shown with two-byte glyph identifiers (``Identity-H``), the glyph
    widths go into ``/W``, a subset of the font file (glyph identifiers kept)
    goes into ``/FontFile2`` and a ``/ToUnicode`` map keeps the text
    extractable (ISO 32000-1, 9.7 and 9.10).
    """

    def __init__(
        self, writer: BasePdfFileWriter, font_bytes: bytes, font_size: int, obj_stream=None
    ) -> None:
        self._font_bytes = font_bytes
        self._tt = ttLib.TTFont(BytesIO(font_bytes), lazy=False)
        self._ps_name = _postscript_name(self._tt)
        super().__init__(
            writer, self._ps_name, embedded_subset=True, obj_stream=obj_stream, font_size=font_size
        )
        self._cmap = self._tt.getBestCmap() or {}
        self._glyph_order = self._tt.getGlyphOrder()
        self._gid_of = {name: gid for gid, name in enumerate(self._glyph_order)}
        self._upem = self._tt["head"].unitsPerEm
        self._used: dict[int, str] = {}
        self._font_ref = writer.allocate_placeholder()
        self._written = False

    @property
    def uses_complex_positioning(self) -> bool:
        return False

    def _scaled(self, value: float) -> int:
        return round(value * 1000 / self._upem)

    def _width(self, gid: int) -> int:
        advance, _lsb = self._tt["hmtx"][self._glyph_order[gid]]
        return self._scaled(advance)

    def shape(self, txt: str) -> ShapeResult:
        codes = bytearray()
        total = 0
        for ch in txt:
            glyph = self._cmap.get(ord(ch))
            gid = self._gid_of.get(glyph, 0) if glyph is not None else 0
            if gid:
                self._used.setdefault(gid, ch)
            codes += gid.to_bytes(2, "big")
            total += self._width(gid)
        ops = b"<" + codes.hex().upper().encode("ascii") + b"> Tj"
        return ShapeResult(graphics_ops=ops, x_advance=total / 1000, y_advance=0)

    def as_resource(self) -> generic.IndirectObject:
        return self._font_ref

    def _subset_bytes(self) -> bytes:
        options = ft_subset.Options()
        options.retain_gids = True
        options.notdef_outline = True
        options.name_IDs = ["*"]
        options.hinting = False
        options.drop_tables += ["DSIG"]
        font = ttLib.TTFont(BytesIO(self._font_bytes), lazy=False)
        subsetter = ft_subset.Subsetter(options=options)
        subsetter.populate(gids=sorted({0, *self._used}))
        subsetter.subset(font)
        out = BytesIO()
        font.save(out)
        return out.getvalue()

    def _to_unicode(self) -> bytes:
        lines = [
            b"/CIDInit /ProcSet findresource begin",
            b"12 dict begin",
            b"begincmap",
            b"/CIDSystemInfo << /Registry (Adobe) /Ordering (UCS) /Supplement 0 >> def",
            b"/CMapName /Adobe-Identity-UCS def",
            b"/CMapType 2 def",
            b"1 begincodespacerange",
            b"<0000> <FFFF>",
            b"endcodespacerange",
        ]
        items = sorted(self._used.items())
        for start in range(0, len(items), 100):
            chunk = items[start : start + 100]
            lines.append(b"%d beginbfchar" % len(chunk))
            for gid, ch in chunk:
                utf16 = ch.encode("utf-16-be").hex().upper().encode("ascii")
                lines.append(b"<%04X> <%s>" % (gid, utf16))
            lines.append(b"endbfchar")
        lines += [b"endcmap", b"CMapName currentdict /CMap defineresource pop", b"end", b"end"]
        return b"\n".join(lines)

    def prepare_write(self) -> None:
        if self._written:
            return
        writer = self.writer
        data = self._subset_bytes()
        # The subset tag is derived from the glyphs used, so it is stable.
        digest = hashlib.sha256(repr(sorted(self._used)).encode("ascii")).digest()
        tag = "".join(chr(ord("A") + b % 26) for b in digest[:6])
        base_font = f"{tag}+{self._ps_name}"

        font_file = generic.StreamObject({_name("Length1"): generic.NumberObject(len(data))}, data)
        font_file.compress()
        tt = self._tt
        head, hhea, post = tt["head"], tt["hhea"], tt["post"]
        os2 = tt.get("OS/2")
        cap_height = getattr(os2, "sCapHeight", 0) or hhea.ascent
        descriptor = generic.DictionaryObject(
            {
                _name("Type"): _name("FontDescriptor"),
                _name("FontName"): _name(base_font),
                _name("Flags"): generic.NumberObject(32),
                _name("FontBBox"): generic.ArrayObject(
                    generic.NumberObject(self._scaled(v))
                    for v in (head.xMin, head.yMin, head.xMax, head.yMax)
                ),
                _name("ItalicAngle"): generic.FloatObject(post.italicAngle),
                _name("Ascent"): generic.NumberObject(self._scaled(hhea.ascent)),
                _name("Descent"): generic.NumberObject(self._scaled(hhea.descent)),
                _name("CapHeight"): generic.NumberObject(self._scaled(cap_height)),
                # No stem width is recorded in a TrueType file; 80 is the
                # usual stand-in for a regular weight (common practice, no source).
                _name("StemV"): generic.NumberObject(80),
                _name("FontFile2"): writer.add_object(font_file),
            }
        )
        widths = generic.ArrayObject()
        for gid in sorted(self._used):
            widths.append(generic.NumberObject(gid))
            widths.append(generic.ArrayObject([generic.NumberObject(self._width(gid))]))
        cid_font = generic.DictionaryObject(
            {
                _name("Type"): _name("Font"),
                _name("Subtype"): _name("CIDFontType2"),
                _name("BaseFont"): _name(base_font),
                _name("CIDSystemInfo"): generic.DictionaryObject(
                    {
                        _name("Registry"): generic.TextStringObject("Adobe"),
                        _name("Ordering"): generic.TextStringObject("Identity"),
                        _name("Supplement"): generic.NumberObject(0),
                    }
                ),
                _name("FontDescriptor"): writer.add_object(descriptor),
                _name("DW"): generic.NumberObject(self._width(0)),
                _name("W"): widths,
                _name("CIDToGIDMap"): _name("Identity"),
            }
        )
        to_unicode = generic.StreamObject(stream_data=self._to_unicode())
        to_unicode.compress()
        type0 = generic.DictionaryObject(
            {
                _name("Type"): _name("Font"),
                _name("Subtype"): _name("Type0"),
                _name("BaseFont"): _name(base_font),
                _name("Encoding"): _name("Identity-H"),
                _name("DescendantFonts"): generic.ArrayObject([writer.add_object(cid_font)]),
                _name("ToUnicode"): writer.add_object(to_unicode),
            }
        )
        writer.add_object(type0, self.obj_stream, idnum=self._font_ref.idnum)
        self._written = True


class _EmbeddedTrueTypeFactory(FontEngineFactory):
    def __init__(self, font_bytes: bytes, font_size: int) -> None:
        self.font_bytes = font_bytes
        self.font_size = font_size

    def create_font_engine(self, writer: BasePdfFileWriter, obj_stream=None) -> FontEngine:
        return _EmbeddedTrueTypeEngine(writer, self.font_bytes, self.font_size, obj_stream)


def _read_truetype(font_path: Path) -> bytes:
    try:
        data = font_path.read_bytes()
    except OSError as exc:
        reason = exc.strerror or exc.__class__.__name__
        raise SigningError(f"cannot read the stamp font {font_path}: {reason}") from exc
    try:
        font = ttLib.TTFont(BytesIO(data), lazy=False)
        usable = "glyf" in font and "hmtx" in font and bool(font.getBestCmap())
    except Exception as exc:
        raise SigningError(f"the stamp font {font_path} is not a TrueType font") from exc
    if not usable:
        raise SigningError(
            f"the stamp font {font_path} is not a TrueType (glyf) font with a Unicode map"
        )
    return data


# ---------------------------------------------------------------------------
# Signing
# ---------------------------------------------------------------------------

_STAMP_FONT_SIZE = 9
_STAMP_LEADING = 12
_KEY_FILE_CAP = 1 << 20
"""Largest signing key file read (bytes): a PKCS#12 key with its chain is a few KiB."""
_STAMP_TEXT = "Digitally signed by %(signer)s\nSigned on %(ts)s\n%(reason_line)s"


def _is_pkcs12(data: bytes) -> bool:
    """Whether ``data`` parses as a PKCS#12 container (RFC 7292), without decrypting it."""
    try:
        pfx = asn1_pkcs12.Pfx.load(data, strict=True)
        return pfx["version"].native == "v3" and pfx["auth_safe"]["content_type"].native in (
            "data",
            "signed_data",
        )
    except Exception:  # asn1crypto raises assorted types on data that is not DER
        return False


def _load_signer(key_file: Path, password: bytes | None) -> signers.SimpleSigner:
    if not key_file.exists():
        raise SigningError(f"the signing key file {key_file} does not exist")
    if not key_file.is_file():
        raise SigningError(f"the signing key {key_file} is not a regular file")
    try:
        with key_file.open("rb") as fh:
            data = fh.read(_KEY_FILE_CAP + 1)
    except OSError as exc:
        reason = exc.strerror or "read error"
        raise SigningError(f"cannot read the signing key {key_file}: {reason}") from None
    if len(data) > _KEY_FILE_CAP or not _is_pkcs12(data):
        raise SigningError(f"the signing key {key_file} is not a PKCS#12 (.p12) file")
    try:
        signer = signers.SimpleSigner.load_pkcs12_data(data, other_certs=(), passphrase=password)
    except Exception:  # cryptography raises ValueError for any undecryptable container
        if password is None:
            raise SigningError(
                f"the signing key {key_file} is protected by a password: set "
                f"{PASSWORD_ENV_VAR} or run in a terminal to be asked for it"
            ) from None
        raise SigningError(f"wrong password for the signing key {key_file}") from None
    if signer.signing_cert is None or signer.signing_key is None:
        raise SigningError(f"the signing key {key_file} holds no private key and certificate")
    return signer


def _free_field_name(reader: PdfFileReader) -> str:
    taken = {
        str(field_name)
        for field_name, _value, _ref in fields.enumerate_sig_fields(reader, filled_status=None)
    }
    n = 1
    while f"Signature{n}" in taken:
        n += 1
    return f"Signature{n}"


def sign_package(
    pdf: bytes,
    key_file: Path,
    password: bytes | None,
    *,
    page: int,
    box: tuple[float, float, float, float],
    font_path: Path,
    reason: str,
    location: str | None = None,
) -> bytes:
    """Sign a finished PDF package with a PKCS#12 key (PAdES B-B).

    A visible signature field is added at ``box`` on ``page``; its stamp
    names the key holder (the common name in the certificate's subject, so
    the stamp never names anyone but the holder of the key) and the signing
    time, and is drawn with the TrueType font at ``font_path``, embedded as
    a subset. A certificate that may not sign a record (expired, not yet
    valid, or whose key usage or extended key usage excludes signing
    documents; see :mod:`calcdoc.record.certificates`) is refused. The signature is appended as an
    incremental update, so it must be the last change made to the file.
    No network access takes place.

    Parameters
    ----------
    pdf : bytes
        The complete, unsigned (or already signed) PDF file.
    key_file : Path
        PKCS#12 file with the private key, its certificate and, optionally,
        the issuing chain (which is then embedded in the signature).
    password : bytes or None
        Password of the PKCS#12 file (see :func:`key_password`).
    page : int
        Zero-based index of the page that carries the visible signature.
    box : tuple of float
        ``(x1, y1, x2, y2)`` of the signature field in PDF points.
    font_path : Path
        TrueType font for the stamp text.
    reason : str
        Reason for signing, stored in the signature and shown on the stamp.
    location : str or None, optional
        Place of signing, stored in the signature.

    Returns
    -------
    bytes
        The signed PDF file.

    Raises
    ------
    SigningError
        If the key file is missing or not a PKCS#12 key, the password is
        wrong, the certificate may not sign now, the font cannot be read,
        the page or box is invalid, or the PDF cannot be signed.
    """
    signer = _load_signer(key_file, password)
    cert = signer.signing_cert
    problem = certificate_problem(cert, datetime.now(timezone.utc))
    if problem is not None:
        raise SigningError(f"{problem}; the record was not signed")
    x1, y1, x2, y2 = box
    if not (x2 > x1 and y2 > y1):
        raise SigningError(f"the signature box {box} must have x2 > x1 and y2 > y1")
    font_bytes = _read_truetype(font_path)
    try:
        writer = IncrementalPdfFileWriter(BytesIO(pdf), strict=False)
    except Exception as exc:
        raise SigningError(f"the file to be signed is not a readable PDF: {exc}") from exc
    try:
        page_count = int(writer.root["/Pages"]["/Count"])
    except Exception as exc:
        raise SigningError("the file to be signed has no readable page tree") from exc
    if not 0 <= page < page_count:
        raise SigningError(f"page {page} does not exist; the file has {page_count} pages")

    field_name = _free_field_name(writer.prev)
    meta = signers.PdfSignatureMetadata(
        field_name=field_name,
        md_algorithm="sha256",
        subfilter=fields.SigSeedSubFilter.PADES,
        reason=reason,
        location=location,
        use_pades_lta=False,
        embed_validation_info=False,
    )
    style = TextStampStyle(
        stamp_text=_STAMP_TEXT,
        timestamp_format="%Y-%m-%d %H:%M:%S UTC%z",
        border_width=1,
        text_box_style=TextBoxStyle(
            font=_EmbeddedTrueTypeFactory(font_bytes, _STAMP_FONT_SIZE),
            font_size=_STAMP_FONT_SIZE,
            leading=_STAMP_LEADING,
        ),
    )
    pdf_signer = signers.PdfSigner(
        meta,
        signer=signer,
        stamp_style=style,
        new_field_spec=fields.SigFieldSpec(
            sig_field_name=field_name, on_page=page, box=(x1, y1, x2, y2)
        ),
    )
    out = BytesIO()
    try:
        with _quiet_pyhanko():
            pdf_signer.sign_pdf(
                writer,
                appearance_text_params={
                    "signer": holder_name(cert),
                    "reason_line": f"Reason: {reason}",
                },
                output=out,
            )
    except Exception as exc:
        raise SigningError(f"signing failed: {exc}") from exc
    return out.getvalue()


# ---------------------------------------------------------------------------
# Verification
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class SignatureFinding:
    """What was found about one embedded signature.

    Attributes
    ----------
    field_name : str
        Name of the signature form field.
    signer_name : str or None
        Common name in the signer's certificate.
    signing_time : datetime or None
        Time claimed by the signer: the CMS signing-time attribute when
        present, else the signature dictionary's ``/M`` (where PAdES puts it).
    intact : bool
        The digest of the signed byte ranges matches the signed digest and
        the signature value verifies against the signer's certificate.
    coverage : str
        pyHanko's coverage level name (``ENTIRE_FILE``, ``ENTIRE_REVISION``,
        ``CONTIGUOUS_BLOCK_FROM_START``, ``UNCLEAR``).
    covers_whole_file : bool
        The signature covers the whole file, or every later update is only a
        further signature, form-field or security-store update.
    modification_level : str or None
        pyHanko's modification level name for updates after the signature.
    trusted : bool or None
        Whether the signer's certificate chains to a given trusted
        certificate; None when no trusted certificates were given.
    problem : str or None
        A plain sentence describing the first problem, or None.
    modification_detail : str or None
        pyHanko's account of a disallowed later change, if any.
    certificate_problem : str or None
        Why the signer's certificate may not sign a record at the signing
        time (validity, key usage, extended key usage), if so.
    trust_problem : str or None
        Why the certificate does not chain to a trusted certificate (only
        when trusted certificates were given).
    certificate_note : str or None
        Information that does not fail, e.g. the certificate has expired
        since the signing time.
    signed_revision : int or None
        pyHanko's index of the revision the signature covers (0 = first).
    """

    field_name: str
    signer_name: str | None
    signing_time: datetime | None
    intact: bool
    coverage: str
    covers_whole_file: bool
    modification_level: str | None
    trusted: bool | None
    problem: str | None
    modification_detail: str | None = None
    certificate_problem: str | None = None
    trust_problem: str | None = None
    certificate_note: str | None = None
    signed_revision: int | None = None

    @property
    def ok(self) -> bool:
        """bool: True if no problem was found with this signature."""
        return self.problem is None


@dataclass(frozen=True)
class SignatureReport:
    """Findings for every signature embedded in a PDF file.

    Attributes
    ----------
    signatures : tuple of SignatureFinding
        One finding per signature, in file order; empty for an unsigned file.
    identity_checked : bool
        Whether trusted certificates were given, so that ``trusted`` means
        something.
    """

    signatures: tuple[SignatureFinding, ...]
    identity_checked: bool

    @property
    def ok(self) -> bool:
        """bool: True if no signature has a problem (also for none at all)."""
        return all(f.ok for f in self.signatures)

    @property
    def first_failure(self) -> str | None:
        """str or None: the sentence for the first problem found, if any."""
        return next((f.problem for f in self.signatures if f.problem is not None), None)


@contextlib.contextmanager
def _quiet_pyhanko() -> Iterator[None]:
    """Keep pyHanko's and fontTools' log records (and tracebacks) off the terminal."""
    saved = []
    for name in _QUIET_LOGGERS:
        logger = logging.getLogger(name)
        handler = logging.NullHandler()
        saved.append((logger, logger.level, logger.propagate, handler))
        logger.addHandler(handler)
        logger.setLevel(logging.CRITICAL + 1)
        logger.propagate = False
    try:
        yield
    finally:
        for logger, level, propagate, handler in saved:
            logger.removeHandler(handler)
            logger.setLevel(level)
            logger.propagate = propagate


def _parse_trust_roots(trusted_certs: Sequence[bytes]) -> list[asn1_x509.Certificate]:
    roots = []
    for index, data in enumerate(trusted_certs):
        try:
            blobs = (
                [der for _kind, _hdr, der in pem.unarmor(data, multiple=True)]
                if pem.detect(data)
                else [data]
            )
            for der in blobs:
                cert = asn1_x509.Certificate.load(der)
                cert.native  # noqa: B018 - forces a full parse, raising on bad data
                roots.append(cert)
        except Exception as exc:
            raise TrustRootError(
                f"trusted certificate #{index + 1} is not a PEM or DER X.509 certificate"
            ) from exc
    return roots


def _describe(
    name: str,
    status: PdfSignatureStatus,
    covers_whole_file: bool,
    certificate: str | None,
    trust: str | None,
    at: str,
) -> str | None:
    if not status.intact:
        return (
            f"Signature '{name}' does not match the file: the signed bytes "
            "were changed after signing."
        )
    if not status.valid:
        return (
            f"Signature '{name}' is invalid: its signature value does not "
            "verify against the signer's certificate."
        )
    if not covers_whole_file:
        coverage = status.coverage
        if coverage == SignatureCoverageLevel.ENTIRE_REVISION:
            return (
                f"The file was changed after signature '{name}' was applied: "
                "a later update alters the signed document itself, not only "
                "signatures or form fields."
            )
        return (
            f"Signature '{name}' does not cover the whole file as it was signed "
            "(unusual byte range)."
        )
    if certificate is not None:
        return f"Signature '{name}' is not acceptable: {certificate} (signing time {at})."
    if trust is not None:
        return f"The signer of '{name}' is not trusted: the certificate {trust}."
    return None


def _signing_moment(signing_time: datetime | None) -> tuple[datetime, str]:
    if signing_time is None:
        now = datetime.now(timezone.utc)
        return now, f"not stated, checked at {now:%Y-%m-%d %H:%M} UTC"
    moment = signing_time if signing_time.tzinfo else signing_time.replace(tzinfo=timezone.utc)
    return moment, f"{moment.astimezone(timezone.utc):%Y-%m-%d %H:%M} UTC as stated by the signer"


def _finding(
    sig: EmbeddedPdfSignature, roots: Sequence[asn1_x509.Certificate], checked: bool
) -> SignatureFinding:
    name = str(sig.field_name)
    cert = sig.signer_cert
    signer_name = holder_name(cert) if cert is not None else None
    try:
        signing_time = sig.self_reported_timestamp
    except Exception:
        signing_time = None
    moment, moment_text = _signing_moment(signing_time)
    # pyHanko's own default key-usage policy demands non-repudiation and
    # reports any miss as an untrusted chain; calcdoc's policy
    # (calcdoc.record.certificates) is applied below with its own reasons.
    context = ValidationContext(
        trust_roots=list(roots), allow_fetching=False, revocation_mode="soft-fail", moment=moment
    )
    try:
        status = validate_pdf_signature(
            sig,
            signer_validation_context=context,
            key_usage_settings=KeyUsageConstraints(key_usage=set()),
        )
    except Exception as exc:
        return SignatureFinding(
            field_name=name,
            signer_name=signer_name,
            signing_time=signing_time,
            intact=False,
            coverage="UNCLEAR",
            covers_whole_file=False,
            modification_level=None,
            trusted=False if checked else None,
            problem=f"Signature '{name}' could not be checked: {exc}",
            signed_revision=getattr(sig, "signed_revision", None),
        )

    coverage = status.coverage
    level = status.modification_level
    diff = status.diff_result
    if coverage == SignatureCoverageLevel.ENTIRE_FILE:
        covers = True
    elif coverage == SignatureCoverageLevel.ENTIRE_REVISION:
        covers = (
            isinstance(diff, DiffResult) and status.docmdp_ok is True and level in _BENIGN_LEVELS
        )
    else:
        covers = False
    detail = None if diff is None or isinstance(diff, DiffResult) else str(diff)
    certificate = None if cert is None else certificate_problem(cert, moment)
    trust = None
    if checked and cert is not None:
        trust = chain_problem(cert, list(sig.other_embedded_certs), roots, moment)
    note = None
    now = datetime.now(timezone.utc)
    if certificate is None and cert is not None and cert.not_valid_after < now:
        note = (
            f"the certificate of {signer_name} was valid at the signing time but has "
            f"expired since ({cert.not_valid_after:%Y-%m-%d}); the signing time is the "
            "signer's own statement, not a timestamp"
        )
    return SignatureFinding(
        field_name=name,
        signer_name=signer_name,
        signing_time=signing_time,
        intact=bool(status.intact and status.valid),
        coverage=coverage.name if coverage is not None else "UNCLEAR",
        covers_whole_file=covers,
        modification_level=level.name if level is not None else None,
        trusted=(trust is None) if checked else None,
        problem=_describe(name, status, covers, certificate, trust, moment_text),
        modification_detail=detail,
        certificate_problem=certificate,
        trust_problem=trust,
        certificate_note=note,
        signed_revision=getattr(sig, "signed_revision", None),
    )


def signature_findings(pdf: bytes, trusted_certs: Sequence[bytes] = ()) -> SignatureReport:
    """Check every signature embedded in a PDF file.

    Integrity rests on pyHanko's per-signature results: ``intact`` (digest of
    the signed byte ranges), ``valid`` (signature value), ``coverage`` and,
    for updates appended after a signature, its difference analysis
    (``diff_result``, ``docmdp_ok``, ``modification_level``). A signature
    whose revision is followed by changes to the document itself is reported
    as not covering the file, even though pyHanko's ``valid`` stays true.

    Parameters
    ----------
    pdf : bytes
        The PDF file.
    trusted_certs : Sequence[bytes], optional
        Trusted certificates, PEM or DER. When given, each signer's chain is
        validated against them offline (no fetching, revocation not
        required); when empty, identity is not checked.

    Returns
    -------
    SignatureReport
        One finding per signature; empty for an unsigned file.

    Raises
    ------
    UnreadablePackageError
        If the file cannot be parsed as a PDF.
    TrustRootError
        If a trusted certificate cannot be read.
    """
    roots = _parse_trust_roots(trusted_certs)
    checked = bool(roots)
    with _quiet_pyhanko():
        try:
            reader = PdfFileReader(BytesIO(pdf), strict=False)
            embedded = list(reader.embedded_regular_signatures)
        except Exception as exc:
            raise UnreadablePackageError(
                f"the file is not a readable PDF ({exc.__class__.__name__}: {exc})"
            ) from exc
        found = [_finding(sig, roots, checked) for sig in embedded]
    return SignatureReport(signatures=tuple(found), identity_checked=checked)
