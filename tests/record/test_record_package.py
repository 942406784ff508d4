"""Tests for calcdoc.record.package (module named so that it does not clash with tests/report/test_package.py): reading earlier revisions and carrying one in a package.

Outside references: pypdf reads the attachments back; the demo project file
itself is the expected content.
"""

from __future__ import annotations

from io import BytesIO

import pytest
from pypdf import PdfReader
from record_helpers import DEMO_PROJECT

from calcdoc.cli import main
from calcdoc.errors import ProjectError
from calcdoc.record.package import (
    PREVIOUS_NAME,
    attach_previous,
    baseline,
    embedded_input,
    embedded_previous,
)


@pytest.mark.parametrize(
    ("content", "phrase"),
    [(b"", "the file is empty (0 bytes)"), (b" \n\t\n", "the file is blank (only white space)")],
    ids=["zero-byte", "blank"],
)
@pytest.mark.parametrize("suffix", [".pdf", ".toml"])
def test_empty_previous_gets_its_own_message(content, phrase, suffix, tmp_path, capsys) -> None:
    previous = tmp_path / f"old{suffix}"
    previous.write_bytes(content)
    out = tmp_path / "new.pdf"
    code = main(["build", str(DEMO_PROJECT), "-o", str(out), "-q", "--previous", str(previous)])
    err = capsys.readouterr().err
    assert code == 2
    assert f"{previous}: {phrase}: expected a package (.pdf) or a project file (.toml)" in err
    assert err.count("\n") == 1 and "Traceback" not in err and "internal error" not in err
    assert not out.exists()
    with pytest.raises(ProjectError, match="empty|blank"):
        baseline(previous)


def test_previous_that_is_a_folder(tmp_path, capsys) -> None:
    code = main(
        ["build", str(DEMO_PROJECT), "-o", str(tmp_path / "n.pdf"), "--previous", str(tmp_path)]
    )
    err = capsys.readouterr().err
    assert code == 2 and f"{tmp_path}: not a regular file" in err


def test_previous_revision_is_carried_and_read_back(built_package) -> None:
    source = DEMO_PROJECT.read_bytes().replace(b'"4k7"', b'"3k3"')
    pdf = attach_previous(built_package.pdf, "sensor_supply.toml", "old/B.pdf:x.toml", source)
    assert embedded_previous(pdf) == ("old/B.pdf:x.toml", source)
    assert embedded_previous(built_package.pdf) is None
    attachments = PdfReader(BytesIO(pdf)).attachments
    assert attachments[PREVIOUS_NAME] == [source]
    assert embedded_input(pdf) == ("sensor_supply.toml", DEMO_PROJECT.read_bytes())
    # never under the input's own name, and the same bytes every time
    clash = attach_previous(built_package.pdf, PREVIOUS_NAME, "x", source)
    assert embedded_input(clash)[0] == "sensor_supply.toml"
    assert sorted(PdfReader(BytesIO(clash)).attachments) == sorted(
        ["previous-revision-1.toml", "results.json", "sensor_supply.toml"]
    )
    assert (
        attach_previous(built_package.pdf, "sensor_supply.toml", "old/B.pdf:x.toml", source) == pdf
    )
