"""Temperature derating of power ratings and resistance temperature coefficient.

The power derating curve is linear: full rated power up to the *knee*
temperature, falling to zero at the *zero* temperature, as drawn for fixed
resistors in IEC 60115-1 (rated dissipation versus ambient temperature).
The default curve, knee 70 °C and zero 155 °C, is the one commonly printed
for general-purpose film resistors (common practice, from memory; a
component's own data sheet governs and can be given per element).
"""

from __future__ import annotations

from fractions import Fraction

from calcdoc.model.project import Derating, Element, Limits
from calcdoc.model.quantities import Number

DEFAULT_DERATING = Derating(knee=Fraction(70), zero=Fraction(155))


def derating_curve(element: Element, limits: Limits) -> Derating:
    """The curve that applies: the element's own, the project's, or the default."""
    return element.derating or limits.derating or DEFAULT_DERATING


def derating_factor(curve: Derating, ambient: Number | None) -> Fraction | float:
    """Share of the rated power allowed at ``ambient`` (°C), from 0 to 1.

    >>> derating_factor(DEFAULT_DERATING, 70), derating_factor(DEFAULT_DERATING, Fraction("112.5"))
    (Fraction(1, 1), Fraction(1, 2))
    >>> derating_factor(DEFAULT_DERATING, 160)
    Fraction(0, 1)
    """
    if ambient is None or ambient <= curve.knee:
        return Fraction(1)
    if ambient >= curve.zero:
        return Fraction(0)
    return (curve.zero - ambient) / (curve.zero - curve.knee)


def tcr_value(
    nominal: Number, tcr: Number | None, temperature: Number | None, reference: Number
) -> Number:
    """Resistance at ``temperature`` (°C): R·(1 + α·(T − T_ref)).

    >>> tcr_value(Fraction(1000), Fraction(1, 10000), Fraction(125), Fraction(25))
    Fraction(1010, 1)
    """
    if tcr is None or temperature is None:
        return nominal
    return nominal * (1 + tcr * (temperature - reference))
