"""Tolerance, sensitivity, sweeps, derating and preferred values against closed forms and standards."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest

import calcdoc
from calcdoc.analysis.preferred import SERIES, nearest
from calcdoc.model.derating import DEFAULT_DERATING, derating_factor, tcr_value
from calcdoc.model.project import Derating


def divider(tol="1 %", method="extreme", extra=""):
    return calcdoc.loads(f"""
[elements.V1]
type = "voltage_source"
nodes = ["in", "gnd"]
value = "10 V"
[elements.R1]
type = "resistor"
nodes = ["in", "out"]
value = "3 kohm"
tolerance = "{tol}"
rating = {{ power = "0.25 W" }}
[elements.R2]
type = "resistor"
nodes = ["out", "gnd"]
value = "1 kohm"
tolerance = "{tol}"
[limits.nodes.out]
max = "2.6 V"
[analysis]
tolerance = "{method}"
{extra}
""")


def test_divider_extremes_closed_form():
    # Closed form: V(out) = V·R2/(R1+R2) is lowest with R1 high and R2 low
    # (and highest the other way round): 10·0.99/(3.03+0.99) and 10·1.01/(2.97+1.01).
    r = calcdoc.solve(divider())
    tol = r.extra["tolerance"].per_case[0]
    lo, hi = 10 * 990 / (3030 + 990), 10 * 1010 / (2970 + 1010)
    out = tol.nodes["out"]
    assert out.min == pytest.approx(lo, rel=1e-12) and out.max == pytest.approx(hi, rel=1e-12)
    assert out.min_at == (0.01, -0.01) and out.max_at == (-0.01, 0.01)
    assert tol.solved == 4
    # the node window is checked at the worst case: 2.538 V against 2.6 V passes
    chk = {c.id: c for c in tol.checks}["nodes.out.max"]
    assert chk.value == pytest.approx(hi) and chk.passed


def test_bridge_extremes_closed_form():
    # Bridge output V(y) - V(x) = V(R4/(R3+R4) - R2/(R1+R2)); each term is
    # monotonic in its resistors, so the extremes are at vertices (closed form).
    p = calcdoc.loads("""
[elements.V1]
type = "voltage_source"
nodes = ["e", "gnd"]
value = "5 V"
[elements.R1]
type = "resistor"
nodes = ["e", "x"]
value = "1 kohm"
tolerance = "0.5 %"
[elements.R2]
type = "resistor"
nodes = ["x", "gnd"]
value = "1 kohm"
tolerance = "0.5 %"
[elements.R3]
type = "resistor"
nodes = ["e", "y"]
value = "1 kohm"
tolerance = "0.5 %"
[elements.R4]
type = "resistor"
nodes = ["y", "gnd"]
value = "1 kohm"
tolerance = "0.5 %"
[elements.E1]
type = "vcvs"
nodes = ["o", "gnd"]
gain = "10"
control = ["y", "x"]
[elements.RL]
type = "resistor"
nodes = ["o", "gnd"]
value = "1 kohm"
[analysis]
tolerance = "extreme"
""")
    tol = calcdoc.solve(p).extra["tolerance"].per_case[0]
    t = 0.005
    top = 5 * ((1 + t) / ((1 - t) + (1 + t)) - (1 - t) / ((1 + t) + (1 - t)))
    assert tol.nodes["o"].max == pytest.approx(10 * top, rel=1e-12)
    assert tol.nodes["o"].min == pytest.approx(-10 * top, rel=1e-12)
    assert tol.solved == 16


def test_sign_vertices_above_the_exact_bound():
    # 14 toleranced resistors in series across 14 V: the current extremes are at
    # all-low and all-high (closed form 14 V / sum R), found from the sensitivity signs.
    els = ['[elements.V1]\ntype = "voltage_source"\nnodes = ["n0", "gnd"]\nvalue = "14 V"']
    for k in range(14):
        b = "gnd" if k == 13 else f"n{k + 1}"
        els.append(
            f'[elements.R{k}]\ntype = "resistor"\nnodes = ["n{k}", "{b}"]\nvalue = "1 kohm"\ntolerance = "2 %"'
        )
    p = calcdoc.loads("\n".join(els) + '\n[analysis]\ntolerance = "extreme"\n')
    tol = calcdoc.solve(p).extra["tolerance"].per_case[0]
    assert "picked by the signs of each output's gradient" in tol.note
    i = tol.elements["R0"]["current"]
    assert i.max == pytest.approx(14 / (14 * 980), rel=1e-9)
    assert i.min == pytest.approx(14 / (14 * 1020), rel=1e-9)


def test_montecarlo_matches_first_order_statistics():
    # Uniform ±t deviations have variance t²/3; to first order
    # var(V) = Σ (∂V/∂δj)² t²/3 with ∂V/∂δ1 = -V R1 R2/(R1+R2)², ∂V/∂δ2 = +V R1 R2/(R1+R2)².
    # 20,000 samples: the standard error of the mean is std/√N and of the std
    # about std/√(2N); we allow 5 of each.
    r = calcdoc.solve(divider(tol="5 %", method="montecarlo", extra="samples = 20000\nseed = 3"))
    out = r.extra["tolerance"].per_case[0].nodes["out"]
    g = 10 * 3000 * 1000 / 4000**2
    sd = math.sqrt(2 * g**2 * 0.05**2 / 3)
    n = 20000
    assert out.mean == pytest.approx(
        2.5, abs=5 * sd / math.sqrt(n) + 1e-4
    )  # + second-order bias bound
    assert out.std == pytest.approx(sd, abs=5 * sd / math.sqrt(2 * n) + 0.002 * sd)
    assert (
        out.min >= 10 * 950 / (3150 + 950) - 1e-12 and out.max <= 10 * 1050 / (2850 + 1050) + 1e-12
    )


def test_rss_band_from_sensitivities():
    r = calcdoc.solve(divider(tol="1 %", method="rss"))
    out = r.extra["tolerance"].per_case[0].nodes["out"]
    g = 10 * 3000 * 1000 / 4000**2  # |∂V/∂δ| for each resistor (closed form, see above)
    half = math.hypot(g * 0.01, g * 0.01)
    assert out.max - 2.5 == pytest.approx(half, rel=1e-6)
    assert 2.5 - out.min == pytest.approx(half, rel=1e-6)


def test_sensitivities_against_closed_form_and_finite_differences():
    # Closed form: S(Vout, R1) = -R1/(R1+R2), S(Vout, R2) = R1/(R1+R2), S(Vout, V1) = 1.
    p = calcdoc.loads(
        divider()
        .source.decode()
        .replace('tolerance = "extreme"', 'sensitivity = ["out", "R1.power"]')
    )
    r = calcdoc.solve(p)
    sens = {s.output: s for s in r.extra["sensitivity"].items}
    s_out = {n: v for n, _, v in sens["out"].ranked}
    assert s_out["R1"] == pytest.approx(-0.75, rel=1e-9)
    assert s_out["R2"] == pytest.approx(0.75, rel=1e-9)
    assert s_out["V1"] == pytest.approx(1.0, rel=1e-9)
    # power of R1 (adjoint) against central finite differences of full solutions
    s_p = {n: v for n, _, v in sens["R1.power"].ranked}
    from calcdoc.pipeline import solve_case

    base = solve_case(p).values
    for name in ("R1", "R2", "V1"):
        h = 1e-6
        up = dict(base, **{name: float(base[name]) * (1 + h)})
        dn = dict(base, **{name: float(base[name]) * (1 - h)})
        pu = float(solve_case(p, None, up).branches.power[1])
        pd = float(solve_case(p, None, dn).branches.power[1])
        p0 = float(solve_case(p, None, base).branches.power[1])
        assert s_p[name] == pytest.approx((pu - pd) / (2 * h * p0), rel=1e-5)


def test_sweep_crossing_closed_form():
    # V(out) = 10·R2/(R1+R2) reaches 2.6 V when R2 = 2.6·R1/(10-2.6) = 1054.05 Ω (closed form).
    p = calcdoc.loads(
        divider().source.decode()
        + '\n[[sweeps]]\ntarget = "R2"\nfrom = "900 ohm"\nto = "1200 ohm"\npoints = 7\noutputs = ["out"]\n'
    )
    sw = calcdoc.solve(p).extra["sweeps"].sweeps[0]
    (c,) = sw.crossings
    assert c.check == "nodes.out.max" and c.direction == "rising"
    assert c.at == pytest.approx(2.6 * 3000 / 7.4, rel=1e-9)


def test_tolerance_json_shape():
    doc = calcdoc.to_json(calcdoc.solve(divider()))
    tol = doc["cases"][0]["tolerance"]
    assert tol["method"] == "extreme"
    assert set(tol["nodes"]["out"]) >= {"min", "max", "min_at", "max_at"}
    assert tol["nodes"]["out"]["min_at"] == {"R1": 0.01, "R2": -0.01}
    assert set(tol["elements"]["R1"]) == {"power", "voltage", "current"}
    power = tol["elements"]["R1"]["power"]
    assert all(type(power[k]) is float for k in ("min", "max", "nominal"))
    assert power["how"] == "vertices and local search"
    assert tol["nodes"]["out"]["how"] == "vertices, proved"


def test_cases_envelope_names_the_worst_case():
    p = calcdoc.load("projects/sensor_supply.toml")
    env = calcdoc.solve(p).extra["envelope"].envelope
    field = {w.subject: w for w in env.nodes}["field"]
    assert field.min_case == "Low line" and field.max_case == "High line"


# --- IEC 60115-1 derating curve: full rating to the knee, straight line to zero (shape from the standard;
#     the 70 °C / 155 °C default is common practice for film resistors, from memory).
@pytest.mark.parametrize(("t", "f"), [(25, 1), (70, 1), (112.5, 0.5), (155, 0), (170, 0)])
def test_derating_points(t, f):
    assert float(derating_factor(DEFAULT_DERATING, Fraction(str(t)))) == pytest.approx(f)


def test_derating_applies_to_power_checks():
    p = calcdoc.loads(
        divider()
        .source.decode()
        .replace("[analysis]", '[limits]\nambient = "112.5 °C"\n[analysis]')
    )
    chk = {c.id: c for c in calcdoc.solve(p).cases[0].checks}["R1.power"]
    assert chk.limit == pytest.approx(0.125)  # 0.25 W x 1.0 policy x 0.5 derating
    custom = Derating(Fraction(40), Fraction(140))
    assert derating_factor(custom, Fraction(90)) == Fraction(1, 2)


def test_tcr():
    # R(T) = R25 (1 + α (T - 25 °C)) (linear temperature coefficient, common practice)
    assert tcr_value(Fraction(1000), Fraction(100, 10**6), Fraction(125), Fraction(25)) == Fraction(
        1010
    )


# --- IEC 60063 preferred values (values from memory of the standard's tables)
def test_e_series_values():
    assert SERIES["E6"] == (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)
    assert SERIES["E12"] == (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)
    assert SERIES["E3"] == (1.0, 2.2, 4.7)
    for v in (1.02, 1.05, 3.01, 3.16, 4.02, 4.99, 6.04, 8.06, 9.76):
        assert v in SERIES["E96"]
    assert 9.20 in SERIES["E192"] and 9.19 not in SERIES["E192"]
    assert set(SERIES["E96"]) == set(SERIES["E192"][::2])
    assert set(SERIES["E48"]) == set(SERIES["E96"][::2])
    assert [len(SERIES[k]) for k in ("E3", "E6", "E12", "E24", "E48", "E96", "E192")] == [
        3,
        6,
        12,
        24,
        48,
        96,
        192,
    ]


def test_preferred_value_findings():
    assert nearest(4700, "E24")[0]
    ok, lo, hi = nearest(4800, "E24")
    assert not ok and lo == pytest.approx(4700) and hi == pytest.approx(5100)
    r = calcdoc.solve(calcdoc.load("projects/instrument_loop.toml"))
    bad = [f for f in r.extra["preferred_values"].findings if not f.in_series]
    assert [f.element for f in bad] == ["Rrep"]


def test_montecarlo_is_reproducible():
    a = calcdoc.solve(divider(tol="5 %", method="montecarlo", extra="samples = 500\nseed = 9"))
    b = calcdoc.solve(divider(tol="5 %", method="montecarlo", extra="samples = 500\nseed = 9"))
    assert (
        a.extra["tolerance"].per_case[0].nodes["out"]
        == b.extra["tolerance"].per_case[0].nodes["out"]
    )
    assert np.isfinite(a.extra["tolerance"].per_case[0].nodes["out"].std)


def test_preferred_value_is_judged_as_stated_not_as_shifted_by_temperature():
    # 2.2 kΩ is an E24 value (IEC 60063, from memory); at 125 °C with 100 ppm/K it is
    # 2.222 kΩ while operating, which must not make the stated part "not preferred"
    p = calcdoc.loads("""
[elements.V1]
type = "voltage_source"
nodes = ["in", "gnd"]
value = "5 V"
[elements.R1]
type = "resistor"
nodes = ["in", "gnd"]
value = "2k2"
series = "E24"
tcr = "100 ppm/K"
[analysis]
temperature = "125 °C"
""")
    r = calcdoc.solve(p)
    assert float(r.cases[0].values["R1"]) == pytest.approx(2222.0)  # R·(1 + α·ΔT)
    assert [f.in_series for f in r.extra["preferred_values"].findings] == [True]
