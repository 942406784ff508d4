"""True worst case, sensitivities of zero outputs, Monte Carlo distributions.

Extremes are checked against closed forms and against a dense grid search
written in the test over a closed-form expression of the circuit; the
truncated normal distribution against scipy.stats.truncnorm.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

import calcdoc
from calcdoc.pipeline import solve_case


def load_transfer(load_tol="10 %", rating="0.04998 W", source_tol=None):
    src = f'\ntolerance = "{source_tol}"' if source_tol else ""
    return calcdoc.loads(f"""
[elements.V1]
type = "voltage_source"
nodes = ["in", "gnd"]
value = "10 V"
[elements.Rs]
type = "resistor"
nodes = ["in", "m"]
value = "1 kohm"{src}
[elements.RL]
type = "resistor"
nodes = ["m", "gnd"]
value = "1.05 kohm"
tolerance = "{load_tol}"
rating = {{ power = "{rating}" }}
[limits]
power_fraction = 0.5
[analysis]
tolerance = "extreme"
""")


def test_maximum_power_transfer_inside_the_box_fails_the_check():
    # Maximum power transfer (common practice, no source): with a 1 kΩ source
    # resistance the load power V²·RL/(Rs+RL)² peaks at RL = Rs with V²/(4·Rs)
    # = 25.0 mW. RL = 1.05 kΩ ± 10 % spans 945 Ω … 1155 Ω, so the peak is inside.
    # Limit 0.04998 W × 50 % = 24.99 mW: the worst case fails, the vertices pass.
    r = calcdoc.solve(load_transfer())
    tol = r.extra["tolerance"].per_case[0]
    p = tol.elements["RL"]["power"]
    assert p.max == pytest.approx(100 / 4000, rel=1e-10)
    assert p.max_where == "inside"
    assert p.max_at[0] == pytest.approx(1000 / 1050 - 1, abs=1e-6)
    vertex = max(100 * x / (1000 + x) ** 2 for x in (945, 1155))
    assert vertex < 0.02499 < p.max
    chk = {c.id: c for c in tol.checks}["RL.power"]
    assert not chk.passed and chk.value == pytest.approx(0.025, rel=1e-10)
    assert r.cases[0].checks[0].passed  # at nominal values the check passes
    assert any(c.id == "RL.power" for _, c in r.failed)


def test_vertices_are_proved_for_voltages_and_currents():
    r = calcdoc.solve(load_transfer(source_tol="5 %"))
    tol = r.extra["tolerance"].per_case[0]
    assert tol.nodes["m"].how == "vertices, proved"
    assert tol.elements["RL"]["current"].how == "vertices, proved"
    assert tol.elements["RL"]["power"].how == "vertices and local search"
    # V(m) = 10·RL/(Rs+RL): lowest with Rs high and RL low (closed form)
    assert tol.nodes["m"].min == pytest.approx(10 * 945 / (1050 + 945), rel=1e-12)


def divider_power(rs, r1, r2):
    """Power in R1 for V1 = 10 V → Rs → node m, R1 ‖ R2 from m to ground (closed form)."""
    rp = r1 * r2 / (r1 + r2)
    vm = 10 * rp / (rs + rp)
    return vm * vm / r1


@pytest.mark.parametrize(
    ("rs", "r1", "r2", "tols"),
    [
        (1000, 2200, 2200, (0.3, 0.3, 0.3)),
        (500, 800, 3300, (0.5, 0.2, 0.4)),
        (1000, 900, 10000, (0.2, 0.25, 0.1)),
    ],
)
def test_power_extremes_against_a_grid_search(rs, r1, r2, tols):
    p = calcdoc.loads(f"""
[elements.V1]
type = "voltage_source"
nodes = ["in", "gnd"]
value = "10 V"
[elements.Rs]
type = "resistor"
nodes = ["in", "m"]
value = "{rs} ohm"
tolerance = "{tols[0] * 100:g} %"
[elements.R1]
type = "resistor"
nodes = ["m", "gnd"]
value = "{r1} ohm"
tolerance = "{tols[1] * 100:g} %"
[elements.R2]
type = "resistor"
nodes = ["m", "gnd"]
value = "{r2} ohm"
tolerance = "{tols[2] * 100:g} %"
[analysis]
tolerance = "extreme"
""")
    ex = calcdoc.solve(p).extra["tolerance"].per_case[0].elements["R1"]["power"]
    axes = [np.linspace(1 - t, 1 + t, 61) for t in tols]
    grid = [divider_power(rs * a, r1 * b, r2 * c) for a, b, c in itertools.product(*axes)]
    # the search can only do better than the grid, and never exceed the true extremes
    assert ex.max >= max(grid) * (1 - 1e-12)
    assert ex.min <= min(grid) * (1 + 1e-12)
    at = [1 + d for d in ex.max_at]
    assert ex.max == pytest.approx(divider_power(rs * at[0], r1 * at[1], r2 * at[2]), rel=1e-9)
    fine = [np.linspace(1 - t, 1 + t, 401) for t in tols]
    best = max(
        divider_power(rs * a, r1 * b, r2 * c)
        for a in fine[0]
        for b in fine[1][::8]
        for c in fine[2][::8]
    )
    assert ex.max <= best * (1 + 1e-3)


BRIDGE = """
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
value = "3 kohm"
[elements.Rd]
type = "resistor"
nodes = ["x", "y"]
value = "500 ohm"
[parameters]
k = "1"
[analysis]
sensitivity = ["Rd.current", "x", "R1.power"]
"""


def test_zero_output_gets_absolute_sensitivity_against_finite_differences():
    # Balanced bridge (R1/R2 = R3/R4): no detector current, so the
    # normalised sensitivity does not exist; the absolute one is the change of
    # the current per 1 % change of each value, checked by central differences.
    p = calcdoc.loads(BRIDGE)
    r = calcdoc.solve(p)
    doc = calcdoc.to_json(r)
    assert "NaN" not in str(doc) and "inf" not in str(doc).lower().replace("info", "")
    s = {x.output: x for x in r.extra["sensitivity"].items}
    det = s["Rd.current"]
    assert det.measure == "absolute" and det.value == pytest.approx(0, abs=1e-18)
    base = solve_case(p).values
    j = r.cases[0].netlist.index("Rd")
    for name, _, value in det.ranked:
        if name not in base:
            continue
        h = 1e-4
        up = solve_case(p, None, dict(base, **{name: float(base[name]) * (1 + h)}))
        dn = solve_case(p, None, dict(base, **{name: float(base[name]) * (1 - h)}))
        fd = (float(up.branches.current[j]) - float(dn.branches.current[j])) / (2 * h) * 0.01
        assert value == pytest.approx(fd, rel=1e-6, abs=1e-15)
    assert {n for n, _, _ in det.ranked} >= {"R1", "R2", "R3", "R4"}
    mags = [abs(v) for _, _, v in det.ranked]
    assert mags == sorted(mags, reverse=True)  # ranked by magnitude


def test_normalised_sensitivities_against_finite_differences():
    p = calcdoc.loads(BRIDGE.replace('value = "1 kohm"', 'value = "1.2 kohm"', 1))
    r = calcdoc.solve(p)
    base = solve_case(p).values
    for sens in r.extra["sensitivity"].items:
        assert sens.measure == "normalised"
        subject, _, q = sens.output.partition(".")

        def out(res, subject=subject, q=q):
            if not q:
                return float(res.branches.node_voltage[res.netlist.nodes.index(subject)])
            return float(getattr(res.branches, q)[res.netlist.index(subject)])

        y0 = out(solve_case(p))
        for name, kind, value in sens.ranked:
            if kind != "element":
                continue
            h = 1e-5
            up = out(solve_case(p, None, dict(base, **{name: float(base[name]) * (1 + h)})))
            dn = out(solve_case(p, None, dict(base, **{name: float(base[name]) * (1 - h)})))
            assert value == pytest.approx((up - dn) / (2 * h * y0), rel=1e-6, abs=1e-9)


def test_parameter_sensitivity_through_expressions():
    # Both arms scale with k: V(x) = 5·R2/(R1+R2) does not depend on k, but
    # I(R1) = 5/(k·3 kΩ) does, with normalised sensitivity −1 (closed form).
    p = calcdoc.loads("""
[parameters]
k = "1"
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
sensitivity = ["R1.current", "x"]
""")
    s = {x.output: x for x in calcdoc.solve(p).extra["sensitivity"].items}
    k_of = {n: v for n, kind, v in s["R1.current"].ranked if kind == "parameter"}
    assert k_of["k"] == pytest.approx(-1.0, rel=1e-6)
    assert "k" not in {n for n, kind, _ in s["x"].ranked if kind == "parameter"}


def test_normal_distribution_is_truncated_at_the_tolerance():
    from scipy.stats import truncnorm

    p = calcdoc.loads("""
[elements.V1]
type = "voltage_source"
nodes = ["in", "gnd"]
value = "10 V"
[elements.R1]
type = "resistor"
nodes = ["in", "gnd"]
value = "1 kohm"
tolerance = "3 %"
[analysis]
tolerance = "montecarlo"
distribution = "normal"
samples = 40000
seed = 5
""")
    tol = calcdoc.solve(p).extra["tolerance"].per_case[0]
    i = tol.elements["R1"]["current"]
    # every sample lies inside the tolerance band: I = 10 V / R within 10/1.03 … 10/0.97 mA
    assert i.min >= 10 / 1030 - 1e-15 and i.max <= 10 / 970 + 1e-15
    assert i.min_where == "sample" and "sample extremes" in tol.note
    # R = 1 kΩ·(1 + δ), δ ~ normal(σ = 1 %) truncated at ±3σ (scipy.stats.truncnorm):
    # to first order std(I) = 10 mA·std(δ)
    sd = 0.01 * truncnorm(-3, 3).std()
    assert i.std == pytest.approx(0.01 * sd, rel=0.02)
    # percentiles of I = 10 V / (1 kΩ·(1 + δ)): I falls as δ rises, so the 1st
    # percentile of I sits at the 99th of δ (scipy.stats.truncnorm quantiles)
    q99 = 0.01 * truncnorm(-3, 3).ppf(0.99)
    assert i.p01 == pytest.approx(10 / (1000 * (1 + q99)), rel=2e-4)
    assert i.p99 == pytest.approx(10 / (1000 * (1 - q99)), rel=2e-4)
    # a node with a fixed voltage gets no histogram
    assert tol.histogram is None


def _walk(obj, path=""):
    if isinstance(obj, float):
        assert math.isfinite(obj), path
    elif isinstance(obj, dict):
        for k, v in obj.items():
            _walk(v, f"{path}.{k}")
    elif isinstance(obj, list):
        for k, v in enumerate(obj):
            _walk(v, f"{path}[{k}]")


@pytest.mark.parametrize("demo", ["bridge_amplifier", "instrument_loop", "sensor_supply"])
def test_no_nan_or_infinity_in_any_demo_result(demo):
    _walk(calcdoc.to_json(calcdoc.solve(calcdoc.load(f"projects/{demo}.toml"))))


def test_no_nan_with_a_zero_rating_utilisation_and_a_zero_output():
    p = calcdoc.loads(BRIDGE + '\n[limits.nodes.x]\nmax = "0 V"\n')
    doc = calcdoc.to_json(calcdoc.solve(p))
    _walk(doc)
