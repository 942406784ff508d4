"""MNA stamps derived from the element table, as parametric triplets.

Every element's law (:mod:`calcdoc.model.elements`) is turned into
entries of the matrix A, the right-hand side z, and two maps the later
stages need: each element's current and each element's *law voltage* (the
KVL term) as linear functions of the unknowns.  Each entry is::

    sign · p[num] / p[den]

where ``p`` is the vector of the circuit's numbers (every element's main
value, then its further keys) and ``num``/``den`` may be the constant 1.
Evaluating the same triplets with floats, exact fractions, sympy symbols,
batches of value sets or derivatives gives every form of the system from
one source.

How an element enters the system (its *mode*):

- ``OWN``: its current is an unknown, and its law is a row of its own
  (voltage-defined elements, op-amp outputs, and any element whose current
  controls another);
- ``CONDUCTANCE``: a law ``v − R·i = 0`` stamped as the conductance 1/R
  (a resistor whose current is not needed as a control);
- ``CURRENT``: a law that gives the current directly, ``i = ±(c0 − cu·u)``
  (current sources, VCCS, CCCS, opens), stamped into the KCL rows.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from functools import cached_property

import numpy as np

from calcdoc.model.elements import KINDS, Coef, Law
from calcdoc.results import Netlist, Symbol

OWN, CONDUCTANCE, CURRENT = 0, 1, 2


@dataclass(frozen=True)
class Triplets:
    """Parametric entries ``out[row, col] += sign · p[num] / p[den]``.

    ``num``/``den`` equal ``P`` (the number of parameters) for the constant
    1; ``col`` equals ``n`` (the number of unknowns) for a constant term
    (the right-hand side, or the constant part of a map), so that
    ``x`` extended with a trailing 1 serves both; ``elem`` is the element
    the entry comes from.
    """

    row: np.ndarray
    col: np.ndarray
    sign: np.ndarray
    num: np.ndarray
    den: np.ndarray
    elem: np.ndarray

    def __len__(self) -> int:
        return len(self.row)

    def values(self, pe: np.ndarray) -> np.ndarray:
        """Entry values for extended parameters ``pe`` (``p`` with a trailing 1).

        ``pe`` may be (P + 1,) or a batch (K, P + 1); complex values are allowed.
        """
        return self.sign * pe[..., self.num] / pe[..., self.den]

    def exact(self, pe: list) -> list:
        return [
            int(s) * pe[n] / pe[d]
            for s, n, d in zip(
                self.sign.tolist(), self.num.tolist(), self.den.tolist(), strict=True
            )
        ]

    def derivative(self, pe: np.ndarray, dpe: np.ndarray) -> np.ndarray:
        """Change of each entry for a change ``dpe`` of the parameters (same shape as pe)."""
        pn, pd = pe[..., self.num], pe[..., self.den]
        return self.sign * (dpe[..., self.num] / pd - pn * dpe[..., self.den] / pd**2)

    def take(self, mask: np.ndarray) -> Triplets:
        return Triplets(*(getattr(self, f)[mask] for f in _FIELDS))


_FIELDS = ("row", "col", "sign", "num", "den", "elem")


@dataclass(frozen=True)
class Structure:
    """How a netlist's elements enter the MNA system.

    Attributes
    ----------
    net : Netlist
    laws : tuple of Law
        Each element's law in its state, absent optional keys dropped.
    mode : numpy.ndarray
        ``OWN``, ``CONDUCTANCE`` or ``CURRENT`` per element.
    col : numpy.ndarray
        Column of each element's current unknown (−1 where it has none).
    n : int
        Unknowns: node voltages, then element currents.
    more_symbols : tuple of Symbol
        The parameters beyond the element main values (see :attr:`symbols`).
    p : tuple of Number
        Their values (exact where given exactly).
    A, z : Triplets
        The matrix (row, col) and the right-hand side (row; col −1).
    current : Triplets
        Element currents: ``i[row] = Σ entry · x[col]`` (col −1: constant).
    law_voltage : Triplets
        The same for each element's law voltage (the KVL term).
    law_fixes_voltage : numpy.ndarray of bool
        Elements whose law gives their voltage (else the node voltages do).
    """

    net: Netlist
    laws: tuple[Law, ...]
    mode: np.ndarray
    col: np.ndarray
    n: int
    more_symbols: tuple[Symbol, ...]
    p: tuple
    A: Triplets
    z: Triplets
    current: Triplets
    law_voltage: Triplets
    law_fixes_voltage: np.ndarray
    groups: tuple[Group, ...] = ()

    @property
    def n_nodes(self) -> int:
        return len(self.net.nodes)

    @property
    def P(self) -> int:
        return len(self.p)

    @cached_property
    def symbols(self) -> tuple[Symbol, ...]:
        """The parameters ``p``: element main values (index = element index), then further keys."""
        main = {t: KINDS[t].main for t in set(self.net.types)}
        return (
            *(
                Symbol(name, name, main[t].name, main[t].unit)
                for name, t in zip(self.net.names, self.net.types, strict=True)
            ),
            *self.more_symbols,
        )

    @cached_property
    def current_elements(self) -> np.ndarray:
        """The elements whose current is an unknown, in column order (= element order)."""
        return np.flatnonzero(self.mode == OWN)

    def unknowns(self) -> tuple[str, ...]:
        return tuple(f"V({n})" for n in self.net.nodes[1:]) + tuple(
            f"I({self.net.names[j]})" for j in self.current_elements.tolist()
        )

    def extended(self, p: np.ndarray | None = None) -> np.ndarray:
        """Float parameters with the trailing constant 1 (also for batches (K, P))."""
        if p is None:
            p = self.p_float
        p = np.asarray(p)
        one = np.ones((*p.shape[:-1], 1), dtype=p.dtype)
        return np.concatenate([p, one], axis=-1)

    @property
    def p_float(self) -> np.ndarray:
        m = len(self.net.names)
        more = np.array([float(v) for v in self.p[m:]], dtype=float)
        return np.concatenate([self.net.floats(), more])

    def extended_exact(self) -> list:
        return [*self.p, Fraction(1)]

    def main_to_p(self, values: np.ndarray) -> np.ndarray:
        """Element main values (K, m) → parameters (K, P), further keys fixed."""
        values = np.atleast_2d(values)
        rest = self.p_float[values.shape[1] :]
        return np.concatenate([values, np.broadcast_to(rest, (values.shape[0], len(rest)))], axis=1)


@dataclass(frozen=True)
class Group:
    """Elements that share a law, a mode and a kind of control (stamped together)."""

    law: Law
    mode: int
    control: str | None
    elements: np.ndarray
    param: dict[str, np.ndarray]


class _Emitter:
    """Collects triplets, group by group."""

    def __init__(self, one: int) -> None:
        self.one = one
        self.parts: list[tuple[np.ndarray, ...]] = []

    def add(self, row, col, sign, num, den, elem) -> None:
        k = len(elem)
        if not k:
            return
        b = np.broadcast_to
        self.parts.append(
            (
                b(np.asarray(row, dtype=np.int64), (k,)),
                b(np.asarray(col, dtype=np.int64), (k,)),
                b(np.asarray(sign, dtype=float), (k,)),
                b(np.asarray(num, dtype=np.int64), (k,)),
                b(np.asarray(den, dtype=np.int64), (k,)),
                np.asarray(elem, dtype=np.int64),
            )
        )

    def coef(self, row, col, c: Coef, factor, param: dict[str, np.ndarray], elem) -> None:
        """Add ``factor · c`` at (row, col) for each element of a group."""
        num = param[c.key] if c.key else self.one
        self.add(row, col, factor * c.sign, num, self.one, elem)

    def result(self) -> Triplets:
        """The triplets in row order (element order within a row); entries on
        the reference node (index −1) dropped."""
        if not self.parts:
            e = np.zeros(0, dtype=np.int64)
            return Triplets(e, e, np.zeros(0), e, e, e)
        t = Triplets(*(np.concatenate([p[i] for p in self.parts]) for i in range(6)))
        t = t.take((t.row >= 0) & (t.col >= 0))
        return t.take(np.lexsort((t.elem, t.row)))


def _split(code: np.ndarray, count: int) -> list[np.ndarray]:
    """Element indices of each code, in element order."""
    return [np.flatnonzero(code == c) for c in range(count)]


def _key_index(net: Netlist, J: np.ndarray, key: str, more_index: dict) -> np.ndarray:
    """Parameter index of ``key`` for each element of J (all of one type)."""
    if key == KINDS[net.types[int(J[0])]].main.name:
        return J
    return np.array([more_index[(int(j), key)] for j in J], dtype=np.int64)


def structure(net: Netlist) -> Structure:
    """Derive the stamps of a netlist from the element table.

    >>> from calcdoc.results import Netlist
    >>> net = Netlist(("gnd", "in", "out"), ("V1", "R1", "R2"),
    ...     ("voltage_source", "resistor", "resistor"), np.array([1, 1, 2]),
    ...     np.array([0, 2, 0]), (10, 1000, 1000), {}, {})
    >>> s = structure(net)
    >>> s.unknowns(), s.n
    (('V(in)', 'V(out)', 'I(V1)'), 3)
    """
    hit = _CACHE.get(id(net))
    if hit is not None and hit.net is net:  # an id is reused once its netlist is gone
        return hit.structure
    st = _structure(net)
    if len(_CACHE) > CACHE_SIZE:
        _CACHE.clear()
    _CACHE[id(net)] = _Cached(net, st)
    return st


CACHE_SIZE = 8  # structures kept for the netlists last seen (a case run asks for one several times)


@dataclass(frozen=True)
class _Cached:
    net: Netlist
    structure: Structure


_CACHE: dict[int, _Cached] = {}


def _structure(net: Netlist) -> Structure:
    m = len(net.names)
    n_nodes = len(net.nodes)
    absent_by_el: dict[int, set[str]] = {}
    for j, k in net.absent:
        absent_by_el.setdefault(j, set()).add(k)
    # one law per distinct (type, state, absent keys): elements share them
    states = net.states or ("",) * m
    law_of: dict[tuple, int] = {}
    law_list: list[Law] = []
    kinds_of: list[str | None] = []
    code = np.empty(m, dtype=np.int64)
    for j, (t, stt) in enumerate(zip(net.types, states, strict=True)):
        key = (t, stt, frozenset(absent_by_el[j])) if j in absent_by_el else (t, stt)
        c = law_of.get(key)
        if c is None:
            kind = KINDS[t]
            c = law_of[key] = len(law_list)
            law_list.append(kind.law(stt, key[2] if len(key) > 2 else frozenset()))
            kinds_of.append(kind.control)
        code[j] = c
    laws = tuple(law_list[c] for c in code.tolist())
    # parameters: main values (index j), then further keys
    p: list = list(net.values)
    more_index: dict[tuple[int, str], int] = {}
    more_symbols = []
    for j, key, v in net.more:
        kt = KINDS[net.types[j]].key(key)
        more_index[(j, key)] = m + len(more_symbols)
        more_symbols.append(
            Symbol(f"{kt.symbol or key}({net.names[j]})", net.names[j], key, kt.unit)
        )
        p.append(v)
    P = m + len(more_symbols)
    p_float = np.concatenate([net.floats(), np.array([float(v) for v in p[m:]], dtype=float)])
    controls = np.zeros(m, dtype=bool)
    if net.control_element:
        controls[list(net.control_element.values())] = True
    mode = np.full(m, OWN, dtype=np.int8)
    members_of = _split(code, len(law_list))
    for c, law in enumerate(law_list):
        J = members_of[c]
        if law.conductance:
            k = _key_index(net, J, law.i.key, more_index)  # type: ignore[union-attr]
            mode[J[(p_float[k] != 0) & ~controls[J]]] = CONDUCTANCE
        elif law.current_defined:
            mode[J[~controls[J]]] = CURRENT
    own = np.flatnonzero(mode == OWN)
    col = np.full(m, -1, dtype=np.int64)
    col[own] = n_nodes - 1 + np.arange(len(own))
    n = n_nodes - 1 + len(own)
    a, b = net.a - 1, net.b - 1  # matrix index; −1 is the reference (dropped)
    cp = np.full(m, -1, dtype=np.int64)
    cm = np.full(m, -1, dtype=np.int64)
    for j, (pp, mm) in net.control_nodes.items():
        cp[j], cm[j] = pp - 1, mm - 1
    cc = np.full(m, -1, dtype=np.int64)
    for j, k in net.control_element.items():
        cc[j] = col[k]
    A, z, cur, lv = (_Emitter(P) for _ in range(4))
    fixes = np.zeros(m, dtype=bool)
    groups: list[tuple[Law, int, str | None, np.ndarray]] = []
    for c, law in enumerate(law_list):  # one group per law code (one type) and mode
        J = members_of[c]
        for md in np.unique(mode[J]).tolist():
            groups.append((law, md, kinds_of[c], J[mode[J] == md]))
    group_list = []
    for law, md, control, J in groups:
        param = _param_index(net, J, law, more_index)
        group_list.append(Group(law, md, control, J, param))
        aj, bj, cj = a[J], b[J], col[J]
        one = P
        NONE = np.full(len(J), n, dtype=np.int64)  # the constant column

        def u_terms(em: _Emitter, row, c: Coef, factor, J=J, control=control, param=param):
            """``factor · c · u`` in row ``row`` (u: node-pair difference or control current)."""
            if control == "nodes":
                em.coef(row, cp[J], c, factor, param, J)
                em.coef(row, cm[J], c, -factor, param, J)
            else:
                em.coef(row, cc[J], c, factor, param, J)

        if md == OWN:
            A.add(aj, cj, 1.0, one, one, J)
            A.add(bj, cj, -1.0, one, one, J)
            if law.v is not None:
                A.coef(cj, aj, law.v, 1.0, param, J)
                A.coef(cj, bj, law.v, -1.0, param, J)
            if law.i is not None:
                A.coef(cj, cj, law.i, 1.0, param, J)
            if law.u is not None:
                u_terms(A, cj, law.u, 1.0)
            if law.const is not None:
                z.coef(cj, NONE, law.const, 1.0, param, J)
            cur.add(J, cj, 1.0, one, one, J)
        elif md == CONDUCTANCE:
            r = param[law.i.key]  # type: ignore[union-attr]
            for row, c, s in ((aj, aj, 1.0), (aj, bj, -1.0), (bj, aj, -1.0), (bj, bj, 1.0)):
                A.add(row, c, s, one, r, J)
            cur.add(J, aj, 1.0, one, r, J)
            cur.add(J, bj, -1.0, one, r, J)
        else:  # CURRENT: i = ci·c0 − ci·cu·u, with ci = ±1
            ci = float(law.i.sign)  # type: ignore[union-attr]
            if law.const is not None:
                z.coef(aj, NONE, law.const, -ci, param, J)
                z.coef(bj, NONE, law.const, ci, param, J)
                cur.coef(J, NONE, law.const, ci, param, J)
            if law.u is not None:
                u_terms(A, aj, law.u, -ci)
                u_terms(A, bj, law.u, ci)
                u_terms(cur, J, law.u, -ci)
        # law voltage: v = cv·(c0 − ci·i − cu·u) where the law has a v term
        if law.v is not None and md == CONDUCTANCE:
            lv.add(J, aj, 1.0, one, one, J)
            lv.add(J, bj, -1.0, one, one, J)
            fixes[J] = True
        elif law.v is not None:
            cv = float(law.v.sign)
            if law.const is not None:
                lv.coef(J, NONE, law.const, cv, param, J)
            if law.i is not None:
                lv.coef(J, cj, law.i, -cv, param, J)
            if law.u is not None:
                u_terms(lv, J, law.u, -cv)
            fixes[J] = True
        else:
            lv.add(J, aj, 1.0, one, one, J)
            lv.add(J, bj, -1.0, one, one, J)
    return Structure(
        net,
        laws,
        mode,
        col,
        n,
        tuple(more_symbols),
        tuple(p),
        A.result(),
        z.result(),
        cur.result(),
        lv.result(),
        fixes,
        tuple(group_list),
    )


def _param_index(
    net: Netlist, J: np.ndarray, law: Law, more_index: dict[tuple[int, str], int]
) -> dict[str, np.ndarray]:
    return {key: _key_index(net, J, key, more_index) for key in law.number_keys()}


# --------------------------------------------------------------------------
# evaluation
# --------------------------------------------------------------------------


def float_system(st: Structure, pe: np.ndarray | None = None):
    """(rows, cols, vals, z) of A·x = z in float64 (COO; duplicates summed)."""
    pe = st.extended() if pe is None else pe
    vals = st.A.values(pe)
    z = np.bincount(st.z.row, weights=st.z.values(pe), minlength=st.n)[: st.n]
    return st.A.row, st.A.col, vals, z


def exact_system(st: Structure) -> tuple[list[list[Fraction]], list[Fraction]]:
    """Dense A and z in exact rational arithmetic."""
    pe = st.extended_exact()
    n = st.n
    A = [[Fraction(0)] * n for _ in range(n)]
    for r, c, v in zip(st.A.row.tolist(), st.A.col.tolist(), st.A.exact(pe), strict=True):
        A[r][c] += v
    z = [Fraction(0)] * n
    for r, v in zip(st.z.row.tolist(), st.z.exact(pe), strict=True):
        z[r] += v
    return A, z


def apply_map(t: Triplets, pe: np.ndarray, x: np.ndarray, rows: int) -> np.ndarray:
    """``out[row] = Σ entry · x[col]`` (constants where col is −1), for x (n,) or (K, n)."""
    vals = t.values(pe)
    xe = np.concatenate([x, np.ones((*x.shape[:-1], 1), dtype=x.dtype)], axis=-1)
    contrib = vals * xe[..., t.col]
    if contrib.ndim == 1:
        if np.iscomplexobj(contrib):
            return np.bincount(t.row, contrib.real, rows) + 1j * np.bincount(
                t.row, contrib.imag, rows
            )
        return np.bincount(t.row, weights=contrib, minlength=rows)
    out = np.zeros((contrib.shape[0], rows), dtype=contrib.dtype)
    np.add.at(out, (slice(None), t.row), contrib)
    return out


def apply_map_exact(t: Triplets, pe: list, x: list, rows: int) -> list:
    out = [Fraction(0)] * rows
    xe = [*x, Fraction(1)]
    for r, c, v in zip(t.row.tolist(), t.col.tolist(), t.exact(pe), strict=True):
        out[r] += v * xe[c]
    return out


def law_residual(st: Structure, x: np.ndarray, p: np.ndarray) -> np.ndarray:
    """z − A·x evaluated element by element, in the precision of ``x`` and ``p``.

    Each element's voltage V(a) − V(b) and control difference are formed
    first and only then scaled, so a residual in extended precision keeps
    what a summed matrix entry (G + g with g ≪ G) would round away.
    ``p`` holds the parameters (P,) in the same precision.
    """
    net = st.net
    dtype = np.result_type(x, p)
    nv = np.concatenate([np.zeros(1, dtype=dtype), x[: st.n_nodes - 1]])
    r = np.zeros(st.n, dtype=dtype)
    current = np.zeros(len(net.names), dtype=dtype)

    def coef(c: Coef, g: Group) -> np.ndarray:
        return c.sign * (p[g.param[c.key]] if c.key else np.ones(len(g.elements), dtype=dtype))

    for g in st.groups:
        J, law = g.elements, g.law
        v = nv[net.a[J]] - nv[net.b[J]]
        if g.control == "nodes":
            cpm = np.array([net.control_nodes[int(j)] for j in J], dtype=np.int64)  # (len(J), 2)
            u = nv[cpm[:, 0]] - nv[cpm[:, 1]]
        elif g.control == "element":
            u = x[st.col[[net.control_element[int(j)] for j in J]]]
        else:
            u = np.zeros(len(J), dtype=dtype)
        if g.mode == OWN:
            i = x[st.col[J]]
            row = np.zeros(len(J), dtype=dtype)
            if law.const is not None:
                row += coef(law.const, g)
            if law.v is not None:
                row -= coef(law.v, g) * v
            if law.i is not None:
                row -= coef(law.i, g) * i
            if law.u is not None:
                row -= coef(law.u, g) * u
            r[st.col[J]] = row
        elif g.mode == CONDUCTANCE:
            i = v / p[g.param[law.i.key]]  # type: ignore[union-attr]
        else:
            ci = law.i.sign  # type: ignore[union-attr]
            i = np.zeros(len(J), dtype=dtype)
            if law.const is not None:
                i += ci * coef(law.const, g)
            if law.u is not None:
                i -= ci * coef(law.u, g) * u
        current[J] = i
    kcl = np.zeros(st.n_nodes, dtype=dtype)
    np.add.at(kcl, net.a, current)
    np.subtract.at(kcl, net.b, current)
    r[: st.n_nodes - 1] = -kcl[1:]
    return r


def extended_parameters(st: Structure) -> np.ndarray:
    """The parameters in numpy's extended precision (exact fractions divided there)."""
    out = np.empty(st.P, dtype=np.longdouble)
    seen: dict = {}  # equal values are usually one object (the loader shares literals)
    for k, v in enumerate(st.p):
        x = seen.get(id(v))
        if x is None:
            if isinstance(v, Fraction):
                x = np.longdouble(str(v.numerator)) / np.longdouble(str(v.denominator))
            else:
                x = np.longdouble(v)
            seen[id(v)] = x
        out[k] = x
    return out
