"""Element values for one operating case.

A case may set element values directly or change parameters, which then
flow through every expression that uses them.  :func:`element_values`
re-evaluates what is needed; it is pure and cheap for the nominal case.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping

from calcdoc.model.expressions import ExpressionError, evaluate, names_in
from calcdoc.model.project import Case, Project
from calcdoc.model.quantities import Number, Quantity


def parameter_values(
    project: Project, overrides: Mapping[str, Quantity] | None = None
) -> dict[str, Quantity]:
    """Parameter values with ``overrides`` applied and dependants re-evaluated.

    Parameters
    ----------
    project : Project
    overrides : mapping of parameter name to Quantity, optional

    Returns
    -------
    dict of str to Quantity
    """
    base = {p.name: p.value for p in project.parameters}
    if not overrides:
        return base
    exprs = {p.name: p.expr for p in project.parameters}
    out: dict[str, Quantity] = {}
    expanded: set[str] = set()
    # Depth-first in dependency order with an explicit stack (no recursion per
    # parameter: a chain of thousands of parameters is fine).  The loader has
    # already refused cycles and unknown names.
    for root in base:
        stack = [root]
        while stack:
            name = stack[-1]
            if name in out:
                stack.pop()
            elif name in overrides:
                out[name] = overrides[name]
                stack.pop()
            else:
                missing = [d for d in names_in(exprs[name]) if d not in out]
                if missing:
                    if name in expanded:
                        raise ExpressionError(f"parameter {name!r} refers to itself in a cycle")
                    expanded.add(name)
                    stack.extend(missing)
                else:
                    env = {d: out[d] for d in names_in(exprs[name])}
                    out[name] = evaluate(exprs[name], env)
                    stack.pop()
    return out


def element_values(
    project: Project,
    case: Case | None = None,
    *,
    parameter_overrides: Mapping[str, Quantity] | None = None,
    element_overrides: Mapping[str, Number] | None = None,
) -> dict[str, Number]:
    """Every element's value (SI) in a case.

    Parameters
    ----------
    project : Project
    case : Case, optional
        ``None`` for the nominal case.
    parameter_overrides, element_overrides : mapping, optional
        Further changes on top of the case (used by tolerance analysis and
        sweeps).

    Returns
    -------
    dict of str to Fraction or float

    >>> from calcdoc.model.load import parse_project
    >>> p = parse_project('''
    ... [parameters]
    ... r = "1 kohm"
    ... [elements.V1]
    ... type = "voltage_source"
    ... nodes = ["a", "gnd"]
    ... value = "5 V"
    ... [elements.R1]
    ... type = "resistor"
    ... nodes = ["a", "gnd"]
    ... value = "2 * r"
    ... ''')
    >>> element_values(p, parameter_overrides={"r": Quantity(500, p.parameters[0].value.dimension)})["R1"]
    Fraction(1000, 1)
    """
    poverride: dict[str, Quantity] = {}
    eoverride: dict[str, Number] = {}
    if case is not None:
        env0 = parameter_values(project)
        pnames = {p.name for p in project.parameters}
        for s in case.settings:
            if s.target in pnames:
                poverride[s.target] = evaluate(s.expr, env0)
    if parameter_overrides:
        poverride.update(parameter_overrides)
    if case is not None:
        env1 = parameter_values(project, poverride)
        for s in case.settings:
            if s.target not in pnames and not s.state:  # a state is no value
                eoverride[s.target] = evaluate(s.expr, env1).magnitude
    if element_overrides:
        eoverride.update(element_overrides)
    if not poverride:
        values = {e.name: e.value for e in project.elements}
    else:
        env = parameter_values(project, poverride)
        values = {}
        for e in project.elements:
            deps = names_in(e.value_expr)
            values[e.name] = evaluate(e.value_expr, env).magnitude if deps else e.value
    values.update(eoverride)
    return values


def affected_parameters(project: Project, changed: Iterable[str]) -> set[str]:
    """``changed`` and every parameter whose expression reaches one of them.

    >>> from calcdoc.model.load import parse_project
    >>> p = parse_project('''
    ... [parameters]
    ... a = "1"
    ... b = "2 * a"
    ... c = "b + 1"
    ... d = "5"
    ... [elements.V1]
    ... type = "voltage_source"
    ... nodes = ["x", "gnd"]
    ... value = "1 V"
    ... [elements.R1]
    ... type = "resistor"
    ... nodes = ["x", "gnd"]
    ... value = "1k"
    ... ''')
    >>> sorted(affected_parameters(p, {"a"}))
    ['a', 'b', 'c']
    """
    touched = set(changed)
    grew = True
    while grew:  # parameters may be listed before the ones they use
        grew = False
        for q in project.parameters:
            if q.name not in touched and names_in(q.expr) & touched:
                touched.add(q.name)
                grew = True
    return touched
