"""Floating-point solving of wide-ranging and ill-conditioned circuits.

The reference values are computed in the test by nodal analysis in exact
rational arithmetic (Gauss–Jordan on fractions written here), so the
float paths are judged against the true solution, not against themselves.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest

import calcdoc
from calcdoc.mna import solve as solve_mod


def exact_nodal(source: Fraction, resistors, top: str):
    """Node voltages of a resistor network fed by ``source`` volts at ``top`` (to gnd).

    ``resistors``: (a, b, ohms as Fraction). Nodal analysis with V(top) known.
    """
    nodes = sorted({n for a, b, _ in resistors for n in (a, b)} - {"gnd", top})
    idx = {n: i for i, n in enumerate(nodes)}
    n = len(nodes)
    G = [[Fraction(0)] * (n + 1) for _ in range(n)]
    for a, b, r in resistors:
        g = 1 / r
        for p, q in ((a, b), (b, a)):
            if p in idx:
                G[idx[p]][idx[p]] += g
                if q in idx:
                    G[idx[p]][idx[q]] -= g
                elif q == top:
                    G[idx[p]][n] += g * source
    for c in range(n):  # Gauss–Jordan
        piv = next(r for r in range(c, n) if G[r][c] != 0)
        G[c], G[piv] = G[piv], G[c]
        G[c] = [v / G[c][c] for v in G[c]]
        for r in range(n):
            if r != c and G[r][c] != 0:
                f = G[r][c]
                G[r] = [x - f * y for x, y in zip(G[r], G[c], strict=True)]
    out = {nd: G[idx[nd]][n] for nd in nodes}
    out[top] = source
    out["gnd"] = Fraction(0)
    return out


def project(source_v: str, resistors, top: str):
    lines = [
        "[elements.V1]",
        'type = "voltage_source"',
        f'nodes = ["{top}", "gnd"]',
        f'value = "{source_v}"',
    ]
    for k, (a, b, r) in enumerate(resistors):
        lines += [
            f"[elements.R{k}]",
            'type = "resistor"',
            f'nodes = ["{a}", "{b}"]',
            f'value = "{r}"',
        ]
    return calcdoc.loads("\n".join(lines) + "\n")


def chain(sections: int):
    """Series 1 µΩ shunt links and 1 kΩ resistors alternating, 1 TΩ leakage at every node."""
    res = []
    for k in range(sections):
        series = "1 uohm" if k % 2 else "1 kohm"
        res.append((f"n{k}", f"n{k + 1}", series))
        res.append((f"n{k + 1}", "gnd", "1 Tohm"))
    res.append((f"n{sections}", "gnd", "10 Mohm"))
    return res


def as_fraction(text: str) -> Fraction:
    num, unit = text.split()
    scale = {
        "uohm": Fraction(1, 10**6),
        "kohm": 10**3,
        "Tohm": 10**12,
        "Mohm": 10**6,
        "ohm": 1,
        "mohm": Fraction(1, 1000),
        "Gohm": 10**9,
    }[unit]
    return Fraction(num) * scale


@pytest.mark.parametrize("path", ["dense", "sparse"])
def test_micro_ohm_to_tera_ohm_chain_is_solved_to_rounding(monkeypatch, path):
    res = chain(30)  # 31 nodes + the source current: 32 unknowns
    ref = exact_nodal(Fraction(10), [(a, b, as_fraction(r)) for a, b, r in res], "n0")
    monkeypatch.setattr(solve_mod, "EXACT_LIMIT", 0)
    if path == "sparse":
        monkeypatch.setattr(solve_mod, "DENSE_LIMIT", 0)
    r = calcdoc.solve(project("10 V", res, "n0")).cases[0]
    assert r.solution.method == f"{path} LU"
    for k, name in enumerate(r.netlist.nodes):
        assert float(r.branches.node_voltage[k]) == pytest.approx(float(ref[name]), rel=1e-13)
    assert r.solution.warnings == ()


def test_wide_range_network_above_the_exact_size_is_not_called_singular():
    res = chain(60)  # 62 unknowns: float path with its own values, not refused
    r = calcdoc.solve(project("10 V", res, "n0")).cases[0]
    assert r.solution.method == "dense LU"
    ref = exact_nodal(Fraction(10), [(a, b, as_fraction(x)) for a, b, x in res], "n0")
    got = r.branches.node_voltage
    want = np.array([float(ref[n]) for n in r.netlist.nodes])
    np.testing.assert_allclose(got, want, rtol=1e-13)


def test_condition_1e11_is_refined_to_rounding(monkeypatch):
    # 1 nA into node a; a 1 mΩ link to node b; 100 MΩ from each node to ground.
    # The nodal matrix has eigenvalues about 2e3 S and 2e-8 S: condition about
    # 1e11 (common practice, no source), so plain LU loses about 11 digits.
    # Closed form: V(a) = I·R3‖(R1 + R2), V(b) = V(a)·R2/(R1 + R2).
    text = """
[elements.I1]
type = "current_source"
nodes = ["gnd", "a"]
value = "1 nA"
[elements.R1]
type = "resistor"
nodes = ["a", "b"]
value = "1 mohm"
[elements.R2]
type = "resistor"
nodes = ["b", "gnd"]
value = "100 Mohm"
[elements.R3]
type = "resistor"
nodes = ["a", "gnd"]
value = "100 Mohm"
"""
    monkeypatch.setattr(solve_mod, "EXACT_LIMIT", 0)
    r = calcdoc.solve(calcdoc.loads(text)).cases[0]
    r1, r2, r3 = Fraction(1, 1000), Fraction(10**8), Fraction(10**8)
    va = Fraction(1, 10**9) * r3 * (r1 + r2) / (r3 + r1 + r2)
    vb = va * r2 / (r1 + r2)
    assert r.solution.condition > 1e10
    assert float(r.branches.node_voltage[1]) == pytest.approx(float(va), rel=1e-15)
    assert float(r.branches.node_voltage[2]) == pytest.approx(float(vb), rel=1e-15)
    assert r.solution.error_estimate < 1e-14 and r.solution.warnings == ()


def test_exact_path_has_no_rounding_figures():
    r = calcdoc.solve(project("1 V", [("top", "gnd", "1 kohm")], "top")).cases[0]
    assert r.solution.method == "exact rational"
    assert (r.solution.residual, r.solution.condition, r.solution.warnings) == (None, None, ())
    assert list(r.kcl) == [0.0, 0.0]
