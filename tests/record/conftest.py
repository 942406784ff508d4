"""Shared fixtures for the record tests: a test PKI and real packages.

Packages are built as ``calcdoc build`` builds them
(``calcdoc.record.rebuild.render_package``) from the demo project and signed
with ``calcdoc.record.signing.sign_package``.
"""

from __future__ import annotations

import pytest
from record_helpers import DEMO_PROJECT, KEY_PASSWORD, STAMP_FONT, RecordPki

import calcdoc


@pytest.fixture(scope="session")
def record_pki(tmp_path_factory: pytest.TempPathFactory) -> RecordPki:
    return RecordPki(tmp_path_factory.mktemp("record_pki"))


@pytest.fixture(scope="session")
def built_package():
    """A real package of the demo project (unsigned) and its signature box."""
    from calcdoc.record.rebuild import render_package

    return render_package(calcdoc.load(DEMO_PROJECT))


@pytest.fixture(scope="session")
def signed_package(built_package, record_pki: RecordPki) -> bytes:
    from calcdoc.record.signing import sign_package

    page, box = built_package.signature_box
    return sign_package(
        built_package.pdf,
        record_pki.p12_path,
        KEY_PASSWORD,
        page=page,
        box=box,
        font_path=STAMP_FONT,
        reason="Checked",
    )
