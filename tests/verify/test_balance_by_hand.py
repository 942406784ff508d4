"""KCL sums, fundamental loops and the power ledger, worked out by hand.

The loops are those of a breadth-first spanning tree grown from the
reference (the module's documented choice); which elements form the tree,
the chords, and each loop's elements and directions are derived here for
small circuits, and the sums and powers come from Ohm's law (common
practice, no source) or from the tests' own solver (:mod:`hand_mna`).
"""

from __future__ import annotations

from dataclasses import replace
from fractions import Fraction

import numpy as np
import pytest
from netlists import project_text

import calcdoc
from calcdoc.mna import solve as solve_mod
from calcdoc.pipeline import solve_case
from calcdoc.verify import balance


def case(elements, monkeypatch=None, **limits):
    for name, value in limits.items():
        monkeypatch.setattr(solve_mod if name == "EXACT_LIMIT" else balance, name, value)
    return solve_case(calcdoc.loads(project_text(elements)))


DIVIDER = [
    ("V1", "voltage_source", ("a", "gnd"), "10 V"),
    ("R1", "resistor", ("a", "b"), "1 kohm"),
    ("R2", "resistor", ("b", "gnd"), "3 kohm"),
]


@pytest.mark.parametrize("exact", [True, False])
def test_kcl_sums_of_given_currents(exact):
    # Currents (not a solution) of −3, 2 and 5 A in V1 (a→gnd), R1 (a→b),
    # R2 (b→gnd); the sum leaving each node, by hand:
    # gnd: +3 − 5 = −2; a: −3 + 2 = −1; b: −2 + 5 = 3.
    r = case(DIVIDER)
    given = [Fraction(-3), Fraction(2), Fraction(5)]
    br = replace(
        r.branches,
        current=np.array([float(i) for i in given]),
        exact_current=tuple(given) if exact else None,
    )
    assert balance.kcl_residuals(r.netlist, br).tolist() == [-2.0, -1.0, 3.0]


# A wheel: rim nodes n1…n4 round the reference, one spoke to each.
WHEEL = [
    ("S1", "voltage_source", ("n1", "gnd"), "4 V"),
    ("S2", "resistor", ("gnd", "n2"), "1 kohm"),
    ("S3", "resistor", ("gnd", "n3"), "2 kohm"),
    ("S4", "current_source", ("gnd", "n4"), "1 mA"),
    ("Q1", "resistor", ("n1", "n2"), "1 kohm"),
    ("Q2", "resistor", ("n3", "n2"), "2 kohm"),
    ("Q3", "resistor", ("n3", "n4"), "1 kohm"),
    ("Q4", "resistor", ("n4", "n1"), "500 ohm"),
]
# Grown from the reference, the breadth-first tree is the four spokes; the
# rim elements close the loops. Each loop: the chord from its node a to its
# node b, then back through the spoke of b (up to gnd) and the spoke of a
# (down to a); +1 where the loop runs from an element's node a to its node b.
WHEEL_LOOPS = {
    "Q1": (("Q1", "S2", "S1"), (1, -1, -1)),
    "Q2": (("Q2", "S2", "S3"), (1, -1, 1)),
    "Q3": (("Q3", "S4", "S3"), (1, -1, 1)),
    "Q4": (("Q4", "S1", "S4"), (1, 1, 1)),
}


@pytest.mark.parametrize("tree", ["plain", "scipy"])
@pytest.mark.parametrize("exact", [True, False])
def test_the_loops_of_a_wheel(monkeypatch, tree, exact):
    limits = ({} if tree == "plain" else {"SMALL": 0}) | ({} if exact else {"EXACT_LIMIT": 0})
    r = case(WHEEL, monkeypatch, **limits)
    kvl = r.kvl
    assert kvl.listed and kvl.count == 4  # 8 elements − 5 nodes + 1
    assert {lp.chord: (lp.elements, lp.signs) for lp in kvl.loops} == WHEEL_LOOPS
    names = r.netlist.names
    for lp in kvl.loops:
        law = [float(r.branches.law_voltage[names.index(e)]) for e in lp.elements]
        assert lp.terms == tuple(s * v for s, v in zip(lp.signs, law, strict=True))
        assert abs(lp.sum) <= 1e-15
    # the same loops reported by their chords only, above the listing limit
    monkeypatch.setattr(balance, "LOOP_LISTING_LIMIT", 7)
    summary = balance.kvl_loops(r.netlist, r.branches)
    assert not summary.listed and summary.loops == ()
    assert summary.chords == ("Q1", "Q2", "Q3", "Q4")
    assert summary.max_abs_sum <= 1e-15 and len(summary.sums) == 4
    # the documented limit is inclusive: 8 elements are still listed at 8
    monkeypatch.setattr(balance, "LOOP_LISTING_LIMIT", 8)
    assert balance.kvl_loops(r.netlist, r.branches).listed


def test_summary_sums_follow_a_wrong_law_voltage(monkeypatch):
    # Put 1 V on the chord Q3's law voltage: its loop, and only its loop, sums to 1 V.
    r = case(WHEEL)
    law = r.branches.law_voltage.copy()
    law[r.netlist.names.index("Q3")] += 1.0
    bad = replace(r.branches, law_voltage=law, exact_law_voltage=None)
    monkeypatch.setattr(balance, "LOOP_LISTING_LIMIT", 0)
    summary = balance.kvl_loops(r.netlist, bad)
    assert np.abs(summary.sums).round(12).tolist() == [0.0, 0.0, 1.0, 0.0]
    assert summary.max_abs_sum == pytest.approx(1.0, rel=1e-12, abs=0)


def test_loops_through_parallel_elements_below_the_root():
    # gnd–a by V1 and gnd–c by R5 (depth 1); b below a by R1 (the first of
    # the parallel pair R1, R2). Chords: R2 (parallel to its tree element),
    # R3 and R4 (b to c). Each loop is a simple cycle, worked out by hand.
    r = case(
        [
            ("V1", "voltage_source", ("a", "gnd"), "6 V"),
            ("R1", "resistor", ("a", "b"), "1 kohm"),
            ("R2", "resistor", ("a", "b"), "2 kohm"),
            ("R3", "resistor", ("b", "c"), "1 kohm"),
            ("R4", "resistor", ("b", "c"), "3 kohm"),
            ("R5", "resistor", ("c", "gnd"), "1 kohm"),
        ]
    )
    loops = {lp.chord: (lp.elements, lp.signs) for lp in r.kvl.loops}
    assert loops == {
        "R2": (("R2", "R1"), (1, -1)),
        "R3": (("R3", "R5", "V1", "R1"), (1, 1, -1, 1)),
        "R4": (("R4", "R5", "V1", "R1"), (1, 1, -1, 1)),
    }
    assert r.kvl.max_abs_sum == 0.0  # exact sums


@pytest.mark.parametrize("listing", [3000, 0])
def test_a_circuit_without_loops(monkeypatch, listing):
    monkeypatch.setattr(balance, "LOOP_LISTING_LIMIT", listing)
    r = case(
        [("V1", "voltage_source", ("a", "gnd"), "1 V"), ("R1", "resistor", ("a", "b"), "1 kohm")]
    )
    assert r.kvl.count == 0 and r.kvl.max_abs_sum == 0.0


@pytest.mark.parametrize("exact", [True, False])
def test_ledger_of_a_divider(monkeypatch, exact):
    # 10 V across 1 kΩ + 3 kΩ: I = 2.5 mA, P(R1) = 6.25 mW, P(R2) = 18.75 mW,
    # and the source delivers 25 mW (Ohm's law, common practice, no source).
    r = case(DIVIDER, monkeypatch, **({} if exact else {"EXACT_LIMIT": 0}))
    led = r.ledger
    assert led.absorbed == pytest.approx(0.025, rel=1e-15, abs=0)
    assert led.delivered == pytest.approx(0.025, rel=1e-15, abs=0)
    assert abs(led.imbalance) <= 1e-17
    by = dict(led.by_element)
    assert by == pytest.approx({"V1": -0.025, "R1": 0.00625, "R2": 0.01875}, rel=1e-15, abs=0)
    # exact currents but node voltages in floats only: the float sums are used
    mixed = replace(r.branches, exact_node_voltage=None)
    assert balance.power_ledger(r.netlist, mixed).absorbed == pytest.approx(0.025, rel=1e-15, abs=0)


def test_plain_python_tree_up_to_the_small_size(monkeypatch):
    # SMALL: "up to this, the spanning tree in plain Python (no scipy import)".
    import scipy.sparse.csgraph as csgraph

    r = case(WHEEL)

    def scipy_tree(*args, **kw):
        raise AssertionError("scipy's breadth-first order used")

    monkeypatch.setattr(csgraph, "breadth_first_order", scipy_tree)
    monkeypatch.setattr(balance, "SMALL", len(r.netlist.names))  # 8 elements: plain
    kvl = balance.kvl_loops(r.netlist, r.branches)
    assert {lp.chord: (lp.elements, lp.signs) for lp in kvl.loops} == WHEEL_LOOPS
    monkeypatch.setattr(balance, "SMALL", len(r.netlist.names) - 1)
    with pytest.raises(AssertionError, match="scipy's breadth-first order used"):
        balance.kvl_loops(r.netlist, r.branches)


def test_ledger_lists_each_element_up_to_the_documented_limit(monkeypatch):
    # LEDGER_LISTING_LIMIT (calcdoc.verify.balance): "above it the ledger gives totals
    # only"; the limit is inclusive.  The divider has 3 elements; totals as above.
    r = case(DIVIDER)
    monkeypatch.setattr(balance, "LEDGER_LISTING_LIMIT", 3)
    listed = balance.power_ledger(r.netlist, r.branches)
    assert [name for name, _ in listed.by_element] == ["V1", "R1", "R2"]
    monkeypatch.setattr(balance, "LEDGER_LISTING_LIMIT", 2)
    totals = balance.power_ledger(r.netlist, r.branches)
    assert totals.by_element == ()
    assert totals.absorbed == pytest.approx(0.025, rel=1e-15, abs=0)
    assert totals.delivered == pytest.approx(0.025, rel=1e-15, abs=0)
