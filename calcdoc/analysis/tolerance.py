"""Tolerance analysis: extreme values, Monte Carlo, root-sum-square.

``extreme``: every vertex of the tolerance box is solved when there are at
most ``EXACT_VERTEX_LIMIT`` toleranced quantities; above that, for each
output the two vertices picked by the signs of its sensitivities are
solved (a vertex per output and direction), and the extremes are taken
from those solutions.  ``montecarlo``: ``samples`` random value sets
(uniform within tolerance, or normal with the tolerance as 3 σ), solved in
batches.  ``rss``: root-sum-square of the first-order deviations.
Every design check is evaluated again at the worst value found.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, replace

import numpy as np

from calcdoc.analysis.batch import Batch, patterns, solve_batch
from calcdoc.analysis.variation import EXACT_VERTEX_LIMIT, Toleranced, Variation, toleranced
from calcdoc.verify.checks import Check

QUANTITIES = ("voltage", "current", "power")


@dataclass(frozen=True)
class Extreme:
    """Nominal, lowest and highest value of one output, and the deviations giving them."""

    nominal: float
    min: float
    max: float
    min_at: tuple[float, ...]
    max_at: tuple[float, ...]
    mean: float | None = None
    std: float | None = None
    p01: float | None = None
    p99: float | None = None


@dataclass(frozen=True)
class ToleranceResult:
    """Tolerance results of one case.

    ``nodes[name]`` and ``elements[name][quantity]`` are :class:`Extreme`;
    ``checks`` are the design checks evaluated at the worst value;
    ``quantities`` the toleranced quantities, whose order the ``*_at``
    deviation tuples follow.
    """

    case: str
    method: str
    note: str
    quantities: tuple[Toleranced, ...]
    solved: int
    nodes: dict[str, Extreme]
    elements: dict[str, dict[str, Extreme]]
    checks: tuple[Check, ...]
    histogram: tuple[str, tuple[float, ...], tuple[int, ...]] | None = None

    def to_json(self) -> dict:
        names = [q.name for q in self.quantities]

        def rng(x: Extreme) -> dict:
            d = {"min": x.min, "max": x.max, "nominal": x.nominal,
                 "min_at": dict(zip(names, x.min_at, strict=True)), "max_at": dict(zip(names, x.max_at, strict=True))}  # fmt: skip
            if x.mean is not None:
                d.update(mean=x.mean, std=x.std, p01=x.p01, p99=x.p99)
            return d

        return {
            "method": self.method,
            "note": self.note,
            "solved": self.solved,
            "quantities": [
                {"name": q.name, "kind": q.kind, "minus": q.minus, "plus": q.plus}
                for q in self.quantities
            ],
            "nodes": {n: rng(x) for n, x in self.nodes.items()},
            "elements": {e: {q: rng(x) for q, x in d.items()} for e, d in self.elements.items()},
            "checks": [
                {
                    "id": c.id,
                    "value": c.value,
                    "limit": c.limit,
                    "utilization": c.utilization,
                    "margin": c.margin,
                    "status": c.status,
                }  # fmt: skip
                for c in self.checks
            ],
        }


def _outputs(batch: Batch) -> dict[tuple[str, int], np.ndarray]:
    return {("node", k): batch.node_voltage[:, k] for k in range(batch.node_voltage.shape[1])} | {
        (q, j): getattr(batch, q)[:, j] for q in QUANTITIES for j in range(batch.voltage.shape[1])
    }


def _vertices(n: int, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    return np.array(
        [
            [hi[i] if bit else lo[i] for i, bit in enumerate(bits)]
            for bits in itertools.product((0, 1), repeat=n)
        ]
    )


def _sign_vertices(var: Variation, pat, lo: np.ndarray, hi: np.ndarray) -> tuple[np.ndarray, str]:
    """Two vertices per output, from the signs of central-difference sensitivities."""
    q = len(lo)
    h = 1e-6
    steps = np.vstack([np.eye(q) * h, -np.eye(q) * h])
    b = solve_batch(pat, var.values(steps))
    outs = _outputs(b)
    picks = set()
    for arr in outs.values():
        slope = arr[:q] - arr[q:]
        up = tuple(np.where(slope >= 0, hi, lo))
        down = tuple(np.where(slope >= 0, lo, hi))
        picks.add(up)
        picks.add(down)
    return np.array(
        sorted(picks)
    ), "vertices chosen from the signs of the sensitivities of each output, then solved"


def _worst_checks(case_checks, net, batch: Batch, label: str) -> tuple[Check, ...]:
    index = {n: i for i, n in enumerate(net.nodes)}
    pos = {n: i for i, n in enumerate(net.names)}
    out = []
    for c in case_checks:
        if c.id.startswith("nodes."):
            arr = batch.node_voltage[:, index[c.subject]]
            v = float(arr.min() if c.bound == "min" else arr.max())
            margin = v - c.limit if c.bound == "min" else c.limit - v
            util = (
                (c.limit / v if c.limit > 0 and v > 0 else None)
                if c.bound == "min"
                else (v / c.limit if c.limit > 0 and v >= 0 else None)
            )
        else:
            arr = np.abs(getattr(batch, c.quantity)[:, pos[c.subject]])
            v = float(arr.max())
            margin = c.limit - v
            util = v / c.limit if c.limit > 0 else float("inf")
        out.append(
            replace(
                c, value=v, margin=margin, utilization=util, basis=f"{c.basis}; worst of {label}"
            )
        )
    return tuple(out)


def tolerance_result(project, case_result) -> ToleranceResult | None:
    """Tolerance analysis of one solved case, by the project's ``[analysis] tolerance`` method."""
    a = project.analysis
    quantities = toleranced(project)
    if a.tolerance == "none" or not quantities:
        return None
    net = case_result.netlist
    var = Variation(project, case_result.case, quantities, case_result.values)
    pat = patterns(net)
    lo, hi = var.bounds()
    q = len(quantities)
    nominal = solve_batch(pat, net.floats()[None])
    hist = None
    if a.tolerance == "extreme":
        if q <= EXACT_VERTEX_LIMIT:
            delta = _vertices(q, lo, hi)
            note = f"all {len(delta)} vertices of the tolerance box solved (exact for up to {EXACT_VERTEX_LIMIT} toleranced quantities)"
        else:
            delta, note = _sign_vertices(var, pat, lo, hi)
        batch = solve_batch(pat, var.values(delta))
        label = f"{len(delta)} vertices"
    elif a.tolerance == "montecarlo":
        rng = np.random.default_rng(a.seed)
        K = a.samples
        if a.distribution == "uniform":
            delta = lo + (hi - lo) * rng.random((K, q))
        else:  # normal, tolerance = 3 sigma (split at the nominal for unequal bands)
            zs = rng.standard_normal((K, q))
            delta = np.where(zs >= 0, zs * hi / 3, zs * (-lo) / 3)
        batch = solve_batch(pat, var.values(delta))
        note = f"{K} random value sets ({a.distribution}{', tolerance = 3 σ' if a.distribution == 'normal' else ' within tolerance'}), seed {a.seed}"
        label = f"{K} samples"
    else:  # rss
        h = 1e-6
        steps = np.vstack([np.eye(q) * h, -np.eye(q) * h])
        diff = solve_batch(pat, var.values(steps))
        outs_d = _outputs(diff)
        note = "root-sum-square of first-order deviations (central differences of the solution)"
        return _rss(case_result, quantities, nominal, outs_d, lo, hi, h, note)
    outs = _outputs(batch)
    nom = _outputs(nominal)
    nodes: dict[str, Extreme] = {}
    elements: dict[str, dict[str, Extreme]] = {}
    for key, arr in outs.items():
        kmin, kmax = int(np.argmin(arr)), int(np.argmax(arr))
        ex = Extreme(
            float(nom[key][0]),
            float(arr[kmin]),
            float(arr[kmax]),
            tuple(delta[kmin].tolist()),
            tuple(delta[kmax].tolist()),
        )
        if a.tolerance == "montecarlo":
            ex = replace(
                ex,
                mean=float(arr.mean()),
                std=float(arr.std(ddof=1)),
                p01=float(np.percentile(arr, 1)),
                p99=float(np.percentile(arr, 99)),
            )
        kind, idx = key
        if kind == "node":
            if idx:
                nodes[net.nodes[idx]] = ex
        else:
            elements.setdefault(net.names[idx], {})[kind] = ex
    if a.tolerance == "montecarlo":
        first = next(iter(nodes), None)
        if first:
            counts, edges = np.histogram(outs[("node", net.nodes.index(first))], bins=24)
            hist = (f"V({first})", tuple(edges.tolist()), tuple(int(c) for c in counts))
    checks = _worst_checks(case_result.checks, net, batch, label)
    return ToleranceResult(
        case_result.name, a.tolerance, note, quantities, len(delta), nodes, elements, checks, hist
    )


def _rss(case_result, quantities, nominal: Batch, outs_d, lo, hi, h, note) -> ToleranceResult:
    net = case_result.netlist
    q = len(quantities)
    nom = _outputs(nominal)
    nodes: dict[str, Extreme] = {}
    elements: dict[str, dict[str, Extreme]] = {}
    worst_rows = []
    for key, arr in outs_d.items():
        slope = (arr[:q] - arr[q:]) / (2 * h)  # dy per unit relative deviation
        up = np.maximum(slope * hi, slope * lo)
        down = np.minimum(slope * hi, slope * lo)
        y = float(nom[key][0])
        ex = Extreme(y, y - float(np.sqrt(np.sum(np.minimum(down, 0) ** 2))), y + float(np.sqrt(np.sum(np.maximum(up, 0) ** 2))),
                     tuple(np.where(slope < 0, hi, lo).tolist()), tuple(np.where(slope >= 0, hi, lo).tolist()))  # fmt: skip
        kind, idx = key
        if kind == "node":
            if idx:
                nodes[net.nodes[idx]] = ex
        else:
            elements.setdefault(net.names[idx], {})[kind] = ex
        worst_rows.append((key, ex))
    # checks at the RSS extremes: a pseudo-batch of the min and max of every output
    K = 2
    nv = np.tile(nominal.node_voltage, (K, 1))
    bv, bi, bp = (np.tile(getattr(nominal, k), (K, 1)) for k in QUANTITIES)
    arrays = {"node": nv, "voltage": bv, "current": bi, "power": bp}
    for (kind, idx), ex in worst_rows:
        arrays[kind][0, idx], arrays[kind][1, idx] = ex.min, ex.max
    batch = Batch(nv, bv, bi, bp, np.zeros((K, 0)))
    checks = _worst_checks(case_result.checks, net, batch, "the RSS band")
    return ToleranceResult(
        case_result.name, "rss", note, quantities, 2 * q, nodes, elements, checks
    )
