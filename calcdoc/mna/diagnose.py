"""Why a circuit has no unique solution, named before solving.

Structural tests find the usual faults and name the nodes or elements at
fault; each is confirmed on the actual equations before it is reported, so
that a dependent source that does fix the circuit is never refused:

- **zero-ohm resistor**, **negative resistance**, **invalid value**: a
  number outside its allowed sign;
- **floating node**: a node or island with no path to the reference;
- **current-source cut set** / **undetermined node voltage**: nodes joined
  to the rest only through elements that give their current directly
  (current sources, controlled current sources, opens, capacitors).  Raised
  only when shifting all those nodes' voltages together leaves every
  equation satisfied (a null vector of A), i.e. no control reads a voltage
  across the cut;
- **voltage loop**: a loop of elements that fix their voltage (voltage
  sources, VCVS, CCVS, ideal shorts).  Raised only when a current
  circulating around the loop leaves every equation satisfied, i.e. no
  element is controlled by a current of the loop.

Whatever remains singular is found on the numbers by
:mod:`calcdoc.mna.solve` (rank of the equilibrated matrix), with the
unknowns of the null space named.
"""

from __future__ import annotations

from collections import deque

import numpy as np

from calcdoc.errors import SingularCircuitError
from calcdoc.mna.stamps import Structure

SMALL = 2000  # elements: up to this, plain Python graph code (scipy takes ~0.3 s to import)


def name_list(items: list[str], most: int = 12) -> str:
    shown = ", ".join(items[:most])
    return shown + (f" and {len(items) - most} more" if len(items) > most else "")


def unknown_words(names: list[str]) -> str:
    """``["I(V1)", "V(a)"]`` → ``"the current of V1 and the voltage of node a"``."""
    words = []
    for u in names:
        head, inner = u[0], u[2:-1]
        words.append(f"the voltage of node {inner}" if head == "V" else f"the current of {inner}")
    if len(words) > 12:
        words = [*words[:12], f"{len(names) - 12} more"]
    return words[0] if len(words) == 1 else ", ".join(words[:-1]) + " and " + words[-1]


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


def is_null(A: tuple[np.ndarray, np.ndarray, np.ndarray], u: np.ndarray) -> bool:
    """True when A·u vanishes (to rounding of the entries involved)."""
    rows, cols, vals = A
    n = len(u)
    t = vals * u[cols]
    y = np.bincount(rows, weights=t, minlength=n)
    scale = np.bincount(rows, weights=np.abs(t), minlength=n)
    return bool(np.all(np.abs(y) <= 1e-12 * scale))


def diagnose(st: Structure, A: tuple[np.ndarray, np.ndarray, np.ndarray]) -> None:
    """Raise :class:`SingularCircuitError` for the first confirmed fault.

    Parameters
    ----------
    st : Structure
    A : (rows, cols, vals)
        The float matrix of the system, as COO triplets.
    """
    net = st.net
    _signs(st)
    n = len(net.nodes)
    labels = _components(n, net.a, net.b)
    floating = [net.nodes[i] for i in range(n) if labels[i] != labels[0]]
    if floating:
        raise SingularCircuitError(
            "floating node",
            f"no path to the reference node {net.reference!r} from: {name_list(floating)}",
            floating,
        )
    _voltage_loops(st, A)
    _cut_sets(st, A, labels)


def _signs(st: Structure) -> None:
    """Every number inside the sign its key allows (the element table's ``sign`` column)."""
    from calcdoc.model.elements import KINDS

    net = st.net
    m = len(net.names)
    p = st.p_float
    types = np.array(net.types)
    more = {(j, key): m + k for k, (j, key, _) in enumerate(net.more)}
    for t in sorted(set(net.types)):
        J = np.flatnonzero(types == t)
        for key in KINDS[t].keys:
            if key.sign == "any":
                continue
            if key is KINDS[t].main:
                idx = J
            else:
                pairs = [
                    (int(j), more[(int(j), key.name)]) for j in J if (int(j), key.name) in more
                ]
                if not pairs:
                    continue
                J, idx = (np.array(x, dtype=np.int64) for x in zip(*pairs, strict=True))
            bad = (p[idx] <= 0) if key.sign == "positive" else (p[idx] < 0)
            if bad.any():
                k = int(np.flatnonzero(bad)[0])
                _sign_fault(net, int(J[k]), key, st.p[int(idx[k])])


def _sign_fault(net, j: int, key, v) -> None:
    name = net.names[j]
    if net.types[j] == "resistor" and v == 0:
        raise SingularCircuitError(
            "zero-ohm resistor",
            f"{name} has zero resistance, which has no conductance to stamp; "
            "join its nodes or model it as a 0 V voltage source",
            (name,),
        )
    if key.unit == "Ω":
        raise SingularCircuitError(
            "negative resistance", f"{name} has a negative {key.words or key.name}", (name,)
        )
    raise SingularCircuitError(
        "invalid value",
        f"{name}: {key.words or key.name} must be {key.sign}, found {float(v):g}",
        (name,),
    )


def _voltage_loops(st: Structure, A) -> None:
    net = st.net
    parent = list(range(len(net.nodes)))

    def find(x: int) -> int:
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    adjacency: dict[int, list[tuple[int, int]]] = {}
    for j, law in enumerate(st.laws):
        if law.v is None or law.i is not None:
            continue  # not a voltage-fixing law (which always has a current unknown)
        u, v = int(net.a[j]), int(net.b[j])
        ru, rv = find(u), find(v)
        if ru == rv:
            path = _path(adjacency, u, v)
            members = [*path, j]
            vec = np.zeros(st.n)
            # circulate a current: along the path from u to v, then back through j
            node = u
            for e in path:
                forward = int(net.a[e]) == node
                vec[st.col[e]] = 1.0 if forward else -1.0
                node = int(net.b[e]) if forward else int(net.a[e])
            vec[st.col[j]] = 1.0 if int(net.a[j]) == v else -1.0
            if not is_null(A, vec):
                continue  # a control reads a current of the loop: not a fault
            names = [net.names[e] for e in members]
            what = "in parallel" if len(names) == 2 else "in a loop"
            raise SingularCircuitError(
                "voltage loop",
                f"elements that fix their voltage, {name_list(names)}, are {what}: they fix "
                "the same node difference twice, so their currents are undetermined",
                names,
            )
        parent[ru] = rv
        adjacency.setdefault(u, []).append((v, j))
        adjacency.setdefault(v, []).append((u, j))


def _path(adjacency: dict[int, list[tuple[int, int]]], start: int, goal: int) -> list[int]:
    """Element indices on the forest path from ``start`` to ``goal``."""
    prev: dict[int, tuple[int, int] | None] = {start: None}
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
        x, e = prev[x]  # type: ignore[misc]
        out.append(e)
    return out[::-1]


def _cut_sets(st: Structure, A, labels_all: np.ndarray) -> None:
    net = st.net
    n = len(net.nodes)
    current = np.array([law.current_defined for law in st.laws], dtype=bool)
    if not current.any():
        return
    keep = ~current
    labels = _components(n, net.a[keep], net.b[keep])
    outside = labels != labels[0]
    if not outside.any():
        return
    for lab in np.unique(labels[outside]).tolist():
        group = np.flatnonzero(labels == lab)
        vec = np.zeros(st.n)
        vec[group - 1] = 1.0
        if not is_null(A, vec):
            continue  # a control reads a voltage across the cut: not a fault
        inside = set(group.tolist())
        nodes = [net.nodes[i] for i in group.tolist()]
        crossing = [
            j
            for j in range(len(net.names))
            if current[j] and ((int(net.a[j]) in inside) != (int(net.b[j]) in inside))
        ]
        names = [net.names[j] for j in crossing]
        if all(st.laws[j].fixes_current and st.laws[j].const is None for j in crossing):
            raise SingularCircuitError(
                "undetermined node voltage",
                f"node{'s' if len(nodes) > 1 else ''} {name_list(nodes)}: "
                f"{'their' if len(nodes) > 1 else 'its'} DC voltage is not determined "
                f"(joined to the rest only through {name_list(names)}, which carry no DC current)",
                [*nodes, *names],
            )
        raise SingularCircuitError(
            "current-source cut set",
            f"node{'s' if len(nodes) > 1 else ''} {name_list(nodes)} "
            f"reach{'' if len(nodes) > 1 else 'es'} the reference only "
            f"through elements that fix their current ({name_list(names)}), so "
            f"{'their' if len(nodes) > 1 else 'its'} voltage is undetermined",
            [*nodes, *names],
        )
