"""Random circuits of every element type against an independent solution.

The reference here is written in the test: a textbook MNA formulation
(node voltages, plus the current of every voltage source, VCVS, CCVS and
of every element whose current controls another), assembled with exact
fractions and decided by sympy's exact rank; a unique solution comes from
sympy's rational LU solve, never from calcdoc.  calcdoc must solve every
circuit the reference finds uniquely solvable, refuse every other one, and
its solution must satisfy Tellegen's theorem.
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
import sympy
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import calcdoc
from calcdoc.errors import SingularCircuitError
from calcdoc.mna import solve as solve_mod

VOLTAGE_DEFINED = {"voltage_source", "vcvs", "ccvs"}
UNITS = {
    "resistor": "ohm",
    "voltage_source": "V",
    "current_source": "A",
    "vcvs": "",
    "vccs": "S",
    "ccvs": "ohm",
    "cccs": "",
}


def reference(elements, nodes):
    """Exact MNA solution written here: (node voltages, element currents) or None if singular."""
    idx = {n: i for i, n in enumerate(nodes)}  # "gnd" first
    controls = {e[4] for e in elements if e[1] in ("ccvs", "cccs")}
    cur = [e[0] for e in elements if e[1] in VOLTAGE_DEFINED or e[0] in controls]
    nn = len(nodes) - 1
    col = {name: nn + k for k, name in enumerate(cur)}
    n = nn + len(cur)
    A = sympy.zeros(n, n)
    z = sympy.zeros(n, 1)

    def put(r, c, v):
        if r is not None and c is not None:
            A[r, c] += v

    def node(x):
        return None if idx[x] == 0 else idx[x] - 1

    def rhs(r, v):
        if r is not None:
            z[r] += v

    for name, t, (a, b), value, ctrl in elements:
        val = sympy.Rational(value)
        ra, rb = node(a), node(b)
        if name in col:  # current unknown: KCL terms, then the element's own row
            c = col[name]
            put(ra, c, 1)
            put(rb, c, -1)
            if t == "resistor":
                put(c, ra, 1), put(c, rb, -1), put(c, c, -val)
            elif t == "voltage_source":
                put(c, ra, 1), put(c, rb, -1), rhs(c, val)
            elif t == "current_source":
                put(c, c, 1), rhs(c, val)
            elif t == "vcvs":
                (
                    put(c, ra, 1),
                    put(c, rb, -1),
                    put(c, node(ctrl[0]), -val),
                    put(c, node(ctrl[1]), val),
                )
            elif t == "ccvs":
                put(c, ra, 1), put(c, rb, -1), put(c, col[ctrl], -val)
            elif t == "vccs":
                put(c, c, 1), put(c, node(ctrl[0]), -val), put(c, node(ctrl[1]), val)
            elif t == "cccs":
                put(c, c, 1), put(c, col[ctrl], -val)
        elif t == "resistor":
            g = 1 / val
            put(ra, ra, g), put(ra, rb, -g), put(rb, ra, -g), put(rb, rb, g)
        elif t == "current_source":
            rhs(ra, -val), rhs(rb, val)
        elif t == "vccs":
            for r, s in ((ra, 1), (rb, -1)):
                put(r, node(ctrl[0]), s * val), put(r, node(ctrl[1]), -s * val)
        elif t == "cccs":
            put(ra, col[ctrl], val), put(rb, col[ctrl], -val)
    if A.rank() < n:
        return None
    x = A.LUsolve(z)
    v = {nodes[0]: Fraction(0)}
    for k in range(1, len(nodes)):
        v[nodes[k]] = Fraction(str(x[k - 1]))
    currents = {}
    for name, t, (a, b), value, ctrl in elements:
        val = Fraction(value)
        if name in col:
            currents[name] = Fraction(str(x[col[name]]))
        elif t == "resistor":
            currents[name] = (v[a] - v[b]) / val
        elif t == "current_source":
            currents[name] = val
        elif t == "vccs":
            currents[name] = val * (v[ctrl[0]] - v[ctrl[1]])
        elif t == "cccs":
            currents[name] = val * Fraction(str(x[col[ctrl]]))
    return v, currents


@st.composite
def circuits(draw):
    k = draw(st.integers(2, 5))
    nodes = ["gnd", *(f"n{i}" for i in range(1, k + 1))]
    elements = []
    small = st.integers(1, 9)
    # a spanning tree of resistors or sources keeps most circuits connected
    for i in range(1, k + 1):
        other = nodes[draw(st.integers(0, i - 1))]
        t = draw(st.sampled_from(["resistor", "resistor", "voltage_source", "current_source"]))
        elements.append([f"T{i}", t, (nodes[i], other), f"{draw(small)}", None])
    for j in range(draw(st.integers(0, 4))):
        a, b = draw(st.sampled_from(nodes)), draw(st.sampled_from(nodes))
        if a == b:
            continue
        t = draw(st.sampled_from(list(UNITS)))
        elements.append([f"X{j}", t, (a, b), f"{draw(st.integers(-9, 9)) or 1}", None])
    names = [e[0] for e in elements]
    for e in elements:
        if e[1] in ("vcvs", "vccs"):
            c1, c2 = draw(st.sampled_from(nodes)), draw(st.sampled_from(nodes))
            if c1 == c2:
                c2 = "gnd" if c1 != "gnd" else nodes[1]
            e[4] = (c1, c2)
        elif e[1] in ("ccvs", "cccs"):
            choices = [n for n in names if n != e[0]]
            e[4] = draw(st.sampled_from(choices))
        if e[1] == "resistor" and e[3].startswith("-"):
            e[3] = e[3][1:]
    return nodes, [tuple(e) for e in elements]


def project_text(elements):
    lines = ["schema = 1"]
    for name, t, (a, b), value, ctrl in elements:
        key = "gain" if t in ("vcvs", "vccs", "ccvs", "cccs") else "value"
        unit = UNITS[t]
        text = f"{value} {unit}".strip()
        lines += [
            f"[elements.{name}]",
            f'type = "{t}"',
            f'nodes = ["{a}", "{b}"]',
            f'{key} = "{text}"',
        ]
        if isinstance(ctrl, tuple):
            lines.append(f'control = ["{ctrl[0]}", "{ctrl[1]}"]')
        elif ctrl:
            lines.append(f'control = "{ctrl}"')
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize("path", ["exact", "dense", "sparse"])
@settings(deadline=None, max_examples=60, suppress_health_check=[HealthCheck.too_slow])
@given(circuit=circuits())
def test_random_circuits_against_an_independent_solution(path, circuit):
    with pytest.MonkeyPatch.context() as mp:
        if path != "exact":
            mp.setattr(solve_mod, "EXACT_LIMIT", 0)
        if path == "sparse":
            mp.setattr(solve_mod, "DENSE_LIMIT", 0)
        _compare(circuit, path)


def _compare(circuit, path):
    nodes, elements = circuit
    used = {n for e in elements for n in e[2]}
    nodes = [n for n in nodes if n in used or n == "gnd"]
    if "gnd" not in used:
        return  # no reference node in the circuit: not a circuit calcdoc accepts
    project = calcdoc.loads(project_text(elements))
    ref = reference(elements, list(project.nodes))
    if ref is None:
        with pytest.raises(SingularCircuitError):
            calcdoc.solve(project)
        return
    r = calcdoc.solve(project).cases[0]
    assert r.solution.method.startswith(path)
    v, currents = ref
    for k, name in enumerate(r.netlist.nodes):
        assert float(r.branches.node_voltage[k]) == pytest.approx(
            float(v[name]), rel=1e-12, abs=1e-12
        )
    for j, name in enumerate(r.netlist.names):
        assert float(r.branches.current[j]) == pytest.approx(
            float(currents[name]), rel=1e-12, abs=1e-12
        )
    # Tellegen's theorem: element powers of any network sum to zero.
    p = r.branches.power
    assert abs(float(np.sum(p))) <= 1e-12 * max(1.0, float(np.max(np.abs(p))))
    # no NaN or infinity anywhere in the results object
    _finite(calcdoc.to_json(calcdoc.solve(project)))


def _finite(obj, path=""):
    if isinstance(obj, float):
        assert math.isfinite(obj), path
    elif isinstance(obj, dict):
        for k, v in obj.items():
            _finite(v, f"{path}.{k}")
    elif isinstance(obj, list):
        for k, v in enumerate(obj):
            _finite(v, f"{path}[{k}]")


def _solve(text):
    return calcdoc.solve(calcdoc.loads(text)).cases[0]


def test_ccvs_across_a_source_fixes_its_current():
    # V1 fixes V(a) = 5 V; the CCVS in parallel says V(a) = 100 Ω · I(V1), so
    # I(V1) = 50 mA; the 1 kΩ resistor takes 5 mA and the CCVS the rest (hand solution).
    r = _solve("""
[elements.V1]
type = "voltage_source"
nodes = ["a", "gnd"]
value = "5 V"
[elements.H1]
type = "ccvs"
nodes = ["a", "gnd"]
gain = "100 ohm"
control = "V1"
[elements.R1]
type = "resistor"
nodes = ["a", "gnd"]
value = "1 kohm"
""")
    assert r.branches.exact_current == (Fraction(1, 20), Fraction(-11, 200), Fraction(1, 200))


def test_self_controlled_vccs_fixes_the_node():
    # 10 mA into x and a VCCS drawing 2 mS · V(x) from x: V(x) = 5 V (hand solution).
    r = _solve("""
[elements.I1]
type = "current_source"
nodes = ["gnd", "x"]
value = "10 mA"
[elements.G1]
type = "vccs"
nodes = ["x", "gnd"]
gain = "2 mS"
control = ["x", "gnd"]
""")
    assert r.branches.exact_node_voltage[1] == 5


def test_vccs_controlled_elsewhere_leaves_a_cut_set():
    with pytest.raises(SingularCircuitError) as e:
        _solve("""
[elements.I1]
type = "current_source"
nodes = ["gnd", "x"]
value = "10 mA"
[elements.G1]
type = "vccs"
nodes = ["x", "gnd"]
gain = "2 mS"
control = ["y", "gnd"]
[elements.R1]
type = "resistor"
nodes = ["y", "gnd"]
value = "1 kohm"
""")
    assert e.value.condition == "current-source cut set" and "x" in e.value.culprits


def test_gains_that_cancel_are_named_by_their_unknowns():
    # E1 forces V(b) = 1·V(b): every voltage satisfies it, so the unknown of
    # node b (and E1's current) is not determined: a singular system found on the numbers.
    with pytest.raises(SingularCircuitError) as e:
        _solve("""
[elements.V1]
type = "voltage_source"
nodes = ["a", "gnd"]
value = "1 V"
[elements.R1]
type = "resistor"
nodes = ["a", "b"]
value = "1 kohm"
[elements.E1]
type = "vcvs"
nodes = ["b", "gnd"]
gain = "1"
control = ["b", "gnd"]
""")
    assert e.value.condition == "singular system"
    assert "the current of E1" in e.value.detail
