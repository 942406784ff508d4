"""The PDF calculation package: lays out the engine's results, computes nothing.

:func:`build_package` plans the sections (so every cross-reference is
computed from the actual numbering), lays them out in the vocabulary of
:mod:`calcdoc.report.layout`, and returns the finished bytes with where
the digital signature belongs and any warnings; writing the file is the
command's job.  The style, logo and seal arrive as data in the project's
assets (:mod:`calcdoc.model.assets`): nothing here reads a file.
"""

from __future__ import annotations

import io
import json
import re
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from reportlab.lib.pagesizes import A4, LETTER
from reportlab.lib.units import mm
from reportlab.platypus import (
    CondPageBreak,
    Flowable,
    Frame,
    NextPageTemplate,
    PageBreak,
    PageTemplate,
    TableStyle,
)
from reportlab.platypus.tableofcontents import TableOfContents

from calcdoc import __version__
from calcdoc.report.access import stage
from calcdoc.report.analysis_sections import (
    preferred_section,
    sensitivity_section,
    sweeps_section,
    tolerance_section,
)
from calcdoc.report.appendices import input_appendix, software_appendix
from calcdoc.report.changes import changes_section
from calcdoc.report.checks import checks_section
from calcdoc.report.circuit import (
    MATRIX_INLINE_LIMIT,
    MATRIX_LISTING_LIMIT,
    diagram_section,
    formulation_section,
)
from calcdoc.report.conclusion import conclusion_section
from calcdoc.report.cover import CAUTIONS, cover
from calcdoc.report.flowables import Heading
from calcdoc.report.fonts import register_fonts
from calcdoc.report.front import inputs_section, method_section
from calcdoc.report.furniture import RecordingDoc, SheetCanvas, furniture
from calcdoc.report.layout import Layout, group_leads
from calcdoc.report.solution import solution_section, verification_section
from calcdoc.report.summary import record_summary
from calcdoc.report.text import text_warnings

UNKNOWN_SHEET = 99  # a two-digit stand-in for a sheet number before the first pass

__all__ = ["CAUTIONS", "PackageOutput", "build_package", "default_output"]


@dataclass(frozen=True)
class PackageOutput:
    """The finished package.

    Attributes
    ----------
    pdf : bytes
    signature_box : (int, (float, float, float, float))
        Page index and rectangle (x1, y1, x2, y2, PDF points) kept empty in
        the cover's sign-off block for a digital signature appearance.
    warnings : tuple of str
        Things the author should know (each names the project-file field),
        such as characters the embedded font cannot draw.
    records : tuple of (kind, sheet, text)
        Every flowable placed and its sheet (``"heading"`` or ``"content"``),
        from the layout's own account: for checking page breaks.
    """

    pdf: bytes
    signature_box: tuple[int, tuple[float, float, float, float]]
    warnings: tuple[str, ...] = ()
    records: tuple[tuple[str, int, str], ...] = ()


def _matrix_appendix(results, style) -> bool:
    sol = results.cases[0].solution
    n = len(sol.unknowns)
    return (
        sol.formulation is not None
        and sol.matrix is not None
        and "matrix" in style.sections
        and MATRIX_INLINE_LIMIT < n <= MATRIX_LISTING_LIMIT
    )


def plan(results, style, previous) -> list[tuple[str, str]]:
    """The sections that will appear, in order: (key, title)."""
    out = []
    if previous is not None:
        out.append(("changes", "Changes"))
    out += [("method", "Purpose, scope and method"), ("inputs", "Design inputs")]
    if "diagram" in style.sections:
        out.append(("diagram", "Circuit diagram"))
    out += [
        ("formulation", "Formulation (nominal case)"),
        ("solution", "Solution"),
        ("verification", "Verification"),
        ("checks", "Design checks"),
    ]
    if stage(results, "tolerance") is not None or stage(results, "envelope") is not None:
        out.append(("tolerance", "Tolerance and operating cases"))
    if stage(results, "sensitivity") is not None:
        out.append(("sensitivity", "Sensitivity"))
    if stage(results, "sweeps") is not None:
        out.append(("sweeps", "Parameter sweeps"))
    if stage(results, "preferred_values") is not None:
        out.append(("preferred", "Preferred values (IEC 60063)"))
    out.append(("conclusion", "Conclusion"))
    if "input_listing" in style.sections:
        out.append(("appendix_input", "Input file"))
    if "versions" in style.sections:
        out.append(("appendix_software", "Software"))
    if _matrix_appendix(results, style):
        out.append(("appendix_matrix", "Matrix listing (nominal case)"))
    return out


def build_package(
    results,
    *,
    previous=None,
    progress: Callable[[str], None] | None = None,
) -> PackageOutput:
    """Lay out the calculation package.

    Parameters
    ----------
    results : Results
        From the pipeline; the project's assets carry the style, logo and seal.
    previous : Comparison, optional
        The comparison with an earlier revision (:func:`calcdoc.record.compare.compare`):
        adds a "Changes from revision X" section first and revision marks
        beside every changed row.
    progress : callable, optional
        Called with a short message at each stage.

    Returns
    -------
    PackageOutput
    """
    say = progress or (lambda _m: None)
    p = results.project
    style = p.assets.style
    size = A4 if (p.report.paper or style.paper) == "A4" else LETTER
    fonts = register_fonts()
    top, bottom, left, right = (m * mm for m in style.margin_mm)
    lay = Layout(
        results,
        style,
        fonts,
        size[0] - left - right,
        p.report.significant_figures,
        previous,
        size[1] - top - bottom,
    )
    lay.summary = record_summary(results)
    sections = plan(results, style, previous)
    lay.set_plan(sections)
    say("laying out the cover")
    story: list[Flowable] = [NextPageTemplate("body"), *cover(lay), PageBreak()]
    toc_style = TableStyle(
        [
            ("FONT", (0, 0), (-1, -1), fonts.regular, 9),
            ("VALIGN", (0, 0), (-1, -1), "TOP"),
            ("LEFTPADDING", (0, 0), (-1, -1), 0),
            ("RIGHTPADDING", (0, 0), (-1, -1), 0),
            ("TOPPADDING", (0, 0), (-1, -1), 0),
            ("BOTTOMPADDING", (0, 0), (-1, -1), 0),
        ]
    )
    toc = TableOfContents(
        levelStyles=[lay.styles["toc1"], lay.styles["toc2"]], dotsMinLevel=0, tableStyle=toc_style
    )
    story += [lay.rich("<b>Contents</b>", "h1"), toc, CondPageBreak(250)]
    matrix: list[Flowable] = []

    def formulation(lay: Layout) -> list[Flowable]:
        body, appendix = formulation_section(lay)
        matrix.extend(appendix)
        return body

    builders = {
        "changes": lambda lay: changes_section(lay, previous),
        "method": method_section,
        "inputs": inputs_section,
        "diagram": diagram_section,
        "formulation": formulation,
        "solution": solution_section,
        "verification": verification_section,
        "checks": checks_section,
        "tolerance": tolerance_section,
        "sensitivity": sensitivity_section,
        "sweeps": sweeps_section,
        "preferred": preferred_section,
        "conclusion": conclusion_section,
        "appendix_input": input_appendix,
        "appendix_software": software_appendix,
        "appendix_matrix": lambda lay: matrix,
    }
    for key, _ in sections:
        say(f"laying out {key.replace('_', ' ')}")
        body = builders[key](lay)
        if key.startswith("appendix"):
            story.append(PageBreak() if key == "appendix_input" else CondPageBreak(200))
        else:
            story.append(CondPageBreak(120))
        story += body
    say("typesetting")
    buf = io.BytesIO()
    d = p.document
    doc = RecordingDoc(
        buf,
        records=lay.records,
        pagesize=size,
        leftMargin=left,
        rightMargin=right,
        topMargin=top,
        bottomMargin=bottom,
        title=d.title,
        author=(p.signoff.prepared.name if p.signoff.prepared else d.organisation),
        subject=f"Calculation record {d.number} revision {d.revision}".strip(),
        creator=f"calcdoc {__version__}",
        invariant=1,
        initialFontName=fonts.regular,
        pageCompression=1,
    )
    frame = Frame(
        left,
        bottom,
        lay.width,
        size[1] - top - bottom,
        id="body",
        leftPadding=0,
        rightPadding=0,
        topPadding=0,
        bottomPadding=0,
    )
    doc.addPageTemplates([PageTemplate("cover", [frame]), PageTemplate("body", [frame])])
    draw = furniture(p, style, fonts, lay.summary.status, size)
    canvas_cls = type("Sheets", (SheetCanvas,), {"furniture": staticmethod(draw)})
    # The contents get their rows before the first pass (sheet numbers still
    # unknown), so the sections keep their sheets when the real numbers
    # arrive: two passes instead of three.
    toc.addEntries(  # laid out in the first pass (reportlab fills the contents one pass late)
        [(f.toc_level, f.toc_text, UNKNOWN_SHEET) for f in story if isinstance(f, Heading)]
    )
    doc.multiBuild(group_leads(story), canvasmaker=canvas_cls)
    say("attaching the input and results")
    pdf = _attach(buf.getvalue(), results)
    return PackageOutput(
        pdf,
        lay.signature_box.get("box", (0, (0.0, 0.0, 0.0, 0.0))),
        text_warnings(p, fonts.regular),
        tuple(lay.records),
    )


def _pdf_date(date) -> str | None:
    return f"D:{date.strftime('%Y%m%d')}000000Z" if date else None


def _attach(pdf: bytes, results) -> bytes:
    """Embed the input file and the results JSON; set the document-info keys.

    The creation and modification dates are the document's own date (no
    clock is read), so two builds of the same input are byte-identical.
    """
    from pypdf import PdfReader, PdfWriter

    from calcdoc.results_json import results_document

    p = results.project
    name = Path(p.path).name or "project.toml"
    writer = PdfWriter(clone_from=PdfReader(io.BytesIO(pdf)))
    writer.add_attachment(name, p.source)
    body = (
        json.dumps(results_document(results), indent=1, ensure_ascii=False, allow_nan=False) + "\n"
    )
    writer.add_attachment("results.json", body.encode("utf-8"))
    meta = {
        k: v
        for k, v in dict(writer.metadata or {}).items()
        if k not in ("/CreationDate", "/ModDate")
    }
    meta.update({"/CalcdocInput": name, "/CalcdocInputSHA256": p.sha256})
    when = _pdf_date(p.document.date)
    if when:
        meta.update({"/CreationDate": when, "/ModDate": when})
    writer.metadata = meta
    out = io.BytesIO()
    writer.write(out)
    return out.getvalue()


def default_output(project, project_path: Path) -> Path:
    """``NUMBER-revREV.pdf`` beside the project file (the project's stem when unnumbered)."""
    d = project.document
    stem = (
        f"{d.number}-rev{d.revision}"
        if d.number and d.revision
        else (d.number or project_path.stem)
    )
    stem = re.sub(r"[^A-Za-z0-9_.\-]+", "_", stem)
    return project_path.resolve().parent / f"{stem}.pdf"
