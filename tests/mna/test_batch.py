"""Batched solutions, tangents and adjoint gradients against the solver of the tests.

The reference is :mod:`hand_mna` (every element current an unknown), solved
by numpy for each value set; derivatives come from it by complex-step
differentiation (Squire and Trapp, SIAM Review 40, 1998: the derivative of
an analytic function f is Im f(p + i·h) / h, with no subtractive rounding),
so calcdoc's direct differentiation and adjoint solve are judged against a
different formulation and a different method.
"""

from __future__ import annotations

from dataclasses import replace
from fractions import Fraction as F

import numpy as np
import pytest
from extra_kinds import registered
from hand_mna import Part, solve_numeric
from netlists import rows_text

import calcdoc
from calcdoc.mna import batch
from calcdoc.pipeline import solve_case

ROWS = [
    ("voltage_source", Part("V1", "voltage_source", "a", "gnd", F(12)), None, {}),
    ("resistor", Part("R1", "resistor", "a", "b", F(1000)), None, {}),
    ("resistor", Part("R2", "resistor", "b", "gnd", F(2000)), None, {}),
    ("current_source", Part("I1", "current_source", "gnd", "b", F(1, 1000)), None, {}),
    ("vcvs", Part("E1", "vcvs", "c", "gnd", F(2), ("b", "gnd")), None, {}),
    ("resistor", Part("R3", "resistor", "c", "d", F(500)), None, {}),
    ("vccs", Part("G1", "vccs", "d", "gnd", F(1, 1000), ("a", "b")), None, {}),
    ("resistor", Part("R4", "resistor", "d", "gnd", F(1000)), None, {}),
    ("ccvs", Part("H1", "ccvs", "e", "gnd", F(100), "R1"), None, {}),
    ("resistor", Part("R5", "resistor", "e", "c", F(1000)), None, {}),
    ("cccs", Part("F1", "cccs", "gnd", "f", F(3), "V1"), None, {}),
    ("resistor", Part("R6", "resistor", "f", "d", F(1000)), None, {}),
    (
        "thevenin",
        Part("T1", "thevenin", "g", "gnd", F(5), r=F(50)),
        None,
        {"resistance": '"50 ohm"'},
    ),
    ("winding", Part("W1", "resistor", "g", "f", F(20)), "1", {"resistance": '"20 ohm"'}),
]


def parameter_setter(st):
    """For each calcdoc parameter (st.symbols), how it changes a hand Part."""
    out = []
    for s in st.symbols:
        if s.key == "resistance":  # a further key: the thevenin R, the winding's resistance
            out.append((s.element, "r" if s.element == "T1" else "value"))
        elif s.element == "W1":
            out.append((s.element, None))  # the winding's turns play no part at DC
        else:
            out.append((s.element, "value"))
    return out


def hand(parts, setter, p):
    """The hand solution with the parameters ``p`` (possibly complex)."""
    by = {q.name: q for q in parts}
    for (name, attr), v in zip(setter, p, strict=True):
        if attr is not None:
            by[name] = replace(by[name], **{attr: v})
    new = [by[q.name] for q in parts]
    ans = solve_numeric(new)
    volt = np.array([ans.v[q.a] - ans.v[q.b] for q in new])
    cur = np.array([ans.i[q.name] for q in new])
    return ans.v, volt, cur, volt * cur


@pytest.fixture
def circuit():
    with registered():
        r = solve_case(calcdoc.loads(rows_text(ROWS)))
        st = batch.patterns(r.netlist)
        yield r, st, parameter_setter(st), [q for _, q, _, _ in ROWS]


@pytest.mark.parametrize(
    "path",
    [
        "dense",
        "dense in chunks",
        "dense with sparse placement maps",  # SMALL_MAP 0: the maps of large systems
        "sparse in chunks of three",
        "sparse in chunks of two",  # SuperLU takes contiguous rows only (fixed in batch.py)
    ],
)
def test_batches_of_value_sets_against_the_hand_solution(monkeypatch, circuit, path):
    r, st, setter, parts = circuit
    if path == "dense in chunks":
        monkeypatch.setattr(batch, "BATCH_ENTRIES", 1)  # one value set per chunk
    if path.endswith("maps"):
        monkeypatch.setattr(batch, "SMALL_MAP", 0)
    if path.startswith("sparse"):
        monkeypatch.setattr(batch, "DENSE_UNKNOWNS", 0)
        monkeypatch.setattr(batch, "SPARSE_CHUNK", 3 if path.endswith("three") else 2)
    rng = np.random.default_rng(11)
    P = rng.uniform(0.5, 1.5, (6, st.P)) * st.p_float
    b = batch.solve_batch(st, P)
    nodes = r.netlist.nodes
    for k in range(len(P)):
        v, volt, cur, power = hand(parts, setter, P[k])
        want_nodes = [v[nd].real for nd in nodes]
        np.testing.assert_allclose(b.node_voltage[k], want_nodes, rtol=1e-10, atol=1e-12)
        np.testing.assert_allclose(b.voltage[k], volt.real, rtol=1e-10, atol=1e-12)
        np.testing.assert_allclose(b.current[k], cur.real, rtol=1e-10, atol=1e-15)
        np.testing.assert_allclose(b.power[k], power.real, rtol=1e-10, atol=1e-15)
        for j in (0, 6, 10):
            assert b.output("current", j)[k] == b.current[k, j]
            assert b.output("power", j)[k] == b.power[k, j]
        assert b.output("node", 3)[k] == b.node_voltage[k, 3]
    assert batch.solve_x(st, np.zeros((0, st.P))).shape == (0, st.n)  # no value sets


def test_a_batch_of_one_unknown():
    # 2 mA into 1 kΩ ‖ its value set (Ohm's law): V = I·R for each R.
    r = solve_case(
        calcdoc.loads(
            '[elements.I1]\ntype = "current_source"\nnodes = ["gnd", "a"]\nvalue = "2 mA"\n'
            '[elements.R1]\ntype = "resistor"\nnodes = ["a", "gnd"]\nvalue = "1 kohm"\n'
        )
    )
    st = batch.patterns(r.netlist)
    b = batch.solve_batch(st, np.array([[0.002, 1000.0], [0.004, 500.0], [0.001, 3000.0]]))
    np.testing.assert_allclose(b.node_voltage[:, 1], [2.0, 2.0, 3.0], rtol=1e-15)


def complex_step(parts, setter, p, k, h=1e-30):
    dp = np.zeros(len(p), dtype=complex)
    dp[k] = 1j * h
    v, volt, cur, power = hand(parts, setter, p + dp)
    return ({n: x.imag / h for n, x in v.items()}, volt.imag / h, cur.imag / h, power.imag / h)


@pytest.mark.parametrize("small_map", [batch.SMALL_MAP, 0])  # dense or sparse jacobian map
def test_tangents_along_every_parameter(monkeypatch, circuit, small_map):
    monkeypatch.setattr(batch, "SMALL_MAP", small_map)
    r, st, setter, parts = circuit
    p = st.p_float
    x = r.solution.x
    t = batch.tangents(st, p, x, np.eye(st.P))
    for k in range(st.P):
        v, volt, cur, power = complex_step(parts, setter, p, k)
        want_nodes = [v[nd] for nd in r.netlist.nodes]
        scale = 1 / abs(p[k])  # outputs per unit of a parameter of size p
        np.testing.assert_allclose(t.node_voltage[k], want_nodes, rtol=1e-9, atol=1e-12 * scale)
        np.testing.assert_allclose(t.voltage[k], volt, rtol=1e-9, atol=1e-12 * scale)
        np.testing.assert_allclose(t.current[k], cur, rtol=1e-9, atol=1e-15 * scale)
        np.testing.assert_allclose(t.power[k], power, rtol=1e-9, atol=1e-15 * scale)


@pytest.mark.parametrize("kind", ["node", "voltage", "current", "power"])
def test_adjoint_gradients_of_every_output(circuit, kind):
    r, st, setter, parts = circuit
    p = st.p_float
    x = r.solution.x
    steps = [complex_step(parts, setter, p, k) for k in range(st.P)]
    count = len(r.netlist.nodes) if kind == "node" else len(parts)
    for idx in range(count):
        y, gx, gp = batch.output_gradient(st, p, x, kind, idx)
        grad = batch.adjoint(st, p, x, gx, gp)  # its own factor and jacobian
        if kind == "node":
            node = r.netlist.nodes[idx]
            assert y == pytest.approx(float(r.branches.node_voltage[idx]), rel=1e-12, abs=1e-15)
            want = [s[0][node] for s in steps]
        else:
            quantity = {"voltage": 1, "current": 2, "power": 3}[kind]
            assert y == pytest.approx(float(getattr(r.branches, kind)[idx]), rel=1e-12, abs=1e-18)
            want = [s[quantity][idx] for s in steps]
        np.testing.assert_allclose(grad, want, rtol=1e-8, atol=1e-13 / np.abs(p).min())
