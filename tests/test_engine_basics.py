"""Engine checks against closed-form circuits and an independent solver."""

from __future__ import annotations

from fractions import Fraction

import networkx as nx
import numpy as np
import pytest

import calcdoc


def resistor_net(edges, source=("a", "b"), current="1 A"):
    """Project text: resistors on ``edges`` plus a current source into ``source``."""
    lines = ["[circuit]", f'reference = "{source[1]}"']
    lines += [
        "[elements.I1]",
        'type = "current_source"',
        f'nodes = ["{source[1]}", "{source[0]}"]',
        f'value = "{current}"',
    ]
    for k, (u, v, r) in enumerate(edges):
        lines += [
            f"[elements.R{k}]",
            'type = "resistor"',
            f'nodes = ["{u}", "{v}"]',
            f'value = "{r} ohm"',
        ]
    return "\n".join(lines)


def test_divider_closed_form():
    # Closed form: V(out) = Vs * R2 / (R1 + R2) (voltage divider; common practice, no source)
    p = calcdoc.loads(
        """
[elements.V1]
type = "voltage_source"
nodes = ["in", "gnd"]
value = "12 V"
[elements.R1]
type = "resistor"
nodes = ["in", "out"]
value = "4k7"
[elements.R2]
type = "resistor"
nodes = ["out", "gnd"]
value = "2k2"
"""
    )
    r = calcdoc.solve(p).cases[0]
    assert r.solution.method == "exact rational"
    exact = r.branches.exact_node_voltage
    assert exact[2] == Fraction(12) * 2200 / (4700 + 2200)
    assert r.ledger.imbalance == 0.0


def test_resistance_distance_matches_networkx():
    # Independent solver: networkx.resistance_distance (effective resistance
    # between two nodes of a resistor network) equals V(a)/I for a 1 A injection.
    rng = np.random.default_rng(7)
    g = nx.connected_watts_strogatz_graph(12, 4, 0.3, seed=3)
    edges = []
    for u, v in g.edges:
        r = int(rng.integers(1, 100))
        g[u][v]["weight"] = 1 / r  # networkx takes conductance as weight
        edges.append((f"n{u}", f"n{v}", r))
    p = calcdoc.loads(resistor_net(edges, source=("n0", "n5")))
    res = calcdoc.solve(p).cases[0]
    v = dict(zip(res.netlist.nodes, res.branches.node_voltage, strict=True))
    expected = nx.resistance_distance(g, 0, 5, weight="weight", invert_weight=False)
    assert v["n0"] == pytest.approx(expected, rel=1e-9)


def test_demo_projects_cover_every_element_type():
    from pathlib import Path

    from calcdoc.model.elements import KINDS

    root = Path(__file__).resolve().parent.parent
    seen = set()
    for f in sorted((root / "projects").glob("*.toml")):
        p = calcdoc.load(f)
        seen |= {e.type for e in p.elements}
        calcdoc.solve(p)
    assert seen == set(KINDS)
    calcdoc.solve(calcdoc.load(root / "templates" / "starter.toml"))


def test_instrument_loop_hand_values():
    # Hand check: 20 mA through 250 Ω gives 5 V; the repeater copies 20 mA into
    # 500 Ω (10 V); the converter gives 250 Ω x 20 mA = 5 V; the meter driver
    # pushes 0.4 mS x 5 V = 2 mA into 1 kΩ (2 V).
    from pathlib import Path

    root = Path(__file__).resolve().parent.parent
    r = calcdoc.solve(calcdoc.load(root / "projects" / "instrument_loop.toml")).cases[0]
    v = dict(zip(r.netlist.nodes, r.branches.node_voltage.tolist(), strict=True))
    assert v["sense"] == pytest.approx(5.0)
    assert v["rep"] == pytest.approx(10.0)
    assert v["conv"] == pytest.approx(5.0)
    assert v["meter"] == pytest.approx(2.0)
