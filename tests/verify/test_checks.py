"""Design checks: limits, utilisation and margin from the design policy, by hand."""

from __future__ import annotations

import pytest

import calcdoc

# 12 V across 1 kΩ + 2 kΩ: I = 4 mA, V(m) = 8 V, P(R1) = 16 mW, P(R2) = 32 mW
# (Ohm's law, common practice, no source).
TEXT = """
[elements.V1]
type = "voltage_source"
nodes = ["in", "gnd"]
value = "12 V"
rating = { current = "10 mA" }
[elements.R1]
type = "resistor"
nodes = ["in", "m"]
value = "1 kohm"
rating = { power = "0.1 W", voltage = "5 V", current = "5 mA" }
[elements.R2]
type = "resistor"
nodes = ["m", "gnd"]
value = "2 kohm"
[limits]
power_fraction = 0.5
voltage_fraction = 0.8
current_fraction = 0.5
[limits.nodes.m]
min = "9 V"
max = "10 V"
"""


def checks():
    return {c.id: c for c in calcdoc.solve(calcdoc.loads(TEXT)).cases[0].checks}


def test_rating_checks_scale_by_policy():
    c = checks()
    p = c["R1.power"]
    assert (p.value, p.limit) == pytest.approx((0.016, 0.05))
    assert p.utilization == pytest.approx(0.016 / 0.05) and p.margin == pytest.approx(0.034)
    v = c["R1.voltage"]
    assert (v.value, v.limit, v.bound) == (pytest.approx(4.0), pytest.approx(4.0), "max")
    assert v.passed  # exactly at the limit passes (margin zero)
    i = c["R1.current"]
    assert (i.value, i.limit) == pytest.approx((0.004, 0.0025))
    assert not i.passed and i.margin == pytest.approx(-0.0015)
    assert i.utilization == pytest.approx(1.6)
    s = c["V1.current"]  # a supply delivering 4 mA: the magnitude is checked
    assert s.value == pytest.approx(0.004) and s.limit == pytest.approx(0.005)
    assert "capability" in s.basis


def test_node_window_utilisation_and_margin():
    c = checks()
    lo, hi = c["nodes.m.min"], c["nodes.m.max"]
    # V(m) = 8 V: below the 9 V minimum, inside the 10 V maximum
    assert (lo.value, lo.bound, lo.margin) == (pytest.approx(8.0), "min", pytest.approx(-1.0))
    assert lo.utilization == pytest.approx(9 / 8) and not lo.passed
    assert (hi.margin, hi.utilization) == (pytest.approx(2.0), pytest.approx(0.8))
    assert hi.passed


def test_check_failures_fail_the_command(tmp_path, capsys):
    from calcdoc.cli import main

    f = tmp_path / "p.toml"
    f.write_text(TEXT)
    assert main(["check", str(f)]) == 1
    f.write_text(
        TEXT.replace('min = "9 V"', 'min = "7 V"').replace(
            'current = "5 mA" }', 'current = "9 mA" }'
        )
    )
    assert main(["check", str(f)]) == 0
