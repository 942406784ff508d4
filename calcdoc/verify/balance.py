"""Consistency proofs: KCL at every node, KVL around every loop, power ledger.

These use the *derived* element currents and each element's *own law*
voltages (:class:`~calcdoc.mna.branches.Branches`), so they check the
solution rather than restate it.
"""

from __future__ import annotations

import numpy as np

from calcdoc.results import Branches, Ledger, Loop, LoopCheck, Netlist

LOOP_LISTING_LIMIT = 3000  # elements; above it loops are reported by chord only
SMALL = 2000  # elements: up to this, the spanning tree in plain Python (no scipy import)
LEDGER_LISTING_LIMIT = 5000  # elements; above it the ledger gives totals only (record size)


def kcl_residuals(net: Netlist, br: Branches) -> np.ndarray:
    """Sum of currents leaving each node (A), reference first.

    The reference entry is included for completeness; every entry is zero
    up to rounding for a correct solution.

    >>> from calcdoc.mna.solve import solve
    >>> from calcdoc.mna.branches import branches
    >>> net = Netlist(("gnd", "in", "out"), ("V1", "R1", "R2"),
    ...     ("voltage_source", "resistor", "resistor"), np.array([1, 1, 2]),
    ...     np.array([0, 2, 0]), (10, 1000, 1000), {}, {})
    >>> [float(r) for r in kcl_residuals(net, branches(net, solve(net)))]
    [0.0, 0.0, 0.0]
    """
    n = len(net.nodes)
    if br.exact_current is not None:  # exact path: the sums are exact too
        sums = [0] * n
        for a, b, i in zip(net.a.tolist(), net.b.tolist(), br.exact_current, strict=True):
            sums[a] += i
            sums[b] -= i
        return np.array([float(v) for v in sums])
    out = np.bincount(net.a, weights=br.current, minlength=n)
    inn = np.bincount(net.b, weights=br.current, minlength=n)
    return out - inn


def _bfs(net: Netlist, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Breadth-first order from the reference and each node's predecessor.

    The reference's own entry is never read (it has no predecessor).
    """
    if len(net.a) > SMALL:
        from scipy.sparse import coo_matrix
        from scipy.sparse.csgraph import breadth_first_order

        g = coo_matrix((np.ones(len(net.a)), (net.a, net.b)), shape=(n, n)).tocsr()
        return breadth_first_order(g, 0, directed=False, return_predecessors=True)
    from collections import deque

    adj: list[list[int]] = [[] for _ in range(n)]
    for u, v in zip(net.a.tolist(), net.b.tolist(), strict=True):
        adj[u].append(v)
        adj[v].append(u)
    pred = np.zeros(n, dtype=np.int64)
    seen = [False] * n
    seen[0] = True
    order = [0]
    q = deque([0])
    while q:
        x = q.popleft()
        for y in sorted(set(adj[x])):
            if not seen[y]:
                seen[y] = True
                pred[y] = x
                order.append(y)
                q.append(y)
    return np.array(order, dtype=np.int64), pred


def _tree(net: Netlist) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Breadth-first spanning tree from the reference.

    Returns parent node, parent element, depth, and BFS order (all arrays).
    """
    n = len(net.nodes)
    order, pred = _bfs(net, n)
    # the element joining each node to its parent: look the pair up among
    # the elements' sorted node-pair keys (first element of a parallel group)
    lo, hi = np.minimum(net.a, net.b), np.maximum(net.a, net.b)
    keys = lo * n + hi
    sort = np.argsort(keys, kind="stable")
    sorted_keys = keys[sort]
    kids = order[1:]
    par = pred[kids]
    want = np.minimum(par, kids) * n + np.maximum(par, kids)
    parent_edge = np.zeros(n, dtype=np.int64)  # the reference's entry is never read
    parent_edge[kids] = sort[np.searchsorted(sorted_keys, want)]
    depth = np.zeros(n, dtype=np.int64)
    for k, p in zip(kids.tolist(), par.tolist(), strict=True):
        depth[k] = depth[p] + 1
    return pred, parent_edge, depth, order


def kvl_loops(net: Netlist, br: Branches) -> LoopCheck:
    """KVL around every fundamental loop of a BFS spanning tree.

    Each loop sum uses the elements' own-law voltages; it is zero up to
    rounding for a correct solution.

    Returns
    -------
    LoopCheck
        With every loop's ordered, signed terms when the circuit has at most
        ``LOOP_LISTING_LIMIT`` elements; otherwise chords and sums only.
    """
    pred, pedge, depth, order = _tree(net)
    law = br.law_voltage
    a, b = net.a, net.b
    n = len(net.nodes)
    # tree potentials phi from the own-law voltages of tree elements, one BFS level at a time
    phi = np.zeros(n)
    kids = order[1:]
    levels = depth[kids]
    by_level = np.argsort(levels, kind="stable")
    kids, levels = kids[by_level], levels[by_level]
    bounds = np.flatnonzero(np.diff(levels)) + 1
    for group in np.split(kids, bounds):
        if not len(group):
            continue
        j = pedge[group]
        p = pred[group]
        down = a[j] == p
        phi[group] = np.where(down, phi[p] - law[j], phi[p] + law[j])
    in_tree = np.zeros(len(net.names), dtype=bool)
    in_tree[pedge[kids]] = True
    chords = np.flatnonzero(~in_tree)
    sums = law[chords] + phi[b[chords]] - phi[a[chords]]
    listed = len(net.names) <= LOOP_LISTING_LIMIT
    loops = []
    if not listed:
        worst = float(np.max(np.abs(sums), initial=0.0))
        names = tuple(net.names[c] for c in chords.tolist())
        return LoopCheck((), False, worst, names, tuple(sums.tolist()))
    for c in chords.tolist():
        els, signs = [c], [1]
        # walk from b up to the common ancestor, then from a up, reversed
        u, v = int(b[c]), int(a[c])
        up_b, up_a = [], []
        while depth[u] > depth[v]:
            up_b.append(u)
            u = int(pred[u])
        while depth[v] > depth[u]:
            up_a.append(v)
            v = int(pred[v])
        while u != v:
            up_b.append(u)
            up_a.append(v)
            u, v = int(pred[u]), int(pred[v])
        for k in up_b:  # going from k up to its parent
            j = int(pedge[k])
            els.append(j)
            signs.append(1 if int(a[j]) == k else -1)
        for k in reversed(up_a):  # going from parent down to k
            j = int(pedge[k])
            els.append(j)
            signs.append(1 if int(b[j]) == k else -1)
        terms = tuple(float(sg * law[j]) for j, sg in zip(els, signs, strict=True))
        if br.exact_law_voltage is not None:  # exact path: the sum is exact too
            exact = br.exact_law_voltage
            total = float(sum((sg * exact[j] for j, sg in zip(els, signs, strict=True)), 0))
        else:
            total = float(sum(terms))
        names = tuple(net.names[j] for j in els)
        loops.append(Loop(net.names[c], names, tuple(signs), total, terms))
    worst = float(np.max(np.abs([lp.sum for lp in loops]), initial=0.0))
    return LoopCheck(tuple(loops), listed, worst)


def power_ledger(net: Netlist, br: Branches) -> Ledger:
    """Absorbed and delivered power and their difference (Tellegen: zero).

    ``absorbed`` sums the positive element powers, ``delivered`` the
    magnitudes of the negative ones.
    """
    p = br.power
    if br.exact_current is not None and br.exact_node_voltage is not None:
        nv = br.exact_node_voltage
        exact = [
            (nv[int(a)] - nv[int(b)]) * i
            for a, b, i in zip(net.a, net.b, br.exact_current, strict=True)
        ]
        total = sum(exact)
        absorbed = sum(max(x, 0) for x in exact)
        imbalance = float(total)
        absorbed, delivered = float(absorbed), float(absorbed - total)
    else:
        absorbed = float(np.maximum(p, 0).sum())
        delivered = float(-np.minimum(p, 0).sum())
        imbalance = float(p.sum())
    listed = len(p) <= LEDGER_LISTING_LIMIT
    by_el = tuple(zip(net.names, (float(v) for v in p), strict=True)) if listed else ()
    return Ledger(absorbed, delivered, imbalance, by_el)
