"""Engineering notation with SI prefixes, shared by the terminal and the report.

One policy for every number printed: ``sig`` significant figures (the
project's ``[report] significant_figures``, default 4), an SI prefix with
the unit (engineering notation), one minus sign (U+2212), never a
programmer's e-notation; a plain number outside 0.001 … 9999 is written
as mantissa × 10ⁿ with n a multiple of 3.

>>> eng(4700, "Ω"), eng(0.005087, "A"), eng(-23.91, "V"), eng(0, "W")
('4.700 kΩ', '5.087 mA', '−23.91 V', '0 W')
>>> number(-1.994e-06), number(400), number(78_800_000, 3), signed(0.5), signed(-2)
('−1.994 × 10⁻⁶', '400', '78.8 × 10⁶', '+0.5', '−2')
>>> eng(4.227e-19, "W")
'422.7 × 10⁻²¹ W'
"""

from __future__ import annotations

import math

_PREFIX = {
    -15: "f",
    -12: "p",
    -9: "n",
    -6: "µ",
    -3: "m",
    0: "",
    3: "k",
    6: "M",
    9: "G",
    12: "T",
}

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
    if not -15 <= exp3 <= 12:  # beyond the prefixes: mantissa × 10ⁿ
        text = number(mag, sig)
        if ascii_only:
            text = text.replace("×", "x").translate(_PLAIN)
        return f"{sign}{text} {unit}".strip()
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
    """``0.973`` → ``"97.3 %"``; None → ``"—"``; a negative share with U+2212."""
    if x is None or not math.isfinite(x):
        return "—"
    text = f"{x * 100:.{digits}f}"
    if text.startswith("-"):
        text = MINUS + text[1:] if float(text) != 0 else text[1:]
    return f"{text} %"


_SUPERSCRIPT = str.maketrans("0123456789-", "⁰¹²³⁴⁵⁶⁷⁸⁹⁻")
_PLAIN = str.maketrans("⁰¹²³⁴⁵⁶⁷⁸⁹⁻", "0123456789-")


def number(x: float, sig: int = 4) -> str:
    """A plain (dimensionless) number: ``sig`` significant figures, no e-notation.

    Trailing zeros are dropped (``400``, ``0.5``); beyond 0.001 … 9999 the
    number is written as mantissa × 10ⁿ, n a multiple of 3.
    """
    x = float(x)
    if not math.isfinite(x):
        return "—"
    if x == 0:
        return "0"
    sign = MINUS if x < 0 else ""
    mag = abs(x)
    rounded = float(f"{mag:.{sig}g}")
    if 1e-3 <= rounded < 1e4:
        digits = max(sig - 1 - int(math.floor(math.log10(rounded))), 0)
        text = f"{rounded:.{digits}f}"
        if "." in text:
            text = text.rstrip("0").rstrip(".")
        return sign + text
    exp3 = int(math.floor(math.log10(rounded) / 3) * 3)
    mant = rounded / 10**exp3
    digits = max(sig - 1 - int(math.floor(math.log10(mant))), 0)
    text = f"{mant:.{digits}f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return f"{sign}{text} × 10{str(exp3).translate(_SUPERSCRIPT)}"


def signed(x: float, sig: int = 4) -> str:
    """:func:`number` with an explicit sign (``+0.5``, ``−2``; zero unsigned)."""
    text = number(x, sig)
    return text if text.startswith(MINUS) or text == "0" else "+" + text


UNITS = {
    "voltage": "V",
    "current": "A",
    "power": "W",
    "node voltage": "V",
    "node": "V",
    "reverse voltage": "V",
    "reverse_voltage": "V",
    "output voltage": "V",
    "voltage across": "V",
}


def value_text(unit: str, value: float, sig: int = 4) -> str:
    """A value with its unit (``"Ω"``); a ratio (``V/V``, ``A/A``) printed plain with it;
    ``—`` for a type without a value (unit ``""``)."""
    if not unit:
        return "—"
    if unit in ("V/V", "A/A"):
        return f"{number(value, sig)} {unit}"
    return eng(value, unit, sig)


def counted(n: int, noun: str, plural: str | None = None) -> str:
    """``counted(1, "check")`` → ``"1 check"``; ``counted(3, "case")`` → ``"3 cases"``."""
    return f"{n} {noun if n == 1 else (plural or noun + 's')}"
