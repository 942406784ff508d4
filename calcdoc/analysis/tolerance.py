"""Tolerance analysis: true extreme values, Monte Carlo, root-sum-square.

``extreme``
    Every vertex of the tolerance box is solved when there are at most
    ``EXACT_VERTEX_LIMIT`` toleranced quantities; above that, for each
    output the vertex picked by the signs of its gradient at nominal, then
    improved one coordinate at a time.  Then, per output and direction:

    - **proved at a vertex** when the output is a node voltage, an element
      voltage or an element current, every toleranced quantity is an
      element's own value entering the equations as a rank-one term, every
      vertex was solved and the determinant keeps its sign over the box.
      Such an output is a ratio of functions affine in each value, hence
      monotone in each value separately, so its extremes over the box lie
      at vertices;
    - otherwise (powers, parameters shared by several elements, and
      utilisations built on them) a **bounded local search**: the gradient
      at the best vertex is tested against the box (a vertex is a local
      extremum when every gradient component points out of the box); where
      it points inward, a bounded quasi-Newton search (L-BFGS-B) continues
      from the vertex.  The result names whether the extremum lies at a
      vertex or inside the box.  The search is local: an interior extremum
      not reached by ascent from the best vertex could be missed, and the
      results say which outputs rest on it.

``montecarlo``
    ``samples`` random value sets: uniform within tolerance, or normal with
    the tolerance as 3 σ, truncated at the tolerance limits (a part outside
    its tolerance is rejected at incoming inspection).  The extremes are the
    sample minimum and maximum: a sample statistic, not a worst case.

``rss``
    Root-sum-square of the first-order deviations (direct differentiation).

Every design check is evaluated again at the worst value found.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, replace

import numpy as np

from calcdoc.analysis.variation import EXACT_VERTEX_LIMIT, Toleranced, Variation, toleranced
from calcdoc.mna.batch import Batch, factor, patterns, solve_batch, tangents
from calcdoc.results import Check
from calcdoc.verify.checks import RATINGS

QUANTITIES = ("voltage", "current", "power")
MC_CHUNK = 20_000


@dataclass(frozen=True)
class Extreme:
    """Nominal, lowest and highest value of one output, and the deviations giving them.

    ``how`` says how the extremes were found (``vertices, proved``,
    ``vertices and local search``, ``samples``, ``first order``);
    ``min_where`` / ``max_where`` is ``vertex``, ``inside`` (the box) or
    ``sample``.
    """

    nominal: float
    min: float
    max: float
    min_at: tuple[float, ...]
    max_at: tuple[float, ...]
    mean: float | None = None
    std: float | None = None
    p01: float | None = None
    p99: float | None = None
    how: str = ""
    min_where: str = "vertex"
    max_where: str = "vertex"


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
            d = {
                "min": x.min, "max": x.max, "nominal": x.nominal,
                "min_at": dict(zip(names, x.min_at, strict=True)),
                "max_at": dict(zip(names, x.max_at, strict=True)),
                "how": x.how, "min_where": x.min_where, "max_where": x.max_where,
            }  # fmt: skip
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


# --------------------------------------------------------------------------
# outputs
# --------------------------------------------------------------------------


def _keys(net) -> list[tuple[str, int]]:
    return [("node", k) for k in range(1, len(net.nodes))] + [
        (q, j) for j in range(len(net.names)) for q in QUANTITIES
    ]


def _matrix(batch: Batch, keys) -> np.ndarray:
    """Outputs (K, len(keys)) in the order of ``keys``."""
    cols = []
    for kind, idx in keys:
        cols.append(batch.output(kind, idx))
    return np.stack(cols, axis=1) if cols else np.zeros((len(batch.x), 0))


def _vertices(q: int, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    bits = np.array(list(itertools.product((0, 1), repeat=q)), dtype=bool)
    return np.where(bits, hi, lo)


# --------------------------------------------------------------------------
# the proof that vertices suffice
# --------------------------------------------------------------------------


def _rank_one_elements(st, var: Variation) -> bool:
    """Every toleranced quantity is an element value that enters A as a rank-one term
    (or only z), and none is a parameter shared through expressions."""
    if any(q.kind != "element" for q in var.quantities):
        return False
    names = st.net.names
    A, z = st.A, st.z
    for q in var.quantities:
        k = names.index(q.name)
        in_a = (A.num == k) | (A.den == k)
        in_z = (z.num == k) | (z.den == k)
        if in_a.any() and in_z.any():
            return False
        if in_a.any():
            rows, cols = A.row[in_a], A.col[in_a]
            ur, uc = np.unique(rows), np.unique(cols)
            block = np.zeros((len(ur), len(uc)))
            vals = A.values(st.extended())[in_a]
            np.add.at(block, (np.searchsorted(ur, rows), np.searchsorted(uc, cols)), vals)
            s = np.linalg.svd(block, compute_uv=False)
            if len(s) > 1 and s[1] > 1e-12 * s[0]:
                return False
    return True


def _det_signs_agree(st, P: np.ndarray) -> bool:
    """The determinant keeps one sign over the box.

    Without controlled elements the MNA matrix of positive resistances is
    never singular once the topology tests pass, so its determinant keeps
    its sign.  With them, the determinant (affine in each rank-one value)
    keeps its sign over the box when it has one sign at every vertex:
    checked for systems of up to ``DENSE_UNKNOWNS`` unknowns.
    """
    from calcdoc.mna.batch import DENSE_UNKNOWNS, dense_map
    from calcdoc.model.elements import KINDS

    n = st.n
    if n == 0 or not any(KINDS[t].control for t in st.net.types):
        return True
    if n > DENSE_UNKNOWNS:
        return False
    W = dense_map(st.A, n, n)
    vals = st.A.values(st.extended(P))
    A = np.asarray((W.T @ vals.T).T).reshape(-1, n, n)
    signs = np.linalg.slogdet(A)[0]
    return bool(np.all(signs == signs[0]) and signs[0] != 0)


# --------------------------------------------------------------------------
# extreme values
# --------------------------------------------------------------------------


def _gradients(st, var: Variation, delta: np.ndarray, keys) -> np.ndarray:
    """d(output)/d(relative deviation) at one point: (q, outputs)."""
    p = var.params(st, delta[None])[0]
    q = len(delta)
    h = 1e-6
    # directions: change of the parameters per unit change of each deviation (central)
    base = np.tile(delta, (q, 1))
    dirs = (var.params(st, base + h * np.eye(q)) - var.params(st, base - h * np.eye(q))) / (2 * h)
    from calcdoc.mna.batch import solve_x

    x = solve_x(st, p[None])[0]
    t = tangents(st, p, x, dirs)
    return _matrix(t, keys)


def _local_search(st, var: Variation, keys, k: int, start: np.ndarray, sign: float,
                  lo: np.ndarray, hi: np.ndarray) -> tuple[float, np.ndarray]:  # fmt: skip
    """Maximise sign·output[k] over the box from ``start`` (L-BFGS-B)."""
    from scipy.optimize import minimize

    def f(delta: np.ndarray):
        b = solve_batch(st, var.params(st, delta[None]))
        y = _matrix(b, [keys[k]])[0, 0]
        g = _gradients(st, var, delta, [keys[k]])[:, 0]
        return -sign * y, -sign * g

    res = minimize(f, start, jac=True, method="L-BFGS-B", bounds=list(zip(lo, hi, strict=True)),
                   options={"maxiter": 60, "ftol": 1e-15, "gtol": 1e-14})  # fmt: skip
    return float(-sign * res.fun), np.clip(res.x, lo, hi)


def _extremes(st, var: Variation, keys, lo, hi, nominal_row):
    """Vertex extremes of every output, proved or improved by local search."""
    q = len(lo)
    if q <= EXACT_VERTEX_LIMIT:
        delta = _vertices(q, lo, hi)
        note = f"all {len(delta)} vertices of the tolerance box solved"
        complete = True
    else:
        g = _gradients(st, var, np.zeros(q), keys)  # (q, outputs)
        picks = {tuple(np.where(g[:, o] >= 0, hi, lo)) for o in range(g.shape[1])}
        picks |= {tuple(np.where(g[:, o] >= 0, lo, hi)) for o in range(g.shape[1])}
        delta = np.array(sorted(picks))
        note = (
            f"{len(delta)} vertices picked by the signs of each output's gradient "
            f"({q} toleranced quantities: too many to solve all {2**q} vertices)"
        )
        complete = False
    batch = solve_batch(st, var.params(st, delta))
    Y = _matrix(batch, keys)
    proved_kind = complete and _rank_one_elements(st, var) and _det_signs_agree(
        st, var.params(st, delta)
    )  # fmt: skip
    result = {}
    grads_at: dict[tuple, np.ndarray] = {}
    searched = 0
    for o, key in enumerate(keys):
        col = Y[:, o]
        out = {}
        for which, sign in (("max", 1.0), ("min", -1.0)):
            v = int(np.argmax(sign * col))
            best, at, where = float(col[v]), delta[v], "vertex"
            proved = proved_kind and key[0] in ("node", "voltage", "current")
            if not proved:
                tkey = tuple(at)
                if tkey not in grads_at:
                    grads_at[tkey] = _gradients(st, var, at, keys)
                g = sign * grads_at[tkey][:, o]
                inward = ((at >= hi) & (g < 0)) | ((at <= lo) & (g > 0))
                if not complete:  # hop between vertices while a flip improves
                    at, best = _vertex_climb(st, var, keys, o, at, best, sign, lo, hi)
                if inward.any() and np.any(hi > lo):
                    searched += 1
                    val, pt = _local_search(st, var, keys, o, at, sign, lo, hi)
                    if sign * (val - best) > 1e-12 * max(abs(best), 1e-300):
                        best, at = val, pt
                        where = "inside" if np.any((pt > lo) & (pt < hi)) else "vertex"
            out[which] = (best, tuple(float(d) for d in at), where, proved)
        result[key] = out
    if searched:
        note += f"; {searched} extremes improved by a bounded local search from the best vertex"
    return result, note, len(delta), proved_kind


def _vertex_climb(st, var, keys, o, at, best, sign, lo, hi):
    """Flip one coordinate at a time while the output improves (vertices only)."""
    at = np.array(at, dtype=float)
    improved = True
    while improved:
        improved = False
        flips = np.tile(at, (len(at), 1))
        idx = np.arange(len(at))
        flips[idx, idx] = np.where(at[idx] >= hi[idx], lo[idx], hi[idx])
        b = solve_batch(st, var.params(st, flips))
        vals = _matrix(b, [keys[o]])[:, 0]
        k = int(np.argmax(sign * vals))
        if sign * (vals[k] - best) > 1e-15 * max(abs(best), 1e-300):
            at, best, improved = flips[k], float(vals[k]), True
    return at, best


# --------------------------------------------------------------------------
# checks at the worst case
# --------------------------------------------------------------------------


def _worst_checks(case_checks, net, nodes: dict, elements: dict, label: str) -> tuple[Check, ...]:
    from calcdoc.verify.checks import window_check

    out = []
    for c in case_checks:
        if c.id.startswith("nodes."):
            ex = nodes[c.subject]
            v = ex.min if c.bound == "min" else ex.max
            w = window_check(c.id, c.subject, c.quantity, v, c.limit, c.bound, c.basis)
        else:
            rating = RATINGS[c.id.rsplit(".", 1)[1]]
            ex = elements[c.subject][rating.of]
            v = float(max(rating.measure(np.float64(ex.min)), rating.measure(np.float64(ex.max))))
            util = v / c.limit if c.limit > 0 else float("inf")
            w = replace(c, value=v, margin=c.limit - v, utilization=util)
        out.append(replace(w, basis=f"{c.basis}; worst of {label}"))
    return tuple(out)


# --------------------------------------------------------------------------
# the analysis of one case
# --------------------------------------------------------------------------


def _store(net, keys, extremes: dict[tuple[str, int], Extreme]):
    nodes: dict[str, Extreme] = {}
    elements: dict[str, dict[str, Extreme]] = {}
    for key in keys:
        kind, idx = key
        if kind == "node":
            nodes[net.nodes[idx]] = extremes[key]
        else:
            elements.setdefault(net.names[idx], {})[kind] = extremes[key]
    return nodes, elements


def _truncated_normal(rng, shape, limit: float = 3.0) -> np.ndarray:
    z = rng.standard_normal(shape)
    bad = np.abs(z) > limit
    while bad.any():
        z[bad] = rng.standard_normal(int(bad.sum()))
        bad = np.abs(z) > limit
    return z


def tolerance_result(project, case_result) -> ToleranceResult | None:
    """Tolerance analysis of one solved case, by the project's ``[analysis] tolerance`` method."""
    a = project.analysis
    quantities = toleranced(project)
    if a.tolerance == "none" or not quantities:
        return None
    net = case_result.netlist
    st = patterns(net)
    var = Variation(project, case_result.case, quantities, case_result.values)
    lo, hi = var.bounds()
    q = len(quantities)
    keys = _keys(net)
    nominal_p = var.params(st, np.zeros((1, q)))
    nom = _matrix(solve_batch(st, nominal_p), keys)[0]
    hist = None
    if a.tolerance == "extreme":
        found, note, solved, _ = _extremes(st, var, keys, lo, hi, nom)
        ext = {}
        for o, key in enumerate(keys):
            hi_v, lo_v = found[key]["max"], found[key]["min"]
            how = "vertices, proved" if hi_v[3] else "vertices and local search"
            ext[key] = Extreme(float(nom[o]), lo_v[0], hi_v[0], lo_v[1], hi_v[1], how=how,
                               min_where=lo_v[2], max_where=hi_v[2])  # fmt: skip
        label = "the tolerance box"
    elif a.tolerance == "montecarlo":
        rng = np.random.default_rng(a.seed)
        K = a.samples
        Ys, deltas = [], []
        for start in range(0, K, MC_CHUNK):
            k = min(MC_CHUNK, K - start)
            if a.distribution == "uniform":
                d = lo + (hi - lo) * rng.random((k, q))
            else:  # normal, tolerance = 3 sigma, truncated at the tolerance limits
                zs = _truncated_normal(rng, (k, q))
                d = np.where(zs >= 0, zs * hi / 3, zs * (-lo) / 3)
            Ys.append(_matrix(solve_batch(st, var.params(st, d)), keys))
            deltas.append(d)
        Y = np.concatenate(Ys)
        delta = np.concatenate(deltas)
        what = (
            "normal, tolerance = 3 σ, truncated at the tolerance limits"
            if a.distribution == "normal"
            else "uniform within tolerance"
        )
        note = f"{K} random value sets ({what}), seed {a.seed}; extremes are sample extremes"
        ext = {}
        for o, key in enumerate(keys):
            col = Y[:, o]
            kmin, kmax = int(np.argmin(col)), int(np.argmax(col))
            ext[key] = Extreme(
                float(nom[o]), float(col[kmin]), float(col[kmax]),
                tuple(delta[kmin].tolist()), tuple(delta[kmax].tolist()),
                float(col.mean()), float(col.std(ddof=1)) if K > 1 else 0.0,
                float(np.percentile(col, 1)), float(np.percentile(col, 99)),
                "samples", "sample", "sample",
            )  # fmt: skip
        solved = K
        label = f"{K} samples (sample extremes)"
        varying = [k for k in range(1, len(net.nodes)) if np.ptp(Y[:, keys.index(("node", k))]) > 0]
        if varying:
            k = varying[0]
            counts, edges = np.histogram(Y[:, keys.index(("node", k))], bins=24)
            hist = (f"V({net.nodes[k]})", tuple(edges.tolist()), tuple(int(c) for c in counts))
    else:  # rss
        G = _gradients(st, var, np.zeros(q), keys)  # (q, outputs): per unit relative deviation
        ext = {}
        for o, key in enumerate(keys):
            slope = G[:, o]
            up = np.maximum(slope * hi, slope * lo)
            down = np.minimum(slope * hi, slope * lo)
            y = float(nom[o])
            ext[key] = Extreme(
                y, y - float(np.sqrt(np.sum(np.minimum(down, 0) ** 2))),
                y + float(np.sqrt(np.sum(np.maximum(up, 0) ** 2))),
                tuple(np.where(slope < 0, hi, lo).tolist()),
                tuple(np.where(slope >= 0, hi, lo).tolist()), how="first order",
                min_where="first order", max_where="first order",
            )  # fmt: skip
        note = "root-sum-square of first-order deviations (direct differentiation of the solution)"
        solved = 1
        label = "the RSS band"
    nodes, elements = _store(net, keys, ext)
    checks = _worst_checks(case_result.checks, net, nodes, elements, label)
    return ToleranceResult(
        case_result.name, a.tolerance, note, quantities, solved, nodes, elements, checks, hist
    )


__all__ = ["Extreme", "ToleranceResult", "tolerance_result", "factor"]
