"""Many solutions of one circuit at once: the MNA matrix as a linear function of values.

Every stamp is linear in one number per element: the conductance 1/R of
a resistor whose current is not an unknown, the value or gain of every
other element.  So A(s) = A₀ + Σⱼ (sⱼ − sⱼ₀)·Pⱼ and z(s) = z₀ + Σⱼ (sⱼ − sⱼ₀)·Zⱼ,
with Pⱼ, Zⱼ found once from the engine's own stamps.  Batches of value
sets are then assembled with one tensor product and solved with numpy's
batched LU, and element voltages, currents and powers follow as arrays.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from calcdoc.mna.formulation import current_unknowns, stamps
from calcdoc.mna.netlist import Netlist

BATCH = 512
DENSE_PATTERN_LIMIT = (
    20_000_000  # m·n² entries; above it each value set is assembled and solved sparsely
)


@dataclass(frozen=True)
class Patterns:
    """A₀, z₀ and the per-element patterns P (m, n, n) and Z (m, n)."""

    net: Netlist
    s0: np.ndarray  # stamp parameter of each element at the base values
    A0: np.ndarray
    z0: np.ndarray
    P: np.ndarray
    Z: np.ndarray
    col: dict[int, int]  # element -> column of its current unknown
    plain: np.ndarray  # elements whose stamp parameter is 1/value


def _dense(net: Netlist) -> tuple[np.ndarray, np.ndarray]:
    rows, cols, vals, z = stamps(net)
    n = len(z)
    A = np.zeros((n, n))
    np.add.at(A, (rows, cols), vals)
    return A, z


def patterns(net: Netlist) -> Patterns:
    """Find the stamp patterns of a netlist (one assembly per element)."""
    cur = current_unknowns(net)
    n_nodes = len(net.nodes)
    col = {j: n_nodes - 1 + i for i, j in enumerate(cur)}
    vals = net.floats()
    plain = np.array(
        [t == "resistor" and j not in col for j, t in enumerate(net.types)], dtype=bool
    )
    s0 = np.where(plain, 1.0 / vals, vals)
    m = len(vals)
    n = n_nodes - 1 + len(cur)
    if m * n * n > DENSE_PATTERN_LIMIT:
        return Patterns(
            net,
            s0,
            np.zeros((0, 0)),
            np.zeros(n),
            np.zeros((0, 0, 0)),
            np.zeros((0, n)),
            col,
            plain,
        )
    A0, z0 = _dense(net)
    P = np.zeros((m, n, n))
    Z = np.zeros((m, n))
    for j in range(m):
        s = s0.copy()
        s[j] += 1.0
        v = vals.copy()
        v[j] = 1.0 / s[j] if plain[j] else s[j]
        A, z = _dense(replace(net, values=tuple(v.tolist()), float_values=v))
        P[j] = A - A0
        Z[j] = z - z0
    return Patterns(net, s0, A0, z0, P, Z, col, plain)


def stamp_parameters(pat: Patterns, values: np.ndarray) -> np.ndarray:
    """Element values (K, m) → stamp parameters (K, m)."""
    return np.where(pat.plain, 1.0 / values, values)


@dataclass(frozen=True)
class Batch:
    """Solutions of K value sets: arrays (K, nodes) and (K, elements)."""

    node_voltage: np.ndarray
    voltage: np.ndarray
    current: np.ndarray
    power: np.ndarray
    x: np.ndarray


def solve_batch(pat: Patterns, values: np.ndarray) -> Batch:
    """Solve the circuit for each row of ``values`` (K, m) (element values, SI).

    Raises
    ------
    numpy.linalg.LinAlgError
        A value set makes the system singular.
    """
    values = np.atleast_2d(values)
    K = len(values)
    if pat.P.shape[0] == 0:  # large circuit: one sparse solve per value set
        return derive(pat, values, _sparse_rows(pat, values))
    ds = stamp_parameters(pat, values) - pat.s0
    xs = []
    for start in range(0, K, BATCH):
        d = ds[start : start + BATCH]
        A = pat.A0[None] + np.einsum("kj,jab->kab", d, pat.P, optimize=True)
        z = pat.z0[None] + d @ pat.Z
        xs.append(np.linalg.solve(A, z[..., None])[..., 0])
    x = np.concatenate(xs) if xs else np.zeros((0, len(pat.z0)))
    return derive(pat, values, x)


def _sparse_rows(pat: Patterns, values: np.ndarray) -> np.ndarray:
    from scipy.sparse import csc_matrix
    from scipy.sparse.linalg import splu

    out = []
    for row in values:
        net = replace(pat.net, values=tuple(row.tolist()), float_values=row)
        rows, cols, vals, z = stamps(net)
        n = len(z)
        out.append(splu(csc_matrix((vals, (rows, cols)), shape=(n, n))).solve(z))
    return np.array(out)


def derive(pat: Patterns, values: np.ndarray, x: np.ndarray) -> Batch:
    """Element voltages, currents and powers of batched solutions (design.md conventions)."""
    net = pat.net
    n_nodes = len(net.nodes)
    K = len(x)
    nv = np.concatenate([np.zeros((K, 1)), x[:, : n_nodes - 1]], axis=1)
    v = nv[:, net.a] - nv[:, net.b]
    i = np.zeros_like(v)
    for j, t in enumerate(net.types):
        if j in pat.col:
            i[:, j] = x[:, pat.col[j]]
        elif t == "resistor":
            i[:, j] = v[:, j] / values[:, j]
        elif t == "current_source":
            i[:, j] = values[:, j]
        elif t == "vccs":
            p, m = net.control_nodes[j]
            i[:, j] = values[:, j] * (nv[:, p] - nv[:, m])
    for j, t in enumerate(net.types):
        if t == "cccs" and j not in pat.col:
            i[:, j] = values[:, j] * x[:, pat.col[net.control_element[j]]]
    return Batch(nv, v, i, v * i, x)
