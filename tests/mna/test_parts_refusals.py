"""Every refusal for the new parts names the node or the devices at fault."""

from __future__ import annotations

import pytest
from parts_helpers import parts_text

import calcdoc
from calcdoc.errors import ProjectError, SingularCircuitError


def refusal(elements, **kw) -> SingularCircuitError:
    with pytest.raises(SingularCircuitError) as info:
        calcdoc.solve(calcdoc.loads(parts_text(elements, **kw)))
    return info.value


def test_node_joined_only_through_capacitors():
    e = refusal(
        [
            ("V1", "voltage_source", ("in", "gnd"), {"value": "5 V"}),
            ("C1", "capacitor", ("in", "mid"), {"value": "1 uF"}),
            ("C2", "capacitor", ("mid", "gnd"), {"value": "1 uF"}),
        ]
    )
    assert e.condition == "undetermined node voltage"
    assert "mid" in e.culprits and {"C1", "C2"} <= set(e.culprits)
    assert "its DC voltage is not determined" in e.detail


def test_node_behind_capacitors_in_a_circuit_with_diodes():
    # no diode state could determine x: the refusal names the node, not the diode
    e = refusal(
        [
            ("V1", "voltage_source", ("in", "gnd"), {"value": "5 V"}),
            ("R1", "resistor", ("in", "a"), {"value": "1 kohm"}),
            ("D1", "diode", ("a", "gnd"), {"forward_voltage": "0.7 V"}),
            ("C1", "capacitor", ("a", "x"), {"value": "1 uF"}),
            ("C2", "capacitor", ("x", "gnd"), {"value": "1 uF"}),
        ]
    )
    assert e.condition == "undetermined node voltage"
    assert "x" in e.culprits and "D1" not in e.culprits
    assert "its DC voltage is not determined" in e.detail


def test_node_behind_an_open_contact():
    e = refusal(
        [
            ("V1", "voltage_source", ("in", "gnd"), {"value": "5 V"}),
            ("K1", "switch", ("in", "x"), {"state": "open"}),
            ("C1", "capacitor", ("x", "gnd"), {"value": "1 uF"}),
        ]
    )
    assert e.condition == "undetermined node voltage"
    assert "x" in e.culprits and "K1" in e.culprits
    assert "its DC voltage is not determined" in e.detail


def test_node_undetermined_in_one_case_names_the_case():
    text = parts_text(
        [
            ("V1", "voltage_source", ("in", "gnd"), {"value": "5 V"}),
            ("K1", "switch", ("in", "x"), {}),
            ("C1", "capacitor", ("x", "gnd"), {"value": "1 uF"}),
        ],
        extra='[[cases]]\nname = "off"\nset = { K1 = "open" }\n',
    )
    with pytest.raises(SingularCircuitError) as info:
        calcdoc.solve(calcdoc.loads(text))
    assert info.value.case == "off" and "x" in info.value.culprits


def test_ideal_diode_held_beyond_threshold_by_an_ideal_source():
    # Blocking needs V ≤ 0.7 V but the source holds 5 V across it; conducting would
    # fix the same voltage twice.  No state is consistent.
    e = refusal(
        [
            ("V1", "voltage_source", ("a", "gnd"), {"value": "5 V"}),
            ("D1", "diode", ("a", "gnd"), {"forward_voltage": "0.7 V"}),
            ("R1", "resistor", ("a", "gnd"), {"value": "1 kohm"}),
        ]
    )
    assert e.condition == "no consistent states"
    assert e.culprits == ("D1",)
    assert "D1" in e.detail


def test_two_ideal_zeners_back_to_back_across_a_source():
    e = refusal(
        [
            ("V1", "voltage_source", ("a", "gnd"), {"value": "20 V"}),
            ("Z1", "diode", ("a", "m"), {"forward_voltage": "0.7 V", "breakdown_voltage": "5 V"}),
            ("Z2", "diode", ("gnd", "m"), {"forward_voltage": "0.7 V", "breakdown_voltage": "5 V"}),
        ]
    )
    assert e.condition == "no consistent states"
    assert set(e.culprits) == {"Z1", "Z2"}


def test_closed_ideal_contacts_in_parallel():
    e = refusal(
        [
            ("V1", "voltage_source", ("a", "gnd"), {"value": "5 V"}),
            ("K1", "switch", ("a", "b"), {}),
            ("K2", "switch", ("a", "b"), {}),
            ("R1", "resistor", ("b", "gnd"), {"value": "1 kohm"}),
        ]
    )
    assert e.condition == "voltage loop" and set(e.culprits) == {"K1", "K2"}


def test_node_reached_only_through_diodes_is_solved_not_refused():
    # Both ends of the load sit behind diodes: the starting states (all blocking)
    # leave them undetermined, so the search starts from other states.
    res = calcdoc.solve(
        calcdoc.loads(
            parts_text(
                [
                    ("V1", "voltage_source", ("a", "gnd"), {"value": "5 V"}),
                    (
                        "D1",
                        "diode",
                        ("a", "x"),
                        {"forward_voltage": "0.7 V", "resistance": "1 ohm"},
                    ),
                    ("R1", "resistor", ("x", "y"), {"value": "99 ohm"}),
                    ("D2", "diode", ("y", "gnd"), {"forward_voltage": "0.7 V"}),
                ]
            )
        )
    )
    case = res.cases[0]
    i = float(case.branches.current[case.netlist.index("R1")])
    assert i == pytest.approx((5 - 1.4) / 100, rel=1e-12)  # closed form: (V − 2·Vf)/(R + Rs)


def load_fault(text: str) -> tuple[str, str]:
    with pytest.raises(ProjectError) as info:
        calcdoc.loads(text)
    f = info.value.faults[0]
    return f.path, f.message


@pytest.mark.parametrize(
    ("elements", "extra", "path", "words"),
    [
        (
            [("K1", "switch", ("a", "gnd"), {"state": "half"})],
            "",
            "elements.K1.state",
            "expected one of closed, open",
        ),
        (
            [("D1", "diode", ("a", "gnd"), {"forward_voltage": "0.7 V", "state": "conducting"})],
            "",
            "elements.D1.state",
            "a diode takes no 'state'",
        ),
        (
            [
                (
                    "U1",
                    "opamp",
                    ("a", "gnd"),
                    {"control": ["a", "b"], "output_range": ["5 V", "1 V"]},
                )
            ],
            "",
            "elements.U1.output_range",
            "low end must be below",
        ),
        (
            [("U1", "opamp", ("a", "gnd"), {"control": ["a", "b"], "output_range": "13 V"})],
            "",
            "elements.U1.output_range",
            "expected [low, high]",
        ),
        (
            [("U1", "opamp", ("a", "gnd"), {"control": ["a", "b"], "value": "1 V"})],
            "",
            "elements.U1.value",
            "takes no 'value'",
        ),
        (
            [("C1", "capacitor", ("a", "gnd"), {"value": "10 uH"})],
            "",
            "elements.C1.value",
            "capacitance",
        ),
        (
            [("D1", "diode", ("a", "gnd"), {"forward_voltage": "0.7 V", "symbol": "lamp"})],
            "",
            "elements.D1.symbol",
            "expected one of diode, led, zener",
        ),
        (
            [("D1", "diode", ("a", "gnd"), {"forward_voltage": "0.7 V"})],
            '[[cases]]\nname = "c"\nset = { D1 = "blocking" }\n',
            "cases[0].set.D1",
            "found by the solver",
        ),
        (
            [("U1", "opamp", ("a", "gnd"), {"control": ["a", "gnd"]})],
            '[[cases]]\nname = "c"\nset = { U1 = "2 V" }\n',
            "cases[0].set.U1",
            "no value",
        ),
        (
            [("K1", "switch", ("a", "gnd"), {})],
            '[[cases]]\nname = "c"\nset = { K1 = "1 ohm" }\n',
            "cases[0].set.K1",
            "a case may set one of closed, open",
        ),
        (
            [("K1", "switch", ("a", "gnd"), {"tolerance": "1 %"})],
            "",
            "elements.K1.tolerance",
            "cannot vary",
        ),
        (
            [("R1", "resistor", ("a", "gnd"), {"value": "1 ohm"})],
            '[[limits.across]]\nname = "w"\nnodes = ["a", "zz"]\nmin = "1 V"\n',
            "limits.across[0].nodes",
            "no such node 'zz'",
        ),
        (
            [("R1", "resistor", ("a", "gnd"), {"value": "1 ohm"})],
            '[[limits.across]]\nname = "w"\nnodes = ["a", "gnd"]\n',
            "limits.across[0]",
            "give 'min', 'max' or both",
        ),
        (
            [("R1", "resistor", ("a", "gnd"), {"value": "1 ohm"})],
            '[[limits.across]]\nname = "w"\nnodes = ["a", "gnd"]\nmin = "3 V"\nmax = "1 V"\n',
            "limits.across[0]",
            "'min' is above 'max'",
        ),
    ],
)
def test_input_faults_name_the_key(elements, extra, path, words):
    got_path, message = load_fault(parts_text(elements, extra=extra))
    assert got_path == path and words in message
