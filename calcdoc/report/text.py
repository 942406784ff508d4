"""Text from the project file made printable: glyph coverage and right-to-left runs.

The embedded font cannot draw every character (emoji, CJK); such a
character is printed as U+FFFD (�) and :func:`text_warnings` names the
field it came from, so the author learns of it instead of finding empty
boxes.  Right-to-left runs (Hebrew, Arabic) are put into display order,
since the PDF draws characters left to right in the order given.
Arabic letters are shown in their isolated forms (no contextual shaping).
"""

from __future__ import annotations

import unicodedata
from collections.abc import Iterator
from functools import lru_cache

REPLACEMENT = "\ufffd"


@lru_cache(maxsize=4)
def _covered(font_name: str) -> frozenset[int]:
    from reportlab.pdfbase import pdfmetrics

    face = pdfmetrics.getFont(font_name).face
    return frozenset(face.charToGlyph)


def drawable(text: str, font_name: str) -> bool:
    """True when the font has a glyph for every character of ``text``."""
    if text.isascii():
        return True
    cmap = _covered(font_name)
    return all(ord(ch) in cmap or ch in "\n\t" for ch in text)


def _rtl(ch: str) -> bool:
    return unicodedata.bidirectional(ch) in ("R", "AL")


def _ltr(ch: str) -> bool:
    return unicodedata.bidirectional(ch) == "L"


def display_order(text: str) -> str:
    """Right-to-left runs reversed into display order in a left-to-right line.

    A run starts and ends with a right-to-left letter and takes in the
    spaces, marks and punctuation between such letters; digits inside a run
    keep their own left-to-right order.

    >>> display_order("abc \\u05d0\\u05d1 \\u05d2 12")
    'abc \\u05d2 \\u05d1\\u05d0 12'
    """
    if text.isascii() or not any(_rtl(ch) for ch in text):
        return text
    out: list[str] = []
    i, n = 0, len(text)
    while i < n:
        if not _rtl(text[i]):
            out.append(text[i])
            i += 1
            continue
        j = i
        end = i
        while j < n and not _ltr(text[j]):
            if _rtl(text[j]):
                end = j
            j += 1
        run = text[i : end + 1]
        out.append(_reverse_keeping_numbers(run))
        i = end + 1
    return "".join(out)


def _reverse_keeping_numbers(run: str) -> str:
    pieces: list[str] = []
    k = 0
    while k < len(run):
        if run[k].isdigit():
            m = k
            while m < len(run) and (run[m].isdigit() or run[m] in ".,"):
                m += 1
            pieces.append(run[k:m])
            k = m
        else:
            pieces.append(run[k])
            k += 1
    return "".join(reversed(pieces))


def printable(text: str, font_name: str) -> str:
    """``text`` with undrawable characters replaced and right-to-left runs in display order."""
    if text.isascii():
        return text
    cmap = _covered(font_name)
    fixed = "".join(
        ch if (ord(ch) in cmap or ch in "\n\t") else REPLACEMENT
        for ch in unicodedata.normalize("NFC", text)
    )
    return display_order(fixed)


def _fields(project) -> Iterator[tuple[str, str]]:
    """(key path, text) of every free-text field the package prints."""
    d = project.document
    for key in (
        "title",
        "number",
        "revision",
        "project",
        "organisation",
        "purpose",
        "scope",
        "conclusion",
    ):
        yield f"document.{key}", getattr(d, key)
    for i, a in enumerate(d.assumptions):
        yield f"document.assumptions[{i}]", a
    for i, a in enumerate(d.references):
        yield f"document.references[{i}]", a
    for i, h in enumerate(d.history):
        yield f"document.history[{i}].description", h.description
        yield f"document.history[{i}].revision", h.revision
    for role in ("prepared", "checked", "approved"):
        who = getattr(project.signoff, role)
        if who is not None:
            yield f"signoff.{role}.name", who.name
    for e in project.elements:
        for key in ("description", "source", "basis"):
            yield f"elements.{e.name}.{key}", getattr(e, key)
    for q in project.parameters:
        yield f"parameters.{q.name}.description", q.description
    for i, c in enumerate(project.cases):
        yield f"cases[{i}].name", c.name
        yield f"cases[{i}].description", c.description
    for i, s in enumerate(project.sweeps):
        yield f"sweeps[{i}].name", s.name
    yield "report.conclusion", project.report.conclusion
    yield "organisation (report style)", project.assets.style.organisation


def text_warnings(project, font_name: str) -> tuple[str, ...]:
    """One warning per field holding characters the embedded font cannot draw."""
    out = []
    for key, text in _fields(project):
        if text and not drawable(text, font_name):
            cmap = _covered(font_name)
            bad = sorted({ch for ch in text if ord(ch) not in cmap and ch not in "\n\t"})
            shown = " ".join(f"U+{ord(ch):04X}" for ch in bad[:5]) + (" …" if len(bad) > 5 else "")
            out.append(
                f"{project.path}: {key}: characters the report font cannot draw ({shown}) "
                f"are printed as {REPLACEMENT}"
            )
    return tuple(out)
