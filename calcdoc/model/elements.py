"""The element kinds: one row per type.

Every stage looks element behaviour up here instead of branching on type
names, so a new element kind is one new row.

Columns
-------
value_key : the project-file key holding the element's number
    (``value`` for independent elements, ``gain`` for dependent sources).
dimension : the dimension that number must have.
control : ``None``, ``"nodes"`` (a node pair) or ``"element"`` (the name of
    the element whose reported current controls this one).
defines : ``"voltage"`` when the element fixes V(a) - V(b) (its current is
    an MNA unknown), ``"current"`` when it fixes the current a -> b,
    ``"resistance"`` for a resistor.
"""

from __future__ import annotations

from dataclasses import dataclass

from calcdoc.model.quantities import AMPERE, NONE, OHM, SIEMENS, VOLT, Dimension


@dataclass(frozen=True)
class ElementKind:
    type: str
    value_key: str
    dimension: Dimension
    control: str | None
    defines: str
    plain_name: str
    symbol_prefix: str  # letter used for the element's value in equations


KINDS: dict[str, ElementKind] = {
    k.type: k
    for k in (
        ElementKind("resistor", "value", OHM, None, "resistance", "resistor", "R"),
        ElementKind("voltage_source", "value", VOLT, None, "voltage", "voltage source", "V"),
        ElementKind("current_source", "value", AMPERE, None, "current", "current source", "I"),
        ElementKind(
            "vcvs", "gain", NONE, "nodes", "voltage", "voltage-controlled voltage source", "A"
        ),
        ElementKind(
            "vccs", "gain", SIEMENS, "nodes", "current", "voltage-controlled current source", "G"
        ),
        ElementKind(
            "ccvs", "gain", OHM, "element", "voltage", "current-controlled voltage source", "H"
        ),
        ElementKind(
            "cccs", "gain", NONE, "element", "current", "current-controlled current source", "B"
        ),
    )
}

SOURCE_TYPES = frozenset(("voltage_source", "current_source"))
