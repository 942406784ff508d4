"""Node windows at their edges, limit bases in words, derating and the reverse-voltage measure.

Utilisation follows the documented rule of :class:`calcdoc.results.Check`:
value / limit for an upper bound, limit / value for a lower bound when both
are positive, otherwise none; margins and limits are worked out by hand.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import calcdoc
from calcdoc.verify.checks import RATINGS, max_check

# 1 V over four equal resistors: a = 1 V, b = 0.75 V, c = 0.5 V, d = 0.25 V;
# n held at −1 V; z and z2 hang on one resistor each and carry no current: 0 V
# (Ohm's law, common practice, no source).
WINDOWS = """
[elements.V1]
type = "voltage_source"
nodes = ["a", "gnd"]
value = "1 V"
[elements.R1]
type = "resistor"
nodes = ["a", "b"]
value = "1 kohm"
[elements.R2]
type = "resistor"
nodes = ["b", "c"]
value = "1 kohm"
[elements.R3]
type = "resistor"
nodes = ["c", "d"]
value = "1 kohm"
[elements.R4]
type = "resistor"
nodes = ["d", "gnd"]
value = "1 kohm"
[elements.V2]
type = "voltage_source"
nodes = ["n", "gnd"]
value = "-1 V"
[elements.Rz]
type = "resistor"
nodes = ["z", "gnd"]
value = "1 kohm"
[elements.Rz2]
type = "resistor"
nodes = ["z2", "gnd"]
value = "1 kohm"
[limits.nodes.a]
min = "0.5 V"
max = "2 V"
[limits.nodes.c]
min = "0 V"
[limits.nodes.d]
min = "0.2 V"
max = "0.5 V"
[limits.nodes.z]
max = "0 V"
[limits.nodes.z2]
min = "0.1 V"
max = "1 V"
[limits.nodes.n]
min = "0.5 V"
max = "1 V"
"""

# id: (value, limit, utilisation, margin), by hand
EXPECTED = {
    "nodes.a.min": (1.0, 0.5, 0.5, 0.5),
    "nodes.a.max": (1.0, 2.0, 0.5, 1.0),
    "nodes.c.min": (0.5, 0.0, None, 0.5),  # a limit of zero: no ratio
    "nodes.d.min": (0.25, 0.2, 0.8, 0.05),
    "nodes.d.max": (0.25, 0.5, 0.5, 0.25),
    "nodes.z.max": (0.0, 0.0, None, 0.0),  # exactly at a zero upper bound: passes
    "nodes.z2.min": (0.0, 0.1, None, -0.1),  # a value of zero under a lower bound
    "nodes.z2.max": (0.0, 1.0, 0.0, 1.0),
    "nodes.n.min": (-1.0, 0.5, None, -1.5),  # a negative value
    "nodes.n.max": (-1.0, 1.0, None, 2.0),
}


def test_node_windows_at_their_edges():
    checks = {c.id: c for c in calcdoc.solve(calcdoc.loads(WINDOWS)).cases[0].checks}
    assert set(checks) == set(EXPECTED)
    for cid, (value, limit, util, margin) in EXPECTED.items():
        c = checks[cid]
        assert (c.value, c.limit) == pytest.approx((value, limit), abs=1e-15), cid
        assert c.margin == pytest.approx(margin, abs=1e-15), cid
        assert c.utilization == (None if util is None else pytest.approx(util, rel=1e-12, abs=0)), (
            cid
        )
        assert c.bound == cid.rsplit(".", 1)[1]
        assert c.passed == (margin >= 0), cid


RATED = """
[elements.V1]
type = "voltage_source"
nodes = ["in", "gnd"]
value = "12 V"
rating = {{ current = "10 mA", voltage = "20 V" }}
[elements.R1]
type = "resistor"
nodes = ["in", "m"]
value = "1 kohm"
rating = {{ power = "0.1 W", voltage = "5 V" }}
[elements.R2]
type = "resistor"
nodes = ["m", "gnd"]
value = "2 kohm"
[limits]
power_fraction = 0.5
voltage_fraction = 0.8
current_fraction = 0.5
{ambient}
"""


def rated(ambient=""):
    r = calcdoc.solve(calcdoc.loads(RATED.format(ambient=ambient))).cases[0]
    return {c.id: c for c in r.checks}


def test_limits_and_their_basis_in_words():
    # 12 V over 1 kΩ + 2 kΩ: 4 mA; R1 takes 4 V and 16 mW (Ohm's law).
    c = rated()
    assert c["R1.power"].limit == pytest.approx(0.05) and c["R1.power"].basis == (
        "rated 0.1 W × 50 % policy"
    )
    assert c["R1.voltage"].limit == pytest.approx(4.0)
    assert c["R1.voltage"].basis == "rated 5 V × 80 % policy"
    # a source's current rating is its capability; its voltage rating is a rating
    assert c["V1.current"].basis == "capability 0.01 A × 50 % policy"
    assert c["V1.voltage"].basis == "rated 20 V × 80 % policy"
    assert (c["V1.voltage"].value, c["V1.voltage"].limit) == pytest.approx((12.0, 16.0))
    assert c["V1.current"].utilization == pytest.approx(0.004 / 0.005)


def test_derating_lowers_power_limits_only():
    # IEC 60115-1 curve, knee 70 °C, zero 155 °C (the default; from memory):
    # at 112.5 °C half the rated power is allowed: 0.1 W × 50 % × 0.5 = 25 mW.
    c = rated('ambient = "112.5 °C"')
    assert c["R1.power"].limit == pytest.approx(0.025, rel=1e-12, abs=0)
    assert c["R1.power"].basis == (
        "rated 0.1 W × 50 % policy × 0.5 derating at 112.5 °C (knee 70 °C, zero 155 °C)"
    )
    assert c["R1.voltage"].limit == pytest.approx(4.0)  # not derated
    assert c["V1.current"].limit == pytest.approx(0.005)
    # at or above the zero point nothing is allowed: any dissipation fails,
    # with an unbounded utilisation (16 mW / 0 W)
    hot = rated('ambient = "160 °C"')["R1.power"]
    assert hot.limit == 0.0 and not hot.passed and hot.utilization == math.inf


def test_a_check_against_a_zero_limit():
    c = max_check("X.power", "X", "power", 0.0, 0.0, "none allowed")
    assert c.utilization == math.inf and c.margin == 0.0 and c.passed


def test_reverse_voltage_is_the_voltage_against_the_forward_direction():
    # An element's reverse voltage is V(b) − V(a) where positive, else none
    # (common practice, no source): −3 V across it is 3 V reverse.
    measure = RATINGS["reverse_voltage"].measure
    assert measure(np.array([-3.0, 2.0, 0.0])).tolist() == [3.0, 0.0, 0.0]
    assert RATINGS["reverse_voltage"].of == "voltage"
