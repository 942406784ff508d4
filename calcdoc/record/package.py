"""Reading a calculation package: its embedded input, results and printed hash.

A package (see ``calcdoc build``) is a PDF that carries

- the project file as a file attachment under its own base name, named by
  the document-information key ``/CalcdocInput``;
- the results object (``calcdoc.to_json``) as the attachment ``results.json``;
- the SHA-256 of the input in the document-information key
  ``/CalcdocInputSHA256`` and on the cover, as the text line
  ``SHA-256 of input: <64 lowercase hex digits>``;
- when it was built with a comparison to an earlier revision, that
  revision's project file as a further attachment, named by the
  document-information key ``/CalcdocPrevious``, and the name the
  comparison printed for it in ``/CalcdocPreviousPath`` (so that the
  package can be rebuilt, see :mod:`calcdoc.record.rebuild`).

Every function here is pure: it takes the bytes of the PDF (only
:func:`baseline` reads a file, being a loader).
"""

from __future__ import annotations

import contextlib
import json
import logging
import re
from collections.abc import Iterator
from io import BytesIO
from pathlib import Path
from typing import Any

from calcdoc.errors import PackageError, ProjectError
from calcdoc.model.project import Project

__all__ = [
    "INPUT_KEY",
    "INPUT_SHA_KEY",
    "PREVIOUS_KEY",
    "PREVIOUS_NAME",
    "PREVIOUS_PATH_KEY",
    "RESULTS_NAME",
    "attach_previous",
    "baseline",
    "embedded_input",
    "embedded_previous",
    "embedded_results",
    "is_pdf",
    "metadata_input_hash",
    "printed_input_hash",
    "printed_text",
]

INPUT_KEY = "/CalcdocInput"
"""Document-information key naming the attachment that holds the input."""

INPUT_SHA_KEY = "/CalcdocInputSHA256"
"""Document-information key holding the SHA-256 of the input (hex)."""

RESULTS_NAME = "results.json"
"""Attachment name of the results object."""

PREVIOUS_KEY = "/CalcdocPrevious"
"""Document-information key naming the attachment that holds the previous revision's input."""

PREVIOUS_PATH_KEY = "/CalcdocPreviousPath"
"""Document-information key holding the name the comparison gives the previous revision."""

PREVIOUS_NAME = "previous-revision.toml"
"""Attachment name of the previous revision's input (a digit is added if the input has it)."""

_PRINTED_HASH = re.compile(r"SHA-256\s+of\s+input:\s*([0-9a-f]{64})")


def is_pdf(data: bytes) -> bool:
    """Whether ``data`` starts like a PDF file (``%PDF-`` in the first KiB).

    >>> is_pdf(b"%PDF-1.7\\n..."), is_pdf(b"schema = 1")
    (True, False)
    """
    return b"%PDF-" in data[:1024]


@contextlib.contextmanager
def _quiet_pypdf() -> Iterator[None]:
    """Keep pypdf's log records about damaged files off the terminal."""
    logger = logging.getLogger("pypdf")
    handler = logging.NullHandler()
    saved = (logger.level, logger.propagate)
    logger.addHandler(handler)
    logger.setLevel(logging.CRITICAL + 1)
    logger.propagate = False
    try:
        yield
    finally:
        logger.removeHandler(handler)
        logger.setLevel(saved[0])
        logger.propagate = saved[1]


def _reader(pdf: bytes):
    from pypdf import PdfReader

    if not is_pdf(pdf):
        raise PackageError("not a PDF file")
    try:
        with _quiet_pypdf():
            reader = PdfReader(BytesIO(pdf), strict=False)
            len(reader.pages)  # forces the page tree to be read
    except Exception as exc:  # pypdf raises assorted types for damaged files
        raise PackageError(f"not a readable PDF ({type(exc).__name__}: {exc})") from exc
    return reader


def _attachments(pdf: bytes) -> dict[str, list[bytes]]:
    reader = _reader(pdf)
    try:
        with _quiet_pypdf():
            return {str(k): list(v) for k, v in reader.attachments.items()}
    except Exception as exc:
        raise PackageError(f"its file attachments cannot be read ({type(exc).__name__})") from exc


def _info(pdf: bytes) -> dict[str, Any]:
    reader = _reader(pdf)
    try:
        with _quiet_pypdf():
            return dict(reader.metadata or {})
    except Exception:
        return {}


def _single(attachments: dict[str, list[bytes]], name: str) -> bytes:
    found = attachments.get(name)
    if not found:
        raise PackageError(f"it carries no attachment named {name!r}: not a calcdoc package")
    if len(found) > 1:
        raise PackageError(f"it carries {len(found)} attachments named {name!r}")
    return found[0]


def embedded_input(pdf: bytes) -> tuple[str, bytes]:
    """The project file embedded in a package.

    Parameters
    ----------
    pdf : bytes
        The package.

    Returns
    -------
    tuple of (str, bytes)
        Attachment name (the project file's base name) and its bytes.

    Raises
    ------
    PackageError
        If the data is not a readable PDF or carries no embedded input.
    """
    attachments = _attachments(pdf)
    name = _info(pdf).get(INPUT_KEY)
    if name is None:
        candidates = sorted(n for n in attachments if n.lower().endswith(".toml"))
        if len(candidates) != 1:
            raise PackageError(
                f"its document information has no {INPUT_KEY} entry: not a calcdoc package"
            )
        name = candidates[0]
    return str(name), _single(attachments, str(name))


def embedded_results(pdf: bytes) -> dict[str, Any]:
    """The results object embedded in a package (attachment ``results.json``).

    Raises
    ------
    PackageError
        If the data is not a readable PDF, or the attachment is missing or
        is not a JSON object.
    """
    data = _single(_attachments(pdf), RESULTS_NAME)
    try:
        doc = json.loads(data.decode("utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise PackageError(f"its {RESULTS_NAME} is not valid JSON ({exc})") from exc
    if not isinstance(doc, dict):
        raise PackageError(f"its {RESULTS_NAME} is not a JSON object")
    return doc


def embedded_previous(pdf: bytes) -> tuple[str, bytes] | None:
    """The previous revision's input embedded in a package, if it carries one.

    Returns
    -------
    tuple of (str, bytes) or None
        The name the comparison gave the previous revision (its path when
        the package was built) and the project file's bytes; None when the
        package carries no previous revision.

    Raises
    ------
    PackageError
        If the data is not a readable PDF, or the document information
        names a previous revision that is not attached.
    """
    info = _info(pdf)
    name = info.get(PREVIOUS_KEY)
    if name is None:
        return None
    source = _single(_attachments(pdf), str(name))
    return str(info.get(PREVIOUS_PATH_KEY) or name), source


def attach_previous(pdf: bytes, input_name: str, label: str, source: bytes) -> bytes:
    """Attach the previous revision's input to a built package (deterministically).

    Parameters
    ----------
    pdf : bytes
        The package as built.
    input_name : str
        Attachment name of the package's own input (never reused).
    label : str
        The name the comparison printed for the previous revision.
    source : bytes
        The previous revision's project file.

    Returns
    -------
    bytes
        The package with one more attachment and the two document-information keys.
    """
    from pypdf import PdfReader, PdfWriter

    name, n = PREVIOUS_NAME, 1
    while name == input_name:
        name = f"previous-revision-{n}.toml"
        n += 1
    with _quiet_pypdf():
        writer = PdfWriter(clone_from=PdfReader(BytesIO(pdf)))
        writer.add_attachment(name, source)
        meta = dict(writer.metadata or {})
        meta.update({PREVIOUS_KEY: name, PREVIOUS_PATH_KEY: label})
        writer.add_metadata(meta)
        out = BytesIO()
        writer.write(out)
    return out.getvalue()


def metadata_input_hash(pdf: bytes) -> str | None:
    """The input SHA-256 recorded in the document information, if any (lowercase hex)."""
    value = _info(pdf).get(INPUT_SHA_KEY)
    return None if value is None else str(value).strip().lower()


def printed_text(pdf: bytes, pages: int) -> list[str]:
    """The extracted text of the first ``pages`` pages (the last ``-pages`` when negative).

    Pages whose text cannot be extracted give an empty string.

    Raises
    ------
    PackageError
        If the data is not a readable PDF.
    """
    reader = _reader(pdf)
    chosen = reader.pages[:pages] if pages >= 0 else reader.pages[pages:]
    out = []
    for page in chosen:
        try:
            with _quiet_pypdf():
                out.append(page.extract_text() or "")
        except Exception:  # pypdf raises assorted types on odd content
            out.append("")
    return out


def printed_input_hash(pdf: bytes) -> str | None:
    """The input SHA-256 printed on the cover (first page), if found.

    Parameters
    ----------
    pdf : bytes
        The package.

    Returns
    -------
    str or None
        The 64 lowercase hex digits after ``SHA-256 of input:``, or None if
        the first page has no such line.

    Raises
    ------
    PackageError
        If the data is not a readable PDF.
    """
    reader = _reader(pdf)
    try:
        with _quiet_pypdf():
            text = reader.pages[0].extract_text() if reader.pages else ""
    except Exception:
        return None
    match = _PRINTED_HASH.search(text or "")
    return match.group(1) if match else None


def baseline(path: str | Path) -> Project:
    """The project of an earlier revision: a project file, or a package's embedded input.

    This is a loader: it reads ``path``.

    Parameters
    ----------
    path : str or Path
        A project file (``.toml``) or a package PDF.

    Returns
    -------
    Project
        For a package, parsed from its embedded input, with ``path`` set to
        ``"<package path>:<attachment name>"`` so that messages name both.

    Raises
    ------
    ProjectError
        If the file cannot be read or the project in it is invalid.
    PackageError
        If a PDF is not a readable calcdoc package (message names the file).
    """
    import calcdoc
    from calcdoc.errors import Fault

    p = Path(path)
    expected = "expected a package (.pdf) or a project file (.toml)"
    try:
        if p.exists() and not p.is_file():
            raise ProjectError([Fault("", f"not a regular file: {expected}")], str(path))
        data = p.read_bytes()
    except OSError as exc:
        reason = exc.strerror or "read error"
        raise ProjectError([Fault("", f"cannot read the file: {reason}")], str(path)) from None
    if not data.strip():
        what = "empty (0 bytes)" if not data else "blank (only white space)"
        raise ProjectError([Fault("", f"the file is {what}: {expected}")], str(path))
    if not is_pdf(data):
        return calcdoc.loads(data, str(path))
    try:
        name, source = embedded_input(data)
    except PackageError as exc:
        raise PackageError(f"{path}: {exc}") from None
    return calcdoc.loads(source, f"{path}:{name}")
