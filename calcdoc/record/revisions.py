"""What the updates appended to a PDF after a given revision change for a reader.

A PDF file can be changed after it was written by appending an incremental
update (ISO 32000-1, 7.5.6): new or replacing objects and a cross-reference
section that points back at the earlier one. A signature covers only the
revisions up to its own, and pyHanko's difference analysis lets later
updates add form fields and their appearances (they count as "form
filling"), so an update can paint anything over a signed page without
touching the signed bytes.

:func:`inspect_updates` therefore compares, for every revision after a base
revision, the document a reader sees before and after that update, object
by object (by value, never decoding a stream):

- the page tree and every page, except the page's list of annotations;
- each page's annotations: every earlier one must stay as it was; a new one
  is allowed only if it is a *signed* signature field (or a document
  timestamp) that is invisible, or whose stamp lies inside the box the
  package keeps for the signature, and that nothing else has covered yet;
- the document catalogue (attachments, named actions, bookmarks, opening
  action, optional content, viewer settings ...), except the interactive
  form, the validation data a signature may add (``/DSS``), the XMP
  metadata stream and version entries;
- the interactive form: earlier fields unchanged, new fields signatures only;
- the document information, except the modification date and producer;
- no encryption added, no hybrid cross-references (readers could disagree).

Anything else is reported as a change a reader could see. Everything here
is pure.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass
from io import BytesIO
from typing import Any

from pyhanko.pdf_utils import generic
from pyhanko.pdf_utils.reader import PdfFileReader

__all__ = [
    "Addition",
    "Update",
    "UpdateReport",
    "UnreadableUpdatesError",
    "compare_documents",
    "inspect_updates",
    "revision_ending_at",
]

Box = tuple[float, float, float, float]

# Catalogue entries that a signature, a timestamp or validation data may add
# or change: the interactive form (compared on its own below), the document
# security store, the XMP metadata stream, the version and developer
# extensions (ISO 32000-2, 7.7.2 and 12.8.4.3).
_CATALOG_FREE = frozenset({"/AcroForm", "/DSS", "/Metadata", "/Version", "/Extensions", "/Perms"})
_FORM_FREE = frozenset({"/Fields", "/SigFlags", "/DR", "/DA"})
_INFO_FREE = frozenset({"/ModDate", "/Producer"})
_CATALOG_WORDS = {
    "/Names": "the attachments and named destinations or actions",
    "/OpenAction": "the action run when the file is opened",
    "/AA": "the actions run on document events",
    "/Outlines": "the bookmarks",
    "/OCProperties": "the optional content (layers)",
    "/ViewerPreferences": "the viewer settings",
    "/PageLabels": "the page labels",
    "/Dests": "the named destinations",
    "/StructTreeRoot": "the document structure",
    "/URI": "the link settings",
}
_HIDDEN = 2  # annotation flag bit 2 (ISO 32000-1, table 165)
_EDGE = 1.0  # points of slack when testing that a stamp lies inside the box


class UnreadableUpdatesError(Exception):
    """The file's revisions cannot be read."""


@dataclass(frozen=True)
class Addition:
    """Something an update added that does not change what a reader sees.

    Attributes
    ----------
    kind : str
        ``signature``, ``timestamp``, ``empty signature field`` or
        ``validation data``.
    field : str or None
        Field name of a signature or timestamp.
    visible : bool
        Whether it shows on a page (only signatures in the kept box do).
    sheet : int or None
        1-based page number where it shows.
    """

    kind: str
    field: str | None = None
    visible: bool = False
    sheet: int | None = None
    box_known: bool = True

    def describe(self) -> str:
        """A plain phrase, e.g. ``signature 'Signature1' (visible, in the signature box on sheet 1)``."""
        if self.kind == "validation data":
            return "validation data for the signatures (certificates, revocation information)"
        if not self.visible:
            where = "not visible on any page"
        elif self.box_known:
            where = f"visible, in the box kept for the signature on sheet {self.sheet}"
        else:
            where = f"visible on sheet {self.sheet}"
        return f"{self.kind} '{self.field}' ({where})"


@dataclass(frozen=True)
class Update:
    """One appended revision: what it adds and what it changes.

    Attributes
    ----------
    revision : int
        Index of the revision in the file (0 = the first one written).
    added : tuple of Addition
        Additions that leave the record as a reader sees it.
    changes : tuple of str
        Plain sentences, one per change a reader could see.
    """

    revision: int
    added: tuple[Addition, ...]
    changes: tuple[str, ...]


@dataclass(frozen=True)
class UpdateReport:
    """Every update appended after a base revision.

    Attributes
    ----------
    base_revision : int
        The revision the updates are compared with.
    updates : tuple of Update
        In file order.
    """

    base_revision: int
    updates: tuple[Update, ...]

    @property
    def ok(self) -> bool:
        """bool: no update changes what a reader sees."""
        return not any(u.changes for u in self.updates)

    @property
    def first_change(self) -> str | None:
        """str or None: the first change a reader could see."""
        return next((c for u in self.updates for c in u.changes), None)

    @property
    def added(self) -> tuple[Addition, ...]:
        """tuple of Addition: everything harmless the updates added, in order."""
        return tuple(a for u in self.updates for a in u.added)


# ---------------------------------------------------------------- value comparison


class _View:
    """One state of a document: its catalogue, information and object resolver."""

    def __init__(self, root, trailer, get: Callable[[generic.Reference], Any]) -> None:
        self.root = root
        self.trailer = trailer
        self.get = get

    def resolve(self, obj: Any) -> Any:
        seen = 0
        while isinstance(obj, generic.IndirectObject):
            obj = self.get(generic.Reference(obj.idnum, obj.generation))
            seen += 1
            if seen > 32:
                return generic.NullObject()
        return obj

    def info(self) -> dict:
        try:
            info = self.resolve(self.trailer.raw_get("/Info"))
        except (KeyError, AttributeError):
            return {}
        return info if isinstance(info, generic.DictionaryObject) else {}


def _entry(d: Any, key: str) -> Any:
    return d.raw_get(key) if isinstance(d, generic.DictionaryObject) and key in d else None


def _name(obj: Any) -> str | None:
    return str(obj) if isinstance(obj, generic.NameObject) else None


class _Same:
    """Value equality of two objects from two views, following references.

    Streams compare by their dictionary and their *encoded* bytes (nothing
    is decompressed). The upward ``/Parent`` links are not followed (the
    trees are compared from the top), and a page's ``/Annots`` are left to
    :func:`_compare_annotations`. References already being compared count
    as equal (the comparison is co-inductive, so cycles end).
    """

    def __init__(self, old: _View, new: _View) -> None:
        self.old, self.new = old, new
        self.memo: dict[tuple, bool] = {}

    def __call__(self, a: Any, b: Any) -> bool:
        ia = isinstance(a, generic.IndirectObject)
        ib = isinstance(b, generic.IndirectObject)
        if ia and ib:
            key = (a.idnum, a.generation, b.idnum, b.generation)
            if key in self.memo:
                return self.memo[key]
            self.memo[key] = True
            result = self(self.old.resolve(a), self.new.resolve(b))
            self.memo[key] = result
            return result
        if ia:
            return self(self.old.resolve(a), b)
        if ib:
            return self(a, self.new.resolve(b))
        if isinstance(a, generic.DictionaryObject) or isinstance(b, generic.DictionaryObject):
            return self._dicts(a, b)
        if isinstance(a, generic.ArrayObject) or isinstance(b, generic.ArrayObject):
            if not (isinstance(a, list) and isinstance(b, list)) or len(a) != len(b):
                return False
            return all(self(x, y) for x, y in zip(a, b, strict=True))
        if isinstance(a, generic.NameObject) or isinstance(b, generic.NameObject):
            return _name(a) is not None and _name(a) == _name(b)
        numbers = (generic.NumberObject, generic.FloatObject)
        if isinstance(a, numbers) or isinstance(b, numbers):
            return isinstance(a, numbers) and isinstance(b, numbers) and a == b
        return type(a) is type(b) and a == b

    def _dicts(self, a: Any, b: Any) -> bool:
        if not (
            isinstance(a, generic.DictionaryObject) and isinstance(b, generic.DictionaryObject)
        ):
            return False
        is_stream = isinstance(a, generic.StreamObject)
        if is_stream != isinstance(b, generic.StreamObject):
            return False
        if is_stream and a.encoded_data != b.encoded_data:
            return False
        skip = {"/Parent", "/P"}
        if _name(a.get("/Type")) == "/Page":
            skip.add("/Annots")
        keys = (set(a.keys()) | set(b.keys())) - skip
        for key in sorted(keys):
            if key not in a or key not in b:
                return False
            if not self(a.raw_get(key), b.raw_get(key)):
                return False
        return True


# ---------------------------------------------------------------- pages and annotations


def _pages(view: _View) -> list[Any]:
    """The page dictionaries in reading order (at most 100,000, cycles cut)."""
    out: list[Any] = []
    seen: set[tuple[int, int]] = set()

    def walk(node_ref: Any, depth: int) -> None:
        if depth > 64 or len(out) > 100_000:
            return
        if isinstance(node_ref, generic.IndirectObject):
            key = (node_ref.idnum, node_ref.generation)
            if key in seen:
                return
            seen.add(key)
        node = view.resolve(node_ref)
        if not isinstance(node, generic.DictionaryObject):
            return
        if _name(node.get("/Type")) == "/Pages" or "/Kids" in node:
            kids = view.resolve(node.raw_get("/Kids")) if "/Kids" in node else []
            for kid in kids if isinstance(kids, list) else []:
                walk(kid, depth + 1)
        else:
            out.append(node)

    if isinstance(view.root, generic.DictionaryObject) and "/Pages" in view.root:
        walk(view.root.raw_get("/Pages"), 0)
    return out


def _annots(view: _View, page: Any) -> list[Any]:
    if "/Annots" not in page:
        return []
    annots = view.resolve(page.raw_get("/Annots"))
    return list(annots) if isinstance(annots, list) else []


def _rect(view: _View, annot: Any) -> Box | None:
    try:
        raw = view.resolve(annot.raw_get("/Rect"))
        x1, y1, x2, y2 = (float(view.resolve(v)) for v in raw)
    except (KeyError, TypeError, ValueError, AttributeError):
        return None
    return min(x1, x2), min(y1, y2), max(x1, x2), max(y1, y2)


def _visible(view: _View, annot: Any) -> bool:
    rect = _rect(view, annot)
    if rect is not None and (rect[2] - rect[0] < 0.01 or rect[3] - rect[1] < 0.01):
        return False
    try:
        flags = int(view.resolve(annot.raw_get("/F"))) if "/F" in annot else 0
    except (TypeError, ValueError):
        flags = 0
    return not flags & _HIDDEN


def _inside(rect: Box | None, box: Box) -> bool:
    if rect is None:
        return False
    return (
        rect[0] >= box[0] - _EDGE
        and rect[1] >= box[1] - _EDGE
        and rect[2] <= box[2] + _EDGE
        and rect[3] <= box[3] + _EDGE
    )


def _overlaps(rect: Box | None, box: Box) -> bool:
    if rect is None:
        return True
    return rect[0] < box[2] and box[0] < rect[2] and rect[1] < box[3] and box[1] < rect[3]


def _inherited(view: _View, field: Any, key: str) -> Any:
    node, depth = field, 0
    while isinstance(node, generic.DictionaryObject) and depth < 32:
        if key in node:
            return view.resolve(node.raw_get(key))
        node = view.resolve(node.raw_get("/Parent")) if "/Parent" in node else None
        depth += 1
    return None


def _field_name(view: _View, field: Any) -> str:
    value = _inherited(view, field, "/T")
    return str(value) if value is not None else "(unnamed)"


def _signature_kind(view: _View, annot: Any) -> str | None:
    """``signature``, ``timestamp`` or ``empty signature field`` for a signature widget, else None."""
    if _name(annot.get("/Subtype")) != "/Widget" or _name(_inherited(view, annot, "/FT")) != "/Sig":
        return None
    value = _inherited(view, annot, "/V")
    if not isinstance(value, generic.DictionaryObject):
        return "empty signature field"
    if _name(value.get("/Type")) == "/DocTimeStamp":
        return "timestamp"
    return "signature"


class _Box:
    """The box the package keeps for a signature stamp, and whether a stamp fills it.

    ``known`` is False when the box is not known (no rebuild to tell): then a
    signed, visible signature is let through wherever it is, and described so.
    """

    def __init__(self, where: tuple[int, Box] | None, known: bool = True) -> None:
        self.page = where[0] if where else None
        self.box = where[1] if where else None
        self.known = known
        self.used = False


def _classify(
    view: _View, annot: Any, index: int, kept: _Box
) -> tuple[Addition | None, str | None]:
    sheet = index + 1
    subtype = _name(annot.get("/Subtype")) or "(untyped)"
    kind = _signature_kind(view, annot)
    if kind is None:
        return None, (
            f"adds a {subtype.lstrip('/')} annotation on sheet {sheet}: it can show text or "
            "marks that are not part of the record"
        )
    field = _field_name(view, annot)
    if "/A" in annot or "/AA" in annot:
        return None, f"adds signature field '{field}' on sheet {sheet} with an action attached"
    if not _visible(view, annot):
        return Addition(kind, field, visible=False), None
    if kind == "empty signature field":
        return None, (
            f"adds an unsigned signature field '{field}' whose appearance shows on sheet "
            f"{sheet}: it looks like part of the record but nobody signed it"
        )
    rect = _rect(view, annot)
    if not kept.known:
        return Addition(kind, field, visible=True, sheet=sheet, box_known=False), None
    if kept.box is None or kept.page != index or not _inside(rect, kept.box):
        return None, (
            f"adds {kind} '{field}' whose stamp covers part of sheet {sheet} outside the box "
            "kept for the signature"
        )
    if kept.used:
        return None, (
            f"adds {kind} '{field}' whose stamp is drawn over an earlier stamp in the "
            f"signature box on sheet {sheet}"
        )
    kept.used = True
    return Addition(kind, field, visible=True, sheet=sheet), None


def _compare_annotations(
    old: _View, new: _View, old_pages: list, new_pages: list, kept: _Box
) -> tuple[list[Addition], list[str]]:
    added: list[Addition] = []
    changes: list[str] = []
    for index, (op, np_) in enumerate(zip(old_pages, new_pages, strict=True)):
        before, after = _annots(old, op), _annots(new, np_)
        if kept.box is not None and index == kept.page:
            for a in before:
                annot = old.resolve(a)
                if isinstance(annot, generic.DictionaryObject) and _visible(old, annot):
                    kept.used = kept.used or _overlaps(_rect(old, annot), kept.box)
        same = _Same(old, new)
        if len(after) < len(before) or not all(
            same(x, y) for x, y in zip(before, after[: len(before)], strict=True)
        ):
            changes.append(f"changes or removes an annotation on sheet {index + 1}")
            continue
        for a in after[len(before) :]:
            annot = new.resolve(a)
            if not isinstance(annot, generic.DictionaryObject):
                continue
            addition, change = _classify(new, annot, index, kept)
            if addition is not None:
                added.append(addition)
            if change is not None:
                changes.append(change)
    return added, changes


def _compare_pages(old: _View, new: _View) -> tuple[list, list, str | None]:
    old_pages, new_pages = _pages(old), _pages(new)
    if len(old_pages) != len(new_pages):
        return (
            old_pages,
            new_pages,
            (f"changes the number of sheets from {len(old_pages)} to {len(new_pages)}"),
        )
    if _Same(old, new)(old.root.raw_get("/Pages"), new.root.raw_get("/Pages")):
        return old_pages, new_pages, None
    for index, (a, b) in enumerate(zip(old_pages, new_pages, strict=True)):
        if not _Same(old, new)(a, b):
            what = (
                "its content"
                if not _Same(old, new)(a.get("/Contents"), b.get("/Contents"))
                else "its resources or size"
            )
            return old_pages, new_pages, f"changes sheet {index + 1} ({what})"
    return old_pages, new_pages, "changes the page tree"


# ---------------------------------------------------------------- catalogue, form, information


def _compare_catalog(old: _View, new: _View) -> list[str]:
    a, b = old.root, new.root
    if not (isinstance(a, generic.DictionaryObject) and isinstance(b, generic.DictionaryObject)):
        return ["replaces the document catalogue"]
    out = []
    for key in sorted((set(a.keys()) | set(b.keys())) - _CATALOG_FREE - {"/Pages"}):
        if key not in a or key not in b or not _Same(old, new)(a.raw_get(key), b.raw_get(key)):
            out.append(f"changes {_CATALOG_WORDS.get(key, 'the catalogue entry ' + key)}")
    return out


def _form(view: _View) -> Any:
    root = view.root
    if isinstance(root, generic.DictionaryObject) and "/AcroForm" in root:
        form = view.resolve(root.raw_get("/AcroForm"))
        if isinstance(form, generic.DictionaryObject):
            return form
    return generic.DictionaryObject()


def _compare_form(old: _View, new: _View) -> list[str]:
    a, b = _form(old), _form(new)
    out = []
    for key in sorted((set(a.keys()) | set(b.keys())) - _FORM_FREE):
        if key not in a or key not in b or not _Same(old, new)(a.raw_get(key), b.raw_get(key)):
            out.append(f"changes the form settings ({key})")
    fa = old.resolve(a.raw_get("/Fields")) if "/Fields" in a else []
    fb = new.resolve(b.raw_get("/Fields")) if "/Fields" in b else []
    fa = list(fa) if isinstance(fa, list) else []
    fb = list(fb) if isinstance(fb, list) else []
    same = _Same(old, new)
    if len(fb) < len(fa) or not all(same(x, y) for x, y in zip(fa, fb[: len(fa)], strict=True)):
        out.append("changes or removes a form field")
        return out
    for ref in fb[len(fa) :]:
        field = new.resolve(ref)
        if not isinstance(field, generic.DictionaryObject):
            continue
        kind = _name(_inherited(new, field, "/FT"))
        if kind != "/Sig":
            out.append(
                f"adds a form field '{_field_name(new, field)}' of type "
                f"{(kind or '(none)').lstrip('/')}"
            )
    return out


def _compare_info(old: _View, new: _View) -> list[str]:
    a, b = old.info(), new.info()
    out = []
    same = _Same(old, new)
    for key in sorted((set(a.keys()) | set(b.keys())) - _INFO_FREE):
        if key not in a or key not in b or not same(a.raw_get(key), b.raw_get(key)):
            out.append(f"changes the document information ({key.lstrip('/')})")
    if "/Encrypt" in new.trailer and "/Encrypt" not in old.trailer:
        out.append("encrypts the file")
    return out


def _compare(old: _View, new: _View, kept: _Box) -> tuple[list[Addition], list[str]]:
    changes: list[str] = []
    old_pages, new_pages, page_change = _compare_pages(old, new)
    added: list[Addition] = []
    if page_change is not None:
        changes.append(page_change)
    else:
        added, annotation_changes = _compare_annotations(old, new, old_pages, new_pages, kept)
        changes += annotation_changes
    changes += _compare_catalog(old, new)
    changes += _compare_form(old, new)
    changes += _compare_info(old, new)
    dss_old, dss_new = _entry(old.root, "/DSS"), _entry(new.root, "/DSS")
    if dss_new is not None and not _Same(old, new)(dss_old, dss_new):
        added.append(Addition("validation data"))
    return added, changes


# ---------------------------------------------------------------- entry points


def _reader(pdf: bytes) -> PdfFileReader:
    try:
        return PdfFileReader(BytesIO(pdf), strict=False)
    except Exception as exc:  # pyHanko raises assorted types for damaged files
        raise UnreadableUpdatesError(f"its revisions cannot be read ({exc})") from None


def _historical(reader: PdfFileReader, revision: int) -> _View:
    h = reader.get_historical_resolver(revision)
    return _View(h.root, h.trailer_view, h.get_object)


def revision_ending_at(pdf: bytes, length: int) -> int | None:
    """The revision of ``pdf`` that is the file ``pdf[:length]`` on its own, if any.

    That is the last revision whose cross-reference section starts inside the
    first ``length`` bytes, provided every later one starts after them.

    Raises
    ------
    UnreadableUpdatesError
        If the revisions cannot be read.
    """
    reader = _reader(pdf)
    try:
        starts = [
            reader.xrefs.get_startxref_for_revision(r) for r in range(reader.xrefs.total_revisions)
        ]
    except Exception as exc:
        raise UnreadableUpdatesError(f"its revisions cannot be read ({exc})") from None
    inside = [r for r, s in enumerate(starts) if s < length]
    if not inside or any(s < length for s in starts[inside[-1] + 1 :]):
        return None
    if inside != list(range(len(inside))):
        return None
    return inside[-1]


def inspect_updates(
    pdf: bytes,
    base_revision: int,
    signature_box: tuple[int, Box] | None = None,
    *,
    box_known: bool = True,
) -> UpdateReport:
    """Compare every revision after ``base_revision`` with the one before it.

    Parameters
    ----------
    pdf : bytes
        The file.
    base_revision : int
        Index of the revision taken as the record (0 = first).
    signature_box : (int, (x1, y1, x2, y2)) or None
        Zero-based page and box that the record keeps for a signature stamp.
        None: no visible signature is allowed.
    box_known : bool
        False when the kept box is not known (the package was not rebuilt):
        a signed, visible signature is then allowed anywhere and reported
        with its sheet.

    Returns
    -------
    UpdateReport

    Raises
    ------
    UnreadableUpdatesError
        If the revisions cannot be read.
    """
    reader = _reader(pdf)
    kept = _Box(signature_box, box_known)
    updates = []
    try:
        total = reader.xrefs.total_revisions
        hybrid = bool(reader.xrefs.hybrid_xrefs_present)
        for revision in range(base_revision + 1, total):
            old = _historical(reader, revision - 1)
            new = _historical(reader, revision)
            added, changes = _compare(old, new, kept)
            updates.append(Update(revision, tuple(added), tuple(changes)))
    except UnreadableUpdatesError:
        raise
    except Exception as exc:  # a damaged update: report it as a change
        updates.append(
            Update(-1, (), (f"adds an update that cannot be read as a PDF revision ({exc})",))
        )
        hybrid = False
    if hybrid and updates:
        first = updates[0]
        updates[0] = Update(
            first.revision,
            first.added,
            (*first.changes, "uses hybrid cross-references, which readers may resolve differently"),
        )
    return UpdateReport(base_revision, tuple(updates))


def compare_documents(
    old_pdf: bytes, new_pdf: bytes, signature_box: tuple[int, Box] | None = None
) -> Iterator[str]:
    """Changes a reader could see between two files (their latest revisions).

    Used to explain how a package differs from a rebuild of its input.
    Additions that :func:`inspect_updates` allows are not listed.
    """
    old, new = _reader(old_pdf), _reader(new_pdf)
    a = _View(old.root, old.trailer, old.get_object)
    b = _View(new.root, new.trailer, new.get_object)
    try:
        _added, changes = _compare(a, b, _Box(signature_box))
    except Exception as exc:
        changes = [f"cannot be compared ({exc})"]
    yield from changes
