"""Sensitivities of outputs to every element value and parameter.

For an output y and a quantity p the *normalised* sensitivity is
S = (∂y/∂p)·(p/y): the per-cent change of y per per-cent change of p.  An
output that is zero at nominal (a balanced bridge's detector current) has
no normalised sensitivity; it gets the *absolute* one instead, the change
of y per 1 % change of p in y's own unit, and the result says which.

Derivatives come by the adjoint method from the element table's stamps
(:func:`calcdoc.mna.batch.adjoint`: one transposed solve per output for
all quantities at once).  Where the closed-form solution exists (small
circuits), node-voltage sensitivities are exact derivatives of it.
Parameters act through the elements whose expressions use them (chain
rule, with the derivative of each element value by central differences of
its expression).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from calcdoc.mna.batch import adjoint, factor, output_gradient, parameter_jacobian, patterns
from calcdoc.model.quantities import Quantity
from calcdoc.model.read_sections import parse_output
from calcdoc.model.values import element_values

RESOLUTION = 1e-12  # an output below this share of the largest of its kind counts as zero
# a dependence below this share of the largest is rounding in the derivatives, not a sensitivity
DEPENDENCE_FLOOR = 1e-9
# relative step of the central differences for parameters: truncation error grows as the
# step squared, rounding error as eps over the step; 1e-6 keeps both near 1e-10 to 1e-12
PARAMETER_STEP = 1e-6


@dataclass(frozen=True)
class Sensitivity:
    """Sensitivities of one output, ranked by magnitude.

    ``measure`` is ``"normalised"`` (``ranked`` holds % per %) or
    ``"absolute"`` (``ranked`` holds the change of the output, in its own
    unit, per 1 % change of the quantity: the output is zero at nominal).
    ``ranked`` holds (quantity name, kind ``element``/``parameter``, value);
    ``absolute`` the derivative ∂y/∂p in SI units.
    """

    output: str
    value: float
    method: str
    ranked: tuple[tuple[str, str, float], ...]
    absolute: tuple[tuple[str, float], ...]
    measure: str = "normalised"


def default_outputs(project, case_result) -> tuple[str, ...]:
    """Outputs with a limit (node windows, rated powers); else every node voltage (at most 12)."""
    outs = [f"{w.node}" for w in project.limits.nodes]
    outs += [f"{e.name}.power" for e in project.elements if e.rating.power is not None]
    if not outs:
        outs = list(case_result.netlist.nodes[1:13])
    return tuple(dict.fromkeys(outs))


def _output_key(net, output: str) -> tuple[str, int]:
    subject, q = parse_output(output)
    if q == "node":
        return "node", net.nodes.index(subject)
    return q, net.names.index(subject)


def _scale(br, kind: str) -> float:
    arr = {
        "node": br.node_voltage,
        "voltage": br.voltage,
        "current": br.current,
        "power": br.power,
    }[kind]
    return float(np.max(np.abs(arr)))  # never empty: the reference node, one element at least


def _parameter_derivatives(project, case_result, names) -> dict[str, tuple[float, np.ndarray]]:
    """d(element value)/d(parameter) by central differences of the expressions."""
    out = {}
    for prm in project.parameters:
        base = float(prm.value.magnitude)
        if base == 0:
            continue
        h = abs(base) * PARAMETER_STEP
        vals = []
        for t in (base + h, base - h):
            v = element_values(
                project,
                case_result.case,
                parameter_overrides={prm.name: Quantity(t, prm.value.dimension)},
            )
            vals.append(np.array([float(v[e]) for e in names]))
        d = (vals[0] - vals[1]) / (2 * h)
        if np.any(d):
            out[prm.name] = (base, d)
    return out


def sensitivities(project, case_result, outputs=None, closed=None) -> tuple[Sensitivity, ...]:
    """Sensitivities of ``outputs`` (default :func:`default_outputs`) in one case."""
    net = case_result.netlist
    st = patterns(net)
    x = case_result.solution.x
    p = st.p_float
    m = len(net.names)
    vals = net.floats()
    fac = factor(st, p)
    R = parameter_jacobian(st, p, x)
    dpar = _parameter_derivatives(project, case_result, net.names)
    out = []
    for output in outputs or default_outputs(project, case_result):
        kind, idx = _output_key(net, output)
        y, gx, gp = output_gradient(st, p, x, kind, idx)
        dydv = adjoint(st, p, x, gx, gp, fac, R)[:m]
        method = "adjoint"
        if closed is not None and kind == "node" and f"V({net.nodes[idx]})" in closed.unknowns:
            import sympy

            expr = closed.expressions[closed.unknowns.index(f"V({net.nodes[idx]})")]
            subs = {sympy.Symbol(nm): float(v) for nm, v in case_result.symbol_values.items()}
            dydv = np.array(
                [float(sympy.diff(expr, sympy.Symbol(nm)).subs(subs)) for nm in net.names]
            )
            method = "closed form"
        zero = abs(y) <= RESOLUTION * _scale(case_result.branches, kind)
        measure = "absolute" if zero else "normalised"

        def rank(g: float, base: float, zero=zero, y=y) -> float:
            return g * base * 0.01 if zero else g * base / y

        items = [
            (nm, "element", rank(float(g), float(v)), float(g))
            for nm, g, v in zip(net.names, dydv, vals, strict=True)
        ]
        for pname, (base, d) in dpar.items():
            g = float(dydv @ d)
            items.append((pname, "parameter", rank(g, base), g))
        big = max(abs(it[2]) for it in items)  # one element at least
        items = [it for it in items if abs(it[2]) > DEPENDENCE_FLOOR * big]
        items.sort(key=lambda t: -abs(t[2]))
        out.append(
            Sensitivity(
                output,
                float(y),
                method,
                tuple((n, k, sv) for n, k, sv, _ in items),
                tuple((n, g) for n, _, _, g in items),
                measure,
            )
        )
    return tuple(out)
