"""One calculation record from one project file: the unit of work of ``calcdoc build``.

:func:`build_record` takes a :class:`RecordJob` and returns a
:class:`RecordOutcome`, both plain picklable values, and never raises for
bad input: the same call builds one record in this process, each record of
a batch in a pool of local processes, or a record in a worker of a
distributed engine. :func:`make_record` is the same work raising the
error instead (the single-file command lets the command line report it).

With ``changed``, a record whose package (at its output path) already
embeds the same input, byte for byte (same SHA-256), and was built by the
same calcdoc version is not rebuilt. A project asks for revision marks by
listing an earlier revision in its ``[[document.history]]``: when the
package of the latest such revision exists at its default name beside the
project (``NUMBER-revA.pdf`` for revision A), a rebuild compares with it,
as ``--previous`` would.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

from calcdoc.errors import CalcdocError, PackageError, ProjectError, SingularCircuitError
from calcdoc.fileio import check_output, write_atomic

Progress = Callable[[str], None]
Signer = Callable[
    [bytes, Any, Any, Progress | None], bytes
]  # (pdf, signature box, project, progress)


class PreviousDocumentError(CalcdocError):
    """``--previous`` names a revision of another document (refused with ``--strict``)."""


@dataclass(frozen=True)
class RecordJob:
    """What to build.

    Attributes
    ----------
    project : str
        The project file.
    output : str or None
        The package path; None for ``NUMBER-revREV.pdf`` beside the project.
    previous : str or None
        An earlier revision (package or project file) for revision marks.
    strict : bool
        Refuse (instead of warn) when ``previous`` is another document.
    changed : bool
        Skip an unchanged record; find the previous revision's package (see module notes).
    inputs : tuple of str
        Further files the output must not overwrite (the other projects of a batch).
    """

    project: str
    output: str | None = None
    previous: str | None = None
    strict: bool = False
    changed: bool = False
    inputs: tuple[str, ...] = ()


@dataclass(frozen=True)
class RecordOutcome:
    """What happened, with the record's register entry.

    ``status`` is the exit status the single-file command would give: 0 the
    package is written (or was unchanged), 2 not built. ``action`` is
    ``"built"``, ``"unchanged"`` or ``"not built"``.
    """

    project: str
    status: int
    action: str
    message: str = ""
    warnings: tuple[str, ...] = ()
    package: str = ""
    package_bytes: int = 0
    package_sha256: str = ""
    input_sha256: str = ""
    previous: str = ""
    number: str = ""
    revision: str = ""
    title: str = ""
    signoff: str = ""
    checks_run: int = 0
    checks_failing: int = 0
    worst_utilisation: float | None = None
    worst_at: str = ""


# ---------------------------------------------------------------- the work


def analysed(project, *, closed_form: bool = False):
    """The results of ``project``: the one place the commands call the pipeline."""
    from calcdoc.pipeline import analyse

    return analyse(project, closed_form=closed_form)


def build_record(job: RecordJob) -> RecordOutcome:
    """Build one record; bad input gives an outcome with status 2, never an exception."""
    try:
        return make_record(job)
    except Exception as exc:  # one record's fault, whatever it is, must not stop the others
        return failed(job.project, error_message(exc, job.project))


def make_record(
    job: RecordJob, *, progress: Progress | None = None, sign: Signer | None = None
) -> RecordOutcome:
    """Build one record (see :class:`RecordJob`); raises on bad input.

    Raises
    ------
    ProjectError, SingularCircuitError
        The project is invalid or its circuit cannot be solved.
    OutputNotWritableError, OutputIsInputError
        The output cannot be written or would overwrite an input (checked
        before any work).
    PreviousDocumentError
        ``strict`` and the previous revision is another document.
    """
    import calcdoc
    from calcdoc.record.rebuild import render_package
    from calcdoc.report.package import default_output

    source = Path(job.project)
    inputs = (source, *map(Path, job.inputs))
    if job.output:
        check_output(job.output, inputs)
    project = calcdoc.load(source)
    out = Path(job.output) if job.output else default_output(project, source)
    check_output(out, inputs)
    warnings: list[str] = list(project.warnings)  # names differing only in case, and the like
    if job.changed:
        unchanged = unchanged_outcome(project, out, warnings)
        if unchanged is not None:
            return unchanged
    previous = job.previous or (_earlier_package(project, source) if job.changed else None)
    before = _previous_project(previous, project, job.strict, warnings) if previous else None
    results = analysed(project, closed_form=True)
    comparison = _comparison(before, results, warnings) if before is not None else None
    # the same function lays out every package, so `calcdoc verify` can rebuild it
    package = render_package(
        project, previous=before, progress=progress, results=results, comparison=comparison
    )
    warnings += list(package.warnings)
    pdf = package.pdf
    if sign is not None:
        pdf = sign(pdf, package.signature_box, project, progress)
    warnings += [n for n in results.notes if n.startswith("Revision history")]
    write_atomic(out, pdf)
    from calcdoc.results_json import results_document

    return _outcome(
        job.project, project, "built", results_document(results), out, pdf, warnings, previous
    )


# ---------------------------------------------------------------- --changed


def unchanged_outcome(project, out: Path, warnings: list[str]) -> RecordOutcome | None:
    """The outcome for a package at ``out`` that embeds this input and version, else None.

    A package that cannot be read is noted in ``warnings`` (and rebuilt by the caller).
    """
    from calcdoc import __version__
    from calcdoc.record.package import embedded_input, embedded_results

    try:
        pdf = out.read_bytes()
    except FileNotFoundError:
        return None
    except OSError as exc:
        warnings.append(f"{out}: the existing package cannot be read ({exc.strerror}); rebuilt")
        return None
    try:
        _, source = embedded_input(pdf)
        doc = embedded_results(pdf)
    except PackageError as exc:
        warnings.append(f"{out}: the existing package cannot be read ({exc}); rebuilt")
        return None
    version = (doc.get("tool") or {}).get("version")
    if hashlib.sha256(source).hexdigest() != project.sha256:
        _replacing_same_revision(source, out, project, warnings)
        return None
    if version != __version__:
        return None
    return _outcome(project.path, project, "unchanged", doc, out, pdf, warnings, "")


def _replacing_same_revision(source: bytes, out: Path, project, warnings: list[str]) -> None:
    """Warn when a package is about to be replaced by one of the same revision with other inputs."""
    import calcdoc
    from calcdoc.model.history import same_revision_warning

    try:
        before = calcdoc.loads(source, f"{out}:input")
    except CalcdocError:
        return
    warning = same_revision_warning(before, project, inputs_changed=True)
    if warning:
        warnings.append(warning)


def _earlier_package(project, source: Path) -> str | None:
    """The package of the latest history revision before the current one, if it exists."""
    from calcdoc.model.history import revision_key
    from calcdoc.report.package import default_output

    d = project.document
    now = revision_key(d.revision)
    if now is None:
        return None
    earlier = [
        h.revision
        for h in d.history
        if revision_key(h.revision) is not None and revision_key(h.revision) < now
    ]
    if not earlier:
        return None
    rev = max(earlier, key=revision_key)
    path = default_output(replace(project, document=replace(d, revision=rev)), source)
    if path == default_output(project, source):  # unnumbered: every revision has one name
        return None
    return str(path) if path.is_file() else None


# ---------------------------------------------------------------- --previous


def _previous_project(path: str, project, strict: bool, warnings: list[str]):
    """The earlier revision's project; another document number is warned about or refused."""
    from calcdoc.record.package import baseline

    before = baseline(path)
    old, new = before.document.number, project.document.number
    if old != new:
        text = (
            f"{path}: the previous revision is document {old or '(unnumbered)'!s}, "
            f"but {project.path} is document {new or '(unnumbered)'!s}"
        )
        if strict:
            raise PreviousDocumentError(text + " (refused with --strict)")
        warnings.append(text)
    return before


def _comparison(before, results, warnings: list[str]):
    from calcdoc.model.history import same_revision_warning
    from calcdoc.record.compare import compare

    comparison = compare(analysed(before), results)
    inputs_changed = any(c.section != "input file" for c in comparison.inputs)
    warning = same_revision_warning(before, results.project, inputs_changed)
    if warning:
        warnings.append(warning)
    return comparison


# ---------------------------------------------------------------- outcomes


def signoff_status(project) -> str:
    """The sign-off state in words: Approved, Checked, Prepared or Draft."""
    s = project.signoff
    if s.approved:
        return "Approved"
    if s.checked:
        return "Checked"
    if s.prepared:
        return "Prepared"
    return "Draft"


def check_figures(doc: dict[str, Any]) -> tuple[int, int, float | None, str]:
    """Checks run, checks failing, worst utilisation and where, from a results object.

    Counted over the one check set (:mod:`calcdoc.checkset`) that the package's
    cover and ``calcdoc check`` count over: every check of every case, each
    also at its tolerance worst case.
    """
    from calcdoc.checkset import TOLERANCE, document_check_set, summarise

    s = summarise(document_check_set(doc), len(doc.get("cases", [])))
    where = ""
    if s.worst is not None:
        at = ", tolerance worst case" if s.worst.scope == TOLERANCE else ""
        where = f"{s.worst.check.id} [{s.worst.case}{at}]"
    return s.count, len(s.failed), s.worst.utilization if s.worst else None, where


def _outcome(
    path, project, action, doc, out: Path, pdf: bytes, warnings, previous
) -> RecordOutcome:
    d = project.document
    run, failing, worst, where = check_figures(doc)
    return RecordOutcome(
        project=str(path),
        status=0,
        action=action,
        warnings=tuple(warnings),
        package=str(out),
        package_bytes=len(pdf),
        package_sha256=hashlib.sha256(pdf).hexdigest(),
        input_sha256=project.sha256,
        previous=previous or "",
        number=d.number,
        revision=d.revision,
        title=d.title,
        signoff=signoff_status(project),
        checks_run=run,
        checks_failing=failing,
        worst_utilisation=worst,
        worst_at=where,
    )


def failed(path: str, message: str) -> RecordOutcome:
    """The outcome of a record that was not built (the input's SHA-256 when readable)."""
    try:  # a regular file only: never a device or pipe that could block or never end
        source = Path(path)
        sha = hashlib.sha256(source.read_bytes()).hexdigest() if source.is_file() else ""
    except OSError:
        sha = ""
    return RecordOutcome(
        project=str(path), status=2, action="not built", message=message, input_sha256=sha
    )


def error_message(exc: BaseException, file: str) -> str:
    """The one-line message the command line prints for ``exc`` (without ``calcdoc: error:``)."""
    if isinstance(exc, ProjectError):
        return exc.message
    if isinstance(exc, SingularCircuitError):
        from calcdoc.cli import singular_message

        return singular_message(exc, file)
    if isinstance(exc, CalcdocError):
        return str(exc)
    return f"{file}: internal error while processing this input ({type(exc).__name__}: {exc})"
