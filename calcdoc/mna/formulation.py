"""Modified Nodal Analysis in symbols: the unknowns and equations as data.

Unknowns are the node voltages ``V(n)`` of every non-reference node, then
the currents ``I(E)`` the formulation needs (:mod:`calcdoc.mna.stamps`).
Equations, in order: KCL at each non-reference node (the currents leaving
the node through its elements sum to zero, constant currents moved to the
right), then one branch equation per current unknown, the element's own
law.  Both are read from the same stamps the solver uses, so the printed
equations are the solved ones.
"""

from __future__ import annotations

import numpy as np

from calcdoc.mna.stamps import Structure, float_system, structure
from calcdoc.results import Coefficient, Equation, Formulation, Netlist, Term

__all__ = [
    "Coefficient",
    "Equation",
    "Formulation",
    "Term",
    "current_unknowns",
    "formulation",
    "stamps",
    "unknown_names",
]


def current_unknowns(net: Netlist) -> list[int]:
    """Indices of the elements whose current is an MNA unknown, in column order."""
    st = structure(net)
    return st.current_elements.tolist()


def unknown_names(net: Netlist) -> tuple[str, ...]:
    return structure(net).unknowns()


def formulation(net: Netlist | Structure) -> Formulation:
    """The symbolic MNA equations of a netlist.

    >>> from calcdoc.results import Netlist
    >>> net = Netlist(("gnd", "in", "out"), ("V1", "R1", "R2"),
    ...     ("voltage_source", "resistor", "resistor"), np.array([1, 1, 2]),
    ...     np.array([0, 2, 0]), (10, 1000, 1000), {}, {})
    >>> for eq in formulation(net).equations: print(eq.text())
    I(V1) + V(in)/R1 − V(out)/R1 = 0
    − V(in)/R1 + V(out)/R1 + V(out)/R2 = 0
    V(in) = V1
    """
    st = net if isinstance(net, Structure) else structure(net)
    net = st.net
    unknowns = st.unknowns()
    names = [s.name for s in st.symbols]
    n_nodes = len(net.nodes)
    P = st.P

    def coefficient(sign: float, num: int, den: int) -> Coefficient:
        return Coefficient(
            int(sign), names[num] if num < P else None, names[den] if den < P else None
        )

    lhs: list[list[Term]] = [[] for _ in range(st.n)]
    rhs: list[list[Term]] = [[] for _ in range(st.n)]
    A = st.A
    for r, c, s, nu, de, e in zip(
        A.row.tolist(),
        A.col.tolist(),
        A.sign.tolist(),
        A.num.tolist(),
        A.den.tolist(),
        A.elem.tolist(),
        strict=True,
    ):
        lhs[r].append(Term(coefficient(s, nu, de), unknowns[c], net.names[e]))
    z = st.z
    for r, s, nu, de, e in zip(
        z.row.tolist(),
        z.sign.tolist(),
        z.num.tolist(),
        z.den.tolist(),
        z.elem.tolist(),
        strict=True,
    ):
        rhs[r].append(Term(coefficient(s, nu, de), None, net.names[e]))
    owner = {int(st.col[j]): j for j in st.current_elements.tolist()}
    eqs = []
    for r in range(st.n):
        if r < n_nodes - 1:
            eqs.append(Equation("kcl", net.nodes[r + 1], tuple(lhs[r]), tuple(rhs[r])))
        else:
            eqs.append(Equation("branch", net.names[owner[r]], tuple(lhs[r]), tuple(rhs[r])))
    used = {t.coefficient.numerator for eq in eqs for t in (*eq.lhs, *eq.rhs)}
    used |= {t.coefficient.denominator for eq in eqs for t in (*eq.lhs, *eq.rhs)}
    return Formulation(unknowns, tuple(eqs), tuple(s for s in st.symbols if s.name in used))


def stamps(net: Netlist) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """The float matrix A and vector z as COO triplets (duplicates are summed)."""
    return float_system(structure(net))
