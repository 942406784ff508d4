"""Report styles: small TOML files in ``templates/`` (paper, margins, type, colours, sections)."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from calcdoc.errors import Fault, ProjectError

SECTIONS = ("diagram", "closed_form", "matrix", "power_chart", "input_listing", "versions")
COLOURS = ("accent", "shade", "fail", "fail_fill", "pass", "mark")


@dataclass(frozen=True)
class Style:
    name: str = "standard"
    paper: str = "A4"
    margin_mm: tuple[float, float, float, float] = (22, 18, 20, 16)  # top, bottom, left, right
    font_size: float = 8.5
    organisation: str = ""
    logo: Path | None = None
    colours: dict[str, str] = field(
        default_factory=lambda: {
            "accent": "#1f3a5f",
            "shade": "#e9edf2",
            "fail": "#b00020",
            "fail_fill": "#fbe3e6",
            "pass": "#1b5e20",
            "mark": "#c62828",
        }  # fmt: skip
    )
    sections: frozenset[str] = frozenset(SECTIONS)


def _fault(path: str, msg: str, file: str) -> ProjectError:
    return ProjectError([Fault(path, msg)], file)


def load_style(name: str, base_dir: Path | None = None) -> Style:
    """Read a report style by name or path.

    A name is looked up in ``templates/NAME.toml`` beside the project, then
    among the styles shipped with calcdoc (:func:`calcdoc.fileio.shipped`).

    Raises
    ------
    ProjectError
        The style cannot be found or has a bad key (key path ``report.template``).
    """
    import tomli

    from calcdoc.fileio import shipped

    candidates = []
    p = Path(name)
    if p.suffix == ".toml":
        candidates += [p] if p.is_absolute() else [(base_dir or Path.cwd()) / p]
    else:
        candidates += [
            (base_dir or Path.cwd()) / "templates" / f"{name}.toml",
            shipped(f"{name}.toml"),
        ]
    path = next((c for c in candidates if c.is_file()), None)
    if path is None:
        raise _fault(
            "report.template",
            f"no report style {name!r} (looked in {', '.join(map(str, candidates))})",
            "project",
        )
    try:
        data: dict[str, Any] = tomli.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, tomli.TOMLDecodeError) as exc:
        raise _fault("", f"cannot read the report style: {exc}", str(path)) from None
    allowed = {"paper", "margin_mm", "font_size", "organisation", "logo", "colours", "sections"}
    faults = [Fault(k, "unknown key in a report style") for k in data if k not in allowed]
    paper = data.get("paper", "A4")
    if paper not in ("A4", "Letter"):
        faults.append(Fault("paper", 'expected "A4" or "Letter"'))
    m = data.get("margin_mm", {})
    try:
        margins = tuple(
            float(m.get(k, d))
            for k, d in zip(("top", "bottom", "left", "right"), Style.margin_mm, strict=True)
        )
    except (TypeError, ValueError, AttributeError):
        faults.append(Fault("margin_mm", "expected { top, bottom, left, right } in millimetres"))
        margins = Style.margin_mm
    colours = dict(Style().colours)
    for k, v in (data.get("colours") or {}).items():
        if k not in COLOURS or not (isinstance(v, str) and len(v) == 7 and v.startswith("#")):
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
    if not isinstance(size, (int, float)) or not 6 <= size <= 14:
        faults.append(Fault("font_size", "expected a size from 6 to 14 pt"))
        size = 8.5
    if faults:
        raise ProjectError(faults, str(path))
    logo = data.get("logo") or ""
    return Style(
        name=path.stem, paper=paper, margin_mm=margins, font_size=float(size),  # type: ignore[arg-type]
        organisation=str(data.get("organisation", "")),
        logo=(path.parent / logo) if logo else None, colours=colours, sections=frozenset(secs),
    )  # fmt: skip
