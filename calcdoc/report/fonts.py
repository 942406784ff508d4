"""Embedded TrueType fonts for the package (DejaVu, shipped with matplotlib).

Every font in the package is embedded, and these faces carry Ω, µ, ±, ≤,
≥, −, ° so they render and extract as text.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path


@dataclass(frozen=True)
class FontSet:
    regular: str
    bold: str
    italic: str
    mono: str
    regular_path: Path
    bold_path: Path
    italic_path: Path
    mono_path: Path


def font_folder() -> Path:
    """matplotlib's folder of DejaVu faces, found without importing matplotlib."""
    from importlib.util import find_spec

    spec = find_spec("matplotlib")
    for root in (spec.submodule_search_locations or []) if spec else []:
        folder = Path(root) / "mpl-data" / "fonts" / "ttf"
        if (folder / "DejaVuSans.ttf").is_file():
            return folder
    import matplotlib  # an unusual installation: ask matplotlib itself

    return Path(matplotlib.get_data_path()) / "fonts" / "ttf"


@lru_cache(maxsize=1)
def register_fonts() -> FontSet:
    """Register the fonts with reportlab once and return their names and files."""
    from reportlab.lib.fonts import addMapping
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.ttfonts import TTFont

    base = font_folder()
    files = {
        "CalcdocSans": base / "DejaVuSans.ttf",
        "CalcdocSans-Bold": base / "DejaVuSans-Bold.ttf",
        "CalcdocSans-Italic": base / "DejaVuSans-Oblique.ttf",
        "CalcdocMono": base / "DejaVuSansMono.ttf",
    }
    for name, path in files.items():
        pdfmetrics.registerFont(TTFont(name, str(path)))
    addMapping("CalcdocSans", 0, 0, "CalcdocSans")
    addMapping("CalcdocSans", 1, 0, "CalcdocSans-Bold")
    addMapping("CalcdocSans", 0, 1, "CalcdocSans-Italic")
    addMapping("CalcdocSans", 1, 1, "CalcdocSans-Bold")
    # the graphics renderer opens every drawing with its default font: make
    # that an embedded one, so no unembedded standard font enters the file
    from reportlab.graphics import shapes

    shapes.STATE_DEFAULTS["fontName"] = "CalcdocSans"
    return FontSet(
        "CalcdocSans",
        "CalcdocSans-Bold",
        "CalcdocSans-Italic",
        "CalcdocMono",
        files["CalcdocSans"],
        files["CalcdocSans-Bold"],
        files["CalcdocSans-Italic"],
        files["CalcdocMono"],
    )
