"""Unit parsing: the fast table against pint, and IEC 60062 RKM codes."""

from __future__ import annotations

from fractions import Fraction

import pint
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from calcdoc.model.quantities import (
    AMPERE,
    NONE,
    OHM,
    VOLT,
    QuantityError,
    _pint_unit,
    _table_unit,
    parse_quantity,
    parse_rkm,
    parse_temperature,
)

UREG = pint.UnitRegistry()

# IEC 60062 letter code for resistance: the multiplier letter replaces the
# decimal point (R = 1, K = 10^3, M = 10^6, G = 10^9, T = 10^12).
# Examples from memory of the standard's table.
RKM = [
    ("R47", Fraction(47, 100)),
    ("4R7", Fraction(47, 10)),
    ("47R", Fraction(47)),
    ("4K7", Fraction(4700)),
    ("4k7", Fraction(4700)),
    ("47K", Fraction(47000)),
    ("1M0", Fraction(10**6)),
    ("2M2", Fraction(22 * 10**5)),
    ("1G5", Fraction(15 * 10**8)),
    ("1T0", Fraction(10**12)),
]


@pytest.mark.parametrize(("code", "ohms"), RKM)
def test_rkm_codes(code, ohms):
    assert parse_rkm(code) == ohms
    q = parse_quantity(code)
    assert q.magnitude == ohms and q.dimension == OHM


@pytest.mark.parametrize("text", ["R", "K", "4k7k", "4.7k", "k", "1x2"])
def test_not_rkm(text):
    assert parse_rkm(text) is None


UNITS = [
    "V",
    "mV",
    "kV",
    "A",
    "mA",
    "uA",
    "µA",
    "W",
    "mW",
    "kW",
    "ohm",
    "kohm",
    "Mohm",
    "mohm",
    "kΩ",
    "MΩ",
    "S",
    "mS",
    "uS",
    "m",
    "km",
    "mm",
    "s",
    "ms",
    "K",
    "mohm/m",
    "V/V",
    "A/A",
    "%",
    "ppm",
    "ppm/K",
    "ohm/m",
    "W/K",
]


def _pint_si(unit: str) -> tuple[float, dict]:
    q = UREG.Quantity(1, unit.replace("Ω", "ohm")).to_base_units()
    return float(q.magnitude), dict(q.dimensionality)


@pytest.mark.parametrize("unit", UNITS)
def test_table_agrees_with_pint(unit):
    # Reference: pint's own unit definitions and SI prefixes.
    table = _table_unit(unit)
    assert table is not None, unit
    factor, dim = table
    mag, dims = _pint_si(unit)
    assert float(factor) == pytest.approx(mag, rel=1e-12)
    names = ("[length]", "[mass]", "[time]", "[current]", "[temperature]")
    assert dim == tuple(int(dims.get(n, 0)) for n in names)


@settings(deadline=None, max_examples=60)
@given(
    st.sampled_from(["", "k", "M", "m", "u", "n", "p", "G"]),
    st.sampled_from(["V", "A", "W", "ohm", "S"]),
)
def test_prefixed_units_match_pint(prefix, symbol):
    # Reference: pint (every SI prefix with every electrical unit).
    factor, _ = _table_unit(prefix + symbol)
    assert float(factor) == pytest.approx(_pint_si(prefix + symbol)[0], rel=1e-12)


def test_pint_fallback_for_other_units():
    factor, dim = _pint_unit("microampere")
    assert factor == Fraction(1, 10**6) and dim == AMPERE


@pytest.mark.parametrize(
    ("text", "mag", "dim"),
    [
        ("2.2 kohm", Fraction(2200), OHM),
        ("2.2 kΩ", Fraction(2200), OHM),
        ("10 mA", Fraction(1, 100), AMPERE),
        ("1 %", Fraction(1, 100), NONE),
        ("-5 V", Fraction(-5), VOLT),
        ("1e-3 V", Fraction(1, 1000), VOLT),
        ("1 microvolt", Fraction(1, 10**6), VOLT),
    ],
)
def test_parse_quantity(text, mag, dim):
    q = parse_quantity(text)
    assert (q.magnitude, q.dimension) == (mag, dim)


@pytest.mark.parametrize("text", ["", "V", "ten volts", "3 bananas", "1 V V V(", "5 degC"])
def test_bad_quantities(text):
    with pytest.raises(QuantityError):
        parse_quantity(text)


def test_temperatures():
    # 0 °C = 273.15 K (SI definition of the Celsius scale)
    assert parse_temperature("273.15 K") == 0
    assert parse_temperature("70 °C") == 70
    with pytest.raises(QuantityError):
        parse_temperature("70 V")
