"""Random circuits with the new parts against an independent solver written here.

The reference is a plain dense MNA of our own (numpy), with every
combination of diode states tried and the consistent one kept: a
different method (exhaustive search instead of complementary pivoting) and
different code (no calcdoc stamps).  With positive slope resistances and
op-amp stages that do not feed back, the solution is unique.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from parts_helpers import parts_text

import calcdoc


def random_circuit(seed: int, diodes: int, opamps: int):
    """(calcdoc element tuples, reference description) of a random circuit."""
    rng = np.random.default_rng(seed)
    n = int(rng.integers(3, 7))
    nodes = ["gnd", *(f"n{k}" for k in range(n))]
    els: list = []
    ref: list = []

    def add(name, kind, a, b, keys, **data):
        els.append((name, kind, (a, b), keys))
        ref.append(dict(name=name, kind=kind, a=a, b=b, **data))

    for k in range(1, len(nodes)):  # spanning tree of resistors
        r = float(rng.integers(10, 5000))
        add(
            f"R{k}",
            "resistor",
            nodes[k],
            nodes[int(rng.integers(0, k))],
            {"value": f"{r} ohm"},
            r=r,
        )
    for k in range(int(rng.integers(1, 3))):  # sources from distinct nodes to the reference
        v = float(rng.integers(-24, 25)) or 5.0
        add(f"V{k}", "voltage_source", nodes[1 + k], "gnd", {"value": f"{v} V"}, v=v)

    def pair():
        a, b = rng.choice(len(nodes), 2, replace=False)
        return nodes[int(a)], nodes[int(b)]

    for k in range(diodes):
        a, b = pair()
        vf, r = float(rng.uniform(0.2, 2.5)), float(rng.uniform(0.1, 50))
        keys = {"forward_voltage": f"{vf!r} V", "resistance": f"{r!r} ohm"}
        vbr = None
        if rng.random() < 0.4:
            vbr = float(rng.uniform(2, 15))
            keys["breakdown_voltage"] = f"{vbr!r} V"
        add(f"D{k}", "diode", a, b, keys, vf=vf, r=r, vbr=vbr)
    a, b = pair()
    add("C0", "capacitor", a, b, {"value": "1 uF"})
    a, b = pair()
    rl = float(rng.integers(1, 200))
    add("L0", "inductor", a, b, {"value": "10 mH", "resistance": f"{rl} ohm"}, r=rl)
    a, b = pair()
    rk = float(rng.integers(1, 100)) / 100
    add("K0", "switch", a, b, {"resistance": f"{rk} ohm"}, r=rk)
    a, b = pair()
    add("K1", "switch", a, b, {"state": "open"})
    for k in range(opamps):  # inverting stages reading a node of the network
        src = nodes[int(rng.integers(1, len(nodes)))]
        rin, rf = float(rng.integers(100, 10_000)), float(rng.integers(100, 10_000))
        add(f"Rin{k}", "resistor", src, f"m{k}", {"value": f"{rin} ohm"}, r=rin)
        add(f"Rf{k}", "resistor", f"m{k}", f"o{k}", {"value": f"{rf} ohm"}, r=rf)
        add(f"U{k}", "opamp", f"o{k}", "gnd", {"control": ["gnd", f"m{k}"]}, cp="gnd", cn=f"m{k}")
        add(f"RL{k}", "resistor", f"o{k}", "gnd", {"value": "1 kohm"}, r=1000.0)
        vf = float(rng.uniform(0.3, 2))
        add(
            f"DO{k}",
            "diode",
            f"o{k}",
            "gnd",
            {"forward_voltage": f"{vf!r} V", "resistance": "5 ohm"},
            vf=vf,
            r=5.0,
            vbr=None,
        )
    return els, ref


def reference_solve(ref) -> dict[str, float]:
    """Node voltages by our own MNA, every diode-state combination tried."""
    nodes = ["gnd"]
    for e in ref:
        for n in (e["a"], e["b"]):
            if n not in nodes:
                nodes.append(n)
    idx = {n: i - 1 for i, n in enumerate(nodes)}  # gnd → −1
    N = len(nodes) - 1
    extra = [e for e in ref if e["kind"] in ("voltage_source", "opamp")]
    size = N + len(extra)
    diodes = [e for e in ref if e["kind"] == "diode"]
    choices = [["off", "on", *(["rev"] if d["vbr"] else [])] for d in diodes]
    solutions = []
    for combo in itertools.product(*choices):
        A = np.zeros((size, size))
        z = np.zeros(size)

        def g(a, b, G, A=A):
            for p, s in ((a, 1), (b, -1)):
                for q, t in ((a, 1), (b, -1)):
                    if idx[p] >= 0 and idx[q] >= 0:
                        A[idx[p], idx[q]] += s * t * G

        def inject(a, b, i, z=z):  # current i enters node a's KCL as leaving it
            if idx[a] >= 0:
                z[idx[a]] -= i
            if idx[b] >= 0:
                z[idx[b]] += i

        state = dict(zip((d["name"] for d in diodes), combo, strict=True))
        for e in ref:
            k = e["kind"]
            if k in ("resistor", "inductor") or (k == "switch" and "r" in e):
                g(e["a"], e["b"], 1 / e["r"])
            elif k == "diode" and state[e["name"]] != "off":
                G = 1 / e["r"]
                g(e["a"], e["b"], G)
                # on: i = G·(v − Vf); reversed: i = G·(v + Vbr)
                shift = -e["vf"] if state[e["name"]] == "on" else e["vbr"]
                inject(e["a"], e["b"], G * shift)
        for r, e in enumerate(extra, start=N):
            a, b = idx[e["a"]], idx[e["b"]]
            if a >= 0:
                A[a, r] += 1
            if b >= 0:
                A[b, r] -= 1
            if e["kind"] == "voltage_source":
                if a >= 0:
                    A[r, a] += 1
                if b >= 0:
                    A[r, b] -= 1
                z[r] = e["v"]
            else:
                for n, s in ((e["cp"], 1), (e["cn"], -1)):
                    if idx[n] >= 0:
                        A[r, idx[n]] += s
        try:
            x = np.linalg.solve(A, z)
        except np.linalg.LinAlgError:
            continue
        v = {n: (x[idx[n]] if idx[n] >= 0 else 0.0) for n in nodes}
        ok = True
        scale = 1e-9 * (1 + max(abs(t) for t in v.values()))
        for d in diodes:
            vd = v[d["a"]] - v[d["b"]]
            s = state[d["name"]]
            if s == "on":
                ok &= (vd - d["vf"]) / d["r"] >= -scale
            elif s == "rev":
                ok &= (vd + d["vbr"]) / d["r"] <= scale
            else:
                ok &= vd <= d["vf"] + scale and (d["vbr"] is None or vd >= -d["vbr"] - scale)
        if ok:
            solutions.append(v)
    assert solutions, "the reference found no consistent states"
    return solutions[0]


@settings(deadline=None, max_examples=40)
@given(st.integers(0, 2**32 - 1), st.integers(1, 5), st.integers(0, 1))
def test_random_circuits_match_the_reference(seed, diodes, opamps):
    els, ref = random_circuit(seed, diodes, opamps)
    want = reference_solve(ref)
    case = calcdoc.solve(calcdoc.loads(parts_text(els))).cases[0]
    got = dict(zip(case.netlist.nodes, case.branches.node_voltage.tolist(), strict=True))
    scale = max(abs(v) for v in want.values()) + 1
    for node, v in want.items():
        assert got[node] == pytest.approx(v, abs=1e-9 * scale), node
    assert case.states is not None and case.states.holds


@settings(deadline=None, max_examples=60)
@given(st.integers(0, 2**32 - 1), st.integers(1, 8), st.integers(0, 2))
def test_every_device_passes_its_own_test(seed, diodes, opamps):
    # The consistency tests, evaluated here from the JSON results and the inputs:
    # conducting: I ≥ 0 and V = Vf + R·I; blocking: I = 0 and −Vbr ≤ V ≤ Vf;
    # breakdown: I ≤ 0 and V = −Vbr + R·I.
    els, ref = random_circuit(seed, diodes, opamps)
    doc = calcdoc.to_json(calcdoc.solve(calcdoc.loads(parts_text(els))))["cases"][0]
    scale = 1e-9 * (1 + max(abs(v) for v in doc["nodes"].values()))
    for d in (e for e in ref if e["kind"] == "diode"):
        r = doc["elements"][d["name"]]
        v, i, s = r["voltage"], r["current"], r["state"]
        if s == "conducting":
            assert i >= -scale and v == pytest.approx(d["vf"] + d["r"] * i, abs=scale)
        elif s == "breakdown":
            assert i <= scale and v == pytest.approx(-d["vbr"] + d["r"] * i, abs=scale)
        else:
            assert s == "blocking" and i == 0.0
            assert v <= d["vf"] + scale
            assert d["vbr"] is None or v >= -d["vbr"] - scale
        assert all(t["holds"] for t in doc["device_states"][d["name"]]["tests"])


@settings(deadline=None, max_examples=25)
@given(st.integers(0, 2**32 - 1), st.integers(1, 3), st.integers(0, 1))
def test_complementarity_problem_is_exact_from_every_base(seed, diodes, opamps):
    # For the solution found, the free variables u of any base (an off piece's
    # current z, an on piece's slack w) and the paired ones t must satisfy
    # t = q + M·u exactly as formed from that base: the problem is the same
    # whatever states the search starts from.
    import itertools as it

    from calcdoc.mna.stamps import structure
    from calcdoc.mna.states import BaseSystem, complementarity, pieces, with_states

    els, _ = random_circuit(seed, diodes, opamps)
    case = calcdoc.solve(calcdoc.loads(parts_text(els))).cases[0]
    net, br = case.netlist, case.branches
    st_ = structure(net)
    pcs = pieces(st_)
    pe = st_.extended()
    d = pcs.direction
    R = np.where(pcs.slope >= 0, pe[np.maximum(pcs.slope, 0)], 0.0)
    v, i = br.voltage[pcs.element], br.current[pcs.element]
    conducting = pcs.conducting(net)
    z = np.where(conducting, d * i, 0.0)  # each piece's own current
    w = pe[pcs.threshold] - d * v + R * z  # each piece's slack
    checked = 0
    for on in it.product((False, True), repeat=len(pcs)):
        on = np.array(on, dtype=bool)
        if any(on[pcs.element == j].sum() > 1 for j in set(pcs.element.tolist())):
            continue  # one piece on per device
        base = BaseSystem(with_states(net, pcs.states(on)), pe)
        if not base.ok:
            continue
        q, M = complementarity(base, pcs, on)
        u, t = np.where(on, w, z), np.where(on, z, w)
        scale = 1 + np.abs(q).max() + np.abs(M).max() * np.abs(u).max()
        assert np.abs(q + M @ u - t).max() <= 1e-9 * scale
        checked += 1
    assert checked
