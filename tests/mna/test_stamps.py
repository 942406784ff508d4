"""The stamps of every element kind against a solver written in the tests.

The reference is :mod:`hand_mna` (every element current an unknown, exact
fractions, written from the element definitions of design.md section 3),
so the solution of calcdoc's modified nodal system is judged against a
different formulation.  Besides the shipped kinds, the test-only kinds of
:mod:`extra_kinds` exercise the element table's optional keys, further
number keys and states.  Each circuit is solved on the exact, dense and
sparse paths.
"""

from __future__ import annotations

from dataclasses import replace
from fractions import Fraction as F

import numpy as np
import pytest
from extra_kinds import registered
from hand_mna import Part
from hand_mna import solve as hand_solve
from netlists import rows_text as toml

import calcdoc
from calcdoc.mna import solve as solve_mod
from calcdoc.mna.branches import branches
from calcdoc.pipeline import solve_case

# Every kind once, dependent sources controlled by voltages and by the
# currents of a resistor, a voltage source, a current source and a VCCS;
# test-only kinds with their optional keys given, zero and left out, and a
# contact in each state.
EVERY_KIND = [
    ("voltage_source", Part("V1", "voltage_source", "a", "gnd", F(12)), None, {}),
    ("resistor", Part("R1", "resistor", "a", "b", F(1000)), None, {}),
    ("resistor", Part("R2", "resistor", "b", "gnd", F(2000)), None, {}),
    ("current_source", Part("I1", "current_source", "gnd", "b", F(1, 1000)), None, {}),
    ("vcvs", Part("E1", "vcvs", "c", "gnd", F(2), ("b", "gnd")), None, {}),
    ("resistor", Part("R3", "resistor", "c", "d", F(500)), None, {}),
    ("vccs", Part("G1", "vccs", "d", "gnd", F(1, 1000), ("a", "b")), None, {}),
    ("resistor", Part("R4", "resistor", "d", "gnd", F(1000)), None, {}),
    ("ccvs", Part("H1", "ccvs", "e", "gnd", F(100), "R1"), None, {}),
    ("resistor", Part("R5", "resistor", "e", "gnd", F(1000)), None, {}),
    ("cccs", Part("F1", "cccs", "gnd", "f", F(3), "V1"), None, {}),
    ("resistor", Part("R6", "resistor", "f", "gnd", F(1000)), None, {}),
    ("ccvs", Part("H2", "ccvs", "g", "f", F(-50), "I1"), None, {}),
    ("resistor", Part("R7", "resistor", "g", "gnd", F(250)), None, {}),
    ("cccs", Part("F2", "cccs", "d", "g", F(1, 2), "G1"), None, {}),
    (
        "thevenin",
        Part("T1", "thevenin", "h", "gnd", F(5), r=F(50)),
        None,
        {"resistance": '"50 ohm"'},
    ),
    ("resistor", Part("R8", "resistor", "h", "a", F(1000)), None, {}),
    ("thevenin", Part("T2", "thevenin", "k", "b", F(3)), None, {}),
    ("resistor", Part("R9", "resistor", "k", "gnd", F(100)), None, {}),
    ("contact", Part("K1", "resistor", "a", "m", F(10)), None, {"state": '"closed"'}),
    ("resistor", Part("R10", "resistor", "m", "gnd", F(1000)), None, {}),
    ("contact", Part("K2", "open", "m", "n"), "10 ohm", {"state": '"open"'}),
    ("resistor", Part("R11", "resistor", "n", "f", F(1000)), None, {}),
    ("winding", Part("W1", "resistor", "m", "p", F(2)), "1", {"resistance": '"2 ohm"'}),
    ("winding", Part("W2", "short", "p", "q"), "1", {}),
    ("winding", Part("W3", "short", "q", "s"), "1", {"resistance": '"0 ohm"'}),
    ("resistor", Part("R12", "resistor", "s", "gnd", F(3000)), None, {}),
]


def solved(rows, path="exact", monkeypatch=None):
    if path != "exact":
        monkeypatch.setattr(solve_mod, "EXACT_LIMIT", 0)
    if path == "sparse":
        monkeypatch.setattr(solve_mod, "DENSE_LIMIT", 0)
    return solve_case(calcdoc.loads(toml(rows)))


@pytest.mark.parametrize("path", ["exact", "dense", "sparse"])
def test_every_kind_against_the_hand_solution(monkeypatch, path):
    with registered():
        r = solved(EVERY_KIND, path, monkeypatch)
    parts = [p for _, p, _, _ in EVERY_KIND]
    ref = hand_solve(parts)
    assert r.solution.method.startswith(path)
    br, net = r.branches, r.netlist
    for k, node in enumerate(net.nodes):
        assert br.node_voltage[k] == pytest.approx(float(ref.v[node]), rel=1e-12, abs=1e-14)
    for j, p in enumerate(parts):
        assert net.names[j] == p.name
        want = (ref.voltage(p), ref.i[p.name], ref.power(p))
        got = (br.voltage[j], br.current[j], br.power[j])
        assert got == pytest.approx([float(w) for w in want], rel=1e-12, abs=1e-15), p.name
        # at the solution each element's own law gives its voltage
        assert br.law_voltage[j] == pytest.approx(float(ref.voltage(p)), rel=1e-12, abs=1e-14)
    if path == "exact":
        assert br.exact_current == tuple(ref.i[p.name] for p in parts)
        assert br.exact_node_voltage == tuple(ref.v[n] for n in net.nodes)
        assert br.exact_law_voltage == tuple(ref.voltage(p) for p in parts)
    # the consistency proofs: KCL at every node, KVL round every loop, Tellegen
    assert np.max(np.abs(r.kcl)) <= 1e-15
    assert r.kvl.max_abs_sum <= 1e-12
    assert r.kvl.count == len(parts) - len(net.nodes) + 1  # cyclomatic number
    absorbed = sum(float(ref.power(p)) for p in parts if ref.power(p) > 0)
    assert r.ledger.absorbed == pytest.approx(absorbed, rel=1e-12, abs=0)
    assert r.ledger.delivered == pytest.approx(absorbed, rel=1e-12, abs=0)
    assert abs(r.ledger.imbalance) <= 1e-14


def test_law_voltages_and_currents_off_the_solution():
    # Evaluated at an arbitrary vector of unknowns (not a solution), each
    # element's current and own-law voltage follow its definition (design.md
    # section 3 and the Branches documentation), written out here per kind.
    with registered():
        r = solved(EVERY_KIND)
        rng = np.random.default_rng(7)
        x = rng.uniform(-5, 5, len(r.solution.unknowns))
        br = branches(r.netlist, replace(r.solution, x=x, exact=None))
    unknown = dict(zip(r.solution.unknowns, x.tolist(), strict=True))
    volt = {"gnd": 0.0, **{u[2:-1]: v for u, v in unknown.items() if u.startswith("V(")}}
    cur = {u[2:-1]: v for u, v in unknown.items() if u.startswith("I(")}
    # the elements whose current is an unknown: sources fixing a voltage, the
    # controlling elements, the zero-ohm winding and the winding without resistance
    assert set(cur) == {"V1", "E1", "H1", "H2", "T1", "T2", "W2", "W3", "R1", "I1", "G1"}
    for j, (etype, p, _, _) in enumerate(EVERY_KIND):
        v = volt[p.a] - volt[p.b]
        u = (volt[p.control[0]] - volt[p.control[1]]) if isinstance(p.control, tuple) else None
        ic = cur.get(p.control) if isinstance(p.control, str) else None
        value = float(p.value)
        if p.name in cur:
            i = cur[p.name]
        elif etype in ("resistor", "contact", "winding") and p.kind == "resistor":
            i = v / value
        elif etype == "current_source":
            i = value
        elif etype == "vccs":
            i = value * u
        elif etype == "cccs":
            i = value * ic
        else:  # the open contact
            i = 0.0
        law = {
            "voltage_source": value,
            "vcvs": value * u if u is not None else None,
            "ccvs": value * ic if ic is not None else None,
            "thevenin": value + float(p.r) * i,
        }.get(etype, v)
        if etype == "resistor" and p.name in cur:
            law = value * i  # a resistor with its own current unknown: R·I
        if p.kind == "short":
            law = 0.0  # winding without (or with zero) resistance: V = 0
        assert br.current[j] == pytest.approx(i, rel=1e-13, abs=1e-15), p.name
        assert br.law_voltage[j] == pytest.approx(law, rel=1e-13, abs=1e-15), p.name
        assert br.voltage[j] == pytest.approx(v, rel=1e-13, abs=1e-15)
        assert br.power[j] == pytest.approx(v * i, rel=1e-12, abs=1e-15)


@pytest.mark.parametrize("path", ["exact", "dense", "sparse"])
def test_a_network_without_sources_rests_at_zero(monkeypatch, path):
    # No source, no current and no voltage (common practice, no source): the
    # right-hand side is empty, and so is every result.
    r = solved(
        [
            ("resistor", Part("R1", "resistor", "a", "b", F(1000)), None, {}),
            ("resistor", Part("R2", "resistor", "b", "gnd", F(2000)), None, {}),
            ("resistor", Part("R3", "resistor", "a", "gnd", F(3000)), None, {}),
        ],
        path,
        monkeypatch,
    )
    assert not np.any(r.solution.x) and not np.any(r.branches.power)
    assert r.ledger.absorbed == r.ledger.delivered == 0.0
    if path != "exact":
        # relative residual 0/0 of a zero solution of a zero right-hand side: reported as 0
        assert r.solution.residual == 0.0 and r.solution.error_estimate == 0.0
        assert r.solution.warnings == ()
