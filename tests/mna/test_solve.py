"""The MNA solution against closed forms, hand solutions and invariants."""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import calcdoc
from calcdoc.mna import solve as solve_mod
from calcdoc.mna.formulation import formulation, stamps
from calcdoc.mna.symbolic import closed_form


def node_v(result, name):
    return float(result.branches.node_voltage[result.netlist.nodes.index(name)])


def current(result, name):
    return float(result.branches.current[result.netlist.index(name)])


def nominal(make_project, elements, **kw):
    return calcdoc.solve(make_project(elements, **kw)).cases[0]


def test_unbalanced_bridge_thevenin(make_project):
    # Thevenin's theorem (any circuit-theory text): the current in the bridge
    # arm R5 is Vth / (Rth + R5) with Vth the open-arm voltage and Rth the
    # resistance seen from the arm with the source shorted.
    vs, r1, r2, r3, r4, r5 = 10, 1000, 2000, 3000, 4000, 500
    r = nominal(
        make_project,
        [
            ("V1", "voltage_source", ("a", "gnd"), f"{vs} V"),
            ("R1", "resistor", ("a", "x"), f"{r1} ohm"),
            ("R2", "resistor", ("x", "gnd"), f"{r2} ohm"),
            ("R3", "resistor", ("a", "y"), f"{r3} ohm"),
            ("R4", "resistor", ("y", "gnd"), f"{r4} ohm"),
            ("R5", "resistor", ("x", "y"), f"{r5} ohm"),
        ],
    )
    vth = Fraction(vs * r2, r1 + r2) - Fraction(vs * r4, r3 + r4)
    rth = Fraction(r1 * r2, r1 + r2) + Fraction(r3 * r4, r3 + r4)
    i5 = vth / (rth + r5)
    exact = r.branches.exact_current[r.netlist.index("R5")]
    assert exact == i5  # exact rational arithmetic: equal, not approximately


@pytest.mark.parametrize("stages", [1, 3, 6])
def test_r2r_ladder_halves_each_stage(make_project, stages):
    # R-2R ladder with series R, shunts 2R and a 2R termination: looking into
    # each node, 2R || 2R = R, so every node is half the previous one
    # (common practice, no source).
    els = [("V1", "voltage_source", ("n0", "gnd"), "8 V")]
    for k in range(stages):
        els.append((f"Rs{k}", "resistor", (f"n{k}", f"n{k + 1}"), "10 kohm"))
        els.append((f"Rp{k}", "resistor", (f"n{k + 1}", "gnd"), "20 kohm"))
    els.append(("Rt", "resistor", (f"n{stages}", "gnd"), "20 kohm"))
    r = nominal(make_project, els)
    for k in range(stages + 1):
        assert r.branches.exact_node_voltage[r.netlist.nodes.index(f"n{k}")] == Fraction(8, 2**k)


def test_vcvs_non_inverting_amplifier(make_project):
    # Hand solution: Vout = A (Vin - Vout Rg/(Rf+Rg))  =>  Vout = A Vin / (1 + A Rg/(Rf+Rg)).
    a, vin, rf, rg = 1000, Fraction(1, 10), 9000, 1000
    r = nominal(
        make_project,
        [
            ("Vin", "voltage_source", ("p", "gnd"), "0.1 V"),
            ("E1", "vcvs", ("out", "gnd"), f"{a}", {"control": '["p", "n"]'}),
            ("Rf", "resistor", ("out", "n"), f"{rf} ohm"),
            ("Rg", "resistor", ("n", "gnd"), f"{rg} ohm"),
        ],
    )
    beta = Fraction(rg, rf + rg)
    assert r.branches.exact_node_voltage[r.netlist.nodes.index("out")] == a * vin / (1 + a * beta)


def test_vccs_into_load(make_project):
    # Hand solution: the VCCS draws g*Vc from node out to gnd, so V(out) = -g Vc RL.
    r = nominal(
        make_project,
        [
            ("Vc", "voltage_source", ("c", "gnd"), "2 V"),
            ("Rc", "resistor", ("c", "gnd"), "1 kohm"),
            ("G1", "vccs", ("out", "gnd"), "5 mS", {"control": '["c", "gnd"]'}),
            ("RL", "resistor", ("out", "gnd"), "200 ohm"),
        ],
    )
    assert node_v(r, "out") == pytest.approx(-0.005 * 2 * 200)
    assert current(r, "G1") == pytest.approx(0.01)


def test_ccvs_and_cccs(make_project):
    # Hand solution: I(Rsense) = 5 V / 1 kΩ = 5 mA.
    # CCVS H1: V(h) = 100 Ω x 5 mA = 0.5 V.  CCCS F1 drives 3 x 5 mA from gnd
    # into node f, so V(f) = 15 mA x 100 Ω = 1.5 V.
    r = nominal(
        make_project,
        [
            ("V1", "voltage_source", ("a", "gnd"), "5 V"),
            ("Rsense", "resistor", ("a", "gnd"), "1 kohm"),
            ("H1", "ccvs", ("h", "gnd"), "100 ohm", {"control": '"Rsense"'}),
            ("Rh", "resistor", ("h", "gnd"), "1 kohm"),
            ("F1", "cccs", ("gnd", "f"), "3", {"control": '"Rsense"'}),
            ("Rf", "resistor", ("f", "gnd"), "100 ohm"),
        ],
    )
    assert r.branches.exact_node_voltage[r.netlist.nodes.index("h")] == Fraction(1, 2)
    assert r.branches.exact_node_voltage[r.netlist.nodes.index("f")] == Fraction(3, 2)


def test_current_source_convention(make_project):
    # design.md: a current source drives `value` from its first node to its second.
    r = nominal(
        make_project,
        [
            ("I1", "current_source", ("gnd", "a"), "2 mA"),
            ("R1", "resistor", ("a", "gnd"), "1 kohm"),
        ],
    )
    assert node_v(r, "a") == pytest.approx(2.0)
    assert current(r, "I1") == pytest.approx(0.002)
    assert float(r.branches.power[r.netlist.index("I1")]) == pytest.approx(-0.004)  # delivers


def test_closed_form_matches_numeric(make_project):
    p = make_project(
        [
            ("V1", "voltage_source", ("in", "gnd"), "10 V"),
            ("R1", "resistor", ("in", "out"), "1 kohm"),
            ("R2", "resistor", ("out", "gnd"), "3 kohm"),
        ]
    )
    r = calcdoc.solve(p).cases[0]
    cf = closed_form(r.solution.formulation, r.values)
    assert cf.text[cf.unknowns.index("V(out)")] == "R2*V1/(R1 + R2)"  # the divider rule
    np.testing.assert_allclose(cf.values, r.solution.x, rtol=1e-12)


# ------------------------------------------------------------ random networks


@st.composite
def networks(draw):
    """A connected random network: resistors, a voltage source, a current source."""
    n = draw(st.integers(3, 9))
    nodes = ["gnd"] + [f"n{i}" for i in range(1, n)]
    els = []
    for i in range(1, n):  # spanning chain keeps it connected
        j = draw(st.integers(0, i - 1))
        els.append((f"T{i}", "resistor", (nodes[i], nodes[j]), f"{draw(st.integers(1, 999))} ohm"))
    for k in range(draw(st.integers(0, 8))):
        a, b = draw(st.sampled_from(nodes)), draw(st.sampled_from(nodes))
        if a != b:
            els.append((f"X{k}", "resistor", (a, b), f"{draw(st.integers(1, 999))} ohm"))
    els.append(("V1", "voltage_source", (nodes[1], "gnd"), f"{draw(st.integers(-20, 20))} V"))
    a, b = draw(st.sampled_from(nodes[1:])), draw(st.sampled_from(nodes))
    if a != b:
        els.append(("I1", "current_source", (a, b), f"{draw(st.integers(-50, 50))} mA"))
    return els


@settings(deadline=None, max_examples=60)
@given(networks())
def test_invariants_on_random_networks(els):
    from netlists import project_text

    r = calcdoc.solve(calcdoc.loads(project_text(els))).cases[0]
    br = r.branches
    scale = max(1.0, float(np.max(np.abs(br.power))))
    # Tellegen's theorem: the element powers of any network sum to zero.
    assert abs(float(np.sum(br.power))) <= 1e-12 * scale
    assert r.ledger.imbalance == 0.0  # exact path
    assert float(np.max(np.abs(r.kcl))) <= 1e-12
    assert r.kvl.max_abs_sum <= 1e-9
    # The three solution paths agree with each other.
    A_q, z_q = r.solution.formulation.matrix(r.values)
    rows, cols, vals, z = stamps(r.netlist)
    n = len(z)
    A = np.zeros((n, n))
    np.add.at(A, (rows, cols), vals)
    np.testing.assert_allclose(A, np.array([[float(v) for v in row] for row in A_q]), atol=1e-15)
    np.testing.assert_allclose(z, [float(v) for v in z_q], atol=1e-15)


@settings(deadline=None, max_examples=40)
@given(networks(), st.integers(1, 8), st.integers(1, 8))
def test_reciprocity(els, i, j):
    # Reciprocity theorem for resistor networks: the transfer resistance from
    # a current injected at node i to the voltage at node j equals that from j to i.
    from netlists import project_text

    res = [e for e in els if e[1] == "resistor"]
    nodes = sorted({n for e in res for n in e[2]} - {"gnd"})
    ni, nj = nodes[(i - 1) % len(nodes)], nodes[(j - 1) % len(nodes)]

    def transfer(src, obs):
        p = calcdoc.loads(project_text([*res, ("Iinj", "current_source", ("gnd", src), "1 A")]))
        r = calcdoc.solve(p).cases[0]
        return float(r.branches.node_voltage[r.netlist.nodes.index(obs)])

    assert transfer(ni, nj) == pytest.approx(transfer(nj, ni), rel=1e-9, abs=1e-12)


@pytest.mark.parametrize("path", ["exact", "dense", "sparse"])
def test_solution_paths_agree(monkeypatch, make_project, path):
    els = [
        ("V1", "voltage_source", ("n0", "gnd"), "12 V"),
        ("E1", "vcvs", ("o", "gnd"), "3", {"control": '["n2", "gnd"]'}),
        ("Ro", "resistor", ("o", "gnd"), "1 kohm"),
    ]
    for k in range(6):
        els.append((f"R{k}", "resistor", (f"n{k}", f"n{k + 1}"), f"{100 * (k + 1)} ohm"))
        els.append((f"S{k}", "resistor", (f"n{k + 1}", "gnd"), f"{1000 + 10 * k} ohm"))
    ref = nominal(make_project, els)
    if path == "dense":
        monkeypatch.setattr(solve_mod, "EXACT_LIMIT", 0)
    if path == "sparse":
        monkeypatch.setattr(solve_mod, "EXACT_LIMIT", 0)
        monkeypatch.setattr(solve_mod, "DENSE_LIMIT", 0)
    r = nominal(make_project, els)
    assert r.solution.method.startswith(path if path != "exact" else "exact")
    np.testing.assert_allclose(r.branches.node_voltage, ref.branches.node_voltage, rtol=1e-12)
    if path == "exact":  # exact arithmetic has no rounding: no residual, no condition number
        assert r.solution.residual is None and r.solution.condition is None
    else:
        assert r.solution.residual < 1e-15
        assert r.solution.condition > 1 and r.solution.error_estimate < 1e-14


def test_formulation_lists_every_equation(make_project):
    r = nominal(
        make_project,
        [
            ("V1", "voltage_source", ("in", "gnd"), "10 V"),
            ("R1", "resistor", ("in", "out"), "1 kohm"),
            ("R2", "resistor", ("out", "gnd"), "1 kohm"),
        ],
    )
    eqs = formulation(r.netlist).equations
    assert [e.title for e in eqs] == ["KCL at node in", "KCL at node out", "Branch equation of V1"]
    assert eqs[2].text(r.values) == "V(in) = 10"


def test_ill_conditioned_system_is_solved_exactly_or_refined(make_project, monkeypatch):
    # Two nodes joined by 1 mΩ, each with 100 GΩ to ground: the nodal
    # conductance matrix has eigenvalues about 2e3 and 2e-11 S, so its
    # condition number is about 1e14 (linear algebra, common practice).
    r = nominal(
        make_project,
        [
            ("I1", "current_source", ("gnd", "a"), "1 nA"),
            ("R1", "resistor", ("a", "b"), "1 mohm"),
            ("R2", "resistor", ("b", "gnd"), "100 Gohm"),
            ("R3", "resistor", ("a", "gnd"), "100 Gohm"),
        ],
    )
    # exact arithmetic gives the exact answer, with no rounding to warn about:
    # 1 nA into (R3 || (R1 + R2))
    r3, r12 = Fraction(10**11), Fraction(10**11) + Fraction(1, 1000)
    exact = Fraction(1, 10**9) * r3 * r12 / (r3 + r12)
    assert r.branches.exact_node_voltage[1] == exact
    assert r.solution.warnings == ()
    # in floating point the equilibrated, refined solve agrees to rounding
    monkeypatch.setattr(solve_mod, "EXACT_LIMIT", 0)
    f = nominal(
        make_project,
        [
            ("I1", "current_source", ("gnd", "a"), "1 nA"),
            ("R1", "resistor", ("a", "b"), "1 mohm"),
            ("R2", "resistor", ("b", "gnd"), "100 Gohm"),
            ("R3", "resistor", ("a", "gnd"), "100 Gohm"),
        ],
    )
    assert f.solution.method == "dense LU"
    assert float(f.branches.node_voltage[1]) == pytest.approx(float(exact), rel=1e-15)
    assert f.solution.error_estimate < 1e-14 and f.solution.warnings == ()


def test_a_netlist_with_nothing_to_solve():
    # Built through the Python API (a project file refuses an element with both
    # terminals on one node): the reference is the only node and the resistor carries
    # no current unknown, so there are no unknowns.  Nothing to solve means no residual,
    # no error, no refinement step, and the condition of the empty system is 1, the
    # least a condition number can be (common practice, no source).
    from calcdoc.results import Netlist

    net = Netlist(("gnd",), ("R1",), ("resistor",), np.array([0]), np.array([0]), (1000.5,), {}, {})
    s = solve_mod.solve(net)
    assert s.method == "dense LU" and s.x.shape == (0,)
    assert (s.residual, s.condition, s.error_estimate, s.refinement_steps) == (0.0, 1.0, 0.0, 0)
    assert s.warnings == ()


def _ladder(nodes: int) -> str:
    """A 1 V source on n1 and a resistor ladder n1 … n<nodes>, each node also to gnd."""
    out = ['[elements.V1]\ntype = "voltage_source"\nnodes = ["n1", "gnd"]\nvalue = "1 V"\n']
    for i in range(1, nodes + 1):
        out.append(f'[elements.G{i}]\ntype = "resistor"\nnodes = ["n{i}", "gnd"]\nvalue = "2k"\n')
        if i < nodes:
            out.append(
                f'[elements.S{i}]\ntype = "resistor"\nnodes = ["n{i}", "n{i + 1}"]\nvalue = "1k"\n'
            )
    return "".join(out)


@pytest.mark.parametrize(
    ("unknowns", "method"),
    [(40, "exact rational"), (41, "dense LU"), (400, "dense LU"), (401, "sparse LU")],
)
def test_the_method_limits_the_readme_states(unknowns, method):
    # README, "How it solves": exact up to 40 unknowns, dense LU up to 400, sparse above.
    # The ladder has one unknown per node besides gnd and one for the source current.
    case = calcdoc.solve(calcdoc.loads(_ladder(unknowns - 1))).cases[0]
    assert case.solution.method == method
    assert len(case.solution.x) == unknowns
    # the first node is held at the source voltage whatever the method (by hand: V1 = 1 V)
    assert case.branches.node_voltage[1] == pytest.approx(1.0, rel=1e-12)
