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

Diodes: every vertex, sample and search point is solved in its own device
states (:class:`~calcdoc.mna.stated.StateSolver`).  Where any solved set
changes a device's state, the vertex proof does not apply (the solution is
then only piecewise a ratio of affine functions) and the extremes are
found by the local search; an extreme found where a device is in another
state than in the case names that device and its state.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field, replace

import numpy as np

from calcdoc.analysis.variation import EXACT_VERTEX_LIMIT, Toleranced, Variation, toleranced
from calcdoc.mna.batch import Batch, factor, patterns, tangents
from calcdoc.mna.stated import StateSolver
from calcdoc.results import Check
from calcdoc.verify.checks import RATINGS, range_check

QUANTITIES = ("voltage", "current", "power")
MC_CHUNK = 20_000
LISTED_SETS = 4096  # value sets up to which each one's state-search pivots are listed
# a node whose samples spread less than this share of its largest magnitude is taken as
# fixed (rounding, not variation) and gets no histogram
ROUNDING_SPREAD = 1e-9
# the bounded local search for interior extrema (L-BFGS-B): at most this many steps,
# stopping when the objective or the projected gradient changes by less than these
SEARCH_STEPS = 60
SEARCH_FTOL = 1e-15
SEARCH_GTOL = 1e-14
# a vertex flip, or the local search's point, replaces the best so far only when it
# improves on it by more than this share of it (less is rounding in the solves)
CLIMB_GAIN = 1e-15
# step of the central differences that turn deviations into parameter directions
# (exact for element values, which are affine in their deviation; for parameters
# through expressions the truncation error goes as the step squared)
DIRECTION_STEP = 1e-6
SEARCH_GAIN = 1e-12


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
    min_states: tuple[tuple[str, str], ...] = ()
    max_states: tuple[tuple[str, str], ...] = ()
    """Devices in another state than in the case where the extreme was found."""


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
    across: dict[str, Extreme] = field(default_factory=dict)
    state_changes: int = 0
    """Solved value sets in which a device is in another state than in the case."""
    state_iterations: int = 0
    """Pivots of every state search the analysis ran (its local searches included)."""
    set_iterations: tuple[int, ...] = ()
    """Pivots each solved value set (vertex or sample) needed, in order; 0 where the
    case's states held.  Empty without diodes, or beyond ``LISTED_SETS`` sets."""

    def to_json(self) -> dict:
        names = [q.name for q in self.quantities]

        def rng(x: Extreme) -> dict:
            d = {
                "min": x.min,
                "max": x.max,
                "nominal": x.nominal,
                "min_at": dict(zip(names, x.min_at, strict=True)),
                "max_at": dict(zip(names, x.max_at, strict=True)),
                "how": x.how,
                "min_where": x.min_where,
                "max_where": x.max_where,
            }
            if x.mean is not None:
                d.update(mean=x.mean, std=x.std, p01=x.p01, p99=x.p99)
            if x.min_states:
                d["min_states"] = dict(x.min_states)
            if x.max_states:
                d["max_states"] = dict(x.max_states)
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
            **({"across": {n: rng(x) for n, x in self.across.items()}} if self.across else {}),
            "states": {
                "changed": self.state_changes,
                "iterations": self.state_iterations,
                **({"per_set": list(self.set_iterations)} if self.set_iterations else {}),
            },
            "checks": [
                {
                    "id": c.id,
                    "value": c.value,
                    "limit": c.limit,
                    "utilization": c.utilization,
                    "margin": c.margin,
                    "status": c.status,
                }
                for c in self.checks
            ],
        }


# --------------------------------------------------------------------------
# outputs
# --------------------------------------------------------------------------


def _keys(net, project=None) -> list[tuple[str, object]]:
    keys: list[tuple[str, object]] = [("node", k) for k in range(1, len(net.nodes))]
    keys += [(q, j) for j in range(len(net.names)) for q in QUANTITIES]
    if project is not None:
        index = {n: i for i, n in enumerate(net.nodes)}
        keys += [("across", (index[w.nodes[0]], index[w.nodes[1]])) for w in project.limits.across]
    return keys


def _matrix(batch: Batch, keys) -> np.ndarray:
    """Outputs (K, len(keys)) in the order of ``keys``."""
    cols = []
    for kind, idx in keys:
        cols.append(batch.output(kind, idx))
    return np.stack(cols, axis=1)  # never empty: every node but the reference is a key


def _vertices(q: int, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    bits = np.array(list(itertools.product((False, True), repeat=q)))
    return np.where(bits, hi, lo)


# --------------------------------------------------------------------------
# the proof that vertices suffice
# --------------------------------------------------------------------------


def _rank_one_elements(st, var: Variation) -> bool:
    """Every toleranced quantity is an element value that enters A alone or z alone,
    and none is a parameter shared through expressions.

    In A an element's value is always a rank-one term: the element's law puts
    it either in the element's own row (as a coefficient of v, i or the
    control u) or as the outer product of the terminal rows with the
    terminal or control columns (a conductance, a controlled current).
    """
    if any(q.kind != "element" for q in var.quantities):
        return False
    A, z = st.A, st.z
    for q in var.quantities:
        k = st.net.names.index(q.name)
        if ((A.num == k) | (A.den == k)).any() and ((z.num == k) | (z.den == k)).any():
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
    if not any(KINDS[t].control for t in st.net.types):
        return True
    if n > DENSE_UNKNOWNS:
        return False
    W = dense_map(st.A, n, n)
    vals = st.A.values(st.extended(P))
    A = np.asarray((W.T @ vals.T).T).reshape(-1, n, n)
    signs = np.linalg.slogdet(A)[0]
    return bool(np.all(signs == 1) or np.all(signs == -1))


# --------------------------------------------------------------------------
# extreme values
# --------------------------------------------------------------------------


class _Runs:
    """Solves value sets, each in its own device states, and keeps count of state changes."""

    def __init__(self, net) -> None:
        self.solver = StateSolver(net)
        self.st = self.solver.st
        self.names = net.names
        self.changed = 0
        self.per_set: list[int] = []
        self.iterations = 0

    def batch(self, P: np.ndarray, count: bool = False):
        """(Batch, StatedBatch) of parameter rows ``P``; ``count``: the rows are
        the analysis's own value sets (vertices, samples), counted in the results."""
        sb = self.solver.solve(P)
        self.iterations += int(sb.iterations.sum())
        if count:
            self.changed += int(sb.changed.sum())
            self.per_set += sb.iterations.tolist()
        return sb.batch, sb

    def changes(self, sb, k: int) -> tuple[tuple[str, str], ...]:
        return tuple(sb.changes(k, self.names).items())

    def changes_at(self, p: np.ndarray) -> tuple[tuple[str, str], ...]:
        _, sb = self.batch(p[None])
        return self.changes(sb, 0)


def _gradients(runs: _Runs, var: Variation, delta: np.ndarray, keys) -> np.ndarray:
    """d(output)/d(relative deviation) at one point, in its device states: (q, outputs)."""
    st = runs.st
    p = var.params(st, delta[None])[0]
    q = len(delta)
    h = DIRECTION_STEP
    # directions: change of the parameters per unit change of each deviation (central)
    base = np.tile(delta, (q, 1))
    dirs = (var.params(st, base + h * np.eye(q)) - var.params(st, base - h * np.eye(q))) / (2 * h)
    from calcdoc.mna.batch import solve_x

    here = runs.solver.structure_at(p)
    x = solve_x(here, p[None])[0]
    t = tangents(here, p, x, dirs)
    return _matrix(t, keys)


def _local_search(
    runs: _Runs,
    var: Variation,
    keys,
    k: int,
    start: np.ndarray,
    sign: float,
    lo: np.ndarray,
    hi: np.ndarray,
) -> tuple[float, np.ndarray]:
    """Maximise sign·output[k] over the box from ``start`` (L-BFGS-B)."""
    from scipy.optimize import minimize

    def f(delta: np.ndarray):
        b, _ = runs.batch(var.params(runs.st, delta[None]))
        y = _matrix(b, [keys[k]])[0, 0]
        g = _gradients(runs, var, delta, [keys[k]])[:, 0]
        return -sign * y, -sign * g

    res = minimize(
        f,
        start,
        jac=True,
        method="L-BFGS-B",
        bounds=list(zip(lo, hi, strict=True)),
        options={"maxiter": SEARCH_STEPS, "ftol": SEARCH_FTOL, "gtol": SEARCH_GTOL},
    )
    return float(-sign * res.fun), np.clip(res.x, lo, hi)


def _extremes(runs: _Runs, var: Variation, keys, lo, hi, nominal_row):
    """Vertex extremes of every output, proved or improved by local search."""
    st = runs.st
    q = len(lo)
    if q <= EXACT_VERTEX_LIMIT:
        delta = _vertices(q, lo, hi)
        note = f"all {len(delta)} vertices of the tolerance box solved"
        complete = True
    else:
        g = _gradients(runs, var, np.zeros(q), keys)  # (q, outputs)
        picks = {tuple(np.where(g[:, o] >= 0, hi, lo)) for o in range(g.shape[1])}
        picks |= {tuple(np.where(g[:, o] >= 0, lo, hi)) for o in range(g.shape[1])}
        delta = np.array(sorted(picks))
        note = (
            f"{len(delta)} vertices picked by the signs of each output's gradient "
            f"({q} toleranced quantities: too many to solve all {2**q} vertices)"
        )
        complete = False
    batch, stated = runs.batch(var.params(st, delta), count=True)
    Y = _matrix(batch, keys)
    steady = not stated.changed.any()  # every vertex in the case's device states
    proved_kind = (
        steady
        and complete
        and _rank_one_elements(st, var)
        and _det_signs_agree(st, var.params(st, delta))
    )
    if not steady:
        note += (
            f"; a device changes state at {int(stated.changed.sum())} of them, so the "
            "extremes are not proved at a vertex"
        )
    result = {}
    grads_at: dict[tuple, np.ndarray] = {}
    searched = improved = 0
    for o, key in enumerate(keys):
        col = Y[:, o]
        out = {}
        for which, sign in (("max", 1.0), ("min", -1.0)):
            v = int(np.argmax(sign * col))
            best, at, where = float(col[v]), delta[v], "vertex"
            changes = runs.changes(stated, v)
            proved = proved_kind and key[0] in ("node", "voltage", "current", "across")
            if not proved:
                tkey = tuple(at)
                if tkey not in grads_at:
                    grads_at[tkey] = _gradients(runs, var, at, keys)
                g = sign * grads_at[tkey][:, o]
                inward = ((at >= hi) & (g < 0)) | ((at <= lo) & (g > 0))
                if not complete:  # hop between vertices while a flip improves
                    at, best = _vertex_climb(runs, var, keys, o, at, best, sign, lo, hi)
                    changes = runs.changes_at(var.params(st, np.asarray(at)[None])[0])
                if inward.any() and np.any(hi > lo):
                    searched += 1
                    val, pt = _local_search(runs, var, keys, o, at, sign, lo, hi)
                    if sign * (val - best) > SEARCH_GAIN * abs(best):
                        improved += 1
                        best, at = val, pt
                        where = "inside" if np.any((pt > lo) & (pt < hi)) else "vertex"
                        changes = runs.changes_at(var.params(st, pt[None])[0])
            out[which] = (best, tuple(float(d) for d in at), where, proved, changes)
        result[key] = out
    if searched:
        note += (
            f"; {searched} {'extreme' if searched == 1 else 'extremes'} searched further by a "
            f"bounded local search from the best vertex, {improved} improved by it"
        )
    return result, note, len(delta), proved_kind


def _vertex_climb(runs: _Runs, var, keys, o, at, best, sign, lo, hi):
    """Flip one coordinate at a time while the output improves (vertices only)."""
    at = np.array(at, dtype=float)
    improved = True
    while improved:
        improved = False
        flips = np.tile(at, (len(at), 1))
        idx = np.arange(len(at))
        flips[idx, idx] = np.where(at[idx] >= hi[idx], lo[idx], hi[idx])
        b, _ = runs.batch(var.params(runs.st, flips))
        vals = _matrix(b, [keys[o]])[:, 0]
        k = int(np.argmax(sign * vals))
        if sign * (vals[k] - best) > CLIMB_GAIN * abs(best):
            at, best, improved = flips[k], float(vals[k]), True
    return at, best


# --------------------------------------------------------------------------
# checks at the worst case
# --------------------------------------------------------------------------


def _worst_checks(
    project, case_checks, nodes: dict, elements: dict, across: dict, label: str
) -> tuple[Check, ...]:
    from calcdoc.verify.checks import window_check

    windows = {w.name: w for w in project.limits.across}
    out = []
    for c in case_checks:
        subject, _, key = c.id.rpartition(".")
        if c.id.startswith("nodes."):
            ex = nodes[c.subject]
            v = ex.min if c.bound == "min" else ex.max
            w = window_check(c.id, c.subject, c.quantity, v, c.limit, c.bound, c.basis)
            at = ex.min_states if c.bound == "min" else ex.max_states
        elif c.id.startswith("across."):
            win = windows[c.subject]
            ex = across[c.subject]
            w = min(
                (
                    range_check(c.id, c.subject, c.quantity, v, win.min, win.max, c.basis)
                    for v in (ex.min, ex.max)
                ),
                key=lambda ch: ch.margin,
            )
            at = ex.min_states if w.value == ex.min else ex.max_states
        elif key in RATINGS:
            rating = RATINGS[key]
            ex = elements[c.subject][rating.of]
            lo_m, hi_m = rating.measure(np.float64(ex.min)), rating.measure(np.float64(ex.max))
            v = float(max(lo_m, hi_m))
            util = v / c.limit if c.limit > 0 else float("inf")
            w = replace(c, value=v, margin=c.limit - v, utilization=util)
            at = ex.max_states if hi_m >= lo_m else ex.min_states
        else:  # a window key of the element's type (an op-amp's output range)
            e = project.element(subject)
            wk = {k.name: k for k in e.kind.windows}[key]
            lo, hi = next((a, b) for k, a, b in e.windows if k == key)
            ex = elements[subject][wk.of]
            w = min(
                (
                    range_check(c.id, subject, c.quantity, v, lo, hi, c.basis)
                    for v in (ex.min, ex.max)
                ),
                key=lambda ch: ch.margin,
            )
            at = ex.min_states if w.value == ex.min else ex.max_states
        where = "; there " + ", ".join(f"{n} {st}" for n, st in at) if at else ""
        out.append(replace(w, basis=f"{c.basis}; worst of {label}{where}"))
    return tuple(out)


# --------------------------------------------------------------------------
# the analysis of one case
# --------------------------------------------------------------------------


def _store(net, keys, extremes: dict, project):
    nodes: dict[str, Extreme] = {}
    elements: dict[str, dict[str, Extreme]] = {}
    across: dict[str, Extreme] = {}
    windows = iter(project.limits.across)
    for key in keys:
        kind, idx = key
        if kind == "node":
            nodes[net.nodes[idx]] = extremes[key]
        elif kind == "across":
            across[next(windows).name] = extremes[key]
        else:
            elements.setdefault(net.names[idx], {})[kind] = extremes[key]
    return nodes, elements, across


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
    runs = _Runs(net)
    var = Variation(project, case_result.case, quantities, case_result.values)
    lo, hi = var.bounds()
    q = len(quantities)
    keys = _keys(net, project)
    nominal_p = var.params(st, np.zeros(q)[None])
    nom = _matrix(runs.batch(nominal_p)[0], keys)[0]
    hist = None
    if a.tolerance == "extreme":
        found, note, solved, _ = _extremes(runs, var, keys, lo, hi, nom)
        ext = {}
        for o, key in enumerate(keys):
            hi_v, lo_v = found[key]["max"], found[key]["min"]
            how = "vertices, proved" if hi_v[3] else "vertices and local search"
            ext[key] = Extreme(
                float(nom[o]),
                lo_v[0],
                hi_v[0],
                lo_v[1],
                hi_v[1],
                how=how,
                min_where=lo_v[2],
                max_where=hi_v[2],
                min_states=lo_v[4],
                max_states=hi_v[4],
            )
        label = "the tolerance box"
    elif a.tolerance == "montecarlo":
        rng = np.random.default_rng(a.seed)
        K = a.samples
        Ys, deltas, stated = [], [], []
        for start in range(0, K, MC_CHUNK):
            k = min(MC_CHUNK, K - start)
            if a.distribution == "uniform":
                d = lo + (hi - lo) * rng.random((k, q))
            else:  # normal, tolerance = 3 sigma, truncated at the tolerance limits
                zs = _truncated_normal(rng, (k, q))
                d = np.where(zs >= 0, zs * hi / 3, zs * (-lo) / 3)
            b, sb = runs.batch(var.params(st, d), count=True)
            Ys.append(_matrix(b, keys))
            deltas.append(d)
            stated.append(sb)
        Y = np.concatenate(Ys)
        delta = np.concatenate(deltas)

        def changes(k: int) -> tuple[tuple[str, str], ...]:
            return runs.changes(stated[k // MC_CHUNK], k % MC_CHUNK)

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
                float(nom[o]),
                float(col[kmin]),
                float(col[kmax]),
                tuple(delta[kmin].tolist()),
                tuple(delta[kmax].tolist()),
                float(col.mean()),
                float(col.std(ddof=1)),  # K ≥ 10 (analysis.samples)
                float(np.percentile(col, 1)),
                float(np.percentile(col, 99)),
                "samples",
                "sample",
                "sample",
                changes(kmin),
                changes(kmax),
            )
        solved = K
        label = f"{K} samples (sample extremes)"

        def spread(col: np.ndarray) -> bool:  # more than rounding (an ideal short's node is not)
            return float(np.ptp(col)) > ROUNDING_SPREAD * float(np.max(np.abs(col)))

        varying = [k for k in range(1, len(net.nodes)) if spread(Y[:, keys.index(("node", k))])]
        if varying:
            k = varying[0]
            counts, edges = np.histogram(Y[:, keys.index(("node", k))], bins=24)
            hist = (f"V({net.nodes[k]})", tuple(edges.tolist()), tuple(int(c) for c in counts))
    else:  # rss
        G = _gradients(runs, var, np.zeros(q), keys)  # (q, outputs): per unit relative deviation
        ext = {}
        for o, key in enumerate(keys):
            slope = G[:, o]
            # lo ≤ 0 ≤ hi (tolerances are non-negative shares): up ≥ 0 ≥ down
            up = np.maximum(slope * hi, slope * lo)
            down = np.minimum(slope * hi, slope * lo)
            y = float(nom[o])
            ext[key] = Extreme(
                y,
                y - float(np.sqrt(np.sum(down**2))),
                y + float(np.sqrt(np.sum(up**2))),
                tuple(np.where(slope < 0, hi, lo).tolist()),
                tuple(np.where(slope >= 0, hi, lo).tolist()),
                how="first order",
                min_where="first order",
                max_where="first order",
            )
        note = "root-sum-square of first-order deviations (direct differentiation of the solution)"
        solved = 1
        label = "the RSS band"
    nodes, elements, across = _store(net, keys, ext, project)
    checks = _worst_checks(project, case_result.checks, nodes, elements, across, label)
    if runs.changed:
        note += (
            f"; {runs.changed} of the {solved} value sets put a device in another state "
            f"(found by the state search, {runs.iterations} pivots in all)"
        )
    return ToleranceResult(
        case_result.name,
        a.tolerance,
        note,
        quantities,
        solved,
        nodes,
        elements,
        checks,
        hist,
        across,
        runs.changed,
        runs.iterations,
        tuple(runs.per_set) if len(runs.solver.pcs) and len(runs.per_set) <= LISTED_SETS else (),
    )


__all__ = ["Extreme", "ToleranceResult", "tolerance_result", "factor"]
