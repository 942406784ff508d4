"""Tolerance analysis against closed forms, by-hand counts and recomputed samples.

Divider and maximum-power-transfer results are closed forms (common
practice, no source); Monte Carlo statistics are recomputed here from the
same seeded numpy generator and the closed form of the output, or from
scipy.stats.truncnorm where the sample stream is not reproduced.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import calcdoc
from calcdoc.analysis import tolerance
from calcdoc.mna import batch
from calcdoc.pipeline import solve_case


def divider(tol='"1 %"', method="extreme", volts="10", extra="", third=""):
    return calcdoc.loads(f"""
[elements.V1]
type = "voltage_source"
nodes = ["in", "gnd"]
value = "{volts} V"
[elements.R1]
type = "resistor"
nodes = ["in", "out"]
value = "3 kohm"
tolerance = {tol}
[elements.R2]
type = "resistor"
nodes = ["out", "gnd"]
value = "1 kohm"
tolerance = {tol}
{third}
[analysis]
tolerance = "{method}"
{extra}
""")


def result(project):
    return calcdoc.solve(project).extra["tolerance"].per_case[0]


def vout(r1, r2, v=10.0):
    return v * r2 / (r1 + r2)


def test_every_node_and_element_quantity_is_listed():
    t = result(divider())
    assert set(t.nodes) == {"in", "out"}
    assert {e: set(q) for e, q in t.elements.items()} == {
        e: {"voltage", "current", "power"} for e in ("V1", "R1", "R2")
    }
    assert t.note == "all 4 vertices of the tolerance box solved"
    assert t.nodes["in"].min == t.nodes["in"].max == 10.0


def transfer(load: str, name: str = "RL"):
    return calcdoc.loads(f"""
[elements.V1]
type = "voltage_source"
nodes = ["in", "gnd"]
value = "10 V"
[elements.Rs]
type = "resistor"
nodes = ["in", "m"]
value = "1 kohm"
[elements."{name}"]
type = "resistor"
nodes = ["m", "gnd"]
value = "{load}"
tolerance = "10 %"
rating = {{ power = "0.04998 W" }}
[limits]
power_fraction = 0.5
[analysis]
tolerance = "extreme"
""")


@pytest.mark.parametrize(
    ("load", "peak_from"),
    [("1.05 kohm", "lo"), ("0.95 kohm", "hi")],  # the best vertex below or above 1 kΩ
)
def test_power_peak_inside_the_box_from_either_vertex(load, peak_from):
    # P(RL) = V²·RL/(Rs + RL)² peaks at RL = Rs = 1 kΩ with V²/(4·Rs) = 25 mW
    # (maximum power transfer, common practice, no source). The element is
    # named with a dot, as names may be (design.md section 3).
    rl = 1000 * float(load.split()[0])
    t = result(transfer(load, name="R.L"))
    p = t.elements["R.L"]["power"]
    assert p.max == pytest.approx(0.025, rel=1e-10, abs=0) and p.max_where == "inside"
    assert p.max_at[0] == pytest.approx(1000 / rl - 1, abs=1e-6)
    ends = {"lo": 0.9 * rl, "hi": 1.1 * rl}
    assert p.min == pytest.approx(
        min(100 * x / (1000 + x) ** 2 for x in ends.values()), rel=1e-12, abs=0
    )
    assert p.min_where == "vertex"
    # only this one extreme needed the local search (every other output is
    # monotone in RL, or proved at a vertex)
    assert t.note == (
        "all 2 vertices of the tolerance box solved; 1 extreme searched further by a bounded "
        "local search from the best vertex, 1 improved by it"
    )
    chk = {c.id: c for c in t.checks}["R.L.power"]  # limit 0.04998 W × 50 % = 24.99 mW
    assert chk.value == pytest.approx(0.025, rel=1e-10, abs=0) and not chk.passed
    assert chk.utilization == pytest.approx(0.025 / 0.02499, rel=1e-9, abs=0)
    assert chk.margin == pytest.approx(0.02499 - 0.025, rel=1e-6, abs=0)
    assert chk.basis.endswith("; worst of the tolerance box")


def test_worst_case_against_a_zero_limit():
    # Above the derating curve's zero point (155 °C by default) no power is allowed.
    text = transfer("1.05 kohm").source.decode().replace("[limits]", '[limits]\nambient = "160 °C"')
    chk = {c.id: c for c in result(calcdoc.loads(text)).checks}["RL.power"]
    assert chk.limit == 0.0 and chk.utilization == math.inf and not chk.passed


def vccs_stage(extra=""):
    # 1 mA into a (Ra), a VCCS drawing g·V(a) from b into ground through Rb:
    # V(a) = I·Ra, V(b) = −g·I·Ra·Rb (hand solution). No voltage source: the
    # determinant of the nodal matrix, 1/(Ra·Rb), is positive over the box.
    return calcdoc.loads(f"""
[elements.I1]
type = "current_source"
nodes = ["gnd", "a"]
value = "1 mA"
[elements.Ra]
type = "resistor"
nodes = ["a", "gnd"]
value = "1 kohm"
tolerance = "5 %"
[elements.G1]
type = "vccs"
nodes = ["b", "gnd"]
gain = "2 mS"
control = ["a", "gnd"]
tolerance = "10 %"
[elements.Rb]
type = "resistor"
nodes = ["b", "gnd"]
value = "500 ohm"
tolerance = "5 %"
[analysis]
tolerance = "extreme"
{extra}
""")


@pytest.mark.parametrize("at_the_size_limit", [False, True])
def test_controlled_source_extremes_are_proved(monkeypatch, at_the_size_limit):
    if at_the_size_limit:  # "checked for systems of up to DENSE_UNKNOWNS unknowns": 2 here
        monkeypatch.setattr(batch, "DENSE_UNKNOWNS", 2)
    t = result(vccs_stage())
    b = t.nodes["b"]
    assert b.how == "vertices, proved" and t.elements["G1"]["current"].how == "vertices, proved"
    assert b.min == pytest.approx(-1e-3 * 2.2e-3 * 1050 * 525, rel=1e-12, abs=0)
    assert b.max == pytest.approx(-1e-3 * 1.8e-3 * 950 * 475, rel=1e-12, abs=0)
    assert b.min_at == (0.05, 0.1, 0.05) and b.max_at == (-0.05, -0.1, -0.05)
    assert t.elements["Rb"]["power"].how == "vertices and local search"


def test_controlled_voltage_source_extremes_are_proved():
    # A VCVS buffer: V(o) = µ·V(in)·R2/(R1 + R2), µ = 3 ± 10 % (hand solution).
    t = result(
        divider(
            third="""
[elements.E1]
type = "vcvs"
nodes = ["o", "gnd"]
gain = "3"
control = ["out", "gnd"]
tolerance = "10 %"
[elements.Ro]
type = "resistor"
nodes = ["o", "gnd"]
value = "1 kohm"
"""
        )
    )
    o = t.nodes["o"]
    assert o.how == "vertices, proved"
    assert o.max == pytest.approx(3.3 * vout(2970, 1010), rel=1e-12, abs=0)
    assert o.min == pytest.approx(2.7 * vout(3030, 990), rel=1e-12, abs=0)


def test_controlled_source_with_a_negative_determinant_is_proved():
    # 1 mA into Ra (1 kΩ ± 5 %), a VCVS E1 = µ·V(a) (µ = 3 ± 10 %) into Ro: V(o) =
    # µ·I·Ra (hand solution).  Unknowns V(a), V(o), I(E1): the source's row and column
    # make the MNA determinant −1/Ra at every vertex (expanded by hand along I(E1)),
    # one sign over the box, so the vertices are proved to hold the extremes.
    t = result(
        calcdoc.loads("""
[elements.I1]
type = "current_source"
nodes = ["gnd", "a"]
value = "1 mA"
[elements.Ra]
type = "resistor"
nodes = ["a", "gnd"]
value = "1 kohm"
tolerance = "5 %"
[elements.E1]
type = "vcvs"
nodes = ["o", "gnd"]
gain = "3"
control = ["a", "gnd"]
tolerance = "10 %"
[elements.Ro]
type = "resistor"
nodes = ["o", "gnd"]
value = "1 kohm"
[analysis]
tolerance = "extreme"
""")
    )
    o = t.nodes["o"]
    assert o.how == "vertices, proved"
    assert o.max == pytest.approx(3.3 * 1e-3 * 1050, rel=1e-12, abs=0)
    assert o.min == pytest.approx(2.7 * 1e-3 * 950, rel=1e-12, abs=0)


def test_vertices_picked_by_gradient_signs_above_the_limit(monkeypatch):
    # Three toleranced resistors, vertices picked by gradient signs (the limit
    # set to 2). By hand, every sign pattern of the 8 occurs among the outputs:
    # V(out) (−, +, 0), R1's voltage (+, −, 0), R1's current (−, −, 0), R3's
    # current (0, 0, −), the source current (+, +, +) and their opposites; a
    # zero component counts as positive. Nothing is proved on a partial set.
    monkeypatch.setattr(tolerance, "EXACT_VERTEX_LIMIT", 2)
    t = result(
        divider(
            third="""
[elements.R3]
type = "resistor"
nodes = ["in", "gnd"]
value = "2 kohm"
tolerance = "1 %"
"""
        )
    )
    assert t.solved == 8
    assert t.note == (
        "8 vertices picked by the signs of each output's gradient (3 toleranced quantities: "
        "too many to solve all 8 vertices)"
    )
    out = t.nodes["out"]
    assert out.how == "vertices and local search"
    assert (out.min, out.max) == pytest.approx((vout(3030, 990), vout(2970, 1010)), rel=1e-12)
    # with the limit at the number of quantities every vertex is solved
    monkeypatch.setattr(tolerance, "EXACT_VERTEX_LIMIT", 3)
    assert result(divider()).note == "all 4 vertices of the tolerance box solved"


def test_rss_band_and_the_deviations_giving_it():
    # 1 V divider: ∂V(out)/∂δ1 = −V·R1·R2/(R1 + R2)² = −0.1875 V, ∂V(out)/∂δ2 = +0.1875 V
    # (closed form); the band is their root-sum-square at 1 %.
    t = result(divider(method="rss", volts="1"))
    out = t.nodes["out"]
    half = math.hypot(0.1875 * 0.01, 0.1875 * 0.01)
    assert (out.min, out.max) == pytest.approx((0.25 - half, 0.25 + half), rel=1e-9, abs=0)
    assert out.min_at == (0.01, -0.01) and out.max_at == (-0.01, 0.01)
    assert (out.how, out.min_where, out.max_where) == ("first order",) * 3
    assert t.solved == 1
    # the current falls with either resistance: a one-sided slope each
    i = t.elements["R1"]["current"]
    di = 1 / 4000 * 0.01  # |∂I/∂δ| = V·R/(R1 + R2)² per resistor, summed: V/(R1 + R2)
    assert i.max - 0.00025 == pytest.approx(math.hypot(di * 0.75, di * 0.25), rel=1e-9, abs=0)


def test_rss_with_an_asymmetric_tolerance():
    # R2 −3 % / +1 %: V(out) rises with R2, so its band reaches 1 % up and 3 % down
    # in R2 (and ±1 % in R1): slopes 0.1875 V per unit deviation (closed form).
    t = result(divider(tol='{ minus = "3 %", plus = "1 %" }', method="rss", volts="1"))
    out = t.nodes["out"]
    g = 0.1875
    assert out.max == pytest.approx(0.25 + math.hypot(g * 0.03, g * 0.01), rel=1e-9, abs=0)
    assert out.min == pytest.approx(0.25 - math.hypot(g * 0.01, g * 0.03), rel=1e-9, abs=0)


def test_monte_carlo_samples_recomputed(monkeypatch):
    # The documented method: `samples` value sets, uniform within tolerance,
    # from numpy's generator with the given seed (chunks drawn in order form
    # one stream). Recomputed here with the closed form of V(out).
    monkeypatch.setattr(tolerance, "MC_CHUNK", 7)  # 30 samples in chunks of 7
    t = result(divider(tol='"5 %"', method="montecarlo", extra="samples = 30\nseed = 4"))
    u = np.random.default_rng(4).random((30, 2))
    d = -0.05 + 0.1 * u
    v = vout(3000 * (1 + d[:, 0]), 1000 * (1 + d[:, 1]))
    out = t.nodes["out"]
    assert (out.min, out.max) == pytest.approx((v.min(), v.max()), rel=1e-12, abs=0)
    assert out.min_at == pytest.approx(tuple(d[v.argmin()]), rel=1e-12, abs=0)
    assert out.max_at == pytest.approx(tuple(d[v.argmax()]), rel=1e-12, abs=0)
    assert out.mean == pytest.approx(v.mean(), rel=1e-12, abs=0)
    assert out.std == pytest.approx(v.std(ddof=1), rel=1e-9, abs=0)
    assert out.p01 == pytest.approx(np.percentile(v, 1), rel=1e-12, abs=0)
    assert out.p99 == pytest.approx(np.percentile(v, 99), rel=1e-12, abs=0)
    assert t.solved == 30
    assert t.note == (
        "30 random value sets (uniform within tolerance), seed 4; extremes are sample extremes"
    )
    label, edges, counts = t.histogram  # of the first node that varies: out, not in
    want_counts, want_edges = np.histogram(v, bins=len(counts))
    assert label == "V(out)" and list(counts) == want_counts.tolist()
    np.testing.assert_allclose(edges, want_edges, rtol=1e-12)


def test_histogram_of_a_small_variation_on_the_first_node():
    # 1 mA into 1 kΩ ± 1 %: V(a) varies by at most 20 mV, and a is node 1.
    t = result(
        calcdoc.loads("""
[elements.I1]
type = "current_source"
nodes = ["gnd", "a"]
value = "1 mA"
[elements.R1]
type = "resistor"
nodes = ["a", "gnd"]
value = "1 kohm"
tolerance = "1 %"
[analysis]
tolerance = "montecarlo"
samples = 50
seed = 2
""")
    )
    assert t.histogram is not None and t.histogram[0] == "V(a)"
    assert sum(t.histogram[2]) == 50


def test_truncated_normal_with_an_asymmetric_tolerance():
    # R = 1 kΩ −3 % / +1 %, normal with each side's tolerance as 3 σ, truncated
    # there. E[I] = E[V/(R·(1 + δ))] by quadrature over scipy.stats.truncnorm;
    # 20,000 samples: standard error of the mean below 1e-7 A (5 allowed).
    from scipy import integrate
    from scipy.stats import truncnorm

    t = result(
        calcdoc.loads("""
[elements.V1]
type = "voltage_source"
nodes = ["in", "gnd"]
value = "10 V"
[elements.R1]
type = "resistor"
nodes = ["in", "gnd"]
value = "1 kohm"
tolerance = { minus = "3 %", plus = "1 %" }
[analysis]
tolerance = "montecarlo"
distribution = "normal"
samples = 20000
seed = 8
""")
    )
    z = truncnorm(-3, 3)

    def current(x):
        delta = x * 0.01 / 3 if x >= 0 else x * 0.03 / 3
        return 10 / (1000 * (1 + delta)) * z.pdf(x)

    mean = integrate.quad(current, -3, 0)[0] + integrate.quad(current, 0, 3)[0]
    i = t.elements["R1"]["current"]
    assert i.mean == pytest.approx(mean, abs=5e-7)
    assert i.min >= 10 / 1010 - 1e-15 and i.max <= 10 / 970 + 1e-15
    assert "normal, tolerance = 3 σ, truncated at the tolerance limits" in t.note


def test_no_result_without_the_method():
    p = divider(method="none")
    assert tolerance.tolerance_result(p, solve_case(p)) is None


def test_tolerance_of_a_circuit_above_the_dense_batch_size():
    # 10 V over a chain of 70 × 1 kΩ and a 1 kΩ load; only the first link is
    # toleranced (±1 %): V(load) = 10 V · 1 kΩ / (71 kΩ ± 10 Ω) (closed form).
    lines = ['[elements.V1]\ntype = "voltage_source"\nnodes = ["n0", "gnd"]\nvalue = "10 V"']
    for k in range(70):
        tol = '\ntolerance = "1 %"' if k == 0 else ""
        lines.append(
            f'[elements.R{k}]\ntype = "resistor"\nnodes = ["n{k}", "n{k + 1}"]\n'
            f'value = "1 kohm"{tol}'
        )
    lines.append('[elements.RL]\ntype = "resistor"\nnodes = ["n70", "gnd"]\nvalue = "1 kohm"')
    lines.append('[analysis]\ntolerance = "extreme"')
    t = result(calcdoc.loads("\n".join(lines) + "\n"))
    load = t.nodes["n70"]
    # no controlled source: the determinant keeps its sign without a check, so
    # the vertex extremes are proved even above the dense size
    assert load.how == "vertices, proved"
    assert load.min == pytest.approx(10 * 1000 / 71010, rel=1e-12, abs=0)
    assert load.max == pytest.approx(10 * 1000 / 70990, rel=1e-12, abs=0)


def test_a_current_that_cancels_inside_the_box():
    # 1 mA into m; F1 takes β·1 mA back out, β = 1 ± 10 %: R1 carries
    # (1 − β)·1 mA, so its dissipation 1 kΩ·(1 − β)²·(1 mA)² is 10 µW at either
    # vertex and zero inside, at β = 1 (hand solution).
    t = result(
        calcdoc.loads("""
[elements.I1]
type = "current_source"
nodes = ["gnd", "m"]
value = "1 mA"
[elements.F1]
type = "cccs"
nodes = ["m", "gnd"]
gain = "1"
control = "I1"
tolerance = "10 %"
[elements.R1]
type = "resistor"
nodes = ["m", "gnd"]
value = "1 kohm"
[analysis]
tolerance = "extreme"
""")
    )
    p = t.elements["R1"]["power"]
    assert p.max == pytest.approx(1e-5, rel=1e-12, abs=0) and p.max_where == "vertex"
    assert p.min_where == "inside" and abs(p.min) <= 1e-20
    assert p.min_at[0] == pytest.approx(0.0, abs=1e-6)
    m = t.nodes["m"]  # V(m) = 1 kΩ·(1 − β)·1 mA: monotone, ±0.1 V at the vertices
    assert (m.min, m.max) == pytest.approx((-0.1, 0.1), rel=1e-12, abs=0)
    assert m.how == "vertices, proved"


def test_histogram_skips_a_node_held_at_zero():
    # Node a is held at 0 V by an ideal source in every sample, so it does not vary;
    # b carries 1 mA into 1 kΩ ± 1 % and does (V(b) = 1 V ± 10 mV, Ohm's law).  The
    # histogram is of the first node that varies: b.
    t = result(
        calcdoc.loads("""
[elements.V0]
type = "voltage_source"
nodes = ["a", "gnd"]
value = "0 V"
[elements.I1]
type = "current_source"
nodes = ["a", "b"]
value = "1 mA"
[elements.R1]
type = "resistor"
nodes = ["b", "a"]
value = "1 kohm"
tolerance = "1 %"
[analysis]
tolerance = "montecarlo"
samples = 50
seed = 2
""")
    )
    a = t.nodes["a"]
    assert (a.min, a.max) == (0.0, 0.0)
    b = t.nodes["b"]
    assert 0.99 <= b.min < b.max <= 1.01
    assert t.histogram is not None and t.histogram[0] == "V(b)"
    assert sum(t.histogram[2]) == 50


@pytest.mark.parametrize("method", ["extreme", "montecarlo", "rss"])
def test_a_circuit_without_devices_reports_no_state_search(method):
    # Resistors and sources only: no element has states, so no value set changes
    # state, the state search makes no pivot and no set's pivots are listed.
    t = result(divider(method=method, extra="samples = 20" if method == "montecarlo" else ""))
    assert (t.state_changes, t.state_iterations, t.set_iterations) == (0, 0, ())
    assert "another state" not in t.note


def test_histogram_of_a_microvolt_node():
    # 1 nA into 1 kΩ ± 1 %: V(a) = 1 µV ± 10 nV (Ohm's law).  A spread of a hundredth
    # of the node's own value is variation, however small the volts: it gets the
    # histogram.
    t = result(
        calcdoc.loads("""
[elements.I1]
type = "current_source"
nodes = ["gnd", "a"]
value = "1 nA"
[elements.R1]
type = "resistor"
nodes = ["a", "gnd"]
value = "1 kohm"
tolerance = "1 %"
[analysis]
tolerance = "montecarlo"
samples = 50
seed = 2
""")
    )
    a = t.nodes["a"]
    assert 0.99e-6 <= a.min < a.max <= 1.01e-6
    assert t.histogram is not None and t.histogram[0] == "V(a)"
    assert sum(t.histogram[2]) == 50


def test_a_toleranced_source_is_proved_at_the_vertices():
    # 10 V ± 5 % into the 3 kΩ / 1 kΩ divider (± 1 %): V(out) = V·R2/(R1 + R2) is
    # linear in V and monotone in each resistance (closed form), and V enters only
    # the right-hand side, so the vertices are proved to hold the extremes.
    text = divider().source.decode().replace('value = "10 V"', 'value = "10 V"\ntolerance = "5 %"')
    out = result(calcdoc.loads(text)).nodes["out"]
    assert out.how == "vertices, proved"
    assert out.max == pytest.approx(vout(2970, 1010, 10.5), rel=1e-12, abs=0)
    assert out.min == pytest.approx(vout(3030, 990, 9.5), rel=1e-12, abs=0)
