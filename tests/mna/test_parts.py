"""Contacts, diodes, op-amps, capacitors and coils against hand solutions.

Every expected value is a closed form written here (common practice, no
source): Ohm's law, the ideal-op-amp gain formulas, the zener shunt
regulator, the diode-OR and the full-wave bridge.
"""

from __future__ import annotations

import math

import pytest
from parts_helpers import element_results, node_voltages, solve_parts, state_of

import calcdoc


def near(a: float, b: float) -> bool:
    return math.isclose(a, b, rel_tol=1e-12, abs_tol=1e-15)


@pytest.mark.parametrize(("vs", "vf", "r", "rs"), [(5, 0.7, 1000, None), (12, 2.0, 470, 8.5)])
def test_diode_with_series_resistor(vs, vf, r, rs):
    # Closed form: I = (V − Vf)/(R + Rs) while the diode conducts (common practice, no source).
    d = {"forward_voltage": f"{vf} V"} | ({"resistance": f"{rs} ohm"} if rs else {})
    case = solve_parts(
        [
            ("V1", "voltage_source", ("in", "gnd"), {"value": f"{vs} V"}),
            ("R1", "resistor", ("in", "a"), {"value": f"{r} ohm"}),
            ("D1", "diode", ("a", "gnd"), d),
        ]
    ).cases[0]
    want = (vs - vf) / (r + (rs or 0))
    v, i = element_results(case, "D1")
    assert near(i, want)
    assert near(v, vf + (rs or 0) * want)
    assert state_of(case, "D1") == "conducting"
    assert case.solution.method == "exact rational"
    assert case.states.holds and case.states.iterations >= 1


def test_reversed_diode_blocks_with_the_full_voltage():
    # Closed form: a blocking diode carries no current, so it takes the whole source voltage.
    case = solve_parts(
        [
            ("V1", "voltage_source", ("in", "gnd"), {"value": "5 V"}),
            ("R1", "resistor", ("in", "a"), {"value": "1 kohm"}),
            (
                "D1",
                "diode",
                ("gnd", "a"),
                {"forward_voltage": "0.7 V", "rating": {"reverse_voltage": "10 V"}},
            ),
        ]
    ).cases[0]
    v, i = element_results(case, "D1")
    assert state_of(case, "D1") == "blocking" and i == 0.0 and near(v, -5.0)
    check = {c.id: c for c in case.checks}["D1.reverse_voltage"]
    assert near(check.value, 5.0)


@pytest.mark.parametrize(("rin", "rf", "vin"), [(1000, 4700, 1.0), (2200, 10_000, -0.5)])
def test_inverting_amplifier(rin, rf, vin):
    # Closed form: ideal inverting amplifier, gain −Rf/Rin (common practice, no source).
    case = solve_parts(
        [
            ("V1", "voltage_source", ("in", "gnd"), {"value": f"{vin} V"}),
            ("Rin", "resistor", ("in", "n"), {"value": f"{rin} ohm"}),
            ("Rf", "resistor", ("n", "out"), {"value": f"{rf} ohm"}),
            ("U1", "opamp", ("out", "gnd"), {"control": ["gnd", "n"]}),
            ("RL", "resistor", ("out", "gnd"), {"value": "10 kohm"}),
        ]
    ).cases[0]
    v = node_voltages(case)
    assert near(v["out"], -rf / rin * vin)
    assert near(v["n"], 0.0)  # the virtual short
    # output current flows out of the op-amp into Rf and RL: negative through U1 (out → gnd)
    _, i = element_results(case, "U1")
    assert near(i, -(v["out"] / 10_000 + (v["out"] - v["n"]) / rf))


def test_non_inverting_amplifier():
    # Closed form: ideal non-inverting amplifier, gain 1 + Rf/Rg (common practice, no source).
    case = solve_parts(
        [
            ("V1", "voltage_source", ("in", "gnd"), {"value": "0.8 V"}),
            (
                "U1",
                "opamp",
                ("out", "gnd"),
                {
                    "control": ["in", "n"],
                    "output_range": ["-12 V", "12 V"],
                    "rating": {"current": "20 mA"},
                },
            ),
            ("Rf", "resistor", ("out", "n"), {"value": "2.2 kohm"}),
            ("Rg", "resistor", ("n", "gnd"), {"value": "1 kohm"}),
        ]
    ).cases[0]
    out = node_voltages(case)["out"]
    assert near(out, 0.8 * (1 + 2200 / 1000))
    checks = {c.id: c for c in case.checks}
    assert near(checks["U1.output_range"].value, out)
    assert checks["U1.output_range"].bound == "max" and near(checks["U1.output_range"].limit, 12)
    assert near(checks["U1.current"].value, out / 3200)


def _zener_shunt(vs: float):
    return solve_parts(
        [
            ("V1", "voltage_source", ("in", "gnd"), {"value": f"{vs} V"}),
            ("Rs", "resistor", ("in", "out"), {"value": "470 ohm"}),
            (
                "Z1",
                "diode",
                ("gnd", "out"),
                {"forward_voltage": "0.7 V", "resistance": "5 ohm", "breakdown_voltage": "5.1 V"},
            ),
            ("RL", "resistor", ("out", "gnd"), {"value": "1 kohm"}),
        ]
    ).cases[0]


def test_zener_shunt_regulator_in_breakdown():
    # Closed form, zener in breakdown as Vz in series with rz (common practice, no source):
    # V = (Vs/Rs + Vz/rz) / (1/Rs + 1/rz + 1/RL)
    vs, rs, vz, rz, rl = 15.0, 470.0, 5.1, 5.0, 1000.0
    case = _zener_shunt(vs)
    v = node_voltages(case)["out"]
    assert near(v, (vs / rs + vz / rz) / (1 / rs + 1 / rz + 1 / rl))
    assert state_of(case, "Z1") == "breakdown"
    _, i = element_results(case, "Z1")
    assert near(i, -(v - vz) / rz)  # reverse current: from the cathode to the anode


def test_zener_shunt_regulator_out_of_breakdown():
    # Closed form: below Vz the zener blocks and the output is the divider Vs·RL/(Rs + RL).
    vs = 6.0
    case = _zener_shunt(vs)
    v = node_voltages(case)["out"]
    assert near(v, vs * 1000 / 1470) and v < 5.1
    assert state_of(case, "Z1") == "blocking"
    tests = {t.text: t for t in case.states.devices[0].tests}
    assert near(tests["V ≥ −Vbr"].margin, 5.1 - v)


def test_diode_or_one_supply_blocks():
    # Closed form: the higher supply conducts, out = 12 − 0.7 V; the other diode is
    # reverse-biased by 11.3 − 10 = 1.3 V (common practice, no source).
    case = solve_parts(
        [
            ("VA", "voltage_source", ("a", "gnd"), {"value": "12 V"}),
            ("VB", "voltage_source", ("b", "gnd"), {"value": "10 V"}),
            ("DA", "diode", ("a", "out"), {"forward_voltage": "0.7 V"}),
            (
                "DB",
                "diode",
                ("b", "out"),
                {"forward_voltage": "0.7 V", "rating": {"reverse_voltage": "40 V"}},
            ),
            ("RL", "resistor", ("out", "gnd"), {"value": "100 ohm"}),
        ]
    ).cases[0]
    assert near(node_voltages(case)["out"], 11.3)
    assert state_of(case, "DA") == "conducting" and state_of(case, "DB") == "blocking"
    assert near({c.id: c for c in case.checks}["DB.reverse_voltage"].value, 1.3)
    assert near(element_results(case, "DA")[1], 11.3 / 100)


@pytest.mark.parametrize("vs", [10.0, -10.0])
def test_bridge_rectifier_either_polarity(vs):
    # Closed form: two diodes conduct in series with the load, so
    # I = (|V| − 2·Vf)/(R + 2·Rs) in the same direction for either polarity.
    vf, rs, rl = 0.7, 0.2, 100.0
    d = {"forward_voltage": f"{vf} V", "resistance": f"{rs} ohm"}
    case = solve_parts(
        [
            ("V1", "voltage_source", ("p", "gnd"), {"value": f"{vs} V"}),
            ("D1", "diode", ("p", "pos"), d),
            ("D2", "diode", ("gnd", "pos"), d),
            ("D3", "diode", ("neg", "p"), d),
            ("D4", "diode", ("neg", "gnd"), d),
            ("RL", "resistor", ("pos", "neg"), {"value": f"{rl} ohm"}),
        ]
    ).cases[0]
    _, i = element_results(case, "RL")
    assert near(i, (abs(vs) - 2 * vf) / (rl + 2 * rs))
    on = {"D1", "D4"} if vs > 0 else {"D2", "D3"}
    assert {d for d in ("D1", "D2", "D3", "D4") if state_of(case, d) == "conducting"} == on


def test_capacitor_open_and_coil_short_at_dc():
    # Closed form: the capacitor carries no current, so R1 and the coil's winding
    # resistance R(L1) form the only path: I = V/(R1 + R_L); V(C1) = I·R_L;
    # energies ½CV² and ½LI² (common practice, no source).
    v, r1, rl, c, ind = 10.0, 400.0, 100.0, 10e-6, 0.5
    case = solve_parts(
        [
            ("V1", "voltage_source", ("in", "gnd"), {"value": f"{v} V"}),
            ("R1", "resistor", ("in", "a"), {"value": f"{r1} ohm"}),
            (
                "L1",
                "inductor",
                ("a", "gnd"),
                {"value": f"{ind} H", "resistance": f"{rl} ohm", "rating": {"current": "50 mA"}},
            ),
            ("C1", "capacitor", ("a", "gnd"), {"value": "10 uF", "rating": {"voltage": "16 V"}}),
        ]
    ).cases[0]
    i = v / (r1 + rl)
    assert near(element_results(case, "C1")[1], 0.0)
    assert near(element_results(case, "C1")[0], i * rl)
    assert near(float(case.branches.energy[case.netlist.index("C1")]), 0.5 * c * (i * rl) ** 2)
    assert near(float(case.branches.energy[case.netlist.index("L1")]), 0.5 * ind * i**2)
    checks = {ch.id: ch for ch in case.checks}
    assert near(checks["C1.voltage"].value, i * rl) and near(checks["L1.current"].value, i)


def test_ideal_coil_is_a_short():
    # Closed form: with no winding resistance the coil is a short: I = V/R1, V(L1) = 0.
    case = solve_parts(
        [
            ("V1", "voltage_source", ("in", "gnd"), {"value": "6 V"}),
            ("R1", "resistor", ("in", "a"), {"value": "300 ohm"}),
            ("L1", "inductor", ("a", "gnd"), {"value": "1 mH"}),
        ]
    ).cases[0]
    v, i = element_results(case, "L1")
    assert v == 0.0 and near(i, 0.02)


def test_contact_states_per_case_and_open_contact_voltage():
    # Closed form: closed, the contact (30 mΩ) and R1 share 24 V: I = 24/(R1 + 0.03);
    # open, no current flows and the whole 24 V stands across the contact.
    text = """
[elements.V1]
type = "voltage_source"
nodes = ["bus", "gnd"]
value = "24 V"
[elements.K1]
type = "switch"
nodes = ["bus", "load"]
resistance = "30 mohm"
rating = { current = "5 A", voltage = "250 V" }
[elements.R1]
type = "resistor"
nodes = ["load", "gnd"]
value = "12 ohm"
[elements.R2]
type = "resistor"
nodes = ["load", "gnd"]
value = "1 kohm"
[[cases]]
name = "contact open"
set = { K1 = "open" }
"""
    res = calcdoc.solve(calcdoc.loads(text))
    closed, opened = res.cases
    rl = 12 * 1000 / 1012
    assert near(element_results(closed, "K1")[1], 24 / (rl + 0.03))
    assert element_results(opened, "K1") == (24.0, 0.0)
    assert state_of(closed, "K1") == "closed" and state_of(opened, "K1") == "open"
    check = {c.id: c for c in opened.checks}["K1.voltage"]
    assert near(check.value, 24.0) and near(check.limit, 250.0)
    doc = calcdoc.to_json(res)
    assert doc["cases"][1]["elements"]["K1"]["state"] == "open"
    assert "K1.voltage" in {c["id"] for c in doc["envelope"]["checks"]}


def test_across_window_checks_the_difference():
    # Closed form: V(a) − V(b) across the middle resistor of three equal ones is Vs/3.
    text = """
[elements.V1]
type = "voltage_source"
nodes = ["top", "gnd"]
value = "30 V"
[elements.R1]
type = "resistor"
nodes = ["top", "a"]
value = "1 kohm"
[elements.R2]
type = "resistor"
nodes = ["a", "b"]
value = "1 kohm"
[elements.R3]
type = "resistor"
nodes = ["b", "gnd"]
value = "1 kohm"
[[limits.across]]
name = "middle"
nodes = ["a", "b"]
min = "12 V"
max = "30 V"
"""
    case = calcdoc.solve(calcdoc.loads(text)).cases[0]
    check = {c.id: c for c in case.checks}["across.middle"]
    assert near(check.value, 10.0) and check.bound == "min" and not check.passed
    assert near(check.margin, -2.0)


def test_a_hair_beyond_the_threshold_is_decided_on_the_exact_solution():
    # 0.7 V + 10⁻²⁰ V through 1 kΩ into a 0.7 V ideal diode: in floating point the
    # source equals the threshold; exactly, the diode conducts I = 10⁻²⁰/1000 A
    # (closed form, Ohm's law; common practice, no source).
    from fractions import Fraction

    case = solve_parts(
        [
            ("V1", "voltage_source", ("in", "gnd"), {"value": "0.70000000000000000001 V"}),
            ("R1", "resistor", ("in", "a"), {"value": "1 kohm"}),
            ("D1", "diode", ("a", "gnd"), {"forward_voltage": "0.7 V"}),
        ]
    ).cases[0]
    assert state_of(case, "D1") == "conducting"
    assert case.branches.exact_current[case.netlist.index("D1")] == Fraction(1, 10**23)
    assert case.states.holds
