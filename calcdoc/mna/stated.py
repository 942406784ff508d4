"""Many parameter sets of one circuit, each solved in its own device states.

Tolerance samples and vertices and sweep points change element values; a
diode may change state between them.  :class:`StateSolver` solves every
set in the case's states first (one batched solve) and keeps the rows
where every device passes its test.  For the others it runs the state
search (:func:`calcdoc.mna.states.find_states`, started from the case's
states) on one set, tries the states found on all the sets left (one
batched solve, kept where every test passes), and repeats until none is
left.  Each row's states and search pivots are reported.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from calcdoc.mna.batch import Batch, solve_batch
from calcdoc.mna.stamps import Structure, structure
from calcdoc.mna.states import find_states, holds, pieces
from calcdoc.results import Netlist


@dataclass(frozen=True)
class StatedBatch:
    """Solutions of K parameter sets, each in its consistent states.

    ``batch`` holds the results in row order; ``states[k]`` is the index
    into ``assignments`` of row k's states (0: the case's own);
    ``iterations[k]`` the pivots the search took for row k (0 where the
    case's states held, or the states another row's search had found).
    """

    batch: Batch
    assignments: tuple[tuple[str, ...], ...]
    states: np.ndarray
    iterations: np.ndarray

    @property
    def changed(self) -> np.ndarray:
        """Rows whose states differ from the case's."""
        return self.states != 0

    def changes(self, k: int, names: tuple[str, ...]) -> dict[str, str]:
        """Row k's states that differ from the case's: element → state."""
        mine, base = self.assignments[int(self.states[k])], self.assignments[0]
        return {names[j]: s for j, (s, b) in enumerate(zip(mine, base, strict=True)) if s != b}


class StateSolver:
    """Solves one circuit for many parameter sets, each set in its own states.

    Rows whose solution in the case's states passes every device test keep
    those states; the others get their own search (started from the case's
    states) and are solved in the states found, grouped by assignment.
    """

    def __init__(self, net: Netlist) -> None:
        self.net = net
        self.st = structure(net)
        self.pcs = pieces(self.st)
        self.nets: dict[tuple[str, ...], Netlist] = {self._key(net): net}

    @staticmethod
    def _key(net: Netlist) -> tuple[str, ...]:
        return net.states if net.states else tuple("" for _ in net.types)

    def structure_for(self, states: tuple[str, ...]) -> Structure:
        net = self.nets.get(states)
        if net is None:
            net = replace(self.net, states=states)
            self.nets[states] = net
        return structure(net)

    def solve(self, p: np.ndarray) -> StatedBatch:
        p = np.atleast_2d(np.asarray(p, dtype=float))
        own = self._key(self.net)
        K = len(p)
        if not len(self.pcs):
            return StatedBatch(
                solve_batch(self.st, p),
                (own,),
                np.zeros(K, dtype=np.int64),
                np.zeros(K, dtype=np.int64),
            )
        pe = self.st.extended(p)
        try:
            b = solve_batch(self.st, p)
            good = holds(self.pcs, self.net, pe, b)
        except (np.linalg.LinAlgError, RuntimeError):
            b, good = None, np.zeros(K, dtype=bool)
        assignments = [own]
        which = np.zeros(K, dtype=np.int64)
        iterations = np.zeros(K, dtype=np.int64)
        parts: dict[int, tuple[np.ndarray, Batch | None]] = {0: (np.flatnonzero(good), None)}
        left = np.flatnonzero(~good)
        while len(left):
            k = int(left[0])  # search one set, then try its states on all that are left
            f = find_states(self.net, p[k], start=self.net)
            iterations[k] = f.iterations
            a = len(assignments)
            assignments.append(f.states)
            st = self.structure_for(f.states)
            try:
                trial = solve_batch(st, p[left])
                fits = holds(self.pcs, st.net, pe[left], trial)
            except (np.linalg.LinAlgError, RuntimeError):
                trial, fits = solve_batch(st, p[[k]]), np.zeros(len(left), dtype=bool)
                fits[0] = True
            fits[0] = True  # the searched set itself (its states were proved by the search)
            rows = left[fits]
            which[rows] = a
            parts[a] = (rows, _rows(trial, fits) if not fits.all() else trial)
            left = left[~fits]
        if b is None:
            del parts[0]
        out = _merge(b, parts, K)
        return StatedBatch(out, tuple(assignments), which, iterations)

    def structure_at(self, p: np.ndarray) -> Structure:
        """The structure in the consistent states at one parameter set."""
        if not len(self.pcs):
            return self.st
        sb = self.solve(p[None])
        return self.structure_for(sb.assignments[int(sb.states[0])])


def _rows(b: Batch, mask: np.ndarray) -> Batch:
    return Batch(b.node_voltage[mask], b.voltage[mask], b.current[mask], b.power[mask], b.x[mask])


def _merge(b: Batch | None, parts: dict, K: int) -> Batch:
    """Rows of several batches in one; ``x`` is kept only when every row shares
    one assignment (the unknowns differ between states)."""
    if len(parts) == 1:
        ((rows, bb),) = parts.values()
        return bb if bb is not None else b  # type: ignore[return-value]
    arrays = {}
    for f in ("node_voltage", "voltage", "current", "power"):
        width = next(getattr(bb if bb is not None else b, f).shape[1] for _, bb in parts.values())
        arr = np.zeros((K, width))
        for rows, bb in parts.values():
            arr[rows] = getattr(b, f)[rows] if bb is None else getattr(bb, f)
        arrays[f] = arr
    return Batch(x=np.zeros((K, 0)), **arrays)


__all__ = ["StateSolver", "StatedBatch"]
