"""Normalised sensitivities S = (∂y/∂p)·(p/y) of outputs to every element value and parameter.

Numerically by the adjoint method: with A·x = z at the nominal values,
one transposed solve Aᵀλ = ∇ₓy per output gives ∂y/∂sⱼ = ∂y/∂sⱼ|ₓ − λ·(Pⱼx − Zⱼ)
for every element at once (Pⱼ, Zⱼ: the stamp patterns of
:mod:`calcdoc.analysis.batch`).  Where the closed-form solution exists
(small circuits), node-voltage sensitivities are exact derivatives of it.
Parameters act through the elements whose expressions use them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from calcdoc.analysis.batch import patterns
from calcdoc.model.load import parse_output
from calcdoc.model.quantities import Quantity
from calcdoc.model.values import element_values


@dataclass(frozen=True)
class Sensitivity:
    """Sensitivities of one output, ranked by magnitude.

    ``ranked`` holds (quantity name, kind "element"/"parameter", S) with
    S the normalised sensitivity (% change of the output per % change of
    the quantity); ``absolute`` the same as ∂y/∂p in SI units.
    """

    output: str
    value: float
    method: str
    ranked: tuple[tuple[str, str, float], ...]
    absolute: tuple[tuple[str, float], ...]


def default_outputs(project, case_result) -> tuple[str, ...]:
    """Outputs with a limit (node windows, rated powers); else every node voltage (at most 12)."""
    outs = [f"{w.node}" for w in project.limits.nodes]
    outs += [f"{e.name}.power" for e in project.elements if e.rating.power is not None]
    if not outs:
        outs = list(case_result.netlist.nodes[1:13])
    return tuple(dict.fromkeys(outs))


def _gradients(pat, x, s, output: str):
    """(y, ∇ₓy, explicit ∂y/∂s) of one output at the nominal solution."""
    net = pat.net
    n = len(x)
    n_nodes = len(net.nodes)
    nv = np.concatenate([[0.0], x[: n_nodes - 1]])

    def e(k: int) -> np.ndarray:
        g = np.zeros(n)
        if k:
            g[k - 1] = 1.0
        return g

    subject, q = parse_output(output)
    m = len(net.names)
    ds = np.zeros(m)
    if q == "node":
        k = net.nodes.index(subject)
        return nv[k], e(k), ds
    j = net.names.index(subject)
    a, b = int(net.a[j]), int(net.b[j])
    gv = e(a) - e(b)
    v = nv[a] - nv[b]
    t = net.types[j]
    di = np.zeros(m)
    if j in pat.col:
        gi, i = np.eye(n)[pat.col[j]], x[pat.col[j]]
    elif t == "resistor":
        gi, i = s[j] * gv, s[j] * v
        di[j] = v
    elif t == "current_source":
        gi, i = np.zeros(n), s[j]
        di[j] = 1.0
    elif t == "vccs":
        p, mm = net.control_nodes[j]
        gi, i = s[j] * (e(p) - e(mm)), s[j] * (nv[p] - nv[mm])
        di[j] = nv[p] - nv[mm]
    else:  # cccs without its own unknown
        c = pat.col[net.control_element[j]]
        gi, i = s[j] * np.eye(n)[c], s[j] * x[c]
        di[j] = x[c]
    if q == "voltage":
        return v, gv, ds
    if q == "current":
        return i, gi, di
    return v * i, i * gv + v * gi, v * di


def sensitivities(project, case_result, outputs=None, closed=None) -> tuple[Sensitivity, ...]:
    """Normalised sensitivities of ``outputs`` in one case."""
    net = case_result.netlist
    pat = patterns(net)
    x = case_result.solution.x
    s = pat.s0
    vals = net.floats()
    A = pat.A0
    R = np.einsum("jab,b->ja", pat.P, x) - pat.Z  # (m, n): Pj x - Zj
    dsdv = np.where(pat.plain, -1.0 / vals**2, 1.0)
    # parameters: d(element value)/d(parameter) by central differences of the expressions
    dpar = {}
    for prm in project.parameters:
        base = float(prm.value.magnitude)
        if base == 0:
            continue
        h = abs(base) * 1e-6
        up = element_values(
            project,
            case_result.case,
            parameter_overrides={prm.name: Quantity(base + h, prm.value.dimension)},
        )
        dn = element_values(
            project,
            case_result.case,
            parameter_overrides={prm.name: Quantity(base - h, prm.value.dimension)},
        )
        d = np.array([(float(up[e]) - float(dn[e])) / (2 * h) for e in net.names])
        if np.any(d):
            dpar[prm.name] = (base, d)
    out = []
    for output in outputs or default_outputs(project, case_result):
        y, gx, gs = _gradients(pat, x, s, output)
        lam = np.linalg.solve(A.T, gx)
        dyds = gs - R @ lam
        dydv = dyds * dsdv
        method = "adjoint"
        if (
            closed is not None
            and parse_output(output)[1] == "node"
            and f"V({output})" in closed.unknowns
        ):
            import sympy

            expr = closed.expressions[closed.unknowns.index(f"V({output})")]
            subs = {sympy.Symbol(nm): float(v) for nm, v in zip(net.names, vals, strict=True)}
            dydv = np.array(
                [float(sympy.diff(expr, sympy.Symbol(nm)).subs(subs)) for nm in net.names]
            )
            method = "closed form"
        items = [
            (nm, "element", float(g * v / y) if y else float("nan"), float(g))
            for nm, g, v in zip(net.names, dydv, vals, strict=True)
        ]
        for pname, (base, d) in dpar.items():
            g = float(dydv @ d)
            items.append((pname, "parameter", float(g * base / y) if y else float("nan"), g))
        big = max((abs(it[2]) for it in items if np.isfinite(it[2])), default=0.0)
        # a dependence below 1e-9 of the largest is rounding in the parameter derivatives, not a sensitivity
        items = [
            it
            for it in items
            if it[3] != 0.0 and not (np.isfinite(it[2]) and abs(it[2]) < 1e-9 * big)
        ]
        items.sort(key=lambda t: -abs(t[2]) if np.isfinite(t[2]) else 0.0)
        out.append(
            Sensitivity(
                output,
                float(y),
                method,
                tuple((n, k, sv) for n, k, sv, _ in items),
                tuple((n, g) for n, _, _, g in items),
            )
        )
    return tuple(out)
