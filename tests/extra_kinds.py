"""Test-only element types: the element table's optional keys, further keys and states.

The shipped table has single-state types with one number each; the
table's machinery for optional keys (a coefficient on an absent key is
dropped), further number keys (parameters beyond the main values) and
states is exercised here with three types registered for the duration of a
test (:func:`calcdoc.model.elements.register` is meant for this):

- ``thevenin``: a source E behind a resistance R (``resistance`` optional,
  nonnegative): v − R·i = E; without R an ideal source v = E;
- ``contact``: a contact with a positive contact resistance, ``closed``
  (v − R·i = 0) or ``open`` (i = 0);
- ``winding``: a winding whose main number (positive, dimensionless) plays
  no part at DC, with an optional nonnegative winding resistance: v − R·i = 0,
  a short (v = 0) without it.

Their laws here are written from these definitions; the test reference
(:mod:`hand_mna`) models them by their meaning (a resistor, a short, an
open, a source behind a resistance), not from this table.
"""

from __future__ import annotations

from contextlib import contextmanager

from calcdoc.model.elements import ONE, Coef, ElementType, Law, NumberKey, register, unregister
from calcdoc.model.quantities import NONE, OHM, VOLT

KINDS = (
    ElementType(
        "thevenin",
        "source behind a resistance",
        ("plus", "minus"),
        (
            NumberKey("value", VOLT, "V", words="source voltage"),
            NumberKey(
                "resistance",
                OHM,
                "Ω",
                "R",
                required=False,
                sign="nonnegative",
                words="source resistance",
            ),
        ),
        {"": Law(v=ONE, i=Coef(-1, "resistance"), const=Coef(1, "value"), text="V = E + R·I")},
    ),
    ElementType(
        "contact",
        "contact",
        ("a", "b"),
        (NumberKey("value", OHM, "Ω", sign="positive", words="contact resistance"),),
        {
            "closed": Law(v=ONE, i=Coef(-1, "value"), text="V = R·I"),
            "open": Law(i=ONE, text="I = 0"),
        },
        states=("closed", "open"),
    ),
    ElementType(
        "winding",
        "winding",
        ("a", "b"),
        (
            NumberKey("value", NONE, "", sign="positive", words="turns"),
            NumberKey(
                "resistance",
                OHM,
                "Ω",
                "R",
                required=False,
                sign="nonnegative",
                words="winding resistance",
            ),
        ),
        {"": Law(v=ONE, i=Coef(-1, "resistance"), text="V = R·I")},
    ),
)


@contextmanager
def registered():
    for k in KINDS:
        register(k)
    try:
        yield
    finally:
        for k in KINDS:
            unregister(k.type)
