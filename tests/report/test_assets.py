"""Files a project points at (seal, report style, logo): read by the loader, safely.

Every bad file gives exit status 2 and one message naming the file and the
key, never a hang, a traceback or a memory error.
"""

from __future__ import annotations

import os
import struct
import zlib
from pathlib import Path

import pytest

from calcdoc.cli import main

ROOT = Path(__file__).resolve().parents[2]
DIVIDER = (ROOT / "tests" / "cases" / "divider.toml").read_text()


def project(tmp_path: Path, signoff: str = "", report: str = "") -> Path:
    text = DIVIDER
    if signoff:
        text = text.replace("schema = 1", f"schema = 1\n[signoff]\n{signoff}", 1)
    if report:
        text += f"\n[report]\n{report}\n"
    path = tmp_path / "p.toml"
    path.write_text(text)
    return path


def png(width: int, height: int) -> bytes:
    """A PNG file whose header claims ``width`` × ``height`` (PNG specification, ISO/IEC 15948)."""

    def chunk(kind: bytes, data: bytes) -> bytes:
        return (
            struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data))
        )

    ihdr = struct.pack(">IIBBBBB", width, height, 8, 0, 0, 0, 0)  # 8-bit greyscale
    idat = zlib.compress(b"\x00" * (width + 1) * min(height, 4))
    return b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", ihdr) + chunk(b"IDAT", idat) + chunk(b"IEND", b"")


def run(path: Path, capsys, *extra: str) -> tuple[int, str]:
    status = main(["build", str(path), "-q", "-o", str(path.parent / "out.pdf"), *extra])
    err = capsys.readouterr().err
    assert "Traceback" not in err
    return status, err


def test_a_seal_image_is_drawn_on_the_cover(tmp_path, capsys):
    from pypdf import PdfReader

    (tmp_path / "seal.png").write_bytes(png(60, 4))
    path = project(tmp_path, 'seal = "seal.png"')
    assert run(path, capsys) == (0, "")
    page = PdfReader(tmp_path / "out.pdf").pages[0]
    assert any(
        x.get_object().get("/Subtype") == "/Image" for x in page["/Resources"]["/XObject"].values()
    )


@pytest.mark.parametrize("seal", ["/dev/zero", "/dev/null", "."])
def test_a_seal_that_is_not_a_regular_file_is_refused(tmp_path, capsys, seal):
    status, err = run(project(tmp_path, f'seal = "{seal}"'), capsys)
    assert status == 2
    assert "signoff.seal" in err and "not a regular file" in err


def test_a_seal_at_a_named_pipe_is_refused_without_blocking(tmp_path, capsys):
    os.mkfifo(tmp_path / "pipe.png")  # nobody writes to it: opening it to read would block
    status, err = run(project(tmp_path, 'seal = "pipe.png"'), capsys)
    assert status == 2 and "signoff.seal" in err and "not a regular file" in err


def test_a_missing_or_oversized_or_bogus_seal_is_refused(tmp_path, capsys):
    status, err = run(project(tmp_path, 'seal = "missing.png"'), capsys)
    assert status == 2 and "signoff.seal" in err and "missing.png" in err
    with open(tmp_path / "big.png", "wb") as fh:
        fh.truncate(5 * 1024 * 1024)  # over the 4 MiB image cap stated in README
    status, err = run(project(tmp_path, 'seal = "big.png"'), capsys)
    assert status == 2 and "larger than the 4096 KiB limit" in err
    (tmp_path / "text.png").write_text("not an image")
    status, err = run(project(tmp_path, 'seal = "text.png"'), capsys)
    assert status == 2 and "not a readable PNG or JPEG" in err


def test_an_image_claiming_too_many_pixels_is_refused_before_decoding(tmp_path, capsys):
    (tmp_path / "bomb.png").write_bytes(png(60000, 60000))  # 3.6 billion pixels in a small file
    status, err = run(project(tmp_path, 'seal = "bomb.png"'), capsys)
    assert status == 2 and "signoff.seal" in err and "pixels" in err


@pytest.mark.parametrize("template", ["../outside.toml", "/etc/hostname.toml", "sub/../../x.toml"])
def test_a_template_outside_the_project_folder_is_refused(tmp_path, capsys, template):
    inner = tmp_path / "inner"
    inner.mkdir()
    (tmp_path / "outside.toml").write_text('paper = "A4"\n')
    status, err = run(project(inner, report=f'template = "{template}"'), capsys)
    assert status == 2 and "report.template" in err and "template" in err


def test_a_template_that_is_a_pipe_or_too_large_is_refused(tmp_path, capsys):
    os.mkfifo(tmp_path / "style.toml")
    status, err = run(project(tmp_path, report='template = "style.toml"'), capsys)
    assert status == 2 and "report.template" in err and "not a regular file" in err
    (tmp_path / "style.toml").unlink()
    (tmp_path / "style.toml").write_text("# " + "x" * 70_000 + "\n")  # over the 64 KiB cap
    status, err = run(project(tmp_path, report='template = "style.toml"'), capsys)
    assert status == 2 and "larger than the 64 KiB limit" in err


def test_unknown_template_names_the_key(tmp_path, capsys):
    status, err = run(project(tmp_path, report='template = "fancy"'), capsys)
    assert (
        status == 2 and "report.template" in err and "compact" in err
    )  # lists the installed styles


def test_a_style_logo_at_a_device_is_refused(tmp_path, capsys):
    (tmp_path / "house.toml").write_text('logo = "/dev/zero"\n')
    status, err = run(project(tmp_path, report='template = "house.toml"'), capsys)
    assert status == 2 and "logo" in err and "house.toml" in err
