"""The states of piecewise-linear devices (diodes, zeners, LEDs), found and proved.

A device's type lists its conducting pieces (:class:`~calcdoc.model.elements.Knee`).
Each piece ``k`` carries the current ``direction·z_k`` with ``z_k ≥ 0`` and
has the slack ``w_k = threshold − direction·v + R·z_k ≥ 0``; in every
solution one of the two is zero.  With the rest of the circuit linear, the
slacks are affine in the piece currents, so the states are the solution of
a *linear complementarity problem* (:mod:`calcdoc.mna.lcp`), solved by
Lemke's method, which ends after finitely many pivots (proof there).

Forming the problem.  A *base* assigns each piece a side: off (its current
``z`` is the free variable, the element in its off state) or on (its slack
``w`` is free, the element in that piece's state).  The circuit in the
base states is an ordinary MNA system A·x = z from the element table; a
unit of each free variable changes one entry of the right-hand side (a
unit current through the element, or a unit change of its law's
constant).  One factorisation and K + 1 solves give q and the columns of
M.  The base is the off state of every device, or, when that leaves a node
undetermined (a node reached only through diodes), a base found by turning
pieces on one at a time while the rank grows.  Different bases give
principal pivot transforms of the same problem, with the same solutions.

After the search the circuit is solved again in the states found, by the
ordinary solver (exactly where it is small), and every device's
consistency test is evaluated on that solution: conducting needs its
current ≥ 0, blocking needs −Vbr ≤ V ≤ Vf, breakdown needs its current ≤ 0
(:mod:`calcdoc.mna.proof`).  Should Lemke's method end on a ray (possible with
controlled sources, where M may lack the properties that make a ray a
proof), every combination of states is tried for up to
``ENUMERATION_LIMIT`` pieces; a circuit with no consistent combination is
refused with the devices named.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from calcdoc.errors import SingularCircuitError
from calcdoc.mna.batch import Batch
from calcdoc.mna.diagnose import name_list
from calcdoc.mna.lcp import ENUMERATION_LIMIT, enumerate_solutions, lemke
from calcdoc.mna.stamps import OWN, Structure, float_system, structure
from calcdoc.model.elements import KINDS, Knee
from calcdoc.results import Netlist

DENSE = 400  # unknowns up to which the base is factorised densely (and its rank found)
SINGULAR = 1e13  # condition of the equilibrated base matrix above which it counts as singular
ROUNDING = 1e-9  # share of the circuit's largest current / voltage a float test may miss by

LEMKE = "complementary pivoting (Lemke)"
EVERY = "every combination tried"


@dataclass(frozen=True)
class Pieces:
    """The conducting pieces of a netlist's searched devices (thresholds given)."""

    element: np.ndarray
    knee: tuple[Knee, ...]
    off: tuple[str, ...]  # the element's state with no piece conducting
    direction: np.ndarray
    threshold: np.ndarray  # parameter index
    slope: np.ndarray  # parameter index, −1 when the slope resistance is left out

    def __len__(self) -> int:
        return len(self.knee)

    def states(self, on: np.ndarray) -> dict[int, str]:
        """Element states from the pieces that conduct (an element's first one)."""
        out: dict[int, str] = {}
        for k, j in enumerate(self.element.tolist()):
            out.setdefault(j, self.off[k])
            if on[k] and out[j] == self.off[k]:
                out[j] = self.knee[k].state
        return out

    def conducting(self, net: Netlist) -> np.ndarray:
        """Which pieces conduct in the netlist's states."""
        return np.array(
            [net.state(int(j)) == kn.state for j, kn in zip(self.element, self.knee, strict=True)],
            dtype=bool,
        )


def pieces(st: Structure) -> Pieces:
    """Every conducting piece of the searched devices of a structure's netlist."""
    net = st.net
    absent = set(net.absent)
    index = {(s.element, s.key): k for k, s in enumerate(st.symbols)}
    el, kn, off, dr, th, sl = [], [], [], [], [], []
    for j, t in enumerate(net.types):
        kind = KINDS[t]
        for knee in kind.knees:
            if (j, knee.threshold) in absent:
                continue
            el.append(j)
            kn.append(knee)
            off.append(kind.states[0])
            dr.append(float(knee.direction))
            th.append(index[(net.names[j], knee.threshold)])
            given = (j, knee.slope) not in absent
            sl.append(index[(net.names[j], knee.slope)] if given else -1)
    i64 = np.int64
    return Pieces(
        np.array(el, dtype=i64),
        tuple(kn),
        tuple(off),
        np.array(dr),
        np.array(th, dtype=i64),
        np.array(sl, dtype=i64),
    )


def searched(net: Netlist) -> bool:
    """The netlist has devices whose states are found."""
    return any(KINDS[t].searched for t in net.types)


def with_states(net: Netlist, states: dict[int, str]) -> Netlist:
    """The netlist with some elements' states replaced."""
    full = (
        list(net.states)
        if net.states
        else [KINDS[t].states[0] if KINDS[t].states else "" for t in net.types]
    )
    changed = False
    for j, s in states.items():
        changed |= full[j] != s
        full[j] = s
    return replace(net, states=tuple(full)) if changed or not net.states else net


# --------------------------------------------------------------------------
# the consistency tests
# --------------------------------------------------------------------------


def margins(pcs: Pieces, net: Netlist, pe: np.ndarray, v: np.ndarray, i: np.ndarray) -> np.ndarray:
    """Each piece's test margin (K rows of results, pieces across): ≥ 0 when it holds.

    A conducting piece needs ``direction·i ≥ 0``; a piece that does not
    conduct needs its slack ``threshold − direction·v ≥ 0``.
    """
    on = pcs.conducting(net)
    j = pcs.element
    cur = pcs.direction * i[..., j]
    slack = pe[..., pcs.threshold] - pcs.direction * v[..., j]
    return np.where(on, cur, slack)


def allowance(pcs: Pieces, net: Netlist, pe, i: np.ndarray, node_voltage: np.ndarray) -> np.ndarray:
    """How far below zero a float margin may lie and still hold: rounding of
    the solution, ``ROUNDING`` × the circuit's largest current (current
    tests) or largest voltage (slack tests)."""
    on = pcs.conducting(net)
    big_i = np.max(np.abs(i), axis=-1, keepdims=True) if i.shape[-1] else 0.0
    big_v = np.max(np.abs(node_voltage), axis=-1, keepdims=True)
    thr = np.abs(pe[..., pcs.threshold])
    return ROUNDING * np.where(on, big_i + 1e-300, np.maximum(big_v, thr) + 1e-300)


def holds(pcs: Pieces, net: Netlist, pe, b: Batch) -> np.ndarray:
    """Rows of a batch whose every piece passes its test (bool per row)."""
    if not len(pcs):
        return np.ones(len(b.x), dtype=bool)
    m = margins(pcs, net, pe, b.voltage, b.current)
    tol = allowance(pcs, net, pe, b.current, b.node_voltage)
    finite = np.all(np.isfinite(b.x), axis=-1)
    return finite & np.all(m >= -tol, axis=-1)


# --------------------------------------------------------------------------
# the search
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class Found:
    """States found for one parameter set: each element's state, and how."""

    states: tuple[str, ...]
    iterations: int
    method: str
    pieces: int


class BaseSystem:
    """The circuit factorised in one base assignment of the pieces (at parameters ``pe``,
    extended with the trailing 1); ``ok`` is False when it is singular."""

    def __init__(self, net: Netlist, pe: np.ndarray) -> None:
        self.net = net
        self.st = structure(net)
        rows, cols, vals, self.z = float_system(self.st, pe)
        n = self.st.n
        self.pe = pe
        self.ok = True
        self.lu = None
        if n > DENSE:
            from scipy.sparse import csc_matrix
            from scipy.sparse.linalg import splu

            try:
                self.lu = splu(csc_matrix((vals, (rows, cols)), shape=(n, n)))
            except RuntimeError:
                self.ok = False
            return
        A = np.zeros((n, n))
        np.add.at(A, (rows, cols), vals)
        absA = np.abs(A)
        rmax = absA.max(axis=1, initial=0.0)
        r = np.exp2(-np.round(np.log2(np.where(rmax > 0, rmax, 1.0))))
        cmax = (absA * r[:, None]).max(axis=0, initial=0.0)
        c = np.exp2(-np.round(np.log2(np.where(cmax > 0, cmax, 1.0))))
        self.As, self.r, self.c = A * r[:, None] * c[None, :], r, c
        if not n:
            return
        if not np.all(np.isfinite(self.As)):
            self.ok = False
            return
        import warnings

        from scipy.linalg import LinAlgWarning, lapack, lu_factor

        with warnings.catch_warnings():
            warnings.simplefilter("ignore", LinAlgWarning)  # a zero pivot: rcond says so
            self.factors = lu_factor(self.As, check_finite=False)
        anorm = float(np.abs(self.As).sum(axis=0).max())
        rcond, _ = lapack.dgecon(self.factors[0], anorm, norm="1")
        if not rcond > 1 / SINGULAR:  # also catches a zero pivot (rcond 0) and NaN
            self.ok = False

    def rank(self) -> int:
        if self.lu is not None or not self.st.n:
            return self.st.n if self.ok else -1
        return int(np.linalg.matrix_rank(self.As))

    def solve(self, B: np.ndarray) -> np.ndarray:
        if self.lu is not None:
            return self.lu.solve(np.asarray(B, dtype=float))
        if not self.st.n:
            return np.zeros(B.shape)
        from scipy.linalg import lu_solve

        rb = self.r[:, None] * B if B.ndim == 2 else self.r * B
        y = lu_solve(self.factors, rb, check_finite=False)
        return (self.c[:, None] * y) if B.ndim == 2 else self.c * y


def _base(
    net: Netlist, pcs: Pieces, pe: np.ndarray, start: np.ndarray
) -> tuple[BaseSystem, np.ndarray]:
    """A nonsingular base: ``start`` if it is one, else every device off, else
    pieces turned on one at a time while the rank grows."""
    tried = []
    for on in (start, np.zeros(len(pcs), dtype=bool)):
        if any(np.array_equal(on, t) for t in tried):
            continue
        tried.append(on)
        b = BaseSystem(with_states(net, pcs.states(on)), pe)
        if b.ok:
            return b, on
    on = np.zeros(len(pcs), dtype=bool)
    best = BaseSystem(with_states(net, pcs.states(on)), pe)
    _fault_beyond_devices(best, pcs)
    rank = best.rank()
    for k in range(len(pcs)):
        if np.any(on & (pcs.element == pcs.element[k])):
            continue  # one piece per device
        trial = on.copy()
        trial[k] = True
        b = BaseSystem(with_states(net, pcs.states(trial)), pe)
        if b.ok:
            return b, trial
        rb = b.rank()
        if rb > rank:
            on, best, rank = trial, b, rb
    raise _NoBase


def _fault_beyond_devices(base: BaseSystem, pcs: Pieces) -> None:
    """Raise the structural fault of the all-off circuit when no searched device is
    part of it (a node behind capacitors alone): no state of theirs could mend it."""
    from calcdoc.mna.diagnose import diagnose

    st = base.st
    rows, cols, vals, _ = float_system(st, base.pe)
    try:
        diagnose(st, (rows, cols, vals))
    except SingularCircuitError as exc:
        devices = {st.net.names[j] for j in pcs.element.tolist()}
        if not devices & set(exc.culprits):
            raise


class _NoBase(Exception):
    """No assignment of the pieces gives a nonsingular circuit."""


def complementarity(base: BaseSystem, pcs: Pieces, on: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """q and M of the LCP in the free variables of a base.

    The element carries ``i = Σ direction_k·z_k`` over its pieces.  Free
    variable of an off piece: its current z; of an on piece: its slack w.
    With no piece of the element on, its law is ``i = 0`` and an off
    piece's z moves that constant by ``direction``; with piece m on, the
    law is ``v − R_m·i = d_m·threshold_m − d_m·w_m − R_m·Σ_{k≠m} d_k·z_k``
    (from ``w_m = threshold_m − d_m·v + R_m·z_m``), so w_m moves the
    constant by −d_m and an off piece's z by −R_m·d_k.  The paired
    variable, read from the solution: an off piece's slack
    ``threshold − direction·v + R·z``; an on piece's current
    ``z_m = d_m·(i − Σ_{k≠m} d_k·z_k)``.
    """
    st, pe = base.st, base.pe
    net = st.net
    n, N, K = st.n, len(net.nodes), len(pcs)
    d = pcs.direction
    R = np.where(pcs.slope >= 0, pe[np.maximum(pcs.slope, 0)], 0.0)
    on_of = {int(pcs.element[m]): m for m in np.flatnonzero(on).tolist()}  # element → its on piece
    E = np.zeros((n, K))
    for k in range(K):
        j = int(pcs.element[k])
        m = on_of.get(j)
        if on[k]:
            E[st.col[j], k] = -d[k]
        elif m is not None:
            E[st.col[j], k] = -R[m] * d[k]
        elif st.mode[j] == OWN:
            E[st.col[j], k] = d[k]
        else:
            a, b = int(net.a[j]) - 1, int(net.b[j]) - 1
            if a >= 0:
                E[a, k] -= d[k]
            if b >= 0:
                E[b, k] += d[k]
    x0 = base.solve(base.z)
    X = base.solve(E) if K else np.zeros((n, 0))
    nv0 = np.concatenate([[0.0], x0[: N - 1]])
    NV = np.vstack([np.zeros((1, K)), X[: N - 1]])
    a, b = net.a[pcs.element], net.b[pcs.element]
    v0, V = nv0[a] - nv0[b], NV[a] - NV[b]
    cols = np.maximum(st.col[pcs.element], 0)
    q = np.where(on, d * x0[cols], pe[pcs.threshold] - d * v0)
    M = np.where(on[:, None], d[:, None] * X[cols], -d[:, None] * V)
    M[np.arange(K), np.arange(K)] += np.where(on, 0.0, R)
    for k in np.flatnonzero(~on).tolist():  # an on piece's current excludes its siblings'
        m = on_of.get(int(pcs.element[k]))
        if m is not None:
            M[m, k] -= d[m] * d[k]
    return q, M


def find_states(net: Netlist, p: np.ndarray | None = None, start: Netlist | None = None) -> Found:
    """The states of every searched device for parameters ``p`` (default: the netlist's).

    Parameters
    ----------
    net : Netlist
    p : numpy.ndarray, optional
        Parameters (P,) in the layout of ``structure(net).symbols``.
    start : Netlist, optional
        States to start from (a nearby solution's); default every device off.

    Raises
    ------
    SingularCircuitError
        No combination of states is consistent (the devices named), or the
        circuit is singular in every state (the structural fault named).
    """
    st = structure(net)
    pcs = pieces(st)
    pe = st.extended(st.p_float if p is None else p)
    K = len(pcs)
    first = pcs.conducting(start) if start is not None else np.zeros(K, dtype=bool)
    try:
        base, on = _base(net, pcs, pe, first)
    except _NoBase:
        from calcdoc.mna.solve import solve

        solve(with_states(net, pcs.states(np.zeros(K, dtype=bool))))  # raises the named fault
        raise  # pragma: no cover - solve found no fault where the rank test did
    q, M = complementarity(base, pcs, on)
    res = lemke(q, M)
    if res.solved:
        conducts = res.basic_z ^ on
        states = with_states(net, pcs.states(conducts))
        if _consistent(states, pcs, pe):
            return Found(states.states, res.pivots, LEMKE, K)
    return _every(net, pcs, pe, res.pivots, res.ray)


def _consistent(net: Netlist, pcs: Pieces, pe: np.ndarray) -> bool:
    st = structure(net)
    b = BaseSystem(net, pe)
    if not b.ok:
        return False
    from calcdoc.mna.batch import derive

    x = b.solve(b.z)
    return bool(holds(pcs, net, pe, derive(st, pe[None, :-1], x[None]))[0])


def _every(net: Netlist, pcs: Pieces, pe: np.ndarray, pivots: int, ray: np.ndarray) -> Found:
    """Try every combination of states (small circuits), else refuse naming the devices."""
    K = len(pcs)
    devices = sorted(set(pcs.element.tolist()))
    names = [net.names[j] for j in devices]
    if K <= ENUMERATION_LIMIT:
        choices = []
        for j in devices:
            ks = np.flatnonzero(pcs.element == j)
            choices.append([(j, None), *((j, int(k)) for k in ks)])
        tried = 0

        def ok(combo) -> bool:
            nonlocal tried
            tried += 1
            on = np.zeros(K, dtype=bool)
            for _, k in combo:
                if k is not None:
                    on[k] = True
            return _consistent(with_states(net, pcs.states(on)), pcs, pe)

        combo = enumerate_solutions(choices, ok)
        if combo is not None:
            on = np.zeros(K, dtype=bool)
            for _, k in combo:
                if k is not None:
                    on[k] = True
            return Found(with_states(net, pcs.states(on)).states, pivots + tried, EVERY, K)
        involved = names
        how = f"every one of the {tried} combinations of their states was tried"
    else:
        involved = [net.names[j] for j in sorted(set(pcs.element[ray].tolist()))] or names
        how = "the state search ended without a solution"
    raise SingularCircuitError(
        "no consistent states",
        f"no set of states of {name_list(involved)} satisfies every device's test "
        f"({how}); each assumed state contradicts its own test, as with an ideal diode "
        "held beyond its threshold by an ideal source: give it a slope resistance or "
        "check the polarity",
        involved,
    )


__all__ = [
    "BaseSystem",
    "Found",
    "Pieces",
    "allowance",
    "complementarity",
    "find_states",
    "holds",
    "margins",
    "pieces",
    "searched",
    "with_states",
]
