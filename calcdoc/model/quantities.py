"""Physical quantities: parsing value strings into exact SI magnitudes.

A quantity is a magnitude in SI base units plus a dimension vector over
(metre, kilogram, second, ampere, kelvin).  Magnitudes are kept as
:class:`fractions.Fraction` whenever the input is a decimal number, so that
small circuits can be solved in exact rational arithmetic.

Common unit strings (``V``, ``mA``, ``kohm``, ``kΩ``, ``W``, ``%``,
``ppm/K``, ``mohm/m``) are resolved from a small table of SI prefixes and
symbols; anything else goes to pint, the units library, which is loaded
only when needed (it takes close to a second to start).  The table is
checked against pint in the test suite.

>>> q = parse_quantity("4k7")
>>> q.magnitude, q.dimension == OHM
(Fraction(4700, 1), True)
>>> parse_quantity("2.2 kΩ").magnitude
Fraction(2200, 1)
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from fractions import Fraction
from functools import cache, lru_cache

Number = Fraction | float
Dimension = tuple[int, int, int, int, int]  # m, kg, s, A, K

NONE: Dimension = (0, 0, 0, 0, 0)
VOLT: Dimension = (2, 1, -3, -1, 0)
AMPERE: Dimension = (0, 0, 0, 1, 0)
WATT: Dimension = (2, 1, -3, 0, 0)
OHM: Dimension = (2, 1, -3, -2, 0)
SIEMENS: Dimension = (-2, -1, 3, 2, 0)
METRE: Dimension = (1, 0, 0, 0, 0)
KELVIN: Dimension = (0, 0, 0, 0, 1)
SECOND: Dimension = (0, 0, 1, 0, 0)
FARAD: Dimension = (-2, -1, 4, 2, 0)
HENRY: Dimension = (2, 1, -2, -2, 0)

DIMENSION_NAMES: dict[Dimension, str] = {
    NONE: "dimensionless",
    VOLT: "voltage (V)",
    AMPERE: "current (A)",
    WATT: "power (W)",
    OHM: "resistance (Ω)",
    SIEMENS: "conductance (S)",
    METRE: "length (m)",
    KELVIN: "temperature (K)",
    SECOND: "time (s)",
    FARAD: "capacitance (F)",
    HENRY: "inductance (H)",
}

SI_SYMBOL: dict[Dimension, str] = {
    NONE: "",
    VOLT: "V",
    AMPERE: "A",
    WATT: "W",
    OHM: "Ω",
    SIEMENS: "S",
    METRE: "m",
    KELVIN: "K",
    SECOND: "s",
    FARAD: "F",
    HENRY: "H",
}


def dimension_name(dim: Dimension) -> str:
    """Plain name of a dimension, e.g. ``"resistance (Ω)"``."""
    if dim in DIMENSION_NAMES:
        return DIMENSION_NAMES[dim]
    parts = []
    for sym, e in zip(("m", "kg", "s", "A", "K"), dim, strict=True):
        if e:
            parts.append(sym if e == 1 else f"{sym}^{e}")
    return " ".join(parts) or "dimensionless"


def dim_mul(a: Dimension, b: Dimension) -> Dimension:
    return tuple(x + y for x, y in zip(a, b, strict=True))  # type: ignore[return-value]


def dim_div(a: Dimension, b: Dimension) -> Dimension:
    return tuple(x - y for x, y in zip(a, b, strict=True))  # type: ignore[return-value]


def dim_pow(a: Dimension, n: int) -> Dimension:
    return tuple(x * n for x in a)  # type: ignore[return-value]


@dataclass(frozen=True)
class Quantity:
    """A magnitude in SI base units with its dimension.

    Parameters
    ----------
    magnitude : Fraction or float
        Value in SI base units (V, A, W, Ω, S, m, K, ...).
    dimension : tuple of int
        Exponents of (m, kg, s, A, K).
    """

    magnitude: Number
    dimension: Dimension = NONE

    def __float__(self) -> float:
        return float(self.magnitude)


class QuantityError(ValueError):
    """A value string cannot be read as a quantity (message in plain words)."""


# --------------------------------------------------------------------------
# size bounds: checked on the text, before any big-number arithmetic
# --------------------------------------------------------------------------

#: Magnitudes a physical value may have, in SI base units (zero is allowed too).
PHYSICAL_MIN = 1e-30
PHYSICAL_MAX = 1e30
PHYSICAL_RANGE_TEXT = "magnitudes from 1e-30 to 1e30 in SI units, or zero"
#: A written number may have at most this many digits ...
MAX_DIGITS = 100
#: ... and a decimal exponent (of its leading digit) within this bound.
MAX_DECIMAL_EXPONENT = 200
#: Powers written on a unit (``ohm^2``) and dimension exponents of any value.
MAX_UNIT_POWER = 12
MAX_DIMENSION_POWER = 60

_DECIMAL = re.compile(r"\s*([+-]?)(\d*)(?:\.(\d*))?(?:[eE]([+-]?\d+))?\s*")


def parse_number(text: str) -> Fraction:
    """The exact value of a decimal number, refusing absurd sizes before computing.

    ``Fraction("1e100000000")`` would build a hundred-million-digit integer
    (minutes of work that Ctrl-C cannot interrupt), so the digits and the
    exponent are checked on the text first.

    >>> parse_number("2.2e3"), parse_number("-.5")
    (Fraction(2200, 1), Fraction(-1, 2))
    >>> parse_number("1e100000000")
    Traceback (most recent call last):
    ...
    calcdoc.model.quantities.QuantityError: the number 1e100000000 is far outside the range of physical values (magnitudes from 1e-30 to 1e30 in SI units, or zero)
    """
    m = _DECIMAL.fullmatch(text)
    if not m or not (m.group(2) or m.group(3)):
        raise QuantityError(f"{text!r} is not a number")
    sign, whole, frac, exp = m.groups()
    frac = frac or ""
    shown = text.strip() if len(text.strip()) <= 40 else text.strip()[:37] + "..."
    if len(whole) + len(frac) > MAX_DIGITS:
        raise QuantityError(f"the number {shown} has more than {MAX_DIGITS} digits")
    significant = (whole + frac).lstrip("0")
    if not significant:
        return Fraction(0)
    exponent = 0
    if exp:
        if len(exp.lstrip("+-").lstrip("0")) > 6:
            exponent = MAX_DECIMAL_EXPONENT * 2 * (-1 if exp.startswith("-") else 1)
        else:
            exponent = int(exp)
    lead = (
        len(whole.lstrip("0")) - 1
        if whole.lstrip("0")
        else -(len(frac) - len(frac.lstrip("0")) + 1)
    )
    if abs(lead + exponent) > MAX_DECIMAL_EXPONENT:
        raise QuantityError(
            f"the number {shown} is far outside the range of physical values ({PHYSICAL_RANGE_TEXT})"
        )
    return Fraction(f"{sign}{whole or '0'}.{frac or '0'}e{exponent}")


def check_dimension(dim: Dimension) -> Dimension:
    """``dim`` itself, or :class:`QuantityError` when a unit power is beyond any physical use."""
    if any(abs(d) > MAX_DIMENSION_POWER for d in dim):
        raise QuantityError(
            f"the units have powers beyond ±{MAX_DIMENSION_POWER}, which no physical value has"
        )
    return dim


def outside_physical_range(magnitude: Number) -> str | None:
    """Why ``magnitude`` (SI) cannot be a physical value, or None when it can."""
    if isinstance(magnitude, float):
        if magnitude != magnitude:
            return "the value is not a number (nan)"
        if magnitude in (float("inf"), float("-inf")):
            return "the value is infinite"
    if magnitude == 0:
        return None
    try:
        size = abs(float(magnitude))
    except OverflowError:
        size = float("inf")
    small, large = size < PHYSICAL_MIN, size > PHYSICAL_MAX
    if small or large:
        word = "small" if small else "large"
        return f"the value is too {word} to be a physical quantity ({PHYSICAL_RANGE_TEXT})"
    return None


# --------------------------------------------------------------------------
# unit table
# --------------------------------------------------------------------------

_PREFIXES: dict[str, Fraction] = {
    "T": Fraction(10**12),
    "G": Fraction(10**9),
    "M": Fraction(10**6),
    "k": Fraction(10**3),
    "": Fraction(1),
    "m": Fraction(1, 10**3),
    "u": Fraction(1, 10**6),
    "µ": Fraction(1, 10**6),  # micro sign U+00B5
    "μ": Fraction(1, 10**6),  # Greek mu U+03BC
    "n": Fraction(1, 10**9),
    "p": Fraction(1, 10**12),
}

_SYMBOLS: dict[str, tuple[Fraction, Dimension]] = {
    "V": (Fraction(1), VOLT),
    "A": (Fraction(1), AMPERE),
    "W": (Fraction(1), WATT),
    "ohm": (Fraction(1), OHM),
    "Ω": (Fraction(1), OHM),  # U+03A9 Greek capital omega
    "\u2126": (Fraction(1), OHM),  # ohm sign
    "S": (Fraction(1), SIEMENS),
    "m": (Fraction(1), METRE),
    "s": (Fraction(1), SECOND),
    "K": (Fraction(1), KELVIN),
    "F": (Fraction(1), FARAD),
    "H": (Fraction(1), HENRY),
}

_DIMENSIONLESS_WORDS: dict[str, Fraction] = {
    "%": Fraction(1, 100),
    "percent": Fraction(1, 100),
    "ppm": Fraction(1, 10**6),
}


@cache
def _table_atom(text: str) -> tuple[Fraction, Dimension] | None:
    """Resolve one prefixed unit symbol from the table, or None."""
    if text in _DIMENSIONLESS_WORDS:
        return _DIMENSIONLESS_WORDS[text], NONE
    if text in _SYMBOLS:
        return _SYMBOLS[text]
    for sym, (factor, dim) in _SYMBOLS.items():
        if text.endswith(sym) and text[: -len(sym)] in _PREFIXES:
            return _PREFIXES[text[: -len(sym)]] * factor, dim
    if text.endswith("ohms") and text[:-4] in _PREFIXES:
        return _PREFIXES[text[:-4]], OHM
    return None


def _table_unit(text: str) -> tuple[Fraction, Dimension] | None:
    """Resolve a product/quotient of table units (``mohm/m``, ``V/V``)."""
    text = text.strip()
    if not text:
        return Fraction(1), NONE
    parts = re.split(r"\s*(/|\*|·)\s*", text)
    factor, dim = Fraction(1), NONE
    op = "*"
    for i, part in enumerate(parts):
        if i % 2 == 1:
            op = part
            continue
        m = re.fullmatch(r"([^\^]+?)(?:\^(-?\d+))?", part)
        if not m:
            return None
        atom = _table_atom(m.group(1))
        if atom is None:
            return None
        power = _unit_power(m.group(2)) if m.group(2) else 1
        f, d = atom[0] ** power, dim_pow(atom[1], power)
        if op == "/":
            factor, dim = factor / f, dim_div(dim, d)
        else:
            factor, dim = factor * f, dim_mul(dim, d)
    return factor, dim


def _unit_power(text: str) -> int:
    if len(text.lstrip("-").lstrip("0")) > 2 or abs(int(text)) > MAX_UNIT_POWER:
        raise QuantityError(f"powers on a unit are limited to ±{MAX_UNIT_POWER}")
    return int(text)


@lru_cache(maxsize=1)
def unit_registry():  # pragma: no cover - exercised through _pint_unit
    """The shared pint registry (created on first use: it is slow to start)."""
    import pint

    return pint.UnitRegistry()


_PINT_DIMS = ("[length]", "[mass]", "[time]", "[current]", "[temperature]")


@cache
def _pint_unit(text: str) -> tuple[Fraction, Dimension]:
    import pint

    ureg = unit_registry()
    try:
        q = ureg.Quantity(1, text.replace("Ω", "ohm").replace("Ω", "ohm")).to_base_units()
    except (pint.errors.PintError, AttributeError, TypeError, ValueError, SyntaxError) as exc:
        raise QuantityError(f"unknown unit {text!r}") from exc
    except Exception as exc:  # pint's parser can raise odd errors on hostile text
        raise QuantityError(f"unknown unit {text!r}") from exc
    dims = q.dimensionality
    extra = set(dims) - set(_PINT_DIMS)
    if extra:
        raise QuantityError(f"unit {text!r} has a dimension calcdoc does not use")
    powers = [dims.get(d, 0) for d in _PINT_DIMS]
    if any(p != int(p) for p in powers):
        raise QuantityError(f"unit {text!r} has a fractional power")
    dim = check_dimension(tuple(int(p) for p in powers))  # type: ignore[arg-type]
    mag = q.magnitude
    try:
        size = float(mag)
        factor = Fraction(repr(size))
    except (ValueError, OverflowError) as exc:
        raise QuantityError(f"unit {text!r} has no finite size") from exc
    if size == 0 or not 1e-100 < abs(size) < 1e100:
        raise QuantityError(f"unit {text!r} is far outside the range of physical values")
    return factor, dim


def unit_factor(text: str) -> tuple[Fraction, Dimension]:
    """SI factor and dimension of a unit string.

    Parameters
    ----------
    text : str
        Unit text, e.g. ``"kohm"``, ``"mA"``, ``"ppm/K"``.

    Returns
    -------
    (Fraction, Dimension)
        Multiply a number in ``text`` units by the factor to get SI.

    Raises
    ------
    QuantityError
        The text is not a unit.
    """
    hit = _table_unit(text)
    if hit is not None:
        return hit[0], check_dimension(hit[1])
    if text.strip() in ("degC", "°C", "degF", "°F", "℃"):
        raise QuantityError("a temperature in °C is only accepted where a temperature is asked for")
    return _pint_unit(text.strip())


def is_unit(text: str) -> bool:
    """True when ``text`` is a unit calcdoc can read."""
    try:
        unit_factor(text)
    except QuantityError:
        return False
    return True


_NUMBER = re.compile(r"\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)")
# IEC 60062 letter-and-number code for resistance: the letter is the
# multiplier and stands in place of the decimal point (4k7 = 4.7 kΩ).
_RKM = re.compile(r"\s*(\d*)([RKkMGT])(\d*)\s*")
_RKM_FACTOR = {"R": 1, "K": 10**3, "k": 10**3, "M": 10**6, "G": 10**9, "T": 10**12}


def parse_rkm(text: str) -> Fraction | None:
    """Resistance in ohms from an IEC 60062 RKM code, or None.

    >>> parse_rkm("4k7"), parse_rkm("R47"), parse_rkm("2M2"), parse_rkm("100R")
    (Fraction(4700, 1), Fraction(47, 100), Fraction(2200000, 1), Fraction(100, 1))
    """
    m = _RKM.fullmatch(text)
    if not m or not (m.group(1) or m.group(3)):
        return None
    whole, letter, frac = m.groups()
    try:
        number = parse_number(f"{whole or '0'}.{frac or '0'}")
    except QuantityError:
        return None
    return number * _RKM_FACTOR[letter]


@lru_cache(maxsize=65536)
def parse_quantity(text: str) -> Quantity:
    """Parse ``"<number> <unit>"`` (or an RKM resistance code) into SI.

    Parameters
    ----------
    text : str
        E.g. ``"2.2 kohm"``, ``"10 mA"``, ``"1 %"``, ``"4k7"``.

    Returns
    -------
    Quantity
        Exact magnitude in SI base units with its dimension.

    Raises
    ------
    QuantityError
        Not a number followed by a unit.

    >>> parse_quantity("10 mA")
    Quantity(magnitude=Fraction(1, 100), dimension=(0, 0, 0, 1, 0))
    """
    if not isinstance(text, str):
        raise QuantityError('expected a string such as "2.2 kohm"')
    rkm = parse_rkm(text)
    if rkm is not None:
        return Quantity(rkm, OHM)
    m = _NUMBER.match(text)
    if not m:
        raise QuantityError(f"{text!r} does not start with a number")
    number = parse_number(m.group(1))
    factor, dim = unit_factor(text[m.end() :])
    return Quantity(number * factor, dim)


def parse_temperature(text: str) -> Fraction:
    """Temperature in degrees Celsius from ``"70 °C"``, ``"70 degC"`` or ``"343.15 K"``.

    >>> parse_temperature("70 degC"), parse_temperature("298.15 K")
    (Fraction(70, 1), Fraction(25, 1))
    """
    if not isinstance(text, str):
        raise QuantityError('expected a temperature string such as "70 °C"')
    if len(text) > 100:
        raise QuantityError("a temperature is written in at most 100 characters")
    m = _NUMBER.match(text)
    if not m:
        raise QuantityError(f"{text!r} does not start with a number")
    number = parse_number(m.group(1))
    unit = text[m.end() :].strip()
    if unit in ("°C", "degC", "℃", "C"):
        return number
    if unit == "K":
        return number - Fraction("273.15")
    raise QuantityError(f"{text!r} is not a temperature in °C or K")
