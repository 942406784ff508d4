"""Every failure mode of an unsolvable circuit is diagnosed by name."""

from __future__ import annotations

import pytest

import calcdoc
from calcdoc.errors import SingularCircuitError


def diagnosis(make_project, elements):
    with pytest.raises(SingularCircuitError) as info:
        calcdoc.solve(make_project(elements))
    return info.value


def test_floating_island(make_project):
    e = diagnosis(
        make_project,
        [
            ("V1", "voltage_source", ("a", "gnd"), "5 V"),
            ("R1", "resistor", ("a", "gnd"), "1 kohm"),
            ("R2", "resistor", ("x", "y"), "1 kohm"),
        ],
    )
    assert e.condition == "floating node"
    assert set(e.culprits) == {"x", "y"}


def test_parallel_voltage_sources(make_project):
    e = diagnosis(
        make_project,
        [
            ("V1", "voltage_source", ("a", "gnd"), "5 V"),
            ("V2", "voltage_source", ("a", "gnd"), "5 V"),
            ("R1", "resistor", ("a", "gnd"), "1 kohm"),
        ],
    )
    assert e.condition == "voltage loop"
    assert set(e.culprits) == {"V1", "V2"}
    assert "in parallel" in e.detail


def test_loop_of_voltage_defined_elements(make_project):
    e = diagnosis(
        make_project,
        [
            ("V1", "voltage_source", ("a", "gnd"), "5 V"),
            ("V2", "voltage_source", ("b", "a"), "1 V"),
            ("E1", "vcvs", ("b", "gnd"), "2", {"control": '["a", "gnd"]'}),
            ("R1", "resistor", ("b", "gnd"), "1 kohm"),
        ],
    )
    assert e.condition == "voltage loop"
    assert set(e.culprits) == {"V1", "V2", "E1"}


def test_current_source_cut_set(make_project):
    e = diagnosis(
        make_project,
        [
            ("I1", "current_source", ("gnd", "a"), "1 mA"),
            ("R1", "resistor", ("a", "b"), "1 kohm"),
            ("I2", "current_source", ("b", "gnd"), "1 mA"),
        ],
    )
    assert e.condition == "current-source cut set"
    assert {"a", "b", "I1", "I2"} <= set(e.culprits)


def test_series_current_source_node(make_project):
    e = diagnosis(
        make_project,
        [
            ("V1", "voltage_source", ("a", "gnd"), "5 V"),
            ("I1", "current_source", ("a", "m"), "1 mA"),
            ("G1", "vccs", ("m", "gnd"), "1 mS", {"control": '["a", "gnd"]'}),
        ],
    )
    assert e.condition == "current-source cut set"
    assert "m" in e.culprits


def test_zero_ohm_resistor(make_project):
    e = diagnosis(
        make_project,
        [
            ("V1", "voltage_source", ("a", "gnd"), "5 V"),
            ("R1", "resistor", ("a", "gnd"), "0 ohm"),
        ],
    )
    assert e.condition == "zero-ohm resistor"
    assert e.culprits == ("R1",)


def test_zero_ohm_in_a_case_names_the_case(make_project):
    p = make_project(
        [("V1", "voltage_source", ("a", "gnd"), "5 V"), ("R1", "resistor", ("a", "gnd"), "1 kohm")],
        extra='[[cases]]\nname = "Short"\nset = { R1 = "0 ohm" }\n',
    )
    with pytest.raises(SingularCircuitError) as info:
        calcdoc.solve(p)
    assert info.value.case == "Short"


def test_singular_by_dependent_source_gain(make_project):
    # VCVS E1 forces V(b) = 1·V(b) through its own output: topology is sound,
    # the equations are not (the gain cancels the output equation).
    e = diagnosis(
        make_project,
        [
            ("V1", "voltage_source", ("a", "gnd"), "5 V"),
            ("R1", "resistor", ("a", "b"), "1 kohm"),
            ("E1", "vcvs", ("b", "gnd"), "1", {"control": '["b", "gnd"]'}),
        ],
    )
    assert e.condition == "singular system"
    assert any(c.startswith("V(b)") or c.startswith("I(E1)") for c in e.culprits)
