"""The project file's JSON Schema (draft 2020-12), made from its declaration.

Everything here is read from :mod:`calcdoc.model.keys` (the sections and
their keys) and the element table (:mod:`calcdoc.model.elements`, through
:func:`~calcdoc.model.keys.element_table`): no key is named in this module.
A TOML editor that takes JSON Schemas uses it to complete keys, show what
each one means, and flag a misspelt key as it is typed.  The loader stays
the judge: the schema cannot check a value's dimension or evaluate an
expression, which ``calcdoc check`` does.
"""

from __future__ import annotations

from typing import Any

from calcdoc.model import keys as K
from calcdoc.model.elements import KINDS, ElementType
from calcdoc.model.quantities import (
    AMPERE,
    FARAD,
    HENRY,
    NONE,
    OHM,
    SIEMENS,
    VOLT,
    WATT,
    Dimension,
    dimension_name,
)

DIALECT = "https://json-schema.org/draft/2020-12/schema"

#: A value string of each dimension, for the descriptions.
EXAMPLES: dict[Dimension, str] = {
    VOLT: '"24 V"',
    AMPERE: '"10 mA"',
    WATT: '"0.25 W"',
    OHM: '"4.7 kohm"',
    SIEMENS: '"2 mS"',
    FARAD: '"10 uF"',
    HENRY: '"10 mH"',
    K.PER_KELVIN: '"100 ppm/K"',
}
_NAME = {"type": "string", "pattern": f"^{K.NAME_PATTERN}$"}


def project_schema() -> dict[str, Any]:
    """The JSON Schema of a project file.

    >>> s = project_schema()
    >>> s["$schema"], s["additionalProperties"], "elements" in s["required"]
    ('https://json-schema.org/draft/2020-12/schema', False, True)
    """
    root = K.key("")
    schema = {
        "$schema": DIALECT,
        "title": "calcdoc project file",
        "description": "A calcdoc project file (schema 1): one linear DC circuit and how its "
        "calculation record is made. Values are strings with units; calcdoc check validates "
        "what this schema cannot (dimensions, expressions, node and element names).",
        **_table(root.keys, root.one_of),
        "$defs": {f"element.{t}": _element(kind) for t, kind in KINDS.items()},
    }
    return schema


def _table(keys: tuple[K.Key, ...], one_of: tuple[str, ...] = ()) -> dict[str, Any]:
    out: dict[str, Any] = {
        "type": "object",
        "properties": {k.name: _key(k) for k in keys},
        "additionalProperties": False,
    }
    required = [k.name for k in keys if k.required]
    if required:
        out["required"] = required
    if one_of:
        out["anyOf"] = [{"required": [name]} for name in one_of]
    return out


def _key(k: K.Key) -> dict[str, Any]:
    return {"description": _describe(k), **_shape(k)}


def _shape(k: K.Key) -> dict[str, Any]:
    """The JSON Schema of one key's value, without its description."""
    kind = k.kind
    if kind == K.TEXT:
        return {"type": "string"}
    if kind == K.TEXTS:
        return {"type": ["array", "string"], "items": {"type": "string"}}
    if kind == K.DATE:  # a TOML date: JSON-Schema tools for TOML see it as a date string
        return {"type": "string", "format": "date"}
    if kind == K.NAME:
        return dict(_NAME)
    if kind == K.NODES:
        return {"type": "array", "items": dict(_NAME), "minItems": 2, "maxItems": 2}
    if kind in (K.VALUE, K.QUANTITY, K.SETTING):
        return _value(k.dimension if kind != K.SETTING else K.ANY)
    if kind == K.PAIR:
        return {"type": "array", "items": _value(k.dimension), "minItems": 2, "maxItems": 2}
    if kind == K.FRACTION:
        return {
            "anyOf": [{"type": "number", "exclusiveMinimum": 0, "maximum": 1}, {"type": "string"}]
        }
    if kind == K.TOLERANCE:
        return {"anyOf": [{"type": "number", "minimum": 0}, {"type": "string"}, _table(k.keys)]}
    if kind == K.TEMPERATURE:
        return {"type": "string"}
    if kind == K.INTEGER:
        if k.low == k.high:
            return {"const": k.low}
        return {"type": "integer", "minimum": k.low, "maximum": k.high}
    if kind == K.CHOICE:
        return {"enum": list(k.choices)}
    if kind == K.OUTPUTS:
        return {"type": "array", "items": {"type": "string"}}
    if kind == K.TABLE:
        return _table(k.keys, k.one_of)
    if kind == K.TABLES:
        return {"type": "array", "items": _table(k.keys, k.one_of)}
    if kind == K.ENTRIES and k.entry is not None:
        return {
            "type": "object",
            "propertyNames": dict(_NAME),
            "minProperties": int(k.required),
            "additionalProperties": _key(k.entry),
        }
    if kind == K.PARAMETER:
        return {"anyOf": [_value(K.ANY), _table(k.keys)]}
    if kind == K.ELEMENT:
        return _elements()
    raise ValueError(f"no schema for a key of kind {kind!r}")


def _value(dim: Dimension | None) -> dict[str, Any]:
    """A value string; a dimensionless value (or one of any dimension) may be a number."""
    if dim is None or dim == NONE:
        return {"type": ["string", "number"]}
    return {"type": "string"}


def _describe(k: K.Key) -> str:
    words, kind, dim = k.words, k.kind, k.dimension
    if kind in (K.VALUE, K.QUANTITY):
        sign = {"positive": ", above zero", "nonnegative": ", zero or more"}.get(k.sign, "")
        more = " or an expression over [parameters]" if kind == K.VALUE else ""
        return f"{_what(words, dim)}{sign}: {_form(dim)}{more}"
    if kind == K.PAIR:
        return f"{words}: two values, {_measure(dim) if dim else 'any'}, such as {_example(dim)}"
    if kind == K.FRACTION:
        return f'{words}: a share above 0 and at most 1, a number (0.5) or a string ("50 %")'
    if kind == K.TOLERANCE:
        return f'{words}: a share such as "1 %" (or 0.01), or {{ minus = "2 %", plus = "1 %" }}'
    if kind == K.TEMPERATURE:
        return f'{words}: a temperature such as "70 °C" (or in K)'
    if kind == K.DATE:
        return f"{words}: a TOML date such as 2026-11-20"
    if kind == K.INTEGER and k.low != k.high:
        return f"{words}: a whole number from {k.low} to {k.high}"
    if kind == K.OUTPUTS:
        return (
            f'{words}: node names or ELEMENT.voltage, .current, .power, such as ["out", "R1.power"]'
        )
    if kind == K.NAME:
        return f"{words}: a name of letters, digits, '_', '-' and '.'"
    if kind == K.SETTING:
        states = sorted({s for kind in KINDS.values() for s in kind.settable})
        listed = ", ".join(f'"{s}"' for s in states)
        return f'{words}: a value string such as "21.6 V", or a state ({listed})'
    return words


def _what(words: str, dim: Dimension | None) -> str:
    """``resistance (Ω)``, or ``forward voltage, voltage (V)``."""
    if dim is None:
        return words
    measure = _measure(dim)
    return measure if measure.startswith(words) else f"{words}, {measure}"


def _measure(dim: Dimension) -> str:
    """``resistance (Ω)``."""
    if dim == K.PER_KELVIN:
        return "per kelvin (1/K)"
    return dimension_name(dim)


def _form(dim: Dimension | None) -> str:
    if dim is None:
        return 'a value string such as "85 m" (or a number when dimensionless)'
    if dim == NONE:
        return 'a number (0.5) or a string ("50 %")'
    return f"a value string such as {_example(dim)}"


def _example(dim: Dimension | None) -> str:
    return EXAMPLES.get(dim, '"85 m"') if dim is not None else '"85 m"'  # a length, say


def _elements() -> dict[str, Any]:
    """An element: ``type`` picks the keys it takes (``if``/``then`` on the type)."""
    return {
        "type": "object",
        "required": ["type"],
        "properties": {"type": {"description": "element type", "enum": list(KINDS)}},
        "allOf": [
            {
                "if": {"properties": {"type": {"const": t}}, "required": ["type"]},
                "then": {"$ref": f"#/$defs/element.{t}"},
            }
            for t in KINDS
        ],
    }


def _element(kind: ElementType) -> dict[str, Any]:
    """One element type's keys, as a closed table."""
    keys = K.element_table(kind)
    out = {"description": f"{kind.type}: {kind.words}", **_table(keys)}
    main = kind.main.name
    if kind.has_value and not kind.main.required and "tolerance" in out["properties"]:
        out["dependentRequired"] = {"tolerance": [main]}  # no value given: nothing to vary
    return out
