"""Files a project points at besides itself: the report style, its logo, the seal image.

Read here, on the loading side, and handed to the report as data (the
report reads no files).  Every file is checked before it is read:

- it must be a regular file (a device such as ``/dev/zero``, a named pipe
  or a folder is refused without being opened for reading);
- it must not exceed the size cap of its kind (:data:`IMAGE_BYTES` for
  images, :data:`STYLE_BYTES` for report styles);
- an image must be a PNG or JPEG of at most :data:`IMAGE_PIXELS` pixels
  that decodes completely;
- a report style (``[report] template``) must lie inside the project's
  folder or among the installed styles; paths are relative to the project
  file (``../`` out of the folder is refused).

Each fault is a :class:`~calcdoc.errors.ProjectError` naming the file and
the key (``signoff.seal``, ``report.template``, ``logo``).
"""

from __future__ import annotations

import io
import os
import re
import stat
import warnings
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

from calcdoc.errors import Fault, ProjectError
from calcdoc.fileio import shipped

if TYPE_CHECKING:  # pragma: no cover
    from calcdoc.model.project import Project

IMAGE_BYTES = 4 * 1024 * 1024  # seal and logo files
IMAGE_PIXELS = 16_000_000  # width × height of a seal or logo
STYLE_BYTES = 64 * 1024  # report style (template) files
STYLES = shipped("standard.toml").parent  # the installed report styles (package data)

SECTIONS = ("diagram", "closed_form", "matrix", "power_chart", "input_listing", "versions")
COLOURS = ("accent", "shade", "fail", "fail_fill", "pass", "mark")
STYLE_KEYS = ("paper", "margin_mm", "font_size", "organisation", "logo", "colours", "sections")
_NAME = re.compile(r"[A-Za-z0-9_\-]+")


@dataclass(frozen=True)
class Image:
    """A checked image file's bytes and pixel size."""

    name: str
    data: bytes
    width: int
    height: int


def _default_colours() -> dict[str, str]:
    return {
        "accent": "#1f3a5f",
        "shade": "#e9edf2",
        "fail": "#b00020",
        "fail_fill": "#fbe3e6",
        "pass": "#1b5e20",
        "mark": "#c62828",
    }


@dataclass(frozen=True)
class Style:
    """A report style: paper, margins, type size, colours, optional sections, logo."""

    name: str = "standard"
    paper: str = "A4"
    margin_mm: tuple[float, float, float, float] = (22, 18, 20, 16)  # top, bottom, left, right
    font_size: float = 8.5
    organisation: str = ""
    logo: Image | None = None
    colours: dict[str, str] = field(default_factory=_default_colours)
    sections: frozenset[str] = frozenset(SECTIONS)


@dataclass(frozen=True)
class Assets:
    """Everything besides the project text that the package shows."""

    style: Style = field(default_factory=Style)
    seal: Image | None = None


def _fail(key: str, message: str, file: str) -> ProjectError:
    return ProjectError([Fault(key, message)], file)


def read_limited(path: Path, limit: int, key: str, file: str, what: str) -> bytes:
    """The bytes of a regular file of at most ``limit`` bytes.

    Raises
    ------
    ProjectError
        Naming ``key`` (and ``file``, the file that holds the key): the file
        is missing, not a regular file, too large or unreadable.
    """
    try:
        st = os.stat(path)  # never opens: a pipe or device cannot block or stream here
    except OSError as exc:
        raise _fail(key, f"cannot read the {what} {str(path)!r}: {exc.strerror}", file) from None
    if not stat.S_ISREG(st.st_mode):
        raise _fail(key, f"the {what} {str(path)!r} is not a regular file", file)
    if st.st_size > limit:
        raise _fail(
            key, f"the {what} {str(path)!r} is larger than the {limit // 1024} KiB limit", file
        )
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
        with os.fdopen(fd, "rb") as fh:
            data = fh.read(limit + 1)
    except OSError as exc:
        raise _fail(key, f"cannot read the {what} {str(path)!r}: {exc.strerror}", file) from None
    if len(data) > limit:
        raise _fail(
            key, f"the {what} {str(path)!r} is larger than the {limit // 1024} KiB limit", file
        )
    return data


def read_image(path: Path, key: str, file: str, what: str) -> Image:
    """A PNG or JPEG file, checked to decode within :data:`IMAGE_PIXELS` pixels."""
    data = read_limited(path, IMAGE_BYTES, key, file, what)
    from PIL import Image as PILImage

    bad = f"the {what} {str(path)!r} is not a readable PNG or JPEG image"
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error", PILImage.DecompressionBombWarning)
            with PILImage.open(io.BytesIO(data)) as img:
                if img.format not in ("PNG", "JPEG"):
                    raise _fail(key, bad, file)
                w, h = img.size
                if w * h > IMAGE_PIXELS:
                    raise _fail(
                        key,
                        f"the {what} {str(path)!r} has {w} × {h} pixels, more than the "
                        f"{IMAGE_PIXELS // 1_000_000} million allowed",
                        file,
                    )
                img.load()
    except ProjectError:
        raise
    except (PILImage.DecompressionBombError, PILImage.DecompressionBombWarning):
        raise _fail(key, f"the {what} {str(path)!r} has too many pixels", file) from None
    except (OSError, ValueError, SyntaxError, EOFError, MemoryError):
        raise _fail(key, bad, file) from None
    return Image(path.name, data, w, h)


def _inside(path: Path, folder: Path) -> bool:
    try:
        path.resolve().relative_to(folder.resolve())
    except (ValueError, OSError):
        return False
    return True


def style_file(name: str, project_dir: Path, file: str) -> Path:
    """Where the report style ``name`` is: the one lookup of styles by name or path.

    A name (``"compact"``) is looked for as ``templates/NAME.toml`` in the
    project's folder, then among the installed styles; a path ending in
    ``.toml`` is relative to the project's folder.  Either must stay inside
    the project's folder or the installed styles.  Every style, ``standard``
    included, must be found: a missing one is an error, never a silent default.

    Raises
    ------
    ProjectError
        ``report.template``: no such style, or a path leaving those folders.
    """
    if name.endswith(".toml"):
        given = Path(name)
        path = given if given.is_absolute() else project_dir / given
        if ".." in given.parts or not (_inside(path, project_dir) or _inside(path, STYLES)):
            raise _fail(
                "report.template",
                f"the template {name!r} must lie inside the project's folder or the installed "
                "styles ('../' is not allowed)",
                file,
            )
        if not path.exists():
            raise _fail("report.template", f"no template file {name!r}", file)
        return path
    if not _NAME.fullmatch(name):
        raise _fail(
            "report.template",
            f"a template is a style name (letters, digits, '_', '-') or a path ending in "
            f".toml, found {name!r}",
            file,
        )
    candidates = [project_dir / "templates" / f"{name}.toml", STYLES / f"{name}.toml"]
    found = next((c for c in candidates if c.exists()), None)
    if found is None:  # "standard" included: a missing style is an error, never a silent default
        installed = sorted(p.stem for p in STYLES.glob("*.toml") if p.stem != "starter")
        raise _fail(
            "report.template",
            f"no report style {name!r} (installed: {', '.join(installed) or 'none'}; or give "
            "a path ending in .toml)",
            file,
        )
    return found


def parse_style(data: dict[str, Any], path: Path, project_dir: Path) -> Style:
    """A report style from its parsed TOML (the logo read and checked)."""
    faults = [Fault(k, "unknown key in a report style") for k in data if k not in STYLE_KEYS]
    paper = data.get("paper", "A4")
    if paper not in ("A4", "Letter"):
        faults.append(Fault("paper", 'expected "A4" or "Letter"'))
    m = data.get("margin_mm", {})
    try:
        margins = tuple(
            float(m.get(k, d))
            for k, d in zip(("top", "bottom", "left", "right"), Style.margin_mm, strict=True)
        )
        if not all(3 <= v <= 60 for v in margins):
            raise ValueError
    except (TypeError, ValueError, AttributeError):
        faults.append(Fault("margin_mm", "expected { top, bottom, left, right } from 3 to 60 mm"))
        margins = Style.margin_mm
    colours = _default_colours()
    for k, v in (data.get("colours") or {}).items():
        if k not in COLOURS or not (isinstance(v, str) and re.fullmatch(r"#[0-9a-fA-F]{6}", v)):
            faults.append(
                Fault(f"colours.{k}", "expected one of " + ", ".join(COLOURS) + ' as "#rrggbb"')
            )
        else:
            colours[k] = v
    secs = set(SECTIONS)
    for k, v in (data.get("sections") or {}).items():
        if k not in SECTIONS or not isinstance(v, bool):
            faults.append(
                Fault(f"sections.{k}", "expected one of " + ", ".join(SECTIONS) + " = true/false")
            )
        elif not v:
            secs.discard(k)
    size = data.get("font_size", 8.5)
    if isinstance(size, bool) or not isinstance(size, (int, float)) or not 6 <= size <= 14:
        faults.append(Fault("font_size", "expected a size from 6 to 14 pt"))
        size = 8.5
    org = data.get("organisation", "")
    if not isinstance(org, str):
        faults.append(Fault("organisation", "expected text"))
        org = ""
    logo_name = data.get("logo") or ""
    if not isinstance(logo_name, str):
        faults.append(Fault("logo", "expected an image path"))
        logo_name = ""
    if faults:
        raise ProjectError(faults, str(path))
    logo = None
    if logo_name:
        logo_path = path.parent / logo_name
        if not (_inside(logo_path, project_dir) or _inside(logo_path, STYLES)):
            raise _fail(
                "logo",
                f"the logo {logo_name!r} must lie inside the project's folder or the installed styles",
                str(path),
            )
        logo = read_image(logo_path, "logo", str(path), "logo")
    return Style(
        name=path.stem,
        paper=paper,
        margin_mm=margins,
        font_size=float(size),  # type: ignore[arg-type]
        organisation=org,
        logo=logo,
        colours=colours,
        sections=frozenset(secs),
    )


def load_style(name: str, project_dir: Path, file: str) -> Style:
    """The report style ``name`` (:func:`style_file`), read and checked."""
    import tomli

    path = style_file(name, project_dir, file)
    text = read_limited(path, STYLE_BYTES, "report.template", file, "template")
    try:
        data = tomli.loads(text.decode("utf-8"))
    except (UnicodeDecodeError, tomli.TOMLDecodeError) as exc:
        raise _fail("", f"cannot read the report template: {exc}", str(path)) from None
    return parse_style(data, path, project_dir)


def load_assets(project: Project, project_file: Path) -> Assets:
    """Read the style (with its logo) and the seal a project names.

    Parameters
    ----------
    project : Project
    project_file : Path
        The project file; relative paths are taken from its folder.
    """
    folder = project_file.resolve().parent
    style = load_style(project.report.template, folder, project.path)
    seal = None
    if project.signoff.seal:
        given = Path(project.signoff.seal)
        path = given if given.is_absolute() else folder / given
        seal = read_image(path, "signoff.seal", project.path, "seal image")
    return Assets(style, seal)


def with_assets(project: Project, project_file: Path) -> Project:
    """``project`` with its :class:`Assets` read (called by the file loader)."""
    return replace(project, assets=load_assets(project, project_file))
