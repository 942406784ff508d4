"""The element table: every element type declared once.

Each :class:`ElementType` gives a type's terminals, its keys and their
dimensions, the ratings it accepts, how it is drawn, and its **law** as the
coefficients of one linear equation per state::

    cv·v + ci·i + cu·u = c0

with ``v = V(a) − V(b)``, ``i`` the current through the element from a to
b, and ``u`` the control quantity (``V(c+) − V(c−)`` for a node-pair
control, the reported current of the controlling element otherwise).  A
coefficient is a sign times one of the element's number keys (or 1); a
coefficient on an optional key that is absent is zero.

Everything else derives from this table: validation and the schema of the
project file, the MNA stamps (symbolic, exact, float, sparse, batched), the
derivatives for sensitivities, element voltages, currents and powers, the
KVL terms, the design checks and the diagram.  A new type is one new entry
(:func:`register`) plus, if it needs one, a diagram symbol.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

from calcdoc.model.quantities import AMPERE, NONE, OHM, SIEMENS, VOLT, WATT, Dimension


@dataclass(frozen=True)
class NumberKey:
    """A numeric key of an element (a value string with a unit).

    Attributes
    ----------
    name : str
        The project-file key (``value``, ``gain``, ``resistance`` ...).
    dimension : Dimension
    unit : str
        Unit symbol for print (``Ω``, ``V``, ``V/V``).
    symbol : str
        How the key is written in equations: ``""`` for the element's own
        name (its main value), else a short prefix (``R`` gives ``R(K1)``).
    required : bool
    sign : str
        ``"any"``, ``"positive"`` or ``"nonnegative"``.
    """

    name: str
    dimension: Dimension
    unit: str
    symbol: str = ""
    required: bool = True
    sign: str = "any"
    words: str = ""


@dataclass(frozen=True)
class Coef:
    """``sign × key`` (``key`` None: the number 1)."""

    sign: int
    key: str | None = None

    def __neg__(self) -> Coef:
        return Coef(-self.sign, self.key)


@dataclass(frozen=True)
class Law:
    """``cv·v + ci·i + cu·u = c0`` (a missing coefficient is zero).

    ``text`` is the law in words of the element's own symbols, for the
    method section and the equations (``V = R·I``).
    """

    v: Coef | None = None
    i: Coef | None = None
    u: Coef | None = None
    const: Coef | None = None
    text: str = ""

    def number_keys(self) -> tuple[str, ...]:
        return tuple(c.key for c in (self.v, self.i, self.u, self.const) if c is not None and c.key)

    def without(self, absent: frozenset[str]) -> Law:
        """The law with coefficients on absent optional keys dropped."""

        def keep(c: Coef | None) -> Coef | None:
            return None if c is None or (c.key is not None and c.key in absent) else c

        return Law(keep(self.v), keep(self.i), keep(self.u), keep(self.const), self.text)

    @property
    def current_defined(self) -> bool:
        """The law gives the current directly: ``i = ±(c0 − cu·u)``."""
        return self.v is None and self.i is not None and self.i.key is None

    @property
    def conductance(self) -> bool:
        """``v − R·i = 0``: stampable as the conductance 1/R."""
        return (
            self.v == Coef(1)
            and self.i is not None
            and self.i.sign == -1
            and self.i.key is not None
            and self.u is None
            and self.const is None
        )

    @property
    def fixes_voltage(self) -> bool:
        """The law fixes ``v`` alone (a voltage source, an ideal short): ``v = c0``."""
        return self.v is not None and self.i is None and self.u is None

    @property
    def fixes_current(self) -> bool:
        """The law fixes ``i`` alone (a current source, an open): ``i = c0``."""
        return self.current_defined and self.u is None


@dataclass(frozen=True)
class ElementType:
    """One element type: terminals, keys, law per state, ratings, drawing.

    Attributes
    ----------
    type : str
        The project-file ``type``.
    words : str
        Plain name for print.
    terminals : (str, str)
        What ``nodes = [a, b]`` mean, in words (``plus``, ``minus``).
    keys : tuple of NumberKey
        The number keys; the first is the main value (toleranced, swept,
        set by cases).
    control : str or None
        ``None``, ``"nodes"`` (a node pair) or ``"element"``.
    laws : mapping of state to Law
        One entry ``""`` for a single-state element.
    ratings : tuple of str
        Rating keys accepted (``power``, ``voltage``, ``current``,
        ``reverse_voltage``).
    supply : bool
        A source: its current rating is a capability.
    drawing : str
        The diagram symbol.
    """

    type: str
    words: str
    terminals: tuple[str, str]
    keys: tuple[NumberKey, ...]
    laws: Mapping[str, Law]
    control: str | None = None
    ratings: tuple[str, ...] = ("power", "voltage", "current")
    supply: bool = False
    drawing: str = "box"
    states: tuple[str, ...] = field(default=())

    @property
    def main(self) -> NumberKey:
        return self.keys[0]

    def key(self, name: str) -> NumberKey:
        for k in self.keys:
            if k.name == name:
                return k
        raise KeyError(name)

    def law(self, state: str = "", absent: frozenset[str] = frozenset()) -> Law:
        law = self.laws[state]
        return law.without(absent) if absent else law


ONE = Coef(1)


def _k(key: str, sign: int = 1) -> Coef:
    return Coef(sign, key)


def _value(dim: Dimension, unit: str, name: str = "value", **kw) -> NumberKey:
    return NumberKey(name, dim, unit, **kw)


KINDS: dict[str, ElementType] = {}


def register(kind: ElementType) -> ElementType:
    """Add an element type to the table (also used by tests for a test-only type)."""
    KINDS[kind.type] = kind
    return kind


def unregister(name: str) -> None:
    KINDS.pop(name, None)


register(ElementType(
    "resistor", "resistor", ("a", "b"),
    (_value(OHM, "Ω", sign="positive", words="resistance"),),
    {"": Law(v=ONE, i=_k("value", -1), text="V = R·I")},
    drawing="resistor",
))  # fmt: skip
register(ElementType(
    "voltage_source", "voltage source", ("plus", "minus"),
    (_value(VOLT, "V", words="source voltage"),),
    {"": Law(v=ONE, const=_k("value"), text="V = E")},
    supply=True, drawing="voltage_source",
))  # fmt: skip
register(ElementType(
    "current_source", "current source", ("from", "to"),
    (_value(AMPERE, "A", words="source current"),),
    {"": Law(i=ONE, const=_k("value"), text="I = J")},
    supply=True, drawing="current_source",
))  # fmt: skip
register(ElementType(
    "vcvs", "voltage-controlled voltage source", ("plus", "minus"),
    (_value(NONE, "V/V", "gain", words="voltage gain"),),
    {"": Law(v=ONE, u=_k("gain", -1), text="V = µ·Vc")},
    control="nodes", drawing="dependent_voltage",
))  # fmt: skip
register(ElementType(
    "vccs", "voltage-controlled current source", ("from", "to"),
    (_value(SIEMENS, "S", "gain", words="transconductance"),),
    {"": Law(i=ONE, u=_k("gain", -1), text="I = g·Vc")},
    control="nodes", drawing="dependent_current",
))  # fmt: skip
register(ElementType(
    "ccvs", "current-controlled voltage source", ("plus", "minus"),
    (_value(OHM, "Ω", "gain", words="transresistance"),),
    {"": Law(v=ONE, u=_k("gain", -1), text="V = r·Ic")},
    control="element", drawing="dependent_voltage",
))  # fmt: skip
register(ElementType(
    "cccs", "current-controlled current source", ("from", "to"),
    (_value(NONE, "A/A", "gain", words="current gain"),),
    {"": Law(i=ONE, u=_k("gain", -1), text="I = β·Ic")},
    control="element", drawing="dependent_current",
))  # fmt: skip


# --------------------------------------------------------------------------
# keys common to every element, and the rating keys
# --------------------------------------------------------------------------

COMMON_KEYS = (
    "type", "nodes", "tolerance", "rating", "description", "source", "basis",
    "series", "tcr", "derating",
)  # fmt: skip
"""Keys every element may carry, besides its number keys, ``control`` and ``state``."""


@dataclass(frozen=True)
class RatingKey:
    """A rating key: its dimension and unit, and the ``[limits]`` fraction that scales it."""

    name: str
    dimension: Dimension
    unit: str
    policy: str
    words: str


RATING_KEYS: dict[str, RatingKey] = {
    r.name: r
    for r in (
        RatingKey("power", WATT, "W", "power_fraction", "power"),
        RatingKey("voltage", VOLT, "V", "voltage_fraction", "voltage"),
        RatingKey("current", AMPERE, "A", "current_fraction", "current"),
        RatingKey("reverse_voltage", VOLT, "V", "voltage_fraction", "reverse voltage"),
    )
}


def element_keys(kind: ElementType) -> tuple[str, ...]:
    """Every key an element of this type may carry."""
    out = [*COMMON_KEYS, *(k.name for k in kind.keys)]
    if kind.control:
        out.append("control")
    if kind.states:
        out.append("state")
    return tuple(out)
