"""Tolerance and sweeps where a diode changes state inside the range.

Circuit: 5 V into a divider R1 = 6.2 kΩ (±5 %), R2 = 1 kΩ (±5 %), an ideal
diode (Vf = 0.7 V) from the divider tap to the reference.  Closed forms
(common practice, no source): unclamped, V(a) = 5·R2/(R1 + R2), which is
0.6944 V at nominal (the diode blocks); where that exceeds 0.7 V the
diode conducts and clamps V(a) at 0.7 V, carrying
(5 − 0.7)/R1 − 0.7/R2.
"""

from __future__ import annotations

import pytest
from parts_helpers import parts_text

import calcdoc

ELEMENTS = [
    ("V1", "voltage_source", ("in", "gnd"), {"value": "5 V"}),
    ("R1", "resistor", ("in", "a"), {"value": "6.2 kohm", "tolerance": "5 %"}),
    ("R2", "resistor", ("a", "gnd"), {"value": "1 kohm", "tolerance": "5 %"}),
    ("D1", "diode", ("a", "gnd"), {"forward_voltage": "0.7 V", "rating": {"current": "1 mA"}}),
]


def results(extra: str):
    return calcdoc.solve(calcdoc.loads(parts_text(ELEMENTS, extra=extra)))


def test_extreme_tolerance_reports_the_state_change():
    res = results('[analysis]\ntolerance = "extreme"\n')
    case = res.cases[0]
    assert case.netlist.state(case.netlist.index("D1")) == "blocking"
    tol = res.extra["tolerance"].per_case[0]
    va = tol.nodes["a"]
    assert va.max == pytest.approx(0.7, rel=1e-12)  # clamped where the diode conducts
    assert va.min == pytest.approx(5 * 950 / (6510 + 950), rel=1e-12)  # R1 high, R2 low
    assert dict(va.max_states) == {"D1": "conducting"} and va.min_states == ()
    assert va.how != "vertices, proved"
    assert tol.state_changes == 1 and tol.state_iterations >= 1  # only R1 low, R2 high
    assert len(tol.set_iterations) == 4 and sum(k > 0 for k in tol.set_iterations) == 1
    assert "1 of the 4 value sets put a device in another state" in tol.note
    i = tol.elements["D1"]["current"]
    assert i.max == pytest.approx((5 - 0.7) / 5890 - 0.7 / 1050, rel=1e-9)
    check = {c.id: c for c in tol.checks}["D1.current"]
    assert "D1 conducting" in check.basis
    doc = calcdoc.to_json(res)["cases"][0]["tolerance"]
    assert doc["states"]["changed"] == 1
    assert doc["nodes"]["a"]["max_states"] == {"D1": "conducting"}


def test_montecarlo_samples_find_their_own_states():
    res = results('[analysis]\ntolerance = "montecarlo"\nsamples = 400\nseed = 3\n')
    tol = res.extra["tolerance"].per_case[0]
    va = tol.nodes["a"]
    assert va.max == pytest.approx(0.7, rel=1e-12)
    assert 0 < tol.state_changes < 400


def test_sweep_points_find_their_own_states():
    extra = """
[[sweeps]]
target = "V1"
from = "0 V"
to = "10 V"
points = 11
outputs = ["a", "D1.current"]
"""
    sw = results(extra).extra["sweeps"].sweeps[0]
    for vs, va, i in zip(sw.points, sw.series["a"], sw.series["D1.current"], strict=True):
        unclamped = vs * 1000 / 7200
        assert va == pytest.approx(min(unclamped, 0.7), rel=1e-12, abs=1e-15)
        assert i == pytest.approx(max((vs - 0.7) / 6200 - 0.7 / 1000, 0.0), abs=1e-15)
    # the diode conducts from 0.7·7.2 = 5.04 V on: points 6 V … 10 V are in another state
    changed = [bool(s) for s in sw.states]
    assert changed == [False] * 6 + [True] * 5
    # one search (at the first changed point) finds the states the later points reuse
    searched = [k > 0 for k in sw.iterations]
    assert searched == [False] * 6 + [True] + [False] * 4
    crossing = [c for c in sw.crossings if c.check == "D1.current"]
    assert not crossing  # 1 mA is never reached: (10 − 0.7)/6200 − 0.7 mA = 0.8 mA


@pytest.mark.parametrize(("limit", "listed"), [(4, True), (3, False)])
def test_pivots_per_value_set_listed_up_to_the_documented_limit(monkeypatch, limit, listed):
    # The extreme method solves the 4 vertices of the two resistors' box; each set's
    # state-search pivots are listed when there are at most LISTED_SETS sets
    # (calcdoc.analysis.tolerance), totals only above.
    from calcdoc.analysis import tolerance

    monkeypatch.setattr(tolerance, "LISTED_SETS", limit)
    tol = results('[analysis]\ntolerance = "extreme"\n').extra["tolerance"].per_case[0]
    assert tol.state_changes == 1
    assert len(tol.set_iterations) == (4 if listed else 0)


def test_node_window_checks_name_the_states_of_their_own_extreme():
    # V(a) is lowest with R1 high and R2 low, diode blocking: 5·950/(6510 + 950);
    # highest where the diode conducts and clamps it at 0.7 V (closed forms above).
    # Each bound's worst-case check names the device states of its own extreme.
    res = results(
        '[limits.nodes.a]\nmin = "0.6 V"\nmax = "0.75 V"\n[analysis]\ntolerance = "extreme"\n'
    )
    checks = {c.id: c for c in res.extra["tolerance"].per_case[0].checks}
    low, high = checks["nodes.a.min"], checks["nodes.a.max"]
    assert low.value == pytest.approx(5 * 950 / (6510 + 950), rel=1e-12)
    assert "conducting" not in low.basis
    assert high.value == pytest.approx(0.7, rel=1e-12)
    assert high.basis.endswith("; there D1 conducting")


def test_a_window_across_two_nodes_at_its_worst_extreme():
    # V(in) − V(a) across R1: 5 V less V(a), so 5 − 0.7 = 4.3 V where the diode clamps
    # (lowest) and 5 − 5·950/7460 V with R1 high, R2 low, diode blocking (highest);
    # closed forms above.  The 4.35 V minimum is broken at the clamp, and the check
    # names the state there.
    res = results(
        '[[limits.across]]\nname = "drop"\nnodes = ["in", "a"]\nmin = "4.35 V"\nmax = "4.5 V"\n'
        '[analysis]\ntolerance = "extreme"\n'
    )
    tol = res.extra["tolerance"].per_case[0]
    drop = tol.across["drop"]
    assert drop.min == pytest.approx(4.3, rel=1e-12)
    assert drop.max == pytest.approx(5 - 5 * 950 / 7460, rel=1e-12)
    assert dict(drop.min_states) == {"D1": "conducting"} and drop.max_states == ()
    check = {c.id: c for c in tol.checks}["across.drop"]
    assert check.value == pytest.approx(4.3, rel=1e-12) and not check.passed
    assert check.margin == pytest.approx(-0.05, rel=1e-9)
    assert check.basis.endswith("; there D1 conducting")
