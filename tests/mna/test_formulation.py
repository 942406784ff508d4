"""The printed MNA equations, in symbols, against equations written by hand.

Each expected line is the textbook nodal equation of the circuit (KCL as
the sum of currents leaving a node, then each element's own law; common
practice, no source), written out here term by term.
"""

from __future__ import annotations

from fractions import Fraction

from netlists import project_text

import calcdoc
from calcdoc.mna.formulation import formulation


def equations(elements):
    r = calcdoc.solve(calcdoc.loads(project_text(elements))).cases[0]
    form = formulation(r.netlist)
    return form, [f"{eq.title}: {eq.text()}" for eq in form.equations]


def test_every_element_kind_in_symbols():
    form, lines = equations(
        [
            ("V1", "voltage_source", ("a", "gnd"), "10 V"),
            ("R1", "resistor", ("a", "b"), "1 kohm"),
            ("R2", "resistor", ("b", "gnd"), "2 kohm"),
            ("I1", "current_source", ("gnd", "b"), "1 mA"),
            ("E1", "vcvs", ("c", "gnd"), "2", {"control": '["b", "gnd"]'}),
            ("R3", "resistor", ("c", "gnd"), "1 kohm"),
            ("G1", "vccs", ("d", "gnd"), "1 mS", {"control": '["a", "b"]'}),
            ("R4", "resistor", ("d", "gnd"), "1 kohm"),
            ("H1", "ccvs", ("e", "gnd"), "100 ohm", {"control": '"R1"'}),
            ("R5", "resistor", ("e", "gnd"), "1 kohm"),
            ("F1", "cccs", ("gnd", "f"), "3", {"control": '"R1"'}),
            ("R6", "resistor", ("f", "gnd"), "1 kohm"),
        ]
    )
    assert form.unknowns == (
        "V(a)",
        "V(b)",
        "V(c)",
        "V(d)",
        "V(e)",
        "V(f)",
        "I(V1)",
        "I(R1)",
        "I(E1)",
        "I(H1)",
    )
    assert lines == [
        "KCL at node a: I(V1) + I(R1) = 0",
        "KCL at node b: − I(R1) + V(b)/R2 = I1",  # I1 flows into b
        "KCL at node c: I(E1) + V(c)/R3 = 0",
        "KCL at node d: G1·V(a) − G1·V(b) + V(d)/R4 = 0",
        "KCL at node e: I(H1) + V(e)/R5 = 0",
        "KCL at node f: − F1·I(R1) + V(f)/R6 = 0",
        "Branch equation of V1: V(a) = V1",
        "Branch equation of R1: V(a) − V(b) − R1·I(R1) = 0",
        "Branch equation of E1: V(c) − E1·V(b) = 0",
        "Branch equation of H1: V(e) − H1·I(R1) = 0",
    ]
    assert {s.name: s.unit for s in form.symbols} == {
        "V1": "V",
        "R1": "Ω",
        "R2": "Ω",
        "I1": "A",
        "E1": "V/V",
        "R3": "Ω",
        "G1": "S",
        "R4": "Ω",
        "H1": "Ω",
        "R5": "Ω",
        "F1": "A/A",
        "R6": "Ω",
    }


def test_substituted_values_give_the_matrix_that_was_solved():
    form, _ = equations(
        [
            ("V1", "voltage_source", ("a", "gnd"), "10 V"),
            ("R1", "resistor", ("a", "b"), "1 kohm"),
            ("R2", "resistor", ("b", "gnd"), "4 kohm"),
        ]
    )
    A, z = form.matrix({"V1": 10, "R1": 1000, "R2": 4000})
    # nodal matrix by hand: rows KCL(a), KCL(b), law of V1; columns V(a), V(b), I(V1)
    g1, g2 = Fraction(1, 1000), Fraction(1, 4000)
    assert [[g1, -g1, 1], [-g1, g1 + g2, 0], [1, 0, 0]] == A
    assert z == [0, 0, 10]


def test_further_keys_states_and_a_one_ohm_resistor():
    # Test-only kinds (tests/extra_kinds.py): a source behind its resistance
    # R(T1) (a further number key), a winding whose resistance R(W1) is
    # stamped as a conductance, a winding without one (an ideal short, its
    # current an unknown), and an open contact (no current, no term).  The
    # 1 Ω resistor is an ordinary conductance.  Equations by hand, as above.
    from extra_kinds import registered

    with registered():
        form, lines = equations(
            [
                ("T1", "thevenin", ("a", "gnd"), "5 V", {"resistance": '"50 ohm"'}),
                ("R1", "resistor", ("a", "b"), "1 ohm"),
                ("W1", "winding", ("b", "c"), "1", {"resistance": '"2 ohm"'}),
                ("W2", "winding", ("c", "d"), "1"),
                ("R2", "resistor", ("d", "gnd"), "4 ohm"),
                ("K1", "contact", ("b", "gnd"), "10 ohm", {"state": '"open"'}),
            ]
        )
    assert form.unknowns == ("V(a)", "V(b)", "V(c)", "V(d)", "I(T1)", "I(W2)")
    assert lines == [
        "KCL at node a: I(T1) + V(a)/R1 − V(b)/R1 = 0",
        "KCL at node b: − V(a)/R1 + V(b)/R1 + V(b)/R(W1) − V(c)/R(W1) = 0",
        "KCL at node c: − V(b)/R(W1) + V(c)/R(W1) + I(W2) = 0",
        "KCL at node d: − I(W2) + V(d)/R2 = 0",
        "Branch equation of T1: V(a) − R(T1)·I(T1) = T1",
        "Branch equation of W2: V(c) − V(d) = 0",
    ]
    assert {s.name: s.unit for s in form.symbols} == {
        "T1": "V",
        "R(T1)": "Ω",
        "R1": "Ω",
        "R(W1)": "Ω",
        "R2": "Ω",
    }
