"""Sensitivities against closed-form derivatives of small circuits.

For a divider V(out) = V·R2/(R1 + R2) (common practice, no source):
∂V/∂R1 = −V·R2/(R1 + R2)², ∂V/∂R2 = V·R1/(R1 + R2)², ∂V/∂V = R2/(R1 + R2);
normalised sensitivities are these times value / output.
"""

from __future__ import annotations

import pytest
from netlists import project_text

import calcdoc
from calcdoc.analysis.sensitivity import default_outputs, sensitivities
from calcdoc.pipeline import solve_case

DIVIDER = [
    ("V1", "voltage_source", ("in", "gnd"), "10 V"),
    ("R1", "resistor", ("in", "out"), "3 kohm"),
    ("R2", "resistor", ("out", "gnd"), "1 kohm"),
]


def items(project):
    r = calcdoc.solve(project)
    return {s.output: s for s in r.extra["sensitivity"].items}


def test_divider_derivatives_and_ranking():
    p = calcdoc.loads(project_text(DIVIDER, extra='[analysis]\nsensitivity = ["out", "in"]\n'))
    s = items(p)
    out = s["out"]
    assert out.value == pytest.approx(2.5) and out.measure == "normalised"
    assert out.method == "closed form"  # a node voltage of a small circuit
    assert dict(out.absolute) == pytest.approx(
        {"R1": -10 * 1000 / 4000**2, "R2": 10 * 3000 / 4000**2, "V1": 0.25}, rel=1e-12
    )
    # normalised: −0.75, +0.75, +1; ranked by magnitude (R1 and R2 tie)
    assert [n for n, _, _ in out.ranked][0] == "V1"
    assert dict((n, v) for n, _, v in out.ranked) == pytest.approx(
        {"V1": 1.0, "R1": -0.75, "R2": 0.75}, rel=1e-12
    )
    # V(in) is V1's own value: it depends on V1 alone, with sensitivity 1
    assert s["in"].ranked == (("V1", "element", pytest.approx(1.0, rel=1e-12, abs=0)),)


def test_element_outputs_by_the_adjoint():
    # I(R1) = V/(R1 + R2): S(R1) = −R1/(R1 + R2) = −0.75, S(R2) = −0.25, S(V1) = 1;
    # P(R2) = V²·R2/(R1 + R2)²: S(R2) = 1 − 2·R2/(R1 + R2) = 0.5, S(R1) = −1.5, S(V1) = 2.
    p = calcdoc.loads(
        project_text(DIVIDER, extra='[analysis]\nsensitivity = ["R1.current", "R2.power"]\n')
    )
    s = items(p)
    assert s["R1.current"].method == "adjoint"
    assert dict((n, v) for n, _, v in s["R1.current"].ranked) == pytest.approx(
        {"V1": 1.0, "R1": -0.75, "R2": -0.25}, rel=1e-9
    )
    assert [n for n, _, _ in s["R2.power"].ranked] == ["V1", "R1", "R2"]
    assert dict((n, v) for n, _, v in s["R2.power"].ranked) == pytest.approx(
        {"V1": 2.0, "R1": -1.5, "R2": 0.5}, rel=1e-9
    )


def test_default_outputs():
    # "Outputs with a limit (node windows, rated powers); else every node
    # voltage (at most 12)": windows first, each output once.
    p = calcdoc.loads(
        project_text(
            [
                DIVIDER[0],
                ("R1", "resistor", ("in", "out"), "3 kohm", {"rating": '{ power = "1 W" }'}),
                DIVIDER[2],
            ],
            extra='[limits.nodes.out]\nmax = "3 V"\n[limits.nodes.in]\nmin = "9 V"\n',
        )
    )
    assert default_outputs(p, solve_case(p)) == ("out", "in", "R1.power")
    chain = [("V1", "voltage_source", ("n1", "gnd"), "1 V")]
    chain += [(f"R{k}", "resistor", (f"n{k}", f"n{k + 1}"), "1 kohm") for k in range(1, 14)]
    chain += [("R14", "resistor", ("n14", "gnd"), "1 kohm")]
    p = calcdoc.loads(project_text(chain))
    assert default_outputs(p, solve_case(p)) == tuple(f"n{k}" for k in range(1, 13))


def test_a_bridge_slightly_off_balance_is_normalised():
    # R4 = 3.000001 kΩ unbalances the bridge R1/R2 = R3/R4 by one part in a
    # million: a detector current of about 0.17 nA (Thevenin: 5 V·(R4/(R3 + R4)
    # − R2/(R1 + R2)) over R1‖R2 + R3‖R4 + Rd), far above rounding, so the
    # normalised measure applies.
    p = calcdoc.loads("""
[elements.V1]
type = "voltage_source"
nodes = ["e", "gnd"]
value = "5 V"
[elements.R1]
type = "resistor"
nodes = ["e", "x"]
value = "1 kohm"
[elements.R2]
type = "resistor"
nodes = ["x", "gnd"]
value = "2 kohm"
[elements.R3]
type = "resistor"
nodes = ["e", "y"]
value = "1.5 kohm"
[elements.R4]
type = "resistor"
nodes = ["y", "gnd"]
value = "3.000001 kohm"
[elements.Rd]
type = "resistor"
nodes = ["x", "y"]
value = "500 ohm"
[analysis]
sensitivity = ["Rd.current"]
""")
    det = items(p)["Rd.current"]
    vth = 5 * (3.000001 / 4.500001 - 2 / 3)
    rth = 1 * 2 / 3 + 1.5 * 3.000001 / 4.500001 + 0.5
    assert det.value == pytest.approx(-vth / (rth * 1000), rel=1e-6, abs=0)
    assert det.measure == "normalised"


def test_parameter_through_a_square_root():
    # R1 = √k · 1 kΩ, R2 = √k · 2 kΩ: I(R1) = 5 V/(√k · 3 kΩ), so the
    # normalised sensitivity to k is −1/2 (closed form); a parameter of zero
    # value has no per-cent change and is not listed.
    p = calcdoc.loads("""
[parameters]
k = "4"
off = "0 V"
[elements.V1]
type = "voltage_source"
nodes = ["e", "gnd"]
value = "5 V + off"
[elements.R1]
type = "resistor"
nodes = ["e", "x"]
value = "sqrt(k) * 1 kohm"
[elements.R2]
type = "resistor"
nodes = ["x", "gnd"]
value = "sqrt(k) * 2 kohm"
[analysis]
sensitivity = ["R1.current"]
""")
    s = items(p)["R1.current"]
    params = {n: v for n, kind, v in s.ranked if kind == "parameter"}
    assert params == {"k": pytest.approx(-0.5, rel=1e-6, abs=0)}
    assert dict(s.absolute)["k"] == pytest.approx(-0.5 * (5 / 6000) / 4, rel=1e-6, abs=0)


def test_outputs_given_replace_the_defaults():
    p = calcdoc.loads(project_text(DIVIDER, extra='[limits.nodes.out]\nmax = "3 V"\n'))
    r = solve_case(p)
    got = sensitivities(p, r, ("R2.current",))
    assert [s.output for s in got] == ["R2.current"]
    assert [s.output for s in sensitivities(p, r)] == ["out"]


def test_micro_amp_outputs_of_megohm_resistors():
    # 10 V over 3 MΩ + 1 MΩ: I = 2.5 µA, ∂I/∂R1 = −V/(R1 + R2)² = −6.25e-13 A/Ω, tiny
    # in SI units but a normalised sensitivity of −0.75 (closed form).
    p = calcdoc.loads(
        project_text(
            [
                DIVIDER[0],
                ("R1", "resistor", ("in", "out"), "3 Mohm"),
                ("R2", "resistor", ("out", "gnd"), "1 Mohm"),
            ],
            extra='[analysis]\nsensitivity = ["R1.current"]\n',
        )
    )
    s = items(p)["R1.current"]
    assert dict((n, v) for n, _, v in s.ranked) == pytest.approx(
        {"V1": 1.0, "R1": -0.75, "R2": -0.25}, rel=1e-9
    )
    assert dict(s.absolute)["R1"] == pytest.approx(-6.25e-13, rel=1e-9, abs=0)


def test_a_ratio_does_not_depend_on_a_common_scale():
    # R1 = k·1 kΩ, R2 = k·2 kΩ: V(R2) = 5 V·R2/(R1 + R2) = 10/3 V whatever k
    # (closed form): k is not listed, even though its derivative is formed
    # numerically; S(R1) = −1/3, S(R2) = +1/3, S(V1) = 1.
    p = calcdoc.loads("""
[parameters]
k = "1.3"
[elements.V1]
type = "voltage_source"
nodes = ["e", "gnd"]
value = "5 V"
[elements.R1]
type = "resistor"
nodes = ["e", "x"]
value = "k * 1 kohm"
[elements.R2]
type = "resistor"
nodes = ["x", "gnd"]
value = "k * 2 kohm"
[analysis]
sensitivity = ["R2.voltage"]
""")
    s = items(p)["R2.voltage"]
    assert s.method == "adjoint"
    assert dict((n, v) for n, _, v in s.ranked) == pytest.approx(
        {"V1": 1.0, "R1": -1 / 3, "R2": 1 / 3}, rel=1e-9, abs=0
    )


def test_unexcited_circuit_has_zero_outputs_and_no_sensitivity():
    # With its only source at 0 V the linear circuit carries no voltage or current
    # anywhere, and a 1 % change of any value (3 kΩ, 1 kΩ, or 0 V → 0 V) leaves it so
    # (superposition; common practice, no source).  The outputs are zero against a
    # zero scale: absolute measure, nothing listed, no NaN.
    unexcited = [("V1", "voltage_source", ("in", "gnd"), "0 V"), *DIVIDER[1:]]
    p = calcdoc.loads(
        project_text(unexcited, extra='[analysis]\nsensitivity = ["out", "R1.current"]\n')
    )
    for s in items(p).values():
        assert s.value == 0.0 and s.measure == "absolute"
        assert s.ranked == () and s.absolute == ()


def test_ranking_floor_is_relative_to_the_normalised_values():
    # 10 mV across a 1 µΩ joint: I = V/R = 10 kA, so S(V1) = +1 and S(R1) = −1
    # (I = V/R, closed form), while the raw derivative ∂I/∂R = −V/R² is −1e10 A/Ω.
    # Both dependences are listed: the floor for rounding is a share of the largest
    # *normalised* value, whatever the units of the raw derivatives.
    shunt = [
        ("V1", "voltage_source", ("a", "gnd"), "10 mV"),
        ("R1", "resistor", ("a", "gnd"), "1 uohm"),
    ]
    p = calcdoc.loads(project_text(shunt, extra='[analysis]\nsensitivity = ["R1.current"]\n'))
    s = items(p)["R1.current"]
    assert s.value == pytest.approx(1e4, rel=1e-12, abs=0) and s.measure == "normalised"
    assert dict((n, v) for n, _, v in s.ranked) == pytest.approx(
        {"V1": 1.0, "R1": -1.0}, rel=1e-9, abs=0
    )
    assert dict(s.absolute)["R1"] == pytest.approx(-1e10, rel=1e-9, abs=0)


def test_node_outputs_by_the_adjoint_above_the_closed_form_size(monkeypatch):
    # With no closed form (the symbolic solution limited to 0 unknowns), V(out) of the
    # divider is differentiated by the adjoint and gives the closed form's values:
    # S(V1) = 1, S(R1) = −0.75, S(R2) = +0.75 (module docstring, common practice).
    from calcdoc.mna import symbolic

    monkeypatch.setattr(symbolic, "MAX_UNKNOWNS", 0)
    p = calcdoc.loads(project_text(DIVIDER, extra='[analysis]\nsensitivity = ["out"]\n'))
    out = items(p)["out"]
    assert out.method == "adjoint" and out.value == pytest.approx(2.5, rel=1e-12, abs=0)
    assert dict((n, v) for n, _, v in out.ranked) == pytest.approx(
        {"V1": 1.0, "R1": -0.75, "R2": 0.75}, rel=1e-9, abs=0
    )


def test_power_of_a_current_source():
    # 2 mA from gnd into a through the source, 1.5 kΩ from a to gnd: V(a) = 3 V, and
    # the source's power v·i = (0 − 3 V)·2 mA = −6 mW (it delivers).  P = −J²·R, so
    # S(I1) = 2 and S(R1) = 1 (closed form, Ohm's law).
    src = [
        ("I1", "current_source", ("gnd", "a"), "2 mA"),
        ("R1", "resistor", ("a", "gnd"), "1.5 kohm"),
    ]
    p = calcdoc.loads(project_text(src, extra='[analysis]\nsensitivity = ["I1.power"]\n'))
    s = items(p)["I1.power"]
    assert s.value == pytest.approx(-0.006, rel=1e-12, abs=0) and s.method == "adjoint"
    assert dict((n, v) for n, _, v in s.ranked) == pytest.approx(
        {"I1": 2.0, "R1": 1.0}, rel=1e-9, abs=0
    )
