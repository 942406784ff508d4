"""The one declaration of the project file (calcdoc.model.keys): the loader and the
schema accept exactly the keys it declares, and refuse any other.

Every declared key, section by section, and every key of every element type,
is put into a project one at a time: the loader must not call it unknown,
and the schema (judged by the reference validator ``jsonschema``, see
tests/schema_helpers.py) must not call it unexpected.  The same key
misspelt must be refused by both.
"""

from __future__ import annotations

import copy
import dataclasses
import datetime as dt

import pytest
from schema_helpers import loader_faults, removed, schema_errors, toml_text

import calcdoc
from calcdoc.model import keys as K
from calcdoc.model.elements import COMMON_KEYS, KINDS, element_keys

# A value of each unit, for the keys an element must have.
VALUES = {
    "Ω": "1 kohm",
    "V": "1 V",
    "A": "1 mA",
    "S": "1 mS",
    "F": "1 uF",
    "H": "1 mH",
    "V/V": "2",
    "A/A": "2",
}


def complete(etype: str) -> dict:
    """An element of this type with every key it must have."""
    kind = KINDS[etype]
    spec = {"type": etype, "nodes": ["in", "gnd"]}
    spec.update({k.name: VALUES[k.unit] for k in kind.keys if k.required})
    if kind.control:
        spec["control"] = ["in", "gnd"] if kind.control == "nodes" else "E_resistor"
    return spec


# One element of each type: the keys are checked one at a time on top of it.
BASE = {"schema": 1, "elements": {f"E_{t}": complete(t) for t in KINDS}}
ENTRY = "in"  # the name given to a named entry (a node of BASE, so limits.nodes reaches its keys)
CONTAINERS = (K.TABLE, K.TABLES, K.TOLERANCE, K.PARAMETER, K.ENTRIES)


def declared_keys():
    """(steps, key): every key of every section, with the tables that lead to it."""
    out = []

    def walk(k: K.Key, steps: tuple) -> None:
        if k.kind == K.ENTRIES and k.entry is not None:
            if k.entry.kind != K.ELEMENT:  # elements: by type, below
                walk(k.entry, (*steps, (ENTRY, k.entry.kind)))
            return
        for child in k.keys:
            out.append((steps, child))
            if child.kind in CONTAINERS:
                walk(child, (*steps, (child.name, child.kind)))

    walk(K.key(""), ())
    return out


def place(data: dict, steps: tuple, name: str, value) -> tuple[dict, str]:
    """``data`` with ``name = value`` in the table reached by ``steps``, and its key path."""
    data = copy.deepcopy(data)
    at, path = data, []
    for step, kind in steps:
        if kind == K.TABLES:
            at = at.setdefault(step, [{}])[0]
            path.append(f"{step}[0]")
        elif kind == K.PARAMETER:  # the loader reads a parameter's other keys once it has a value
            at = at.setdefault(step, {"value": "1"})
            path.append(step)
        else:
            at = at.setdefault(step, {})
            path.append(step)
    at[name] = value
    return data, ".".join([*path, name])


def refused_as_unknown(data: dict, path: str, name: str) -> tuple[bool, bool]:
    """(the loader calls the key unknown, the schema calls it unexpected)."""
    loader = any(
        p == path and ("unknown key" in m or "takes no" in m) for p, m in loader_faults(data)
    )
    schema = any(f"'{name}' was unexpected" in e for e in schema_errors(data))
    return loader, schema


SECTION_KEYS = declared_keys()


@pytest.mark.parametrize(
    ("steps", "key"),
    SECTION_KEYS,
    ids=[".".join([*(s for s, _ in steps), k.name]) for steps, k in SECTION_KEYS],
)
def test_every_declared_key_is_taken_and_its_misspelling_refused(steps, key):
    # the placeholder value may well be refused; what matters is that the key is not
    data, path = place(BASE, steps, key.name, "x")
    assert refused_as_unknown(data, path, key.name) == (False, False), path
    wrong = f"zz{key.name}"
    data, path = place(BASE, steps, wrong, "x")
    assert refused_as_unknown(data, path, wrong) == (True, True), path


def test_the_walk_reaches_every_section():
    reached = {".".join(s for s, _ in steps) for steps, _ in SECTION_KEYS}
    assert reached >= {
        "",
        "document",
        "document.history",
        "signoff",
        "signoff.prepared",
        "circuit",
        "parameters.in",
        "parameters.in.tolerance",
        "limits",
        "limits.derating",
        "limits.nodes.in",
        "limits.across",
        "cases",
        "analysis",
        "sweeps",
        "report",
    }


ELEMENT_CASES = [(t, name) for t, kind in KINDS.items() for name in element_keys(kind)]


@pytest.mark.parametrize(("etype", "name"), ELEMENT_CASES)
def test_every_key_of_every_element_type_is_in_the_schema(etype, name):
    """The element table's keys for each type; the two the schema leaves out on purpose
    (tolerance without a value, series on a value that is not a resistance) are
    refused by the loader whatever their value."""
    kind = KINDS[etype]
    steps = (("elements", K.ENTRIES), (f"E_{etype}", K.ELEMENT))
    data, path = place(BASE, steps, name, "x")
    described = K.names_of(K.element_table(kind))
    if name in described:
        assert refused_as_unknown(data, path, name) == (False, False), path
        return
    left_out = (name == "tolerance" and not kind.has_value) or (
        name == "series" and kind.main.unit != "Ω"
    )
    assert left_out, f"{etype}.{name} is taken by the loader but not described"
    value = "1 %" if name == "tolerance" else "E12"
    data, path = place(BASE, steps, name, value)
    assert any(p == path for p, _ in loader_faults(data)), path
    assert any(f"'{name}' was unexpected" in e for e in schema_errors(data)), path


@pytest.mark.parametrize("etype", list(KINDS))
def test_keys_of_other_types_are_refused(etype):
    """A key another element type takes (a resistor given a gain) is refused by both."""
    kind = KINDS[etype]
    steps = (("elements", K.ENTRIES), (f"E_{etype}", K.ELEMENT))
    others = sorted({n for k in KINDS.values() for n in element_keys(k)} - set(element_keys(kind)))
    assert others  # every type lacks some key another type takes
    for name in others:
        data, path = place(BASE, steps, name, "x")
        assert refused_as_unknown(data, path, name) == (True, True), path


def test_every_rating_key_of_every_type():
    for etype, kind in KINDS.items():
        steps = (("elements", K.ENTRIES), (f"E_{etype}", K.ELEMENT), ("rating", K.TABLE))
        for name in ("power", "voltage", "current", "reverse_voltage"):
            data, path = place(BASE, steps, name, "x")
            expected = (False, False) if name in kind.ratings else (True, True)
            assert refused_as_unknown(data, path, name) == expected, path


def test_common_keys_are_all_described():
    for kind in KINDS.values():
        described = set(K.names_of(K.element_table(kind)))
        assert described >= set(COMMON_KEYS) - {"tolerance", "series"}


# ---------------------------------------------------------------- every key, read
# A project giving every declared key a valid value that is not its default
# (an invented scenario, for this test only).
_COMMON = {
    "tolerance": "2 %",
    "description": "d",
    "source": "s",
    "basis": "b",
    "series": "E24",
    "tcr": "100 ppm/K",
    "derating": {"knee": "70 °C", "zero": "155 °C"},
}
_ELEMENTS = {
    "V1": {"type": "voltage_source", "nodes": ["in", "com"], "value": "10 V"},
    "R1": {"type": "resistor", "nodes": ["in", "out"], "value": "1 kohm"},
    "I1": {"type": "current_source", "nodes": ["com", "out"], "value": "1 mA"},
    "E1": {"type": "vcvs", "nodes": ["e", "com"], "gain": "2", "control": ["out", "com"]},
    "G1": {"type": "vccs", "nodes": ["com", "e"], "gain": "1 mS", "control": ["in", "com"]},
    "H1": {"type": "ccvs", "nodes": ["h", "com"], "gain": "100 ohm", "control": "R1"},
    "F1": {"type": "cccs", "nodes": ["com", "h"], "gain": "2", "control": "R1"},
    "S1": {"type": "switch", "nodes": ["out", "s"], "resistance": "30 mohm", "state": "open"},
    "D1": {
        "type": "diode",
        "nodes": ["s", "com"],
        "forward_voltage": "0.7 V",
        "resistance": "0.5 ohm",
        "breakdown_voltage": "5.1 V",
        "symbol": "led",
    },
    "U1": {
        "type": "opamp",
        "nodes": ["u", "com"],
        "control": ["out", "u"],
        "output_range": ["-13 V", "13 V"],
    },
    "C1": {"type": "capacitor", "nodes": ["in", "com"], "value": "10 uF"},
    "L1": {"type": "inductor", "nodes": ["e", "com"], "value": "10 mH", "resistance": "1 ohm"},
}
RATED = {"power": "0.25 W", "voltage": "50 V", "current": "1 A", "reverse_voltage": "100 V"}
EVERY_KEY = {
    "schema": 1,
    "document": {
        "title": "t",
        "number": "N-1",
        "revision": "B",
        "date": dt.date(2026, 3, 2),
        "project": "p",
        "organisation": "o",
        "purpose": "p",
        "scope": "s",
        "assumptions": ["a"],
        "references": ["r"],
        "conclusion": "c",
        "history": [{"revision": "A", "date": dt.date(2026, 1, 5), "description": "first"}],
    },
    "signoff": {
        "prepared": {"name": "A", "date": dt.date(2026, 3, 2)},
        "checked": {"name": "B", "date": dt.date(2026, 3, 3)},
        "approved": {"name": "C", "date": dt.date(2026, 3, 4)},
        "seal": "stamp.png",
    },
    "circuit": {"reference": "com"},
    "parameters": {
        "len": "40 m",
        "r_per_m": {
            "value": "18 mohm/m",
            "tolerance": {"minus": "5 %", "plus": "3 %"},
            "description": "d",
        },
    },
    "elements": {
        name: {
            **spec,
            **{
                k: copy.deepcopy(v)
                for k, v in _COMMON.items()
                if k in K.names_of(K.element_table(KINDS[spec["type"]]))
            },
            "rating": {r: RATED[r] for r in KINDS[spec["type"]].ratings},
        }
        for name, spec in _ELEMENTS.items()
    },
    "limits": {
        "power_fraction": 0.5,
        "voltage_fraction": "80 %",
        "current_fraction": 0.7,
        "ambient": "40 °C",
        "derating": {"knee": "60 °C", "zero": "150 °C"},
        "nodes": {"out": {"min": "1 V", "max": "9 V"}},
        "across": [
            {"name": "w", "nodes": ["in", "out"], "min": "0 V", "max": "5 V", "description": "d"}
        ],
    },
    "cases": [{"name": "Low", "set": {"V1": "9 V", "S1": "closed"}, "description": "d"}],
    "analysis": {
        "tolerance": "montecarlo",
        "samples": 50,
        "seed": 7,
        "distribution": "normal",
        "sensitivity": ["out"],
        "temperature": "40 °C",
        "reference_temperature": "20 °C",
    },
    "sweeps": [
        {
            "name": "n",
            "target": "len",
            "from": "10 m",
            "to": "100 m",
            "points": 5,
            "scale": "log",
            "outputs": ["out", "R1.power"],
        }
    ],
    "report": {
        "template": "compact",
        "paper": "Letter",
        "significant_figures": 5,
        "conclusion": "c",
    },
}


def paths_of(data, k: K.Key, prefix: str) -> list[tuple[str, K.Key | None]]:
    """(key path, its declaration) for every declared key along ``data``; a declared key
    that ``data`` lacks comes as (path, None)."""
    out: list[tuple[str, K.Key | None]] = []
    keys = k.keys
    if k.kind == K.ELEMENT:
        keys = K.element_table(KINDS[data["type"]])
    for child in keys:
        path = f"{prefix}.{child.name}" if prefix else child.name
        if child.name not in data:
            out.append((path, None))
            continue
        out.append((path, child))
        value = data[child.name]
        if child.kind == K.ENTRIES and child.entry is not None:
            for name, entry in value.items():
                if isinstance(entry, dict):
                    out += paths_of(entry, child.entry, f"{path}.{name}")
        elif child.kind == K.TABLES:
            for i, entry in enumerate(value):
                out += paths_of(entry, child, f"{path}[{i}]")
        elif child.kind in CONTAINERS and isinstance(value, dict):
            out += paths_of(value, child, path)
    return out


EVERY_PATH = paths_of(EVERY_KEY, K.key(""), "")
# Keys not declared as required that others lean on: without them the loader refuses
# the project for another key's sake.
LEANED_ON = {
    "circuit": "the elements' nodes are on com, not on the default reference gnd",
    "circuit.reference": "as above",
    "parameters": "the sweep's target is a parameter",
    "elements.S1.resistance": "the contact's tolerance varies its resistance",
}


def test_the_project_gives_every_declared_key():
    assert [p for p, k in EVERY_PATH if k is None] == []


def _model(data):
    p = calcdoc.loads(toml_text(data), "p.toml")
    return dataclasses.replace(p, source=b"", sha256="")


def test_every_key_valid_loads_and_validates():
    assert loader_faults(EVERY_KEY) == []
    assert schema_errors(EVERY_KEY) == []


@pytest.mark.parametrize(
    ("path", "key"),
    [(p, k) for p, k in EVERY_PATH if p != "schema"],
    ids=[p for p, _ in EVERY_PATH if p != "schema"],
)
def test_the_loader_reads_every_declared_key(path, key):
    """Taken out, each key changes the loaded project, or the loader misses it (a key
    that must be given): the loader reads every key the declaration (so the schema) names."""
    data = removed(EVERY_KEY, path)
    if loader_faults(data):
        assert key.required or path in LEANED_ON, loader_faults(data)
        assert schema_errors(data) or path in LEANED_ON
        return
    assert _model(data) != _model(EVERY_KEY), path
