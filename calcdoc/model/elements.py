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

States come in two kinds.  A contact's state is *given* (``state = "open"``,
or set per case).  A diode's state is *found*: its type lists its
:class:`Knee` pieces (where the characteristic bends), its law in each
state follows from them (:func:`knee_laws`), and the state search
(:mod:`calcdoc.mna.states`) finds the states in which every device's
consistency test holds.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

from calcdoc.model.quantities import (
    AMPERE,
    FARAD,
    HENRY,
    NONE,
    OHM,
    SIEMENS,
    VOLT,
    WATT,
    Dimension,
)


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
class Knee:
    """One conducting piece of a piecewise-linear element (a diode's forward
    conduction, a zener's breakdown).

    The piece carries the current ``i = direction · z`` with ``z ≥ 0``, and
    its slack ``w = threshold − direction · v + slope · z`` is never
    negative; one of the two is zero (the piece conducts, ``w = 0``, or it
    does not, ``z = 0``).  While it conducts the element's law is
    ``v − slope · i = direction · threshold``.

    Attributes
    ----------
    state : str
        The element's state while this piece conducts.
    direction : int
        +1: conducts from a to b once ``v`` reaches the threshold; −1:
        from b to a once ``−v`` does.
    threshold : str
        Key of the threshold voltage; a piece whose key is left out does
        not exist (a diode without ``breakdown_voltage`` never breaks down).
    slope : str
        Key of the slope resistance (left out: 0).
    symbol : str
        How the threshold is written in tests (``Vf``, ``Vbr``).
    """

    state: str
    direction: int
    threshold: str
    slope: str
    symbol: str


@dataclass(frozen=True)
class WindowKey:
    """A key holding a pair ``[low, high]`` that an element result must stay inside.

    ``of`` names the result (``voltage``, ``current``), ``quantity`` what the
    check calls it (``output voltage``); the check id is ``ELEMENT.NAME``.
    """

    name: str
    dimension: Dimension
    unit: str
    of: str
    quantity: str
    words: str


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
    states : tuple of str
        The element's states, the default first (empty: one state, ``""``).
    knees : tuple of Knee
        For an element whose states are found by the state search: its
        conducting pieces (the first state is the one where none conducts).
        Empty for given states.
    energy : str or None
        ``"voltage"``: stores ½·value·v² (a capacitor); ``"current"``:
        ½·value·i² (a coil); None: nothing.
    windows : tuple of WindowKey
        Pair keys checked as windows on a result (an op-amp's output range).
    drawings : tuple of str
        Further symbols the project may choose with ``symbol = "..."``.
    drawing_if : tuple of (str, str)
        (key, symbol): drawn with that symbol when the key is given.
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
    knees: tuple[Knee, ...] = ()
    energy: str | None = None
    windows: tuple[WindowKey, ...] = ()
    drawings: tuple[str, ...] = ()
    drawing_if: tuple[tuple[str, str], ...] = ()

    @property
    def main(self) -> NumberKey:
        """The main value (toleranced, swept, set by cases); a placeholder
        that is never given for a type without number keys."""
        return self.keys[0] if self.keys else NO_VALUE

    @property
    def has_value(self) -> bool:
        """The type has a main value a project can give."""
        return bool(self.keys)

    @property
    def searched(self) -> bool:
        """The states are found by the state search, not given."""
        return bool(self.knees)

    @property
    def settable(self) -> tuple[str, ...]:
        """States a project file or a case may give."""
        return () if self.knees else self.states

    def key(self, name: str) -> NumberKey:
        for k in self.keys:
            if k.name == name:
                return k
        if name == NO_VALUE.name and not self.keys:
            return NO_VALUE
        raise KeyError(name)

    def law(self, state: str = "", absent: frozenset[str] = frozenset()) -> Law:
        law = self.laws[state]
        return law.without(absent) if absent else law


ONE = Coef(1)
NO_VALUE = NumberKey("value", NONE, "", required=False, words="no value")
"""The main-value placeholder of a type without number keys (an op-amp)."""


def knee_laws(knees: tuple[Knee, ...], off: str, off_text: str = "I = 0") -> dict[str, Law]:
    """The law of each state of a piecewise-linear element.

    With no piece conducting the element carries no current (``off``);
    with piece ``k`` conducting, ``v − R·i = direction · threshold``.
    """
    laws = {off: Law(i=ONE, text=off_text)}
    for k in knees:
        sign = "" if k.direction > 0 else "−"
        laws[k.state] = Law(
            v=ONE, i=Coef(-1, k.slope), const=Coef(k.direction, k.threshold),
            text=f"V = {sign}{k.symbol} + R·I",
        )  # fmt: skip
    return laws


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


_DIODE_KNEES = (
    Knee("conducting", 1, "forward_voltage", "resistance", "Vf"),
    Knee("breakdown", -1, "breakdown_voltage", "resistance", "Vbr"),
)
register(ElementType(
    "switch", "switch or contact", ("a", "b"),
    (_value(OHM, "Ω", "resistance", required=False, sign="nonnegative",
            words="contact resistance"),),
    {"closed": Law(v=ONE, i=_k("resistance", -1), text="V = R·I"),
     "open": Law(i=ONE, text="I = 0")},
    ratings=("current", "voltage"), drawing="contact", states=("closed", "open"),
))  # fmt: skip
register(ElementType(
    "diode", "diode", ("anode", "cathode"),
    (_value(VOLT, "V", "forward_voltage", sign="nonnegative", words="forward voltage"),
     _value(OHM, "Ω", "resistance", symbol="R", required=False, sign="nonnegative",
            words="slope resistance"),
     _value(VOLT, "V", "breakdown_voltage", symbol="Vbr", required=False, sign="positive",
            words="breakdown voltage")),
    knee_laws(_DIODE_KNEES, "blocking"),
    ratings=("power", "current", "reverse_voltage"), drawing="diode",
    states=("blocking", "conducting", "breakdown"), knees=_DIODE_KNEES,
    drawings=("diode", "led", "zener"), drawing_if=(("breakdown_voltage", "zener"),),
))  # fmt: skip
register(ElementType(
    "opamp", "ideal operational amplifier", ("output", "reference"),
    (),
    {"": Law(u=ONE, text="V(+) − V(−) = 0")},
    control="nodes", ratings=("current",), drawing="opamp",
    windows=(WindowKey("output_range", VOLT, "V", "voltage", "output voltage", "output range"),),
))  # fmt: skip
register(ElementType(
    "capacitor", "capacitor", ("a", "b"),
    (_value(FARAD, "F", sign="positive", words="capacitance"),),
    {"": Law(i=ONE, text="I = 0")},
    ratings=("voltage",), drawing="capacitor", energy="voltage",
))  # fmt: skip
register(ElementType(
    "inductor", "coil", ("a", "b"),
    (_value(HENRY, "H", sign="positive", words="inductance"),
     _value(OHM, "Ω", "resistance", symbol="R", required=False, sign="nonnegative",
            words="winding resistance")),
    {"": Law(v=ONE, i=_k("resistance", -1), text="V = R·I")},
    ratings=("power", "current"), drawing="coil", energy="current",
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
    out = [*COMMON_KEYS, *(k.name for k in kind.keys), *(w.name for w in kind.windows)]
    if kind.control:
        out.append("control")
    if kind.settable:
        out.append("state")
    if kind.drawings:
        out.append("symbol")
    return tuple(out)
