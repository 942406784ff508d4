"""What varies: toleranced element values and parameters, and their value sets.

A toleranced quantity q has a nominal value and a band
[q·(1 − minus), q·(1 + plus)].  A *variation* is a matrix of relative
deviations δ (K rows, one column per toleranced quantity); this module
turns it into the element values of each row, re-evaluating the
expressions of elements that depend on toleranced parameters (with numpy
arrays in place of numbers).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from calcdoc.model.expressions import Binary, Call, Literal, Name, Node, Unary, names_in
from calcdoc.model.project import Case, Project
from calcdoc.model.quantities import Number
from calcdoc.model.values import affected_parameters, element_values, parameter_values

EXACT_VERTEX_LIMIT = 12  # toleranced quantities for which every vertex is solved (2**12 = 4096)


@dataclass(frozen=True)
class Toleranced:
    kind: str  # "element" | "parameter"
    name: str
    nominal: float
    minus: float
    plus: float
    text: str


def toleranced(project: Project) -> tuple[Toleranced, ...]:
    """Every quantity with a tolerance, elements first, in project order."""
    out = []
    for e in project.elements:
        if e.tolerance is not None and (e.tolerance.minus or e.tolerance.plus):
            out.append(
                Toleranced(
                    "element",
                    e.name,
                    float(e.value),
                    float(e.tolerance.minus),
                    float(e.tolerance.plus),
                    e.tolerance.text,
                )
            )
    for p in project.parameters:
        if p.tolerance is not None and (p.tolerance.minus or p.tolerance.plus):
            out.append(
                Toleranced(
                    "parameter",
                    p.name,
                    float(p.value.magnitude),
                    float(p.tolerance.minus),
                    float(p.tolerance.plus),
                    p.tolerance.text,
                )
            )
    return tuple(out)


def _veval(node: Node, env: Mapping[str, np.ndarray]) -> np.ndarray | float:
    if isinstance(node, Literal):
        return float(node.value.magnitude)
    if isinstance(node, Name):
        return env[node.name]
    if isinstance(node, Unary):
        v = _veval(node.operand, env)
        return -v if node.op == "-" else v
    if isinstance(node, Binary):
        a, b = _veval(node.left, env), _veval(node.right, env)
        if node.op == "+":
            return a + b
        if node.op == "-":
            return a - b
        if node.op == "*":
            return a * b
        if node.op == "/":
            return a / b
        return a**b
    assert isinstance(node, Call)
    args = [_veval(a, env) for a in node.args]
    if node.function == "sqrt":
        return np.sqrt(args[0])
    if node.function == "abs":
        return np.abs(args[0])
    stack = np.broadcast_arrays(*[np.asarray(a, dtype=float) for a in args])
    return np.min(stack, axis=0) if node.function == "min" else np.max(stack, axis=0)


@dataclass(frozen=True)
class Variation:
    """Maps relative deviations of the toleranced quantities to element values."""

    project: Project
    case: Case | None
    quantities: tuple[Toleranced, ...]
    base: Mapping[str, Number]  # the case's element values (tcr applied)

    def values(self, delta: np.ndarray) -> np.ndarray:
        """Element values (K, m) for deviations ``delta`` (K, q)."""
        p = self.project
        delta = np.atleast_2d(delta)
        K = delta.shape[0]
        names = [e.name for e in p.elements]
        out = np.tile(np.array([float(self.base[n]) for n in names]), (K, 1))
        params = [i for i, q in enumerate(self.quantities) if q.kind == "parameter"]
        if params:
            scale = {self.quantities[i].name: 1.0 + delta[:, i] for i in params}
            env: dict[str, np.ndarray | float] = {}
            nominal = parameter_values(p, _case_parameters(p, self.case))
            order = [q.name for q in p.parameters]
            exprs = {q.name: q.expr for q in p.parameters}
            overridden = _case_parameters(p, self.case) or {}
            for name in order:
                if name in overridden:
                    v: np.ndarray | float = float(nominal[name].magnitude)
                else:
                    v = (
                        _veval(exprs[name], env)
                        if names_in(exprs[name])
                        else float(nominal[name].magnitude)
                    )
                if name in scale:
                    v = v * scale[name]
                env[name] = v
            touched = affected_parameters(p, scale)
            case_set = {s.target for s in (self.case.settings if self.case else ())}
            for j, e in enumerate(p.elements):
                if e.name not in case_set and names_in(e.value_expr) & touched:
                    ratio = (
                        float(self.base[e.name]) / float(element_values(p, self.case)[e.name])
                        if p.analysis.temperature is not None
                        else 1.0
                    )
                    out[:, j] = np.broadcast_to(_veval(e.value_expr, env), (K,)) * ratio
        for i, q in enumerate(self.quantities):
            if q.kind == "element":
                j = names.index(q.name)
                out[:, j] = out[:, j] * (1.0 + delta[:, i])
        return out

    def params(self, st, delta: np.ndarray) -> np.ndarray:
        """Stamp parameters (K, P) of the structure ``st`` for deviations ``delta`` (K, q)."""
        return st.main_to_p(self.values(delta))

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        """Lowest and highest relative deviation of each quantity."""
        lo = np.array([-q.minus for q in self.quantities])
        hi = np.array([q.plus for q in self.quantities])
        return lo, hi


def _case_parameters(project: Project, case: Case | None):
    if case is None:
        return None
    from calcdoc.model.expressions import evaluate

    pnames = {p.name for p in project.parameters}
    env = parameter_values(project)
    out = {s.target: evaluate(s.expr, env) for s in case.settings if s.target in pnames}
    return out or None
