"""The frozen project model: what a project file says, validated.

All quantities are in SI units (V, A, W, Ω, S); temperatures in °C;
fractions (tolerances, limit shares) as plain numbers (0.01 = 1 %).
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass, field
from fractions import Fraction
from functools import cached_property

from calcdoc.model.assets import Assets
from calcdoc.model.elements import KINDS, ElementType
from calcdoc.model.expressions import Node
from calcdoc.model.quantities import Dimension, Number, Quantity


@dataclass(frozen=True)
class Tolerance:
    """Relative tolerance band: value may lie in [v·(1−minus), v·(1+plus)]."""

    minus: Fraction
    plus: Fraction
    text: str = ""


@dataclass(frozen=True)
class Rating:
    """Component ratings in SI units; ``None`` where not given."""

    power: Number | None = None
    voltage: Number | None = None
    current: Number | None = None
    reverse_voltage: Number | None = None

    def given(self) -> tuple[tuple[str, Number], ...]:
        return tuple(
            (q, v)
            for q in ("power", "voltage", "current", "reverse_voltage")
            if (v := getattr(self, q)) is not None
        )


@dataclass(frozen=True)
class Derating:
    """Linear power derating: full rating up to ``knee`` °C, zero at ``zero`` °C."""

    knee: Fraction
    zero: Fraction


@dataclass(frozen=True)
class KeyValue:
    """A further number key of an element (beyond its main value)."""

    key: str
    value: Number
    text: str
    expr: Node


@dataclass(frozen=True)
class Element:
    """One circuit element.

    ``value`` is the nominal value in SI units (resistance Ω, source V or A,
    or the dependent-source gain), as evaluated from ``value_text``.
    """

    name: str
    type: str
    nodes: tuple[str, str]
    value: Number
    value_text: str
    value_expr: Node
    control_nodes: tuple[str, str] | None = None
    control_element: str | None = None
    tolerance: Tolerance | None = None
    rating: Rating = field(default_factory=Rating)
    description: str = ""
    source: str = ""  # where the value and rating come from ("datasheet rev C, table 4")
    basis: str = ""  # how they were chosen ("design policy")
    series: str | None = None
    tcr: Number | None = None  # 1/K
    derating: Derating | None = None
    more: tuple[KeyValue, ...] = ()
    state: str | None = None  # for multi-state elements (a contact: "open" / "closed")
    main_given: bool = True  # False: an optional main value left out (an ideal contact)
    windows: tuple[tuple[str, Number, Number], ...] = ()  # (key, low, high): output_range
    symbol: str | None = None  # the diagram symbol chosen with ``symbol = "led"``

    @property
    def kind(self) -> ElementType:
        return KINDS[self.type]

    @property
    def drawing(self) -> str:
        """The diagram symbol: chosen, else by the keys given, else the type's own."""
        if self.symbol:
            return self.symbol
        given = {k for k, _ in self.numbers}
        for key, symbol in self.kind.drawing_if:
            if key in given:
                return symbol
        return self.kind.drawing

    @property
    def numbers(self) -> tuple[tuple[str, Number], ...]:
        """Every number key given: (key, value), the main value first."""
        main = ((self.kind.main.name, self.value),) if self.main_given else ()
        return (*main, *((k.key, k.value) for k in self.more))


@dataclass(frozen=True)
class Parameter:
    name: str
    text: str
    expr: Node
    value: Quantity
    tolerance: Tolerance | None = None
    description: str = ""


@dataclass(frozen=True)
class HistoryEntry:
    revision: str
    date: _dt.date | None
    description: str


@dataclass(frozen=True)
class Document:
    title: str = "Untitled calculation"
    number: str = ""
    revision: str = ""
    date: _dt.date | None = None
    project: str = ""
    organisation: str = ""
    purpose: str = ""
    scope: str = ""
    assumptions: tuple[str, ...] = ()
    references: tuple[str, ...] = ()
    history: tuple[HistoryEntry, ...] = ()
    conclusion: str = ""


@dataclass(frozen=True)
class Signature:
    name: str
    date: _dt.date | None = None


@dataclass(frozen=True)
class Signoff:
    prepared: Signature | None = None
    checked: Signature | None = None
    approved: Signature | None = None
    seal: str | None = None  # image path, relative to the project file

    @property
    def is_approved(self) -> bool:
        return self.approved is not None


@dataclass(frozen=True)
class NodeWindow:
    node: str
    min: Number | None = None
    max: Number | None = None


@dataclass(frozen=True)
class AcrossWindow:
    """A window on the voltage between two nodes, V(a) − V(b) (``[[limits.across]]``)."""

    name: str
    nodes: tuple[str, str]
    min: Number | None = None
    max: Number | None = None
    description: str = ""


@dataclass(frozen=True)
class Limits:
    power_fraction: Fraction = Fraction(1)
    voltage_fraction: Fraction = Fraction(1)
    current_fraction: Fraction = Fraction(1)
    ambient: Fraction | None = None  # °C
    derating: Derating | None = None
    nodes: tuple[NodeWindow, ...] = ()
    across: tuple[AcrossWindow, ...] = ()


@dataclass(frozen=True)
class Setting:
    """One ``set`` entry of a case: an element value or a parameter."""

    target: str
    text: str
    expr: Node | None
    dimension: Dimension
    state: bool = False  # True: ``text`` is a state of a multi-state element ("open")


@dataclass(frozen=True)
class Case:
    name: str
    settings: tuple[Setting, ...] = ()
    description: str = ""


@dataclass(frozen=True)
class Analysis:
    tolerance: str = "none"  # none | extreme | montecarlo | rss
    samples: int = 1000
    seed: int = 1
    distribution: str = "uniform"  # uniform | normal (tolerance = 3 sigma)
    sensitivity: tuple[str, ...] = ()
    temperature: Fraction | None = None  # °C, for tcr
    reference_temperature: Fraction = Fraction(25)


@dataclass(frozen=True)
class Sweep:
    target: str
    start: Quantity
    stop: Quantity
    points: int
    scale: str  # linear | log
    outputs: tuple[str, ...]
    name: str = ""


@dataclass(frozen=True)
class ReportSettings:
    template: str = "standard"
    paper: str | None = None
    significant_figures: int = 4
    conclusion: str = ""


@dataclass(frozen=True)
class Project:
    """A validated project file."""

    path: str
    source: bytes
    sha256: str
    document: Document
    signoff: Signoff
    reference: str
    parameters: tuple[Parameter, ...]
    elements: tuple[Element, ...]
    limits: Limits
    cases: tuple[Case, ...]
    analysis: Analysis
    sweeps: tuple[Sweep, ...] = ()
    report: ReportSettings = field(default_factory=ReportSettings)
    # style, logo and seal, read by the file loader (calcdoc.model.assets); not part of the input's identity
    assets: Assets = field(default_factory=Assets, compare=False, repr=False)
    #: Things worth a reader's attention that are not errors (names differing only in case).
    warnings: tuple[str, ...] = ()

    def element(self, name: str) -> Element:
        for e in self.elements:
            if e.name == name:
                return e
        raise KeyError(name)

    @cached_property
    def nodes(self) -> tuple[str, ...]:
        """Every node name, the reference first, then in order of appearance."""
        seen = {self.reference: None}
        for e in self.elements:
            for n in e.nodes:
                seen.setdefault(n, None)
        return tuple(seen)
