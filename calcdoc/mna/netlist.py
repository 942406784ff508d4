"""The numeric circuit of one case: nodes indexed, elements as arrays.

:func:`netlist` turns a project (and a case's element values) into the
:class:`~calcdoc.results.Netlist` the MNA stages work on.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from calcdoc.model.elements import KINDS
from calcdoc.model.project import Project
from calcdoc.model.quantities import Number
from calcdoc.results import Netlist

__all__ = ["Netlist", "netlist"]


def netlist(
    project: Project,
    values: Mapping[str, Number] | None = None,
    states: Mapping[str, str] | None = None,
) -> Netlist:
    """Index the project's circuit with the given element values.

    Parameters
    ----------
    project : Project
    values : mapping of element name to main value, optional
        From :func:`calcdoc.model.values.element_values`; nominal if omitted.
    states : mapping of element name to state, optional
        For multi-state elements; each element's own ``state`` otherwise.

    Returns
    -------
    Netlist
    """
    nodes = project.nodes
    index = {n: i for i, n in enumerate(nodes)}
    els = project.elements
    names = tuple(e.name for e in els)
    pos = {n: i for i, n in enumerate(names)}
    a = np.fromiter((index[e.nodes[0]] for e in els), dtype=np.int64, count=len(els))
    b = np.fromiter((index[e.nodes[1]] for e in els), dtype=np.int64, count=len(els))
    vals = tuple(values[e.name] for e in els) if values is not None else tuple(e.value for e in els)
    cn = {}
    ce = {}
    more = []
    absent = []
    st = []
    for j, e in enumerate(els):
        if e.control_nodes is not None:
            cn[j] = (index[e.control_nodes[0]], index[e.control_nodes[1]])
        elif e.control_element is not None:
            ce[j] = pos[e.control_element]
        kind = KINDS[e.type]
        if not e.main_given:
            absent.append((j, kind.main.name))
        if len(kind.keys) > 1:
            given = dict(e.numbers)
            for k in kind.keys[1:]:
                if k.name in given:
                    more.append((j, k.name, given[k.name]))
                else:
                    absent.append((j, k.name))
        state = (states or {}).get(e.name, e.state) if kind.states else ""
        st.append(state or (kind.states[0] if kind.states else ""))
    floats = np.fromiter((float(v) for v in vals), dtype=float, count=len(vals))
    return Netlist(
        nodes,
        names,
        tuple(e.type for e in els),
        a,
        b,
        vals,
        cn,
        ce,
        floats,
        tuple(st) if any(st) else (),
        tuple(more),
        tuple(absent),
    )
