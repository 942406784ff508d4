"""Frozen result types: everything the report, the JSON and the terminal read.

The stages below (``mna``, ``verify``, ``analysis``) build these; the
pipeline (:mod:`calcdoc.pipeline`) gathers them into :class:`Results`.
Nothing here computes a result: the types only hold them, with small
conveniences (lookups, counts).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

import numpy as np

from calcdoc.model.project import Case, Project
from calcdoc.model.quantities import Number

# --------------------------------------------------------------------------
# the indexed circuit
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class Netlist:
    """The circuit of one case, indexed: what the MNA stages work on.

    Node 0 is the reference.  Element ``j`` runs from node ``a[j]`` to node
    ``b[j]``.

    Attributes
    ----------
    nodes : tuple of str
        Node names, the reference first.
    names, types : tuple of str
        Element names and types, in project order.
    a, b : numpy.ndarray of int
        Terminal node indices.
    values : tuple of Fraction or float
        Each element's main value in SI units (value or gain).
    control_nodes : dict of int to (int, int)
        Node-pair controls.
    control_element : dict of int to int
        Element controls: index of the controlling element.
    float_values : numpy.ndarray, optional
        ``values`` as floats (computed when omitted).
    states : tuple of str
        Each element's state (``""`` for single-state elements).
    more : tuple of (int, str, Number)
        Further number keys: (element index, key, value).
    absent : tuple of (int, str)
        Optional number keys an element leaves out.
    """

    nodes: tuple[str, ...]
    names: tuple[str, ...]
    types: tuple[str, ...]
    a: np.ndarray
    b: np.ndarray
    values: tuple[Number, ...]
    control_nodes: dict[int, tuple[int, int]]
    control_element: dict[int, int]
    float_values: np.ndarray | None = None
    states: tuple[str, ...] = ()
    more: tuple[tuple[int, str, Number], ...] = ()
    absent: tuple[tuple[int, str], ...] = ()

    def floats(self) -> np.ndarray:
        """Main element values as a float64 array."""
        if self.float_values is not None:
            return self.float_values
        return np.array([float(v) for v in self.values], dtype=float)

    @property
    def reference(self) -> str:
        return self.nodes[0]

    def index(self, element: str) -> int:
        return self.names.index(element)

    def state(self, j: int) -> str:
        return self.states[j] if self.states else ""

    @property
    def exact(self) -> bool:
        """True when every number is an exact rational."""
        return all(not isinstance(v, float) for v in self.values) and all(
            not isinstance(v, float) for _, _, v in self.more
        )


# --------------------------------------------------------------------------
# equations as data
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class Coefficient:
    """``sign · numerator / denominator``, each a symbol name or 1."""

    sign: int
    numerator: str | None = None
    denominator: str | None = None

    def value(self, values: Mapping[str, Number]) -> Number:
        v: Number = Fraction(self.sign)
        if self.numerator is not None:
            v = v * values[self.numerator]
        if self.denominator is not None:
            v = v / values[self.denominator]
        return v


@dataclass(frozen=True)
class Term:
    """``coefficient · unknown`` (``unknown`` None: a constant term) of one element."""

    coefficient: Coefficient
    unknown: str | None
    element: str


@dataclass(frozen=True)
class Equation:
    """One MNA equation: ``sum(lhs) = sum(rhs)``.

    ``kind`` is ``"kcl"`` (``subject`` a node) or ``"branch"`` (``subject``
    an element); ``rhs`` holds only constant terms.
    """

    kind: str
    subject: str
    lhs: tuple[Term, ...]
    rhs: tuple[Term, ...]

    @property
    def title(self) -> str:
        if self.kind == "kcl":
            return f"KCL at node {self.subject}"
        return f"Branch equation of {self.subject}"

    def text(self, values: Mapping[str, Number] | None = None, fmt=None) -> str:
        """Plain-text form; with ``values``, numbers substituted for symbols."""
        return f"{_side(self.lhs, values, fmt)} = {_side(self.rhs, values, fmt)}"


def _symbol(name: str, values: Mapping[str, Number] | None, fmt) -> str:
    if values is None:
        return name
    v = values[name]
    return fmt(name, v) if fmt else f"{float(v):.6g}"


def _side(terms: tuple[Term, ...], values, fmt) -> str:
    if not terms:
        return "0"
    parts = []
    for t in terms:
        c = t.coefficient
        body = t.unknown or ""
        if c.numerator:
            body = _symbol(c.numerator, values, fmt) + ("·" + body if body else "")
        if c.denominator:
            body = (body or "1") + "/" + _symbol(c.denominator, values, fmt)
        body = body or "1"
        parts.append(("−" if c.sign < 0 else "+") + " " + body)
    s = " ".join(parts)
    return s[2:] if s.startswith("+ ") else "−" + s[1:]


@dataclass(frozen=True)
class Symbol:
    """A symbol of the equations: one number key of one element.

    ``name`` is the element name for its main value, ``KEY(ELEMENT)``
    otherwise (``R(K1)``).
    """

    name: str
    element: str
    key: str
    unit: str


@dataclass(frozen=True)
class Formulation:
    """The MNA system in symbols.

    Attributes
    ----------
    unknowns : tuple of str
        ``V(node)`` then ``I(element)`` names, in column order.
    equations : tuple of Equation
        In row order.
    symbols : tuple of Symbol
        Every symbol the equations use, with its unit.
    """

    unknowns: tuple[str, ...]
    equations: tuple[Equation, ...]
    symbols: tuple[Symbol, ...] = ()

    def matrix(self, values: Mapping[str, Number]) -> tuple[list[list[Number]], list[Number]]:
        """Dense A and z with values substituted (exact where values are)."""
        col = {u: i for i, u in enumerate(self.unknowns)}
        n = len(self.unknowns)
        A: list[list[Number]] = [[Fraction(0)] * n for _ in range(n)]
        z: list[Number] = [Fraction(0)] * n
        for r, eq in enumerate(self.equations):
            for t in eq.lhs:
                A[r][col[t.unknown]] += t.coefficient.value(values)  # type: ignore[index]
            for t in eq.rhs:
                z[r] += t.coefficient.value(values)
        return A, z

    def units(self) -> dict[str, str]:
        return {s.name: s.unit for s in self.symbols}


# --------------------------------------------------------------------------
# solution and element quantities
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class Solution:
    """The solved MNA system.

    Attributes
    ----------
    unknowns : tuple of str
    x : numpy.ndarray
        Values of the unknowns (V or A), float64.
    exact : tuple of Fraction or None
        The same in exact rational arithmetic, when that path was taken.
    method : str
        ``"exact rational"``, ``"dense LU"`` or ``"sparse LU"``.
    residual : float or None
        Relative residual ‖A·x − z‖∞ / (‖A‖∞·‖x‖∞ + ‖z‖∞) of the float
        solution; None for the exact path, which has none.
    condition : float or None
        Condition number estimate (1-norm) of the equilibrated matrix; None
        for the exact path.
    warnings : tuple of str
    formulation : Formulation or None
        The symbolic equations, when the system is small enough to keep them.
    matrix : (numpy.ndarray, numpy.ndarray) or None
        The dense A and z that were solved (float64), for small systems.
    error_estimate : float or None
        Estimated relative error of x after iterative refinement (float paths).
    refinement_steps : int
        Iterative-refinement steps taken.
    limits : mapping of str to int
        The size thresholds that chose the method (``exact``, ``dense``).
    """

    unknowns: tuple[str, ...]
    x: np.ndarray
    exact: tuple[Fraction, ...] | None
    method: str
    residual: float | None
    condition: float | None
    warnings: tuple[str, ...]
    formulation: Formulation | None
    matrix: tuple[np.ndarray, np.ndarray] | None = None
    error_estimate: float | None = None
    refinement_steps: int = 0
    limits: Mapping[str, int] = field(default_factory=dict)


@dataclass(frozen=True)
class Branches:
    """Per-element results, in netlist order (SI units).

    Attributes
    ----------
    node_voltage : numpy.ndarray
        Voltage of every node from the reference (V), reference first.
    voltage, current, power : numpy.ndarray
        V(a) − V(b) (V), current a → b (A), v·i (W).
    law_voltage : numpy.ndarray
        The voltage each element's own law gives (source value, gain ×
        control, R·i): the terms of the KVL check.  Where the law does not
        fix the voltage (a current source, an open), the node voltages do.
    law_fixes_voltage : numpy.ndarray of bool
        True where ``law_voltage`` comes from the element's law, False where
        it comes from the node voltages.
    exact_node_voltage, exact_current, exact_law_voltage : tuple of Fraction or None
        Exact values when the solve was exact.
    """

    node_voltage: np.ndarray
    voltage: np.ndarray
    current: np.ndarray
    power: np.ndarray
    law_voltage: np.ndarray
    exact_node_voltage: tuple[Fraction, ...] | None = None
    exact_current: tuple[Fraction, ...] | None = None
    exact_law_voltage: tuple[Fraction, ...] | None = None
    law_fixes_voltage: np.ndarray | None = None
    energy: np.ndarray | None = None
    """Stored energy (J) of elements whose type stores it (½CV², ½LI²); 0 elsewhere."""


# --------------------------------------------------------------------------
# verification
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class Loop:
    """One fundamental loop: the chord, then the tree path back.

    ``elements`` and ``signs``: +1 where the loop runs through the element
    from its node a to its node b, −1 against.
    """

    chord: str
    elements: tuple[str, ...]
    signs: tuple[int, ...]
    sum: float
    terms: tuple[float, ...]


@dataclass(frozen=True)
class LoopCheck:
    """KVL over the fundamental loops.

    ``loops`` lists every loop with its terms when ``listed``; for large
    circuits it is empty and ``chords`` / ``sums`` give each loop's closing
    element and its sum (V).
    """

    loops: tuple[Loop, ...]
    listed: bool
    max_abs_sum: float
    chords: tuple[str, ...] = ()
    sums: tuple[float, ...] = ()

    @property
    def count(self) -> int:
        return len(self.loops) if self.listed else len(self.chords)


@dataclass(frozen=True)
class Ledger:
    """Power balance (W): absorbed by, delivered by, and the imbalance."""

    absorbed: float
    delivered: float
    imbalance: float
    by_element: tuple[tuple[str, float], ...]

    @property
    def relative(self) -> float:
        scale = max(self.absorbed, self.delivered)
        return abs(self.imbalance) / scale if scale else 0.0


@dataclass(frozen=True)
class Check:
    """One design check.

    Attributes
    ----------
    id : str
        ``"Rs.power"``, ``"nodes.field.min"``.
    subject : str
        Element or node name.
    quantity : str
        ``power``, ``voltage``, ``current``, ``reverse voltage`` (elements)
        or ``node voltage``.
    value, limit : float
        Result and allowed limit (SI). For element checks the value is a
        magnitude; for a node window it is the signed node voltage.
    bound : str
        ``"max"`` (value must not exceed limit) or ``"min"``.
    utilization : float or None
        value / limit for ``max`` checks; limit / value for a ``min`` check
        when both are positive; otherwise None.
    margin : float
        How far the value is inside the limit (negative when failing).
    basis : str
        How the limit was obtained, in words.
    """

    id: str
    subject: str
    quantity: str
    value: float
    limit: float
    bound: str
    utilization: float | None
    margin: float
    basis: str

    @property
    def status(self) -> str:
        return "pass" if self.margin >= 0 else "fail"

    @property
    def passed(self) -> bool:
        return self.margin >= 0


# --------------------------------------------------------------------------
# states of piecewise-linear devices
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class StateTest:
    """One condition that confirms a device's state: a result against a threshold.

    ``text`` reads like ``I ≥ 0`` or ``V ≤ Vf``; ``value`` and ``limit`` are
    in A or V; ``margin`` is how far inside the condition the value lies
    (negative when it does not hold); ``holds`` allows for rounding of a
    floating-point solution (an exact solution is compared exactly).
    """

    text: str
    quantity: str
    bound: str
    value: float
    limit: float
    margin: float
    holds: bool


@dataclass(frozen=True)
class DeviceState:
    """A device's state, its linear model in that state, and the tests that confirm it."""

    element: str
    state: str
    law: str
    tests: tuple[StateTest, ...]

    @property
    def holds(self) -> bool:
        return all(t.holds for t in self.tests)


@dataclass(frozen=True)
class StateSearch:
    """How the states of the piecewise-linear devices were found, and their proof.

    Attributes
    ----------
    method : str
        ``"complementary pivoting (Lemke)"`` or ``"every combination tried"``.
    iterations : int
        Pivots of the search (0: the starting states were already consistent).
    pieces : int
        Conducting pieces searched (a diode has one, a zener two).
    devices : tuple of DeviceState
        Every searched device with the tests of its state.
    note : str
    """

    method: str
    iterations: int
    pieces: int
    devices: tuple[DeviceState, ...]
    note: str = ""

    @property
    def holds(self) -> bool:
        return all(d.holds for d in self.devices)


# --------------------------------------------------------------------------
# a case and the whole project
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class CaseResult:
    """Everything computed for one operating case."""

    name: str
    case: Case | None
    values: Mapping[str, Number]
    netlist: Netlist
    solution: Solution
    branches: Branches
    kcl: np.ndarray
    kvl: LoopCheck
    ledger: Ledger
    checks: tuple[Check, ...]
    symbol_values: Mapping[str, Number] = field(default_factory=dict)
    """Every symbol of the equations (element values and further keys) with its value."""
    states: StateSearch | None = None
    """The state search and its proof, when the circuit has piecewise-linear devices."""

    @property
    def failed(self) -> tuple[Check, ...]:
        return tuple(c for c in self.checks if not c.passed)


@dataclass(frozen=True)
class Results:
    """Results of every case of a project, and of the analyses it asked for.

    ``extra`` holds the analysis results keyed by stage name
    (``tolerance``, ``envelope``, ``sensitivity``, ``sweeps``,
    ``preferred_values``, ``history``, ``closed_form``); each stage object
    may offer ``failed_checks()`` and ``notes()``.
    """

    project: Project
    cases: tuple[CaseResult, ...]
    extra: Mapping[str, Any] = field(default_factory=dict)

    @property
    def checks(self) -> tuple[Check, ...]:
        return tuple(c for r in self.cases for c in r.checks)

    @property
    def failed(self) -> tuple[tuple[str, Check], ...]:
        """Failing checks as (case name, check), analysis stages included."""
        out = [(r.name, c) for r in self.cases for c in r.failed]
        for data in self.extra.values():
            more = getattr(data, "failed_checks", None)
            if more is not None:
                out.extend(more())
        return tuple(out)

    @property
    def notes(self) -> tuple[str, ...]:
        """One-line summaries from analysis stages, for the terminal."""
        out: list[str] = []
        for data in self.extra.values():
            more = getattr(data, "notes", None)
            if more is not None:
                out.extend(more())
        return tuple(out)

    @property
    def worst(self) -> tuple[str, Check] | None:
        """The check with the highest utilisation, with its case name."""
        best = None
        for r in self.cases:
            for c in r.checks:
                if c.utilization is not None and (
                    best is None or c.utilization > best[1].utilization
                ):
                    best = (r.name, c)
        return best
