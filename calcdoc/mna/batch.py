"""Many solutions of one circuit at once, and derivatives, from the same stamps.

The MNA entries are ``sign · p[num] / p[den]`` (:mod:`calcdoc.mna.stamps`),
so a batch of K parameter sets gives all K matrices with one gather and one
matrix product, and their derivatives with respect to any parameter follow
from the same triplets.  Systems of up to ``DENSE_UNKNOWNS`` unknowns are
solved as a stack of dense systems (numpy's batched LU); larger ones one
sparse LU each (SuperLU), processed in chunks so memory stays bounded.

Derivatives:

- :func:`tangents`: first-order change of every output along given
  directions of the parameters (direct differentiation of A·x = z; the
  output formulas differentiated by complex step, which has no
  subtractive rounding: Squire and Trapp, SIAM Review 40, 1998);
- :func:`adjoint`: the gradient of one output with respect to every
  parameter with one transposed solve (Aᵀλ = ∂y/∂x, then
  dy/dp = ∂y/∂p − λ·(∂A/∂p·x − ∂z/∂p)).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from calcdoc.mna.solve import DENSE_LIMIT
from calcdoc.mna.stamps import Structure, Triplets, apply_map, float_system, structure
from calcdoc.results import Netlist

DENSE_UNKNOWNS = 64
BATCH_ENTRIES = 4_000_000  # dense matrix entries held at once (K·n²)
SPARSE_CHUNK = 256
COMPLEX_STEP = 1e-30


@dataclass(frozen=True)
class Batch:
    """Solutions of K parameter sets: arrays (K, nodes) and (K, elements), SI units."""

    node_voltage: np.ndarray
    voltage: np.ndarray
    current: np.ndarray
    power: np.ndarray
    x: np.ndarray

    def output(self, kind: str, index) -> np.ndarray:
        """One output over the batch: ``kind`` is ``node``, ``voltage``, ``current`` or
        ``power`` (``index`` a node or element), or ``across`` (``index`` a node pair)."""
        if kind == "node":
            return self.node_voltage[:, index]
        if kind == "across":
            return self.node_voltage[:, index[0]] - self.node_voltage[:, index[1]]
        return getattr(self, kind)[:, index]


def patterns(net: Netlist) -> Structure:
    """The stamps of a netlist (kept under this name for the analysis stages)."""
    return structure(net)


SMALL_MAP = 2_000_000  # entries up to which a map is a dense array (no scipy import)


def dense_map(t: Triplets, n: int, rows: int):
    """(T, rows·n) map placing triplet values at row·n + col (dense when small)."""
    if len(t) * rows * n <= SMALL_MAP:
        W = np.zeros((len(t), rows * n))
        W[np.arange(len(t)), t.row * n + t.col] = 1.0
        return W
    from scipy.sparse import csr_matrix

    return csr_matrix(
        (np.ones(len(t)), (np.arange(len(t)), t.row * n + t.col)), shape=(len(t), rows * n)
    )


def solve_x(st: Structure, p: np.ndarray) -> np.ndarray:
    """MNA unknowns (K, n) for each row of parameters ``p`` (K, P).

    Raises
    ------
    numpy.linalg.LinAlgError
        A parameter set makes the system singular (dense path).
    RuntimeError
        The same, from the sparse LU.
    """
    p = np.atleast_2d(np.asarray(p, dtype=float))
    K, n = len(p), st.n
    if K == 0 or n == 0:
        return np.zeros((K, n))
    pe = st.extended(p)
    zv = st.z.values(pe)  # (K, Tz)
    z = np.zeros((K, n))
    np.add.at(z, (slice(None), st.z.row), zv)
    if n <= DENSE_UNKNOWNS:
        W = dense_map(st.A, n, n)
        step = max(1, BATCH_ENTRIES // (n * n))
        xs = []
        for start in range(0, K, step):
            vals = st.A.values(pe[start : start + step])
            A = np.asarray((W.T @ vals.T).T).reshape(-1, n, n)
            xs.append(np.linalg.solve(A, z[start : start + step, :, None])[..., 0])
        return np.concatenate(xs)
    from scipy.sparse import csc_matrix, csr_matrix
    from scipy.sparse.linalg import splu

    key = st.A.col * n + st.A.row  # column-major order of the entries
    uniq, inv = np.unique(key, return_inverse=True)
    indices = (uniq % n).astype(np.int32)
    indptr = np.searchsorted(uniq // n, np.arange(n + 1)).astype(np.int32)
    gather = csr_matrix(
        (np.ones(len(key)), (np.arange(len(key)), inv)), shape=(len(key), len(uniq))
    )
    out = np.empty((K, n))
    for start in range(0, K, SPARSE_CHUNK):
        vals = st.A.values(pe[start : start + SPARSE_CHUNK])
        data = np.ascontiguousarray((gather.T @ vals.T).T)  # SuperLU takes contiguous rows only
        for r in range(len(data)):
            A = csc_matrix((data[r], indices, indptr), shape=(n, n))
            out[start + r] = splu(A).solve(z[start + r])
    return out


def derive(st: Structure, p: np.ndarray, x: np.ndarray) -> Batch:
    """Element voltages, currents and powers of batched solutions.

    Pure arithmetic on its inputs, so complex arguments carry complex-step
    derivatives through it.
    """
    net = st.net
    n_nodes = len(net.nodes)
    p = np.atleast_2d(p)
    x = np.atleast_2d(x)
    K = len(x)
    nv = np.concatenate([np.zeros((K, 1), dtype=x.dtype), x[:, : n_nodes - 1]], axis=1)
    v = nv[:, net.a] - nv[:, net.b]
    i = apply_map(st.current, st.extended(p), x, len(net.names))
    return Batch(nv, v, i, v * i, x)


def solve_batch(st: Structure, p: np.ndarray) -> Batch:
    """Solve the circuit for each row of parameters ``p`` (K, P)."""
    p = np.atleast_2d(np.asarray(p, dtype=float))
    return derive(st, p, solve_x(st, p))


@dataclass(frozen=True)
class Factor:
    """The matrix at one parameter set, factorised once for repeated solves."""

    dense: np.ndarray | None
    lu: object | None

    def solve(self, b: np.ndarray, transpose: bool = False) -> np.ndarray:
        """Solve A·X = B (or Aᵀ·X = B) for B of shape (n,) or (n, k)."""
        if self.dense is not None:
            return np.linalg.solve(self.dense.T if transpose else self.dense, b)
        return self.lu.solve(np.asarray(b, dtype=float), trans="T" if transpose else "N")  # type: ignore[union-attr]


def factor(st: Structure, p: np.ndarray | None = None) -> Factor:
    """Factorise A at parameters ``p`` (P,), default the netlist's own."""
    pe = st.extended(p if p is not None else None)
    rows, cols, vals, _ = float_system(st, pe)
    n = st.n
    if n <= DENSE_LIMIT:  # the single solve's own choice of dense or sparse LU
        A = np.zeros((n, n))
        np.add.at(A, (rows, cols), vals)
        return Factor(A, None)
    from scipy.sparse import csc_matrix
    from scipy.sparse.linalg import splu

    return Factor(None, splu(csc_matrix((vals, (rows, cols)), shape=(n, n))))


def residual_change(st: Structure, p: np.ndarray, x: np.ndarray, dp: np.ndarray) -> np.ndarray:
    """(∂A/∂p·x − ∂z/∂p) along directions ``dp`` (q, P): an array (q, n)."""
    pe = st.extended(p)
    dpe = np.concatenate([np.atleast_2d(dp), np.zeros((len(np.atleast_2d(dp)), 1))], axis=1)
    dA = st.A.derivative(pe, dpe)  # (q, T)
    out = np.zeros((dpe.shape[0], st.n))
    np.add.at(out, (slice(None), st.A.row), dA * x[st.A.col])
    dz = st.z.derivative(pe, dpe)
    np.add.at(out, (slice(None), st.z.row), -dz)
    return out


def tangents(st: Structure, p: np.ndarray, x: np.ndarray, dp: np.ndarray) -> Batch:
    """First-order change of every output per unit of each direction in ``dp`` (q, P)."""
    dp = np.atleast_2d(dp)
    rhs = -residual_change(st, p, x, dp).T  # (n, q)
    dx = factor(st, p).solve(rhs).T
    h = COMPLEX_STEP
    b = derive(st, p[None] + 1j * h * dp, x[None] + 1j * h * dx)
    return Batch(
        b.node_voltage.imag / h, b.voltage.imag / h, b.current.imag / h, b.power.imag / h, dx
    )


def parameter_jacobian(st: Structure, p: np.ndarray, x: np.ndarray):
    """R = ∂(A·x − z)/∂p at a solution: an array or sparse matrix (P, n)."""
    pe = st.extended(p)
    P, n = st.P, st.n

    def part(t: Triplets, xcol: np.ndarray, sign: float):
        """Entries of ∂(value·xcol)/∂p: (param, row, coefficient)."""
        pn, pd = pe[t.num], pe[t.den]
        rows_p, rows_r, coefs = [], [], []
        has_num = t.num < P
        rows_p.append(t.num[has_num])
        rows_r.append(t.row[has_num])
        coefs.append(sign * t.sign[has_num] / pd[has_num] * xcol[has_num])
        has_den = t.den < P
        rows_p.append(t.den[has_den])
        rows_r.append(t.row[has_den])
        coefs.append(-sign * t.sign[has_den] * pn[has_den] / pd[has_den] ** 2 * xcol[has_den])
        return np.concatenate(rows_p), np.concatenate(rows_r), np.concatenate(coefs)

    pa, ra, ca = part(st.A, x[st.A.col], 1.0)
    pz, rz, cz = part(st.z, np.ones(len(st.z)), -1.0)
    rows = np.concatenate([pa, pz])
    cols = np.concatenate([ra, rz])
    vals = np.concatenate([ca, cz])
    if P * n <= SMALL_MAP:  # small circuits: a dense array (no scipy import)
        R = np.zeros((P, n))
        np.add.at(R, (rows, cols), vals)
        return R
    from scipy.sparse import csr_matrix

    return csr_matrix((vals, (rows, cols)), shape=(P, n))


def adjoint(
    st: Structure,
    p: np.ndarray,
    x: np.ndarray,
    gx: np.ndarray,
    gp: np.ndarray,
    fac: Factor | None = None,
    R=None,
) -> np.ndarray:
    """dy/dp (P,) of one output y with ∂y/∂x = ``gx`` (n,) and explicit ∂y/∂p = ``gp`` (P,)."""
    fac = fac or factor(st, p)
    R = parameter_jacobian(st, p, x) if R is None else R
    lam = fac.solve(gx, transpose=True)
    return gp - np.asarray(R @ lam).ravel()


def output_gradient(
    st: Structure, p: np.ndarray, x: np.ndarray, kind: str, index: int
) -> tuple[float, np.ndarray, np.ndarray]:
    """(y, ∂y/∂x, explicit ∂y/∂p) of one output at a solution.

    ``kind`` is ``node`` (index a node), or ``voltage``, ``current``,
    ``power`` (index an element).
    """
    net = st.net
    n, P = st.n, st.P
    nv = np.concatenate([[0.0], x[: len(net.nodes) - 1]])

    def e(k: int) -> np.ndarray:
        g = np.zeros(n)
        if k:
            g[k - 1] = 1.0
        return g

    if kind == "node":
        return float(nv[index]), e(index), np.zeros(P)
    a, b = int(net.a[index]), int(net.b[index])
    gv = e(a) - e(b)
    v = float(nv[a] - nv[b])
    if kind == "voltage":
        return v, gv, np.zeros(P)
    t = st.current
    lo, hi = np.searchsorted(t.row, [index, index + 1])
    sel = slice(int(lo), int(hi))
    pe = st.extended(p)
    sign, num, den, col = t.sign[sel], t.num[sel], t.den[sel], t.col[sel]
    vals = sign * pe[num] / pe[den]
    xe = np.append(x, 1.0)
    i = float(np.sum(vals * xe[col]))
    gi = np.zeros(n + 1)
    np.add.at(gi, col, vals)
    gi = gi[:n]
    gpi = np.zeros(P + 1)
    np.add.at(gpi, num, sign / pe[den] * xe[col])
    np.add.at(gpi, den, -sign * pe[num] / pe[den] ** 2 * xe[col])
    gpi = gpi[:P]
    if kind == "current":
        return i, gi, gpi
    return v * i, i * gv + v * gi, v * gpi
