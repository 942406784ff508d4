"""Element voltages, currents and powers from the solved unknowns.

Conventions (design.md section 3): an element's voltage is V(a) − V(b),
its current flows through it from a to b, and its power v·i is positive
when absorbed, negative when delivered.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from calcdoc.mna.formulation import current_unknowns
from calcdoc.mna.netlist import Netlist
from calcdoc.mna.solve import Solution


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
        control, R·i): the terms of the KVL check.
    exact_voltage, exact_current : tuple of Fraction or None
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


def branches(net: Netlist, sol: Solution) -> Branches:
    """Derive every element's voltage, current and power.

    >>> from calcdoc.mna.netlist import Netlist
    >>> from calcdoc.mna.solve import solve
    >>> net = Netlist(("gnd", "in", "out"), ("V1", "R1", "R2"),
    ...     ("voltage_source", "resistor", "resistor"), np.array([1, 1, 2]),
    ...     np.array([0, 2, 0]), (10, 1000, 1000), {}, {})
    >>> br = branches(net, solve(net))
    >>> [float(v) for v in br.node_voltage], [float(i) for i in br.current]
    ([0.0, 10.0, 5.0], [-0.005, 0.005, 0.005])
    """
    n_nodes = len(net.nodes)
    cur = current_unknowns(net)
    col = {j: n_nodes - 1 + i for i, j in enumerate(cur)}
    if sol.exact is not None:
        return _exact(net, sol, col)
    x = sol.x
    nv = np.concatenate([[0.0], x[: n_nodes - 1]])
    vals = net.floats()
    v = nv[net.a] - nv[net.b]
    i = np.zeros(len(net.names))
    law = v.copy()
    types = np.array(net.types)
    res = types == "resistor"
    i[res] = v[res] / vals[res]
    for j, c in col.items():
        i[j] = x[c]
    for j, t in enumerate(net.types):
        if j in col and t != "resistor":
            pass
        elif t == "current_source":
            i[j] = vals[j]
        elif t == "vccs":
            p, m = net.control_nodes[j]
            i[j] = vals[j] * (nv[p] - nv[m])
    for j, t in enumerate(net.types):
        if t == "cccs" and j not in col:
            i[j] = vals[j] * x[col[net.control_element[j]]]
        if t == "voltage_source":
            law[j] = vals[j]
        elif t == "vcvs":
            p, m = net.control_nodes[j]
            law[j] = vals[j] * (nv[p] - nv[m])
        elif t == "ccvs":
            law[j] = vals[j] * x[col[net.control_element[j]]]
    law[res] = vals[res] * i[res]
    return Branches(nv, v, i, v * i, law)


def _exact(net: Netlist, sol: Solution, col: dict[int, int]) -> Branches:
    x = sol.exact
    assert x is not None
    n_nodes = len(net.nodes)
    nv = [Fraction(0), *x[: n_nodes - 1]]
    vals = net.values
    volt = [nv[int(a)] - nv[int(b)] for a, b in zip(net.a, net.b, strict=True)]
    cur: list[Fraction] = [Fraction(0)] * len(net.names)
    law = list(volt)
    for j, t in enumerate(net.types):
        if j in col:
            cur[j] = x[col[j]]
        elif t == "resistor":
            cur[j] = volt[j] / vals[j]
        elif t == "current_source":
            cur[j] = Fraction(vals[j])
        elif t == "vccs":
            p, m = net.control_nodes[j]
            cur[j] = vals[j] * (nv[p] - nv[m])
    for j, t in enumerate(net.types):
        if t == "cccs" and j not in col:
            cur[j] = vals[j] * x[col[net.control_element[j]]]
        if t == "voltage_source":
            law[j] = Fraction(vals[j])
        elif t == "vcvs":
            p, m = net.control_nodes[j]
            law[j] = vals[j] * (nv[p] - nv[m])
        elif t == "ccvs":
            law[j] = vals[j] * x[col[net.control_element[j]]]
        elif t == "resistor":
            law[j] = vals[j] * cur[j]
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
    )
