"""The linear complementarity problem and Lemke's complementary pivoting method.

Given a K×K matrix M and a vector q, find z and w with::

    w = q + M·z,   z ≥ 0,   w ≥ 0,   zᵢ·wᵢ = 0 for every i.

Lemke's method (C. E. Lemke, "Bimatrix equilibrium points and
mathematical programming", Management Science 11, 1965; the textbook
account is R. W. Cottle, J.-S. Pang and R. E. Stone, *The Linear
Complementarity Problem*, Academic Press 1992, chapter 4; both cited from
memory) adds an artificial variable z₀ with the covering vector
d = (1, …, 1)::

    w = q + M·z + d·z₀

starts from z = 0, z₀ = −min(q) (so w ≥ 0), and then pivots: the variable
that has just left the basis is replaced by its complement entering it,
the leaving variable chosen by the minimum-ratio test.  It stops when z₀
leaves (a solution) or when the entering variable is unbounded (a
secondary ray).

**Why it ends.**  Every pivot moves to an adjacent *almost complementary*
basis; with the lexicographic minimum-ratio test used here every basis is
nondegenerate in the lexicographic sense, so each almost complementary
basis has at most two neighbours on the path and the path never returns
to a basis it has visited.  There are finitely many bases (at most
C(2K+1, K)), so the method stops after finitely many pivots.  In practice
it takes about as many pivots as there are pieces that change state.
(Floating point could in principle upset the lexicographic test, so a cap
of ``max(1000, 50·K)`` pivots ends the loop as a ray; it has not been
reached in any test.)

**What the ending means.**  Ending at a solution needs nothing further.
Ending on a secondary ray proves that no solution exists when M is
*copositive-plus*, which holds whenever xᵀ·M·x ≥ 0 for every x.  For a
circuit of resistors, independent sources and diodes whose all-blocking
network is solvable, M is the port impedance of a passive reciprocal
network, doubled up for the two directions, plus the slope resistances:
positive semidefinite; other starting states give principal pivot
transforms of it, which keep xᵀ·M·x ≥ 0.  With positive slope resistances
M is moreover a P-matrix and the solution is unique.  With controlled
sources and op-amps M has neither property in general; a ray is then not
a proof, and the caller falls back on trying every state combination
(:func:`enumerate_solutions`), which is exhaustive for up to
``ENUMERATION_LIMIT`` pieces.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Iterable
from dataclasses import dataclass

import numpy as np

PIVOT_TOL = 1e-11  # relative size below which a column entry is taken as zero
ENUMERATION_LIMIT = 12  # pieces up to which every combination may be tried


@dataclass(frozen=True)
class LcpResult:
    """The outcome of Lemke's method.

    Attributes
    ----------
    z, w : numpy.ndarray
        The solution (on a ray: the last basic solution).
    basic_z : numpy.ndarray of bool
        Which ``zᵢ`` are basic at the end (the complementary basis found).
    pivots : int
        Pivots taken (the first, bringing in z₀, included).
    solved : bool
        False: the method ended on a secondary ray.
    ray : numpy.ndarray of bool
        On a ray: the pairs whose variables change along it.
    """

    z: np.ndarray
    w: np.ndarray
    basic_z: np.ndarray
    pivots: int
    solved: bool
    ray: np.ndarray


def _scaled(q: np.ndarray, M: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Rows (w) and columns (z) scaled by powers of two, which keeps complementarity.

    Returns (q', M', row factors, column factors) with w' = r·w, z' = z / c.
    """
    A = np.abs(M)
    rmax = np.maximum(A.max(axis=1, initial=0.0), np.abs(q))
    r = np.exp2(-np.round(np.log2(np.where(rmax > 0, rmax, 1.0))))
    cmax = (A * r[:, None]).max(axis=0, initial=0.0)
    c = np.exp2(-np.round(np.log2(np.where(cmax > 0, cmax, 1.0))))
    return q * r, M * r[:, None] * c[None, :], r, c


def lemke(q: np.ndarray, M: np.ndarray, max_pivots: int | None = None) -> LcpResult:
    """Solve the LCP (q, M) by Lemke's method with the lexicographic ratio test.

    >>> r = lemke(np.array([-1.0, 2.0]), np.array([[2.0, 0.0], [0.0, 1.0]]))
    >>> r.solved, r.z.tolist(), r.w.tolist()
    (True, [0.5, 0.0], [0.0, 2.0])
    """
    q = np.asarray(q, dtype=float)
    M = np.asarray(M, dtype=float)
    K = len(q)
    none = np.zeros(K, dtype=bool)
    if K == 0 or np.all(q >= 0):
        return LcpResult(np.zeros(K), q.copy(), none, 0, True, none)
    qs, Ms, rs, cs = _scaled(q, M)
    # tableau columns: w (K), z (K), z0, right-hand side;  I·w − M·z − d·z0 = q
    T = np.hstack([np.eye(K), -Ms, -np.ones((K, 1)), qs[:, None]])
    basis = np.arange(K)
    Z0 = 2 * K
    cap = max_pivots if max_pivots is not None else max(1000, 50 * K)

    def pivot(r: int, c: int) -> None:
        T[r] /= T[r, c]
        col = T[:, c].copy()
        col[r] = 0.0
        T[:] -= np.outer(col, T[r])
        basis[r] = c

    r = _first_row(T[:, -1])
    leaving = int(basis[r])
    pivot(r, Z0)
    pivots = 1
    entering = leaving + K
    while True:
        col = T[:, entering]
        small = PIVOT_TOL * max(float(np.max(np.abs(col))), 1e-300)
        rows = np.flatnonzero(col > small)
        if not len(rows) or pivots >= cap:
            ray = np.zeros(K, dtype=bool)
            ray[entering % K] = True
            for i in np.flatnonzero(np.abs(col) > small).tolist():
                if basis[i] != Z0:
                    ray[int(basis[i]) % K] = True
            z, w, bz = _values(T, basis, K, rs, cs)
            return LcpResult(z, w, bz, pivots, False, ray)
        z0_at = np.flatnonzero(basis == Z0)
        r = _ratio_row(T, rows, col, K, int(z0_at[0]) if len(z0_at) else -1)
        leaving = int(basis[r])
        pivot(r, entering)
        pivots += 1
        if leaving == Z0:
            z, w, bz = _values(T, basis, K, rs, cs)
            fresh = basis_solution(q, M, bz)
            if fresh is not None:
                z, w = fresh
            return LcpResult(z, w, bz, pivots, True, none)
        entering = leaving + K if leaving < K else leaving - K


TIE = 1e-9  # relative difference below which two ratios count as equal


def _first_row(q: np.ndarray) -> int:
    """The row z₀ replaces first: the most negative q; among equals the last, which
    keeps every other row lexicographically positive."""
    best = float(q.min())
    return int(np.flatnonzero(q <= best + TIE * max(abs(best), 1.0))[-1])


def _ratio_row(T: np.ndarray, rows: np.ndarray, col: np.ndarray, K: int, z0_row: int) -> int:
    """The lexicographic minimum-ratio row: the ratio of (rhs, B⁻¹ row) to the
    entering column, compared entry by entry (B⁻¹ = T[:, :K]); z₀'s row is
    taken whenever it ties, since its leaving ends the search."""
    ratio = T[rows, -1] / col[rows]
    best = float(ratio.min())
    cand = rows[ratio <= best + TIE * max(abs(best), 1.0)]
    if z0_row in cand.tolist():
        return z0_row
    for k in range(K):
        if len(cand) == 1:
            break
        v = T[cand, k] / col[cand]
        cand = cand[v <= float(v.min()) + TIE * max(abs(float(v.min())), 1.0)]
    return int(cand[0])


def _values(T, basis, K: int, rs, cs) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """z and w of the final basis, from the tableau (refined by the caller)."""
    z = np.zeros(K)
    w = np.zeros(K)
    bz = np.zeros(K, dtype=bool)
    for i, b in enumerate(basis.tolist()):
        if b < K:
            w[b] = max(T[i, -1], 0.0)
        elif b < 2 * K:
            z[b - K] = max(T[i, -1], 0.0)
            bz[b - K] = True
    return z * cs, w / rs, bz


def basis_solution(q: np.ndarray, M: np.ndarray, basic_z: np.ndarray):
    """z and w of a complementary basis solved afresh: z_S = −M_SS⁻¹·q_S, the rest 0.

    Returns None when M_SS is singular.
    """
    S = np.flatnonzero(basic_z)
    z = np.zeros(len(q))
    if len(S):
        try:
            z[S] = np.linalg.solve(M[np.ix_(S, S)], -q[S])
        except np.linalg.LinAlgError:
            return None
    return z, q + M @ z


def enumerate_solutions(
    choices: Iterable[tuple], consistent: Callable[[tuple], bool]
) -> tuple | None:
    """The first combination for which ``consistent`` holds (exhaustive search)."""
    for combo in itertools.product(*choices):
        if consistent(combo):
            return combo
    return None


__all__ = ["ENUMERATION_LIMIT", "LcpResult", "basis_solution", "enumerate_solutions", "lemke"]
