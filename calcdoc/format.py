"""Engineering notation with SI prefixes, shared by the terminal and the report.

>>> eng(4700, "Ω"), eng(0.005087, "A"), eng(-23.91, "V"), eng(0, "W")
('4.700 kΩ', '5.087 mA', '−23.91 V', '0 W')
"""

from __future__ import annotations

import math
from collections.abc import Mapping

_PREFIX = {
    -15: "f", -12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T",
}  # fmt: skip

MINUS = "−"


def eng(value: float, unit: str = "", sig: int = 4, *, ascii_only: bool = False) -> str:
    """Format ``value`` with ``sig`` significant figures and an SI prefix.

    Parameters
    ----------
    value : float
        In SI units.
    unit : str
        Unit symbol (``"Ω"``, ``"V"``); ``""`` for a plain number.
    sig : int
        Significant figures.
    ascii_only : bool
        Use ``-``, ``u`` and ``ohm`` instead of typographic characters.
    """
    value = float(value)
    if not math.isfinite(value):
        return ("inf" if value > 0 else "-inf") if not math.isnan(value) else "n/a"
    minus = "-" if ascii_only else MINUS
    if value == 0:
        return f"0 {unit}".strip() if unit else "0"
    sign = minus if value < 0 else ""
    mag = abs(value)
    exp3 = int(math.floor(math.log10(mag) / 3) * 3)
    exp3 = max(-15, min(12, exp3))
    scaled = mag / 10**exp3
    # rounding may carry into the next prefix (999.96 -> 1000)
    digits = max(sig - 1 - int(math.floor(math.log10(scaled))), 0)
    text = f"{scaled:.{digits}f}"
    if float(text) >= 1000 and exp3 < 12:
        exp3 += 3
        text = f"{mag / 10**exp3:.{sig - 1}f}"
    prefix = _PREFIX[exp3]
    if ascii_only:
        prefix = prefix.replace("µ", "u")
        unit = unit.replace("Ω", "ohm").replace("°", "deg")
    space = " " if (unit or prefix) else ""
    return f"{sign}{text}{space}{prefix}{unit}"


def percent(x: float | None, digits: int = 1) -> str:
    """``0.973`` → ``"97.3 %"``; None → ``"—"``."""
    if x is None or not math.isfinite(x):
        return "—"
    return f"{x * 100:.{digits}f} %"


UNITS = {
    "voltage": "V", "current": "A", "power": "W", "node voltage": "V", "node": "V",
    "reverse voltage": "V", "reverse_voltage": "V", "output voltage": "V", "voltage across": "V",
}  # fmt: skip


class _ValueUnits(Mapping):
    """Element type → unit of its main value, read from the element table."""

    def __getitem__(self, kind: str) -> str:
        from calcdoc.model.elements import KINDS

        return KINDS[kind].main.unit

    def __iter__(self):
        from calcdoc.model.elements import KINDS

        return iter(KINDS)

    def __len__(self) -> int:
        from calcdoc.model.elements import KINDS

        return len(KINDS)


VALUE_UNITS: Mapping[str, str] = _ValueUnits()


def value_text(kind: str, value: float, sig: int = 4) -> str:
    """An element's value with its unit (gains of dimensionless kinds plain;
    ``—`` for a type without a value)."""
    unit = VALUE_UNITS[kind]
    if not unit:
        return "—"
    if unit in ("V/V", "A/A"):
        return f"{float(value):.{sig}g} {unit}"
    return eng(value, unit, sig)
