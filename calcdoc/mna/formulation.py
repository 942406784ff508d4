"""Modified Nodal Analysis: unknowns, equations and the matrix form A·x = z.

Unknowns are the node voltages ``V(n)`` of every non-reference node, then
the currents ``I(E)`` the formulation needs: one for each voltage-defined
element (voltage source, VCVS, CCVS) and one for each element whose
current controls a CCVS or CCCS.

Equations, in order:

- KCL at each non-reference node: the currents leaving the node through
  its elements sum to zero (constant source currents moved to the right);
- one branch equation per current unknown: the element's own law
  (``V(a) − V(b) = V1``, ``V(a) − V(b) − R·I(R) = 0``, ...).

The equations are kept as :class:`Equation` objects in symbols (element
names stand for their values), so the report can print them, substitute
values and show the matrix that was solved.  :func:`stamps` gives the same
matrix as triplets directly (vectorised for large circuits); the test suite
checks the two agree.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from calcdoc.mna.netlist import Netlist, defines
from calcdoc.model.quantities import Number


@dataclass(frozen=True)
class Coefficient:
    """``sign · numerator / denominator``, each a symbol (element name) or 1."""

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
    """``coefficient · unknown`` (``unknown`` None: a constant term)."""

    coefficient: Coefficient
    unknown: str | None
    element: str


@dataclass(frozen=True)
class Equation:
    """One MNA equation: ``sum(lhs) = sum(rhs)``.

    ``kind`` is ``"kcl"`` (``subject`` a node) or ``"branch"`` (``subject`` an
    element); ``rhs`` holds only constant terms.
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
class Formulation:
    """The MNA system in symbols.

    Attributes
    ----------
    unknowns : tuple of str
        ``V(node)`` then ``I(element)`` names, in column order.
    equations : tuple of Equation
        In row order.
    """

    unknowns: tuple[str, ...]
    equations: tuple[Equation, ...]

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


def current_unknowns(net: Netlist) -> list[int]:
    """Indices of the elements whose current is an MNA unknown."""
    kinds = defines(net)
    controls = set(net.control_element.values())
    return [j for j, k in enumerate(kinds) if k == "voltage" or j in controls]


def unknown_names(net: Netlist) -> tuple[str, ...]:
    return tuple(f"V({n})" for n in net.nodes[1:]) + tuple(
        f"I({net.names[j]})" for j in current_unknowns(net)
    )


def formulation(net: Netlist) -> Formulation:
    """The symbolic MNA equations of a netlist.

    >>> from calcdoc.mna.netlist import Netlist
    >>> import numpy as np
    >>> net = Netlist(("gnd", "in", "out"), ("V1", "R1", "R2"),
    ...     ("voltage_source", "resistor", "resistor"), np.array([1, 1, 2]),
    ...     np.array([0, 2, 0]), (10, 1000, 1000), {}, {})
    >>> for eq in formulation(net).equations: print(eq.text())
    I(V1) + V(in)/R1 − V(out)/R1 = 0
    − V(in)/R1 + V(out)/R1 + V(out)/R2 = 0
    V(in) = V1
    """
    names, nodes = net.names, net.nodes
    kinds = defines(net)
    cur = current_unknowns(net)
    has_unknown = set(cur)

    def V(k: int) -> str | None:
        return None if k == 0 else f"V({nodes[k]})"

    def I(j: int) -> str:  # noqa: E743
        return f"I({names[j]})"

    def current_terms(j: int, sign: int) -> tuple[list[Term], list[Term]]:
        """Terms of ``sign · i_j`` (lhs unknown terms, rhs constants moved over)."""
        name, t = names[j], net.types[j]
        a, b = int(net.a[j]), int(net.b[j])
        lhs: list[Term] = []
        rhs: list[Term] = []
        if j in has_unknown:
            lhs.append(Term(Coefficient(sign), I(j), name))
        elif t == "resistor":
            for k, s in ((a, 1), (b, -1)):
                if V(k):
                    lhs.append(Term(Coefficient(sign * s, None, name), V(k), name))
        elif kinds[j] == "current" and j not in net.control_nodes and j not in net.control_element:
            rhs.append(Term(Coefficient(-sign, name), None, name))
        elif j in net.control_nodes:
            p, m = net.control_nodes[j]
            for k, s in ((p, 1), (m, -1)):
                if V(k):
                    lhs.append(Term(Coefficient(sign * s, name), V(k), name))
        elif j in net.control_element:
            lhs.append(Term(Coefficient(sign, name), I(net.control_element[j]), name))
        return lhs, rhs

    eqs: list[Equation] = []
    touching: dict[int, list[tuple[int, int]]] = {}
    for j in range(len(names)):
        touching.setdefault(int(net.a[j]), []).append((j, 1))
        touching.setdefault(int(net.b[j]), []).append((j, -1))
    for k in range(1, len(nodes)):
        lhs, rhs = [], []
        for j, s in touching.get(k, ()):
            l2, r2 = current_terms(j, s)
            lhs += l2
            rhs += r2
        eqs.append(Equation("kcl", nodes[k], tuple(lhs), tuple(rhs)))
    for j in cur:
        name, t = names[j], net.types[j]
        a, b = int(net.a[j]), int(net.b[j])
        lhs, rhs = [], []
        if kinds[j] in ("voltage", "resistance"):
            for k, s in ((a, 1), (b, -1)):
                if V(k):
                    lhs.append(Term(Coefficient(s), V(k), name))
            if t == "voltage_source":
                rhs.append(Term(Coefficient(1, name), None, name))
            elif t == "resistor":
                lhs.append(Term(Coefficient(-1, name), I(j), name))
            elif j in net.control_nodes:
                p, m = net.control_nodes[j]
                for k, s in ((p, -1), (m, 1)):
                    if V(k):
                        lhs.append(Term(Coefficient(s, name), V(k), name))
            else:
                lhs.append(Term(Coefficient(-1, name), I(net.control_element[j]), name))
        else:  # a current-defined element whose current is needed as a control
            lhs.append(Term(Coefficient(1), I(j), name))
            if t == "current_source":
                rhs.append(Term(Coefficient(1, name), None, name))
            elif j in net.control_nodes:
                p, m = net.control_nodes[j]
                for k, s in ((p, -1), (m, 1)):
                    if V(k):
                        lhs.append(Term(Coefficient(s, name), V(k), name))
            else:
                lhs.append(Term(Coefficient(-1, name), I(net.control_element[j]), name))
        eqs.append(Equation("branch", name, tuple(lhs), tuple(rhs)))
    return Formulation(unknown_names(net), tuple(eqs))


def stamps(net: Netlist) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """The float matrix A and vector z as COO triplets, built from arrays.

    Returns
    -------
    rows, cols, vals : numpy.ndarray
        Entries of A (duplicates are summed).
    z : numpy.ndarray
        Right-hand side.
    """
    n_nodes = len(net.nodes)
    cur = current_unknowns(net)
    col_of = {j: n_nodes - 1 + i for i, j in enumerate(cur)}
    n = n_nodes - 1 + len(cur)
    types = np.array(net.types)
    vals = net.floats()
    a, b = net.a - 1, net.b - 1  # matrix index; -1 means reference
    plain = (types == "resistor") & ~np.isin(np.arange(len(types)), cur)
    ra, rb = a[plain], b[plain]
    g = 1.0 / vals[plain]
    rows = [ra, ra, rb, rb]
    cols = [ra, rb, ra, rb]
    data = [g, -g, -g, g]
    r_extra: list[int] = []
    c_extra: list[int] = []
    v_extra: list[float] = []
    z = np.zeros(n)

    def put(r: int, c: int, v: float) -> None:
        if r >= 0 and c >= 0:
            r_extra.append(r)
            c_extra.append(c)
            v_extra.append(v)

    for j in np.flatnonzero(~plain):
        j = int(j)
        t, v = net.types[j], vals[j]
        aj, bj = int(a[j]), int(b[j])
        if j in col_of:
            c = col_of[j]
            put(aj, c, 1.0)
            put(bj, c, -1.0)
            r = c
            if t in ("voltage_source", "vcvs", "ccvs", "resistor"):
                put(r, aj, 1.0)
                put(r, bj, -1.0)
                if t == "voltage_source":
                    z[r] += v
                elif t == "resistor":
                    put(r, c, -v)
            else:
                put(r, c, 1.0)
                if t == "current_source":
                    z[r] += v
            if j in net.control_nodes:
                p, m = net.control_nodes[j]
                put(r, p - 1, -v)
                put(r, m - 1, v)
            elif j in net.control_element:
                put(r, col_of[net.control_element[j]], -v)
        elif t == "current_source":
            if aj >= 0:
                z[aj] -= v
            if bj >= 0:
                z[bj] += v
        elif j in net.control_nodes:  # vccs
            p, m = net.control_nodes[j]
            for row, s in ((aj, 1.0), (bj, -1.0)):
                put(row, p - 1, s * v)
                put(row, m - 1, -s * v)
        elif j in net.control_element:  # cccs
            c = col_of[net.control_element[j]]
            put(aj, c, v)
            put(bj, c, -v)
    rows_a = np.concatenate([*rows, np.array(r_extra, dtype=np.int64)])
    cols_a = np.concatenate([*cols, np.array(c_extra, dtype=np.int64)])
    vals_a = np.concatenate([*data, np.array(v_extra, dtype=float)])
    keep = (rows_a >= 0) & (cols_a >= 0)
    return rows_a[keep], cols_a[keep], vals_a[keep], z
