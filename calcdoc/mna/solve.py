"""Solving A·x = z: exact, dense or sparse, equilibrated and refined.

Method by size (unknowns ``n``):

- ``n ≤ EXACT_LIMIT`` and every number rational: Gauss–Jordan elimination
  in exact rational arithmetic (:class:`fractions.Fraction`).  The solution
  is exact: it has no residual and no condition number.  Should the
  numbers grow beyond ``EXACT_BITS`` bits during elimination, the float
  path below is taken instead (and said so);
- ``n ≤ DENSE_LIMIT``: LU in float64 (LAPACK via numpy);
- larger: sparse LU (SuperLU via scipy.sparse).

Both float paths first *equilibrate* A (rows, then columns, scaled by
powers of two, which is exact), so that a circuit mixing 1 µΩ and 1 TΩ is
solved as well as its structure allows, and then apply *iterative
refinement*: the residual z − A·x is computed in extended precision
(``numpy.longdouble``) and the correction solved with the same factors,
while the correction keeps shrinking.  Reported: the relative residual
‖A·x − z‖∞ / (‖A‖∞·‖x‖∞ + ‖z‖∞), the 1-norm condition estimate of the
equilibrated matrix, and the estimated relative error of x (the size of
the last correction, ‖dx‖∞/‖x‖∞).  When that estimate exceeds
``ERROR_WARNING`` the solution carries a warning.

A system that is singular on its numbers (after the named structural tests
of :mod:`calcdoc.mna.diagnose`) raises
:class:`~calcdoc.errors.SingularCircuitError` naming the unknowns of the
null space: the exact null space on the exact path, else the singular
vector of the equilibrated matrix.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np

from calcdoc.errors import SingularCircuitError
from calcdoc.mna.diagnose import diagnose, unknown_words
from calcdoc.mna.formulation import formulation
from calcdoc.mna.stamps import (
    exact_system,
    extended_parameters,
    float_system,
    law_residual,
    structure,
)
from calcdoc.results import Netlist, Solution

EXACT_LIMIT = 40
DENSE_LIMIT = 400
EXACT_BITS = 4096  # numerator/denominator size above which exact elimination gives way to floats
ERROR_WARNING = 1e-9  # estimated relative error of x above which a solution is warned
SINGULAR = 1e16  # condition (equilibrated) at or above which a float system counts as singular
MAX_REFINEMENT = 8
SVD_NAMING_LIMIT = 3000  # unknowns: up to this a singular sparse system is named by a dense SVD

__all__ = ["Solution", "solve", "DENSE_LIMIT", "EXACT_LIMIT", "ERROR_WARNING"]


class _TooBig(Exception):
    """Exact elimination outgrew EXACT_BITS."""


def _exact_solve(A: list[list[Fraction]], z: list[Fraction]) -> list[Fraction]:
    """Gauss–Jordan in rationals.

    Returns the solution, or raises :class:`_Singular` with the unknowns of
    a null vector.
    """
    n = len(A)
    M = [row[:] + [z[i]] for i, row in enumerate(A)]
    pivot_row_of: dict[int, int] = {}
    r = 0
    for c in range(n):
        p = next((i for i in range(r, n) if M[i][c] != 0), None)
        if p is None:
            # column c is free: the null vector x_c = 1, x_k = −M[row(k)][c] for the
            # pivot columns involves c and the pivot columns with M[row(k)][c] ≠ 0
            raise _Singular(sorted([c, *(k for k, row in pivot_row_of.items() if M[row][c] != 0)]))
        M[r], M[p] = M[p], M[r]
        piv = M[r][c]
        rowr = [v / piv for v in M[r]]
        M[r] = rowr
        for i in range(n):
            if i != r and M[i][c] != 0:
                f = M[i][c]
                Mi = M[i]
                M[i] = [vi - f * vr for vi, vr in zip(Mi, rowr, strict=True)]
        big = max(max(v.numerator.bit_length(), v.denominator.bit_length()) for v in rowr)
        if big > EXACT_BITS:
            raise _TooBig
        pivot_row_of[c] = r
        r += 1  # noqa: SIM113
    return [M[pivot_row_of[c]][n] for c in range(n)]


class _Singular(Exception):
    def __init__(self, involved: list[int]) -> None:
        self.involved = involved


def _singular(names: list[str], how: str) -> SingularCircuitError:
    return SingularCircuitError(
        "singular system",
        f"{unknown_words(names)} {'is' if len(names) == 1 else 'are'} not determined by the "
        f"equations ({how}); check the dependent-source gains and controls, which can cancel",
        names,
    )


def _null_names(v: np.ndarray, names: tuple[str, ...]) -> list[str]:
    v = np.abs(v)
    return [names[i] for i in np.flatnonzero(v > 1e-6 * v.max())]


def _power_of_two(m: np.ndarray) -> np.ndarray:
    """The power of two nearest 1/m; any for m = 0 (a zero row or column, singular anyway)."""
    return np.exp2(-np.round(np.log2(np.where(m > 0, m, 1.0))))


def _scaling(absA_rowmax, absA_colmax_fn):
    """Powers of two for row and column scaling."""
    r = _power_of_two(absA_rowmax)
    return r, _power_of_two(absA_colmax_fn(r))


def solve(net: Netlist, *, keep_equations: bool | None = None) -> Solution:
    """Diagnose and solve the MNA system of a netlist.

    Parameters
    ----------
    net : Netlist
    keep_equations : bool, optional
        Keep the symbolic :class:`~calcdoc.results.Formulation` (default:
        when n ≤ DENSE_LIMIT).

    Returns
    -------
    Solution

    Raises
    ------
    SingularCircuitError
        A named structural fault, or a system singular on its numbers.
    """
    st = structure(net)
    rows, cols, vals, z = float_system(st)
    diagnose(st, (rows, cols, vals))
    names = st.unknowns()
    n = st.n
    if keep_equations is None:
        keep_equations = n <= DENSE_LIMIT
    form = formulation(st) if keep_equations else None
    limits = {"exact": EXACT_LIMIT, "dense": DENSE_LIMIT}
    notes: list[str] = []
    if n <= EXACT_LIMIT and net.exact:
        Aq, zq = exact_system(st)
        try:
            got = _exact_solve(Aq, zq)
        except _Singular as s:
            raise _singular([names[i] for i in s.involved], "exact rank") from None
        except _TooBig:
            notes.append(
                f"exact elimination outgrew {EXACT_BITS}-bit numbers; solved in floating point"
            )
        else:
            x = np.array([float(v) for v in got])
            dense = (
                np.array([[float(v) for v in row] for row in Aq]),
                np.array([float(v) for v in zq]),
            )
            return Solution(
                names, x, tuple(got), "exact rational", None, None, (), form, dense, None, 0, limits
            )
    if n <= DENSE_LIMIT:
        A = np.zeros((n, n))
        np.add.at(A, (rows, cols), vals)
        x, info = _dense(A, z, names, _residual(st))
        dense = (A, z)
        method = "dense LU"
    else:
        x, info = _sparse(rows, cols, vals, z, n, names, _residual(st))
        dense = None
        method = "sparse LU"
    residual, cond, err, steps = info
    warnings = list(notes)
    if err > ERROR_WARNING:
        warnings.append(
            f"estimated relative error of the solution {err:.1g} exceeds {ERROR_WARNING:g} "
            f"(condition number {cond:.3g} after equilibration): results may carry large "
            "rounding errors"
        )
    return Solution(
        names, x, None, method, residual, cond, tuple(warnings), form, dense, err, steps, limits
    )


def _refine(residual, solve_scaled, z: np.ndarray, x: np.ndarray, anorm: float):
    """Iterative refinement with the residual z − A·x in extended precision.

    x has at least one entry (an empty system is answered before).
    ``residual(x)`` takes and returns extended-precision vectors.
    Returns (x, relative residual, estimated relative error, steps).
    """
    steps = 0
    prev = np.inf
    while True:
        r = residual(x.astype(np.longdouble))
        dx = solve_scaled(r.astype(float))
        xn = float(np.max(np.abs(x)))
        dn = float(np.max(np.abs(dx)))
        size = dn / xn if xn else dn
        if not np.isfinite(size):
            err = np.inf
            break
        if size >= prev or steps >= MAX_REFINEMENT:
            err = size  # no longer shrinking: the error of x as it stands
            break
        x = x + dx
        steps += 1
        prev = size
        if size <= np.finfo(float).eps:
            err = size
            break
    r = residual(x.astype(np.longdouble))
    rn = float(np.max(np.abs(r)))
    xn = float(np.max(np.abs(x)))
    zn = float(np.max(np.abs(z)))
    denom = anorm * xn + zn
    return x, (rn / denom if denom else 0.0), float(err), steps


def _residual(st):
    p = extended_parameters(st)
    return lambda x: law_residual(st, x, p)


def _dense(A: np.ndarray, z: np.ndarray, names, residual) -> tuple[np.ndarray, tuple]:
    n = len(z)
    if n == 0:
        return np.zeros(0), (0.0, 1.0, 0.0, 0)
    absA = np.abs(A)
    r, c = _scaling(absA.max(axis=1), lambda r: (absA * r[:, None]).max(axis=0))
    As = A * r[:, None] * c[None, :]
    cond = float(np.linalg.cond(As, 1)) if np.all(np.isfinite(As)) else np.inf
    if not np.isfinite(cond) or cond >= SINGULAR:
        _, _, vt = np.linalg.svd(As)
        raise _singular(_null_names(c * vt[-1], names), "numerical rank")

    def solve_scaled(b: np.ndarray) -> np.ndarray:
        return c * np.linalg.solve(As, r * b)

    x = solve_scaled(z)
    x, res, err, steps = _refine(residual, solve_scaled, z, x, float(absA.sum(1).max()))
    return x, (res, cond, err, steps)


def _sparse(rows, cols, vals, z, n: int, names, residual) -> tuple[np.ndarray, tuple]:
    import warnings as _w

    from scipy.sparse import coo_matrix, diags
    from scipy.sparse.linalg import LinearOperator, MatrixRankWarning, onenormest, splu

    A = coo_matrix((vals, (rows, cols)), shape=(n, n)).tocsr()
    absA = abs(A)
    rowmax = np.asarray(absA.max(axis=1).todense()).ravel()

    def colmax(r):
        return np.asarray((diags(r) @ absA).max(axis=0).todense()).ravel()

    r, c = _scaling(rowmax, colmax)
    As = (diags(r) @ A @ diags(c)).tocsc()
    try:
        with _w.catch_warnings():
            _w.simplefilter("error", MatrixRankWarning)
            lu = splu(As)
    except (RuntimeError, MatrixRankWarning):
        raise _sparse_singular(As, c, names) from None

    def solve_scaled(b: np.ndarray) -> np.ndarray:
        return c * lu.solve(r * b)

    x = solve_scaled(z)
    if not np.all(np.isfinite(x)):
        raise _sparse_singular(As, c, names)
    inv = LinearOperator(
        (n, n), matvec=lu.solve, rmatvec=lambda y: lu.solve(y, trans="T"), dtype=float
    )
    inv.matmat = lambda X: np.column_stack([lu.solve(col) for col in X.T])  # type: ignore[method-assign]
    try:
        cond = float(onenormest(As) * onenormest(inv))
    except Exception:  # pragma: no cover - estimator failure is not fatal
        cond = float("inf")
    if cond >= SINGULAR:
        raise _sparse_singular(As, c, names)
    x, res, err, steps = _refine(residual, solve_scaled, z, x, float(absA.sum(axis=1).max()))
    return x, (res, cond, err, steps)


def _sparse_singular(As, c, names: tuple[str, ...]) -> SingularCircuitError:
    from scipy.sparse.csgraph import structural_rank

    n = len(names)
    if n <= SVD_NAMING_LIMIT:
        _, _, vt = np.linalg.svd(As.toarray())
        return _singular(_null_names(c * vt[-1], names), "numerical rank")
    rank = int(structural_rank(As))
    return SingularCircuitError(
        "singular system",
        f"the {n} equations are singular (structural rank {rank}); "
        "check the dependent-source gains and controls",
        (),
    )
