"""Appendices: the input file with line numbers, and the software record."""

from __future__ import annotations

import platform
import textwrap
from importlib import metadata
from pathlib import Path
from xml.sax.saxutils import escape

from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.platypus import Flowable, Paragraph

from calcdoc import __version__
from calcdoc.report.layout import NBSP, Layout
from calcdoc.report.text import printable

LIBRARIES = (
    "numpy",
    "scipy",
    "sympy",
    "pint",
    "reportlab",
    "matplotlib",
    "fonttools",
    "pypdf",
    "tomli",
    "pyHanko",
)


def wrap_listing(lines: list[str], columns: int) -> list[tuple[int | None, str]]:
    """Lines wrapped at spaces to ``columns`` characters, continuations indented.

    A word is broken only when it alone is longer than a line.

    >>> wrap_listing(["key = \\"a long value\\""], 12)
    [(1, 'key = "a'), (None, '  long'), (None, '  value"')]
    """
    out: list[tuple[int | None, str]] = []
    for i, line in enumerate(lines, 1):
        if len(line) <= columns:
            out.append((i, line))
            continue
        indent = line[: len(line) - len(line.lstrip(" "))] + "  "
        parts = textwrap.wrap(
            line,
            width=columns,
            subsequent_indent=indent,
            break_on_hyphens=False,
            drop_whitespace=True,
            replace_whitespace=False,
        ) or [""]
        out.append((i, parts[0]))
        out += [(None, p) for p in parts[1:]]
    return out


def input_appendix(lay: Layout) -> list[Flowable]:
    p = lay.results.project
    out: list[Flowable] = [lay.section("appendix_input", f"Input file: {Path(p.path).name}")]
    out.append(
        lay.paragraph(
            f"SHA-256 {p.sha256}; the same bytes are attached to this PDF. Long "
            "lines are wrapped at a space and continued, indented, without a "
            "line number.",
            "small",
        )
    )
    style = lay.styles["mono"]
    lines = p.source.decode("utf-8").splitlines()
    digits = len(str(len(lines)))
    char = stringWidth("M", lay.fonts.mono, style.fontSize)
    columns = max(20, int((lay.width - 2) / char) - digits - 2)
    rows = []
    for n, text in wrap_listing(lines, columns):
        num = f"{n:>{digits}}" if n is not None else " " * digits
        body = escape(printable(text, lay.fonts.mono)).replace(" ", NBSP) or NBSP
        rows.append(f"<font color='#888888'>{num.replace(' ', NBSP)}</font>{NBSP}{NBSP}{body}")
    for start in range(0, len(rows), 30):
        out.append(Paragraph("<br/>".join(rows[start : start + 30]), style))
    return out


def software_appendix(lay: Layout) -> list[Flowable]:
    rows = [
        ("calcdoc", __version__, "the calculation and this record"),
        ("Python", platform.python_version(), ""),
    ]
    for lib in LIBRARIES:
        try:
            rows.append((lib, metadata.version(lib), ""))
        except metadata.PackageNotFoundError:
            rows.append((lib, "not installed", ""))
    return [
        lay.section("appendix_software"),
        lay.table(["Component", "Version", "Role"], rows, [2, 1.5, 3]),
    ]
