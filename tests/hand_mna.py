"""A circuit solver written for the tests, independent of calcdoc.

Every element current is an unknown (the sparse-tableau form of nodal
analysis), so this formulation differs from calcdoc's modified nodal one:
the unknowns are the node voltages (reference excluded) and one current per
element; the equations are KCL at every non-reference node (currents
leaving the node sum to zero) and each element's law in the conventions of
design.md section 3 (``v = V(a) − V(b)``, ``i`` from a to b):

=============== ==========================================
resistor        v − R·i = 0
voltage source  v = E
current source  i = J
vcvs            v − µ·(V(c+) − V(c−)) = 0
vccs            i − g·(V(c+) − V(c−)) = 0
ccvs            v − r·i(control) = 0
cccs            i − β·i(control) = 0
short           v = 0
open            i = 0
thevenin        v − R·i = E (a source behind a resistance)
=============== ==========================================

Solved in exact rational arithmetic (Gauss–Jordan on fractions, written
here; a system without a unique solution gives None), or with numpy in
complex arithmetic for complex-step derivatives (:func:`solve_numeric`).
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction


@dataclass(frozen=True)
class Part:
    """One element: ``control`` is a node pair or an element name; ``r`` for a thevenin source."""

    name: str
    kind: str
    a: str
    b: str
    value: Fraction = Fraction(0)
    control: tuple[str, str] | str | None = None
    r: Fraction = Fraction(0)


@dataclass(frozen=True)
class Answer:
    v: dict[str, Fraction]  # node voltages, the reference included (0)
    i: dict[str, Fraction]  # element currents, a → b

    def voltage(self, p: Part) -> Fraction:
        return self.v[p.a] - self.v[p.b]

    def power(self, p: Part) -> Fraction:
        return self.voltage(p) * self.i[p.name]


def solve(parts: list[Part], reference: str = "gnd") -> Answer | None:
    rows, nodes, col_v, col_i, n = _tableau(parts, reference)
    x = _gauss_jordan(rows, n)
    if x is None:
        return None
    v = {reference: Fraction(0), **{nd: x[col_v[nd]] for nd in nodes[1:]}}
    return Answer(v, {p.name: x[col_i[p.name]] for p in parts})


def solve_numeric(parts: list[Part], reference: str = "gnd") -> Answer:
    """The same equations solved by numpy (values may be complex: complex-step derivatives)."""
    import numpy as np

    rows, nodes, col_v, col_i, n = _tableau(parts, reference)
    M = np.array([[complex(v) for v in r] for r in rows])
    x = np.linalg.solve(M[:, :n], M[:, n])
    v = {reference: 0j, **{nd: x[col_v[nd]] for nd in nodes[1:]}}
    return Answer(v, {p.name: x[col_i[p.name]] for p in parts})


def _tableau(parts: list[Part], reference: str):
    nodes = [reference] + sorted({n for p in parts for n in (p.a, p.b)} - {reference})
    col_v = {n: k - 1 for k, n in enumerate(nodes) if k}
    nn = len(nodes) - 1
    col_i = {p.name: nn + k for k, p in enumerate(parts)}
    n = nn + len(parts)
    rows: list[list[Fraction]] = []

    def row() -> list[Fraction]:
        r = [Fraction(0)] * (n + 1)
        rows.append(r)
        return r

    def add_v(r, node, c):
        if node != reference:
            r[col_v[node]] += c

    for node in nodes[1:]:  # KCL: currents leaving the node
        r = row()
        for p in parts:
            if p.a == node:
                r[col_i[p.name]] += 1
            if p.b == node:
                r[col_i[p.name]] -= 1
    for p in parts:
        r = row()
        ci = col_i[p.name]
        if p.kind in ("resistor", "voltage_source", "vcvs", "ccvs", "short", "thevenin"):
            add_v(r, p.a, 1)
            add_v(r, p.b, -1)
        if p.kind == "resistor":
            r[ci] -= p.value
        elif p.kind == "thevenin":
            r[ci] -= p.r
            r[n] = p.value
        elif p.kind == "voltage_source":
            r[n] = p.value
        elif p.kind in ("current_source", "vccs", "cccs", "open"):
            r[ci] += 1
            if p.kind == "current_source":
                r[n] = p.value
        if p.kind in ("vcvs", "vccs"):
            add_v(r, p.control[0], -p.value)
            add_v(r, p.control[1], p.value)
        elif p.kind in ("ccvs", "cccs"):
            r[col_i[p.control]] -= p.value
    return rows, nodes, col_v, col_i, n


def _gauss_jordan(M: list[list[Fraction]], n: int) -> list[Fraction] | None:
    M = [r[:] for r in M]
    for c in range(n):
        piv = next((r for r in range(c, n) if M[r][c] != 0), None)
        if piv is None:
            return None
        M[c], M[piv] = M[piv], M[c]
        M[c] = [v / M[c][c] for v in M[c]]
        for r in range(n):
            if r != c and M[r][c] != 0:
                f = M[r][c]
                M[r] = [a - f * b for a, b in zip(M[r], M[c], strict=True)]
    return [M[r][n] for r in range(n)]
