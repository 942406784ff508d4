"""Topology diagnosis before solving.

Each failure mode of a circuit that has no unique solution is named, with
the nodes or elements at fault:

- **floating node**: a node or island with no path to the reference;
- **voltage loop**: a loop made only of voltage-defined elements (voltage
  sources, VCVS, CCVS), two in parallel included;
- **current-source cut set**: nodes joined to the rest of the circuit
  only through current-defined elements (current sources, VCCS, CCCS);
- **zero-ohm resistor** / **negative resistance**.

What topology cannot see (dependent sources whose gains make the system
singular) is found numerically by :mod:`calcdoc.mna.solve`.
"""

from __future__ import annotations

from collections import deque

import numpy as np

from calcdoc.errors import SingularCircuitError
from calcdoc.mna.netlist import Netlist, defines

SMALL = 2000  # elements: below this, plain Python graph code (scipy takes ~0.3 s to import)


def _components(n_nodes: int, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Connected-component label of every node."""
    if len(a) <= SMALL:
        parent = list(range(n_nodes))

        def find(x: int) -> int:
            while parent[x] != x:
                parent[x] = parent[parent[x]]
                x = parent[x]
            return x

        for u, v in zip(a.tolist(), b.tolist(), strict=True):
            ru, rv = find(u), find(v)
            if ru != rv:
                parent[ru] = rv
        return np.array([find(i) for i in range(n_nodes)])
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    g = coo_matrix((np.ones(len(a)), (a, b)), shape=(n_nodes, n_nodes))
    _, labels = connected_components(g, directed=False)
    return labels


def _name_list(items: list[str], most: int = 12) -> str:
    shown = ", ".join(items[:most])
    return shown + (f" and {len(items) - most} more" if len(items) > most else "")


def diagnose(net: Netlist) -> None:
    """Raise :class:`SingularCircuitError` for the first topology fault found.

    Parameters
    ----------
    net : Netlist

    Raises
    ------
    SingularCircuitError
        ``condition`` is one of ``"zero-ohm resistor"``,
        ``"negative resistance"``, ``"floating node"``, ``"voltage loop"``,
        ``"current-source cut set"``.
    """
    kinds = defines(net)
    vals = net.floats()
    res = np.array([k == "resistance" for k in kinds], dtype=bool)
    bad = np.flatnonzero(res & (vals <= 0))
    if len(bad):
        j = int(bad[0])
        if net.values[j] == 0:
            raise SingularCircuitError(
                "zero-ohm resistor",
                f"{net.names[j]} has zero resistance, which has no conductance to stamp; "
                "join its nodes or model it as a 0 V voltage source",
                (net.names[j],),
            )
        raise SingularCircuitError(
            "negative resistance", f"{net.names[j]} has a negative resistance", (net.names[j],)
        )
    n = len(net.nodes)
    labels = _components(n, net.a, net.b)
    floating = [net.nodes[i] for i in range(n) if labels[i] != labels[0]]
    if floating:
        raise SingularCircuitError(
            "floating node",
            f"no path to the reference node {net.reference!r} from: {_name_list(floating)}",
            floating,
        )
    _voltage_loops(net, kinds)
    keep = np.array([k != "current" for k in kinds], dtype=bool)
    labels = _components(n, net.a[keep], net.b[keep])
    cut = [net.nodes[i] for i in range(n) if labels[i] != labels[0]]
    if cut:
        inside = set(np.flatnonzero(labels != labels[0]).tolist())
        sources = [
            net.names[j]
            for j in range(len(net.names))
            if not keep[j] and ((int(net.a[j]) in inside) != (int(net.b[j]) in inside))
        ]
        raise SingularCircuitError(
            "current-source cut set",
            f"node(s) {_name_list(cut)} reach the reference only through current-defined "
            f"elements ({_name_list(sources)}), so their voltage is undetermined",
            [*cut, *sources],
        )


def _voltage_loops(net: Netlist, kinds: list[str]) -> None:
    parent = list(range(len(net.nodes)))

    def find(x: int) -> int:
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    adjacency: dict[int, list[tuple[int, int]]] = {}
    for j, k in enumerate(kinds):
        if k != "voltage":
            continue
        u, v = int(net.a[j]), int(net.b[j])
        ru, rv = find(u), find(v)
        if ru == rv:
            path = _path(adjacency, u, v)
            members = [net.names[e] for e in path] + [net.names[j]]
            what = "in parallel" if len(members) == 2 else "in a loop"
            raise SingularCircuitError(
                "voltage loop",
                f"voltage-defined elements {_name_list(members)} are {what}: their voltages "
                "fix the same node difference twice, so their currents are undetermined",
                members,
            )
        parent[ru] = rv
        adjacency.setdefault(u, []).append((v, j))
        adjacency.setdefault(v, []).append((u, j))


def _path(adjacency: dict[int, list[tuple[int, int]]], start: int, goal: int) -> list[int]:
    """Element indices on the forest path from ``start`` to ``goal``."""
    prev: dict[int, tuple[int, int]] = {start: (-1, -1)}
    queue = deque([start])
    while queue:
        x = queue.popleft()
        if x == goal:
            break
        for y, e in adjacency.get(x, ()):
            if y not in prev:
                prev[y] = (x, e)
                queue.append(y)
    out = []
    x = goal
    while x != start:
        x, e = prev[x]
        out.append(e)
    return out[::-1]
