"""Solving A·x = z: exact, dense or sparse, with residual and condition.

Method by size (unknowns ``n``):

- ``n ≤ EXACT_LIMIT`` and every value rational: Gauss–Jordan elimination in
  exact rational arithmetic (:class:`fractions.Fraction`); the residual is
  exactly zero;
- ``n ≤ DENSE_LIMIT``: LU in float64 (LAPACK via numpy) with the 2-norm
  condition number;
- larger: sparse LU (SuperLU via scipy.sparse) with a 1-norm condition
  estimate (Hager–Higham, ``scipy.sparse.linalg.onenormest``).

A singular system raises :class:`~calcdoc.errors.SingularCircuitError`
naming the unknowns involved (from a null-space vector).
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from calcdoc.errors import SingularCircuitError
from calcdoc.mna.formulation import Formulation, formulation, stamps, unknown_names
from calcdoc.mna.netlist import Netlist
from calcdoc.mna.topology import diagnose

EXACT_LIMIT = 40
DENSE_LIMIT = 400
ILL_CONDITIONED = 1e12


@dataclass(frozen=True)
class Solution:
    """The solved MNA system.

    Attributes
    ----------
    unknowns : tuple of str
    x : numpy.ndarray
        Values of the unknowns (V or A), float64.
    exact : tuple of Fraction or None
        The same in exact rational arithmetic, when that path was taken.
    method : str
        ``"exact rational"``, ``"dense LU"`` or ``"sparse LU"``.
    residual : float
        ‖A·x − z‖∞ of the float solution (0 for the exact path).
    condition : float
        Condition number estimate of A (2-norm dense, 1-norm sparse).
    warnings : tuple of str
    formulation : Formulation or None
        The symbolic equations, when the system is small enough to keep them.
    matrix : (numpy.ndarray, numpy.ndarray) or None
        The dense A and z that were solved (float64), up to DENSE_LIMIT unknowns.
    """

    unknowns: tuple[str, ...]
    x: np.ndarray
    exact: tuple[Fraction, ...] | None
    method: str
    residual: float
    condition: float
    warnings: tuple[str, ...]
    formulation: Formulation | None
    matrix: tuple[np.ndarray, np.ndarray] | None = None


def _exact_solve(A: list[list[Fraction]], z: list[Fraction]) -> list[Fraction] | int:
    """Gauss–Jordan in rationals; returns the solution or the first dependent column."""
    n = len(A)
    M = [row[:] + [z[i]] for i, row in enumerate(A)]
    where = [-1] * n
    r = 0
    for c in range(n):
        p = next((i for i in range(r, n) if M[i][c] != 0), None)
        if p is None:
            return c
        M[r], M[p] = M[p], M[r]
        piv = M[r][c]
        rowr = [v / piv for v in M[r]]
        M[r] = rowr
        for i in range(n):
            if i != r and M[i][c] != 0:
                f = M[i][c]
                Mi = M[i]
                M[i] = [vi - f * vr for vi, vr in zip(Mi, rowr, strict=True)]
        where[c] = r
        r += 1  # noqa: SIM113
    return [M[where[c]][n] for c in range(n)]


def _null_unknowns(A: np.ndarray, names: tuple[str, ...]) -> list[str]:
    _, s, vt = np.linalg.svd(A)
    v = np.abs(vt[-1])
    return [names[i] for i in np.flatnonzero(v > 1e-6 * v.max())]


def _singular(names: list[str]) -> SingularCircuitError:
    return SingularCircuitError(
        "singular system",
        "the equations do not fix the unknowns "
        + ", ".join(names[:12])
        + (f" and {len(names) - 12} more" if len(names) > 12 else "")
        + " (the topology is sound: check dependent-source gains and controls, which can cancel)",
        names,
    )


def solve(net: Netlist, *, keep_equations: bool | None = None) -> Solution:
    """Diagnose and solve the MNA system of a netlist.

    Parameters
    ----------
    net : Netlist
    keep_equations : bool, optional
        Keep the symbolic :class:`Formulation` (default: when n ≤ DENSE_LIMIT).

    Returns
    -------
    Solution

    Raises
    ------
    SingularCircuitError
        Named topology fault, or a numerically singular system.
    """
    diagnose(net)
    names = unknown_names(net)
    n = len(names)
    if keep_equations is None:
        keep_equations = n <= DENSE_LIMIT
    form = formulation(net) if (keep_equations or (n <= EXACT_LIMIT and net.exact)) else None
    warnings: list[str] = []
    if n <= EXACT_LIMIT and net.exact and form is not None:
        values = dict(zip(net.names, net.values, strict=True))
        Aq, zq = form.matrix(values)
        got = _exact_solve(Aq, zq)  # type: ignore[arg-type]
        Af = np.array([[float(v) for v in row] for row in Aq])
        if isinstance(got, int):
            raise _singular(_null_unknowns(Af, names))
        x = np.array([float(v) for v in got])
        cond = float(np.linalg.cond(Af))
        residual = 0.0
        method, exact = "exact rational", tuple(got)
        dense = (Af, np.array([float(v) for v in zq]))
    elif n <= DENSE_LIMIT:
        rows, cols, vals, z = stamps(net)
        A = np.zeros((n, n))
        np.add.at(A, (rows, cols), vals)
        cond = float(np.linalg.cond(A))
        if not np.isfinite(cond) or cond > 1e17:
            raise _singular(_null_unknowns(A, names))
        x = np.linalg.solve(A, z)
        residual = float(np.max(np.abs(A @ x - z))) if n else 0.0
        method, exact = "dense LU", None
        dense = (A, z)
    else:
        x, residual, cond = _sparse_solve(net, names)
        method, exact = "sparse LU", None
        dense = None
    if cond > ILL_CONDITIONED:
        warnings.append(
            f"the system is ill-conditioned (condition number {cond:.3g}); "
            "results may carry large rounding errors"
        )
    return Solution(names, x, exact, method, residual, cond, tuple(warnings), form, dense)


def _sparse_solve(net: Netlist, names: tuple[str, ...]) -> tuple[np.ndarray, float, float]:
    import warnings as _w

    from scipy.sparse import csc_matrix
    from scipy.sparse.linalg import LinearOperator, MatrixRankWarning, onenormest, splu

    n = len(names)
    rows, cols, vals, z = stamps(net)
    A = csc_matrix((vals, (rows, cols)), shape=(n, n))
    try:
        with _w.catch_warnings():
            _w.simplefilter("error", MatrixRankWarning)
            lu = splu(A)
    except (RuntimeError, MatrixRankWarning):
        raise _sparse_singular(A, names) from None
    x = lu.solve(z)
    if not np.all(np.isfinite(x)):
        raise _sparse_singular(A, names)
    residual = float(np.max(np.abs(A @ x - z)))
    inv = LinearOperator((n, n), matvec=lu.solve, rmatvec=lambda y: lu.solve(y, trans="T"),
                         dtype=float)  # fmt: skip
    inv.matmat = lambda X: np.column_stack([lu.solve(c) for c in X.T])  # type: ignore[method-assign]
    try:
        cond = float(onenormest(A) * onenormest(inv))
    except Exception:  # pragma: no cover - estimator failure is not fatal
        cond = float("nan")
    return x, residual, cond


def _sparse_singular(A, names: tuple[str, ...]) -> SingularCircuitError:
    from scipy.sparse.csgraph import structural_rank

    n = len(names)
    if n <= 3000:
        return _singular(_null_unknowns(A.toarray(), names))
    rank = int(structural_rank(A))
    return SingularCircuitError(
        "singular system",
        f"the {n} equations are singular (structural rank {rank}); the topology is sound, "
        "check dependent-source gains and controls",
        (),
    )
