"""Rebuilding a package from what it carries, to prove its pages.

A build is byte-identical: the same input, built by the same software,
gives the same bytes. So the pages of a package are proved by building it
again from its embedded input and comparing bytes: equal bytes, or the
rebuild followed only by appended updates that :mod:`calcdoc.record.revisions`
finds harmless (a signature in the box kept for it, a timestamp, validation
data).

A rebuild cannot be compared when the software differs (another calcdoc
version or another version of a library or of Python: the software appendix
names them) or when the package was laid out with something it does not
carry: a seal image, a report style outside the installed ones, or a
comparison with an earlier revision whose input it does not carry. The
rebuild reads no file named by the package: report styles come only from
the installed ones.

:func:`render_package` is the one place where the record calls the
analysis pipeline and the report; ``calcdoc build`` and the rebuild both go
through it, so both lay out the same bytes.
"""

from __future__ import annotations

import re
import tempfile
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from calcdoc import __version__
from calcdoc.errors import CalcdocError, PackageError, ProjectError
from calcdoc.record.package import attach_previous, embedded_previous

__all__ = [
    "Rebuild",
    "rebuild_package",
    "render_package",
    "software_difference",
    "software_versions",
]

_STYLE_NAME = re.compile(r"[A-Za-z0-9_-]{1,64}")
_CHANGES_HEADING = "Changes from revision"
_VERSION = re.compile(r"[0-9][0-9A-Za-z.+-]*|not installed")


def render_package(
    project,
    *,
    previous=None,
    progress: Callable[[str], None] | None = None,
    results=None,
    comparison=None,
):
    """Analyse ``project`` and lay out its package (compared with ``previous`` when given).

    Parameters
    ----------
    project : Project
        The project to build.
    previous : Project, optional
        The earlier revision to compare with. Its input is attached to the
        package (see :func:`calcdoc.record.package.attach_previous`) so that
        the package can be rebuilt.
    progress : callable, optional
        Called with a short message at each stage.
    results, comparison : optional
        The project's results and the comparison with ``previous``, when
        the caller has them already (they are computed otherwise).

    Returns
    -------
    PackageOutput
        The package bytes and the box kept for a signature.
    """
    from dataclasses import replace

    from calcdoc.pipeline import analyse
    from calcdoc.record.compare import compare
    from calcdoc.report.package import build_package

    if results is None:
        results = analyse(project, closed_form=True)
    if comparison is None and previous is not None:
        comparison = compare(analyse(previous), results)
    out = build_package(results, previous=comparison, progress=progress)
    if previous is None:
        return out
    name = Path(project.path).name or "project.toml"
    return replace(out, pdf=attach_previous(out.pdf, name, previous.path, previous.source))


@dataclass(frozen=True)
class Rebuild:
    """A rebuild of a package from its embedded input, or why there is none.

    Attributes
    ----------
    pdf : bytes or None
        The rebuilt package; None when it cannot be compared.
    signature_box : (int, (x1, y1, x2, y2)) or None
        The box the rebuilt package keeps for a signature.
    reason : str or None
        Why the package cannot be compared with a rebuild (a phrase that
        completes "The pages were not compared with a rebuild: ...").
    """

    pdf: bytes | None
    signature_box: tuple[int, tuple[float, float, float, float]] | None
    reason: str | None


def _none(reason: str) -> Rebuild:
    return Rebuild(None, None, reason)


def _style_installed(name: str) -> bool:
    from calcdoc.model.assets import STYLES

    if not _STYLE_NAME.fullmatch(name):
        return False
    return name == "standard" or (STYLES / f"{name}.toml").is_file()


def _mentions_changes(pdf: bytes) -> bool:
    from calcdoc.record.package import printed_text

    return any(_CHANGES_HEADING in text for text in printed_text(pdf, pages=3))


def rebuild_package(pdf: bytes, name: str, source: bytes, results: dict[str, Any]) -> Rebuild:
    """Build a package again from what it carries.

    Parameters
    ----------
    pdf : bytes
        The package.
    name, source : str, bytes
        Its embedded input.
    results : dict
        Its embedded results object (for the tool version and the input path
        recorded at build time).

    Returns
    -------
    Rebuild
    """
    import calcdoc

    tool = results.get("tool") if isinstance(results.get("tool"), dict) else {}
    version = tool.get("version")
    if version != __version__:
        return _none(
            f"the package was built with calcdoc {version}; this is calcdoc {__version__}, "
            "and only the same version rebuilds the same pages"
        )
    recorded = results.get("input") if isinstance(results.get("input"), dict) else {}
    path = recorded.get("path") if isinstance(recorded.get("path"), str) else name
    try:
        project = calcdoc.loads(source, path)
    except ProjectError:
        return _none("its embedded input is not a valid project")
    if project.signoff.seal:
        return _none(
            f"its cover shows the seal image {project.signoff.seal}, which the package "
            "does not carry"
        )
    if not _style_installed(project.report.template):
        return _none(
            f"it was laid out with the report style {project.report.template!r}, which the "
            "package does not carry (only installed styles are used to rebuild)"
        )
    previous = None
    try:
        carried = embedded_previous(pdf)
    except PackageError as exc:
        return _none(f"its previous revision cannot be read: {exc}")
    if carried is not None:
        label, previous_source = carried
        try:
            previous = calcdoc.loads(previous_source, label)
        except ProjectError:
            return _none("the previous revision it carries is not a valid project")
    elif _mentions_changes(pdf):
        return _none(
            "it was built with a comparison to an earlier revision (--previous) whose "
            "input it does not carry"
        )
    try:
        from calcdoc.model.assets import with_assets

        with tempfile.TemporaryDirectory(prefix="calcdoc-rebuild-") as empty:
            # only installed styles are found from an empty folder: nothing the package names is read
            project = with_assets(project, Path(empty) / "project.toml")
            out = render_package(project, previous=previous)
    except CalcdocError as exc:
        return _none(f"it cannot be rebuilt here: {exc}")
    return Rebuild(out.pdf, out.signature_box, None)


def software_versions(pdf: bytes) -> dict[str, str]:
    """Component -> version, as printed in the package's software appendix (empty if not found)."""
    from calcdoc.record.package import printed_text

    for text in printed_text(pdf, pages=-4):
        if "Appendix B" not in text or "Component" not in text:
            continue
        words = [w.strip() for w in text[text.index("Component") :].splitlines() if w.strip()]
        words = [w for w in words[1:] if w not in ("Version", "Role")]
        out: dict[str, str] = {}
        i = 0
        while i + 1 < len(words):  # a name followed by its version; any other text is skipped
            name, value = words[i], words[i + 1]
            if _VERSION.fullmatch(value) and not _VERSION.fullmatch(name):
                out[name] = value
                i += 2
            else:
                i += 1
        return out
    return {}


def software_difference(package: bytes, rebuilt: bytes) -> str | None:
    """How the software named in a package differs from the one that rebuilt it, if it does."""
    a, b = software_versions(package), software_versions(rebuilt)
    if not a or not b:
        return None
    differing = [f"{k} {a.get(k, '(not named)')} (here {v})" for k, v in b.items() if a.get(k) != v]
    if not differing:
        return None
    return (
        "the package names other software than this machine has: "
        + ", ".join(differing)
        + "; only the same software rebuilds the same pages"
    )
