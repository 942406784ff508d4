"""The report's only window on the engine's internals.

Everything the report needs that is not a plain field of the results
objects is reached through this module, so a change in the engine's
layout is one change here: the analysis stages (``Results.extra`` today),
the solver's size thresholds, and the control quantity of a dependent
source.
"""

from __future__ import annotations

from typing import Any


def stage(results: Any, name: str) -> Any:
    """The result of the analysis stage ``name`` (``tolerance``, ``envelope``,
    ``sensitivity``, ``sweeps``, ``preferred_values``, ``history``,
    ``closed_form``), or None when it did not run."""
    extra = getattr(results, "extra", None) or {}
    return extra.get(name)


def solver_limits(results: Any) -> tuple[int, int]:
    """(exact, dense): unknowns up to which the solver uses exact rational
    arithmetic, and dense LU (sparse LU beyond), as the results record them."""
    limits = results.cases[0].solution.limits
    return limits["exact"], limits["dense"]


def is_exact(solution: Any) -> bool:
    """True when the case was solved in exact rational arithmetic."""
    return getattr(solution, "exact", None) is not None


def control_value(case: Any, element: str, control_nodes, control_element) -> tuple[str, float]:
    """(unit, value) of a dependent source's control quantity in one case.

    A node pair's voltage V(c+) − V(c−), or the controlling element's
    current.  (A candidate for the results objects to carry directly.)
    """
    net, br = case.netlist, case.branches
    if control_nodes:
        index = {n: i for i, n in enumerate(net.nodes)}
        v = br.node_voltage
        return "V", float(v[index[control_nodes[0]]] - v[index[control_nodes[1]]])
    return "A", float(br.current[net.names.index(control_element)])
