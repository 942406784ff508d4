"""The numeric circuit of one case: nodes indexed, elements as arrays.

A :class:`Netlist` is what the MNA stages work on.  Node 0 is the
reference; every other node ``k`` has the voltage unknown ``V(name)``.
Element ``j`` runs from node ``a[j]`` to node ``b[j]``.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from calcdoc.model.elements import KINDS
from calcdoc.model.project import Project
from calcdoc.model.quantities import Number


@dataclass(frozen=True)
class Netlist:
    """Indexed circuit for one set of element values.

    Attributes
    ----------
    nodes : tuple of str
        Node names, the reference first.
    names, types : tuple of str
        Element names and types, in project order.
    a, b : numpy.ndarray of int
        Terminal node indices.
    values : tuple of Fraction or float
        Element values in SI units (gain for dependent sources).
    control_nodes : dict of int to (int, int)
        For vcvs/vccs: controlling node pair.
    control_element : dict of int to int
        For ccvs/cccs: index of the controlling element.
    """

    nodes: tuple[str, ...]
    names: tuple[str, ...]
    types: tuple[str, ...]
    a: np.ndarray
    b: np.ndarray
    values: tuple[Number, ...]
    control_nodes: dict[int, tuple[int, int]]
    control_element: dict[int, int]
    float_values: np.ndarray | None = None

    def floats(self) -> np.ndarray:
        """Element values as a float64 array."""
        if self.float_values is not None:
            return self.float_values
        return np.array([float(v) for v in self.values], dtype=float)

    @property
    def reference(self) -> str:
        return self.nodes[0]

    def index(self, element: str) -> int:
        return self.names.index(element)

    @property
    def exact(self) -> bool:
        """True when every value is an exact rational number."""
        return all(not isinstance(v, float) for v in self.values)


def netlist(project: Project, values: Mapping[str, Number] | None = None) -> Netlist:
    """Index the project's circuit with the given element values.

    Parameters
    ----------
    project : Project
    values : mapping of element name to value, optional
        From :func:`calcdoc.model.values.element_values`; nominal if omitted.

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
    for j, e in enumerate(els):
        if e.control_nodes is not None:
            cn[j] = (index[e.control_nodes[0]], index[e.control_nodes[1]])
        elif e.control_element is not None:
            ce[j] = pos[e.control_element]
    floats = np.fromiter((float(v) for v in vals), dtype=float, count=len(vals))
    return Netlist(nodes, names, tuple(e.type for e in els), a, b, vals, cn, ce, floats)


def defines(net: Netlist) -> list[str]:
    """What each element defines: ``voltage``, ``current`` or ``resistance``."""
    return [KINDS[t].defines for t in net.types]
