"""Element voltages, currents and powers from the solved unknowns.

Conventions (design.md section 3): an element's voltage is V(a) − V(b),
its current flows through it from a to b, and its power v·i is positive
when absorbed, negative when delivered.  Currents and law voltages come
from the maps of :mod:`calcdoc.mna.stamps`, i.e. from the element table.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np

from calcdoc.mna.stamps import apply_map, apply_map_exact, structure
from calcdoc.model.elements import KINDS
from calcdoc.results import Branches, Netlist, Solution

__all__ = ["Branches", "branches"]


def branches(net: Netlist, sol: Solution) -> Branches:
    """Derive every element's voltage, current, power and law voltage.

    >>> from calcdoc.mna.solve import solve
    >>> net = Netlist(("gnd", "in", "out"), ("V1", "R1", "R2"),
    ...     ("voltage_source", "resistor", "resistor"), np.array([1, 1, 2]),
    ...     np.array([0, 2, 0]), (10, 1000, 1000), {}, {})
    >>> br = branches(net, solve(net))
    >>> [float(v) for v in br.node_voltage], [float(i) for i in br.current]
    ([0.0, 10.0, 5.0], [-0.005, 0.005, 0.005])
    """
    st = structure(net)
    m = len(net.names)
    n_nodes = len(net.nodes)
    if sol.exact is not None:
        pe = st.extended_exact()
        x = list(sol.exact)
        nv = [Fraction(0), *x[: n_nodes - 1]]
        volt = [nv[int(a)] - nv[int(b)] for a, b in zip(net.a, net.b, strict=True)]
        cur = apply_map_exact(st.current, pe, x, m)
        law = apply_map_exact(st.law_voltage, pe, x, m)
        f = np.array
        return Branches(
            f([float(v) for v in nv]),
            f([float(v) for v in volt]),
            f([float(v) for v in cur]),
            f([float(v * c) for v, c in zip(volt, cur, strict=True)]),
            f([float(v) for v in law]),
            tuple(nv),
            tuple(cur),
            tuple(law),
            st.law_fixes_voltage,
            stored_energy(net, f([float(v) for v in volt]), f([float(v) for v in cur])),
        )
    x = sol.x
    pe = st.extended()
    nv = np.concatenate([[0.0], x[: n_nodes - 1]])
    v = nv[net.a] - nv[net.b]
    i = apply_map(st.current, pe, x, m)
    law = apply_map(st.law_voltage, pe, x, m)
    return Branches(
        nv,
        v,
        i,
        v * i,
        law,
        law_fixes_voltage=st.law_fixes_voltage,
        energy=stored_energy(net, v, i),
    )


def stored_energy(net: Netlist, v: np.ndarray, i: np.ndarray) -> np.ndarray:
    """½·value·v² or ½·value·i² per element, as its type's ``energy`` column says (J)."""
    by = [KINDS[t].energy for t in net.types]
    val = net.floats()
    out = np.zeros(len(by))
    for what, q in (("voltage", v), ("current", i)):
        mask = np.array([b == what for b in by], dtype=bool)
        if mask.any():
            out[mask] = 0.5 * val[mask] * np.asarray(q, dtype=float)[mask] ** 2
    return out
