"""KCL, KVL and the power ledger as invariants."""

from __future__ import annotations

import numpy as np
import pytest

import calcdoc
from calcdoc.verify import balance


def grid(n):
    els = [("I1", "current_source", ("gnd", f"n{n - 1}_{n - 1}"), "1 mA")]
    name = lambda i, j: "gnd" if i == j == 0 else f"n{i}_{j}"  # noqa: E731
    for i in range(n):
        for j in range(n):
            if j + 1 < n:
                els.append(
                    (f"h{i}_{j}", "resistor", (name(i, j), name(i, j + 1)), f"{100 + i + j} ohm")
                )
            if i + 1 < n:
                els.append(
                    (f"v{i}_{j}", "resistor", (name(i, j), name(i + 1, j)), f"{200 + i * j} ohm")
                )
    return els


def test_loop_count_is_cyclomatic_number(make_project):
    # Graph theory: a connected graph has E - N + 1 independent loops
    # (the cyclomatic number; common practice, no source).
    p = make_project(grid(5))
    r = calcdoc.solve(p).cases[0]
    e, n = len(p.elements), len(p.nodes)
    assert r.kvl.count == e - n + 1
    for lp in r.kvl.loops:  # each loop closes: it enters and leaves every node it visits
        touched = {}
        for name, sign in zip(lp.elements, lp.signs, strict=True):
            a, b = p.element(name).nodes
            start, end = (a, b) if sign > 0 else (b, a)
            touched[start] = touched.get(start, 0) + 1
            touched[end] = touched.get(end, 0) - 1
        assert all(v == 0 for v in touched.values())


def test_large_circuit_path_gives_the_same_sums(make_project, monkeypatch):
    p = make_project(grid(6))
    listed = calcdoc.solve(p).cases[0].kvl
    monkeypatch.setattr(balance, "LOOP_LISTING_LIMIT", 0)
    summary = calcdoc.solve(p).cases[0].kvl
    assert not summary.listed and summary.loops == ()
    assert list(summary.chords) == [lp.chord for lp in listed.loops]
    np.testing.assert_allclose(summary.sums, [lp.sum for lp in listed.loops], atol=1e-12)


def test_kvl_detects_a_wrong_source_voltage(make_project):
    # A loop sum uses each element's own law, so a solution that broke a
    # source's law would show: corrupt the law voltage and the sum moves.
    p = make_project(
        [
            ("V1", "voltage_source", ("a", "gnd"), "5 V"),
            ("R1", "resistor", ("a", "b"), "1 kohm"),
            ("R2", "resistor", ("b", "gnd"), "1 kohm"),
        ]
    )
    r = calcdoc.solve(p).cases[0]
    from dataclasses import replace

    law = r.branches.law_voltage.copy()
    law[0] += 0.1
    bad = replace(r.branches, law_voltage=law, exact_law_voltage=None)
    assert balance.kvl_loops(r.netlist, bad).max_abs_sum == pytest.approx(0.1)


def test_ledger_tellegen(make_project):
    # Tellegen's theorem: delivered power equals absorbed power.
    r = calcdoc.solve(make_project(grid(4))).cases[0]
    assert r.ledger.absorbed == pytest.approx(r.ledger.delivered, rel=1e-12)
    assert r.ledger.delivered == pytest.approx(-float(r.branches.power[0]))


def test_spanning_tree_paths_agree_above_the_small_size(make_project, monkeypatch):
    # the scipy breadth-first tree (used above SMALL elements) and the plain one
    # give loops of the same count (E − N + 1) and sums at rounding level
    p = make_project(grid(8))
    plain = calcdoc.solve(p).cases[0].kvl
    monkeypatch.setattr(balance, "SMALL", 0)
    big = calcdoc.solve(p).cases[0].kvl
    assert big.count == plain.count == len(p.elements) - len(p.nodes) + 1
    assert big.max_abs_sum <= 1e-12 and plain.max_abs_sum <= 1e-12
