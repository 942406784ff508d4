"""Tests for calcdoc.record.revisions: what each appended update changes for a reader.

Updates are written by pyHanko's incremental writer and by pypdf in
incremental mode, as another program would write them; the revision
structure they produce is ISO 32000-1, 7.5.6 (incremental updates).
"""

from __future__ import annotations

from io import BytesIO

import pytest
from pyhanko.pdf_utils import generic
from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter
from pypdf import PdfWriter
from record_helpers import add_fake_stamp, replace_attachment

from calcdoc.record.revisions import Addition, inspect_updates, revision_ending_at

N = generic.NameObject


def _update(pdf: bytes, change) -> bytes:
    writer = IncrementalPdfFileWriter(BytesIO(pdf), strict=False)
    change(writer)
    out = BytesIO()
    writer.write(out)
    return out.getvalue()


def _open_action(writer) -> None:
    action = generic.DictionaryObject(
        {N("/S"): N("/JavaScript"), N("/JS"): generic.TextStringObject("app.alert('ok')")}
    )
    writer.root[N("/OpenAction")] = writer.add_object(action)
    writer.update_root()


def _retitle(writer) -> None:
    info = writer.trailer["/Info"]
    info[N("/Title")] = generic.TextStringObject("Another record")
    writer.update_container(info)


def _font_redefined(writer) -> None:
    page = writer.root["/Pages"]["/Kids"][0].get_object()
    fonts = page["/Resources"]["/Font"]
    fonts[N("/F99")] = fonts[next(iter(fonts))]
    writer.update_container(fonts)


def _one_update(pdf: bytes, base_len: int, box):
    report = inspect_updates(pdf, revision_ending_at(pdf, base_len), box)
    assert len(report.updates) == 1
    return report


def test_the_signing_update_adds_one_visible_signature_in_the_box(
    built_package, signed_package
) -> None:
    base = revision_ending_at(signed_package, len(built_package.pdf))
    assert base == 0
    report = inspect_updates(signed_package, base, built_package.signature_box)
    assert report.ok
    assert report.added == (Addition("signature", "Signature1", visible=True, sheet=1),)
    assert revision_ending_at(signed_package, 100) is None  # no revision ends that early


def test_the_same_stamp_without_a_kept_box_is_a_change(built_package, signed_package) -> None:
    report = inspect_updates(signed_package, 0, None)
    assert not report.ok
    assert report.first_change == (
        "adds signature 'Signature1' whose stamp covers part of sheet 1 outside the box "
        "kept for the signature"
    )
    unknown = inspect_updates(signed_package, 0, None, box_known=False)
    assert (
        unknown.ok and unknown.added[0].describe() == "signature 'Signature1' (visible on sheet 1)"
    )


def test_an_unsigned_field_inside_the_kept_box_is_still_a_change(built_package) -> None:
    page, box = built_package.signature_box
    tampered = add_fake_stamp(built_package.pdf, box, page=page, text=b"Approved")
    report = _one_update(tampered, len(built_package.pdf), built_package.signature_box)
    assert report.first_change.startswith("adds an unsigned signature field 'Approval'")


@pytest.mark.parametrize(
    ("change", "phrase"),
    [
        (_open_action, "changes the action run when the file is opened"),
        (_retitle, "changes the document information (Title)"),
        (_font_redefined, "changes sheet 1 (its resources or size)"),
    ],
    ids=["open-action", "title", "font-resources"],
)
def test_catalogue_information_and_resources(built_package, change, phrase) -> None:
    tampered = _update(built_package.pdf, change)
    report = _one_update(tampered, len(built_package.pdf), built_package.signature_box)
    assert report.first_change == phrase


def test_replaced_attachment_and_added_page(built_package) -> None:
    tampered = replace_attachment(built_package.pdf, "results.json", lambda b: b + b" ")
    report = _one_update(tampered, len(built_package.pdf), built_package.signature_box)
    assert report.first_change == "changes the attachments and named destinations or actions"

    writer = PdfWriter(BytesIO(built_package.pdf), incremental=True)
    pages = len(writer.pages)
    writer.add_blank_page()
    out = BytesIO()
    writer.write(out)
    report = _one_update(out.getvalue(), len(built_package.pdf), built_package.signature_box)
    assert report.first_change == f"changes the number of sheets from {pages} to {pages + 1}"
