"""A type added to the element table needs nothing else.

A test-only type, a cell with an internal resistance (V = E + r·I, the
current from + to − through it), is registered and then solved, verified
(KCL, KVL, power ledger), differentiated and rendered into a package
without any other change.
"""

from __future__ import annotations

import io

import pytest
from pypdf import PdfReader

import calcdoc
from calcdoc.model.elements import ONE, Coef, ElementType, Law, NumberKey, register, unregister
from calcdoc.model.quantities import OHM, VOLT

CELL = ElementType(
    "test_cell",
    "cell with internal resistance",
    ("plus", "minus"),
    (
        NumberKey("value", VOLT, "V", words="open-circuit voltage"),
        NumberKey(
            "internal",
            OHM,
            "Ω",
            "r",
            required=False,
            sign="nonnegative",
            words="internal resistance",
        ),
    ),
    {"": Law(v=ONE, i=Coef(-1, "internal"), const=Coef(1, "value"), text="V = E + r·I")},
    ratings=("current", "power"),
    supply=True,
)

TEXT = """
[document]
title = "Test-only element type"
[elements.B1]
type = "test_cell"
nodes = ["p", "gnd"]
value = "12 V"
internal = "0.5 ohm"
rating = { current = "10 A" }
[elements.RL]
type = "resistor"
nodes = ["p", "gnd"]
value = "5.5 ohm"
rating = { power = "50 W" }
[analysis]
sensitivity = ["p", "RL.power"]
"""


@pytest.fixture
def cell():
    register(CELL)
    try:
        yield CELL
    finally:
        unregister(CELL.type)


def test_registered_type_is_solved_verified_differentiated_and_rendered(cell):
    from calcdoc.pipeline import analyse
    from calcdoc.report.package import build_package

    results = analyse(calcdoc.loads(TEXT), closed_form=True)
    case = results.cases[0]
    # Closed form: I = E/(r + R) = 12/6 = 2 A; V(p) = E − r·I = 11 V (common practice, no source).
    v = dict(zip(case.netlist.nodes, case.branches.node_voltage.tolist(), strict=True))
    assert v["p"] == pytest.approx(11.0, rel=1e-15)
    assert case.branches.current[case.netlist.index("B1")] == pytest.approx(-2.0, rel=1e-15)
    assert abs(case.kcl).max() == 0.0 and case.kvl.max_abs_sum == 0.0
    # the cell delivers V·I = 11 V × 2 A = 22 W at its terminals (its internal loss is inside it)
    assert case.ledger.imbalance == 0.0 and case.ledger.delivered == pytest.approx(22.0)
    assert {c.id for c in case.checks} == {"B1.current", "RL.power"}
    # Sensitivities, closed form: V(p) = E·R/(R + r), so S_E = 1 and S_R = r/(R + r);
    # P(RL) = E²·R/(R + r)², so S_E = 2 and S_R = (r − R)/(R + r).
    sens = {
        s.output: dict((n, x) for n, _, x in s.ranked) for s in results.extra["sensitivity"].items
    }
    assert sens["p"]["B1"] == pytest.approx(1.0, rel=1e-9)
    assert sens["p"]["RL"] == pytest.approx(0.5 / 6, rel=1e-9)
    assert sens["RL.power"]["B1"] == pytest.approx(2.0, rel=1e-9)
    assert sens["RL.power"]["RL"] == pytest.approx((0.5 - 5.5) / 6, rel=1e-9)
    pdf = build_package(results).pdf
    text = " ".join(p.extract_text() for p in PdfReader(io.BytesIO(pdf)).pages)
    assert "cell with internal resistance" in " ".join(text.split())
    assert "B1 current" in text  # the check, named in words


def test_unregistered_type_is_an_input_error():
    from calcdoc.errors import ProjectError

    with pytest.raises(ProjectError) as info:
        calcdoc.loads(TEXT)
    assert info.value.faults[0].path == "elements.B1.type"
