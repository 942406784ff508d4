"""The named faults of an unsolvable circuit: which condition, which culprits, which words.

Each expected fault is found by hand from the circuit (a loop of elements
that fix their voltage, nodes reached only through elements that fix their
current, a number outside its allowed sign) and each expected message is
written out here in full.
"""

from __future__ import annotations

import pytest
from extra_kinds import registered
from netlists import project_text

import calcdoc
from calcdoc.errors import SingularCircuitError
from calcdoc.mna.diagnose import name_list, unknown_words


def fault(elements) -> SingularCircuitError:
    with pytest.raises(SingularCircuitError) as info:
        calcdoc.solve(calcdoc.loads(project_text(elements)))
    return info.value


def test_name_list_shows_twelve_then_counts_the_rest():
    names = [f"n{k}" for k in range(1, 15)]
    assert name_list(names[:1]) == "n1"
    assert name_list(names[:12]) == ", ".join(names[:12])
    assert name_list(names[:13]) == ", ".join(names[:12]) + " and 1 more"
    assert name_list(names) == ", ".join(names[:12]) + " and 2 more"
    assert name_list(names[:4], most=3) == "n1, n2, n3 and 1 more"


def test_unknowns_in_words():
    assert unknown_words(["V(a)"]) == "the voltage of node a"
    assert unknown_words(["I(V1)", "V(out)"]) == "the current of V1 and the voltage of node out"
    assert unknown_words(["V(a)", "V(b)", "I(E1)"]) == (
        "the voltage of node a, the voltage of node b and the current of E1"
    )
    nodes = [f"V(n{k})" for k in range(1, 15)]
    words = [f"the voltage of node n{k}" for k in range(1, 15)]
    assert unknown_words(nodes[:12]) == ", ".join(words[:11]) + " and " + words[11]
    assert unknown_words(nodes[:13]) == ", ".join(words[:12]) + " and 1 more"
    assert unknown_words(nodes) == ", ".join(words[:12]) + " and 2 more"


# the second source from a to gnd, or turned round (−5 V: the same difference)
@pytest.mark.parametrize("second", [("a", "gnd"), ("gnd", "a")])
def test_parallel_sources_in_either_direction(second):
    value = "5 V" if second == ("a", "gnd") else "-5 V"
    e = fault(
        [
            ("V1", "voltage_source", ("a", "gnd"), "5 V"),
            ("V2", "voltage_source", second, value),
            ("R1", "resistor", ("a", "gnd"), "1 kohm"),
        ]
    )
    assert e.condition == "voltage loop"
    assert e.culprits == ("V1", "V2")
    assert e.detail == (
        "elements that fix their voltage, V1, V2, are in parallel: they fix the same node "
        "difference twice, so their currents are undetermined"
    )


@pytest.mark.parametrize(
    "orientation",
    [
        (("a", "gnd"), ("gnd", "b"), ("b", "a")),  # every element along the loop
        (("a", "gnd"), ("b", "gnd"), ("a", "b")),  # the second against it
        (("gnd", "a"), ("b", "gnd"), ("b", "a")),  # the first against it
        (("gnd", "a"), ("gnd", "b"), ("a", "b")),  # the first two against it
    ],
)
def test_loops_of_three_sources_in_every_orientation(orientation):
    # Three elements that fix their voltage round a, gnd and b: a loop
    # whatever their directions (KVL leaves one of their currents free).
    (p1, p2, p3) = orientation
    e = fault(
        [
            ("V1", "voltage_source", p1, "1 V"),
            ("E1", "vcvs", p2, "2", {"control": '["c", "gnd"]'}),
            ("H1", "ccvs", p3, "10 ohm", {"control": '"Rc"'}),
            ("Vc", "voltage_source", ("c", "gnd"), "1 V"),
            ("Rc", "resistor", ("c", "gnd"), "1 kohm"),
            ("R1", "resistor", ("a", "b"), "1 kohm"),
        ]
    )
    assert e.condition == "voltage loop"
    assert sorted(e.culprits) == ["E1", "H1", "V1"]
    assert e.detail.endswith(
        "are in a loop: they fix the same node difference twice, so their currents are undetermined"
    )


def test_loop_of_four_with_a_resistor_path_elsewhere():
    e = fault(
        [
            ("V1", "voltage_source", ("a", "gnd"), "1 V"),
            ("V2", "voltage_source", ("b", "a"), "1 V"),
            ("V3", "voltage_source", ("b", "c"), "1 V"),
            ("V4", "voltage_source", ("c", "gnd"), "1 V"),
            ("R1", "resistor", ("b", "gnd"), "1 kohm"),
        ]
    )
    assert e.condition == "voltage loop"
    assert sorted(e.culprits) == ["V1", "V2", "V3", "V4"]


def test_cut_set_of_one_node_in_words():
    e = fault(
        [
            ("V1", "voltage_source", ("a", "gnd"), "5 V"),
            ("I1", "current_source", ("a", "m"), "1 mA"),
            ("I2", "current_source", ("m", "gnd"), "2 mA"),
        ]
    )
    assert e.condition == "current-source cut set"
    assert e.culprits == ("m", "I1", "I2")
    assert e.detail == (
        "node m reaches the reference only through elements that fix their current "
        "(I1, I2), so its voltage is undetermined"
    )


def test_cut_set_of_two_nodes_names_only_the_crossing_sources():
    # I3 runs between a and b, inside the cut: it does not cross it; I4 is
    # elsewhere. Only I1 and I2 join {a, b} to the rest.
    e = fault(
        [
            ("I1", "current_source", ("gnd", "a"), "1 mA"),
            ("R1", "resistor", ("a", "b"), "1 kohm"),
            ("I3", "current_source", ("a", "b"), "1 mA"),
            ("I2", "current_source", ("b", "c"), "1 mA"),
            ("R2", "resistor", ("c", "gnd"), "1 kohm"),
            ("I4", "current_source", ("c", "gnd"), "1 mA"),
        ]
    )
    assert e.condition == "current-source cut set"
    assert e.culprits == ("a", "b", "I1", "I2")
    assert e.detail == (
        "nodes a, b reach the reference only through elements that fix their current "
        "(I1, I2), so their voltage is undetermined"
    )


def test_nodes_behind_open_contacts_have_no_dc_voltage():
    with registered():
        one = fault(
            [
                ("V1", "voltage_source", ("a", "gnd"), "5 V"),
                ("R1", "resistor", ("a", "gnd"), "1 kohm"),
                ("K1", "contact", ("a", "m"), "10 mohm", {"state": '"open"'}),
            ]
        )
        two = fault(
            [
                ("V1", "voltage_source", ("a", "gnd"), "5 V"),
                ("K1", "contact", ("a", "m"), "10 mohm", {"state": '"open"'}),
                ("R2", "resistor", ("m", "n"), "1 kohm"),
                ("K2", "contact", ("n", "gnd"), "10 mohm", {"state": '"open"'}),
            ]
        )
        mixed = fault(
            [
                ("V1", "voltage_source", ("a", "gnd"), "5 V"),
                ("K1", "contact", ("a", "m"), "10 mohm", {"state": '"open"'}),
                ("I1", "current_source", ("m", "gnd"), "1 mA"),
            ]
        )
    assert one.condition == "undetermined node voltage" and one.culprits == ("m", "K1")
    assert one.detail == (
        "node m: its DC voltage is not determined (joined to the rest only through K1, "
        "which carry no DC current)"
    )
    assert two.condition == "undetermined node voltage"
    assert two.culprits == ("m", "n", "K1", "K2")
    assert two.detail == (
        "nodes m, n: their DC voltage is not determined (joined to the rest only through "
        "K1, K2, which carry no DC current)"
    )
    # an open contact and a current source: the source sets a current the node cannot take
    assert mixed.condition == "current-source cut set" and mixed.culprits == ("m", "K1", "I1")


def test_floating_island_in_words():
    e = fault(
        [
            ("V1", "voltage_source", ("a", "gnd"), "5 V"),
            ("R1", "resistor", ("a", "gnd"), "1 kohm"),
            ("R2", "resistor", ("x", "y"), "1 kohm"),
        ]
    )
    assert e.detail == "no path to the reference node 'gnd' from: x, y"


def test_numbers_outside_their_sign():
    base = [("V1", "voltage_source", ("a", "gnd"), "5 V")]
    zero = fault([*base, ("R1", "resistor", ("a", "gnd"), "0 ohm")])
    assert zero.condition == "zero-ohm resistor" and zero.culprits == ("R1",)
    assert zero.detail == (
        "R1 has zero resistance, which has no conductance to stamp; join its nodes or model "
        "it as a 0 V voltage source"
    )
    neg = fault(
        [
            *base,
            ("R1", "resistor", ("a", "b"), "-1 kohm"),
            ("R2", "resistor", ("b", "gnd"), "-2 kohm"),
        ]
    )
    assert neg.condition == "negative resistance" and neg.culprits == ("R1",)  # the first
    assert neg.detail == "R1 has a negative resistance"
    with registered():
        # a further key (the source resistance of T1, the second such key) negative
        more = fault(
            [
                *base,
                ("W1", "winding", ("a", "b"), "1", {"resistance": '"2 ohm"'}),
                ("T1", "thevenin", ("b", "gnd"), "1 V", {"resistance": '"-5 ohm"'}),
            ]
        )
        winding = fault([*base, ("W1", "winding", ("a", "gnd"), "1", {"resistance": '"-2 ohm"'})])
        turns = fault([*base, ("W1", "winding", ("a", "gnd"), "-1")])
        no_turns = fault([*base, ("W1", "winding", ("a", "gnd"), "0")])
        # zero is allowed where the sign is "nonnegative": a winding of 0 Ω is a short
        r = calcdoc.solve(
            calcdoc.loads(
                project_text(
                    [
                        *base,
                        ("W1", "winding", ("a", "b"), "1", {"resistance": '"0 ohm"'}),
                        ("R2", "resistor", ("b", "gnd"), "1 kohm"),
                        ("T1", "thevenin", ("c", "gnd"), "1 V", {"resistance": '"0 ohm"'}),
                        ("R3", "resistor", ("c", "gnd"), "1 kohm"),
                    ]
                )
            )
        ).cases[0]
    assert more.condition == "negative resistance" and more.culprits == ("T1",)
    assert more.detail == "T1 has a negative source resistance"
    assert winding.detail == "W1 has a negative winding resistance"
    assert turns.condition == "invalid value" and turns.culprits == ("W1",)
    assert turns.detail == "W1: turns must be positive, found -1"
    assert no_turns.detail == "W1: turns must be positive, found 0"
    # the short passes V1's 5 V to b; T1 with no resistance holds c at 1 V
    assert r.branches.exact_node_voltage == (0, 5, 5, 1)


def test_parallel_sources_behind_a_resistor_with_its_own_current():
    # R1 comes first and has a current unknown (it controls H1), but a
    # resistor does not fix its voltage: the loop is V1 ∥ V2 alone.
    e = fault(
        [
            ("R1", "resistor", ("a", "gnd"), "1 kohm"),
            ("V1", "voltage_source", ("a", "gnd"), "5 V"),
            ("V2", "voltage_source", ("a", "gnd"), "5 V"),
            ("H1", "ccvs", ("h", "gnd"), "10 ohm", {"control": '"R1"'}),
            ("Rh", "resistor", ("h", "gnd"), "1 kohm"),
        ]
    )
    assert e.condition == "voltage loop" and e.culprits == ("V1", "V2")


def test_plain_python_components_up_to_the_small_size(monkeypatch):
    # SMALL: "up to this, plain Python graph code (scipy takes ~0.3 s to import)"; the
    # comparison is inclusive.  A floating island is found either way.
    import scipy.sparse.csgraph as csgraph

    from calcdoc.mna import diagnose

    def scipy_components(*args, **kw):
        raise AssertionError("scipy's connected components used")

    monkeypatch.setattr(csgraph, "connected_components", scipy_components)
    island = [
        ("V1", "voltage_source", ("a", "gnd"), "1 V"),
        ("R1", "resistor", ("a", "gnd"), "1 kohm"),
        ("R2", "resistor", ("b", "c"), "1 kohm"),
    ]
    monkeypatch.setattr(diagnose, "SMALL", 3)  # 3 elements: plain Python
    assert fault(island).detail == "no path to the reference node 'gnd' from: b, c"
    monkeypatch.setattr(diagnose, "SMALL", 2)
    with pytest.raises(AssertionError, match="scipy's connected components used"):
        calcdoc.solve(calcdoc.loads(project_text(island)))
