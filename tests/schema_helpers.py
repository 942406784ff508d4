"""Helpers for the schema tests: TOML data to text, and validation by a reference library.

The schema is checked with ``jsonschema`` (PyPI), a general-purpose
reference implementation of JSON Schema, against the draft 2020-12
meta-schema published at json-schema.org; calcdoc's own code plays no part
in deciding whether a file is valid under the schema.
"""

from __future__ import annotations

import copy
import datetime as dt
import json
from pathlib import Path
from typing import Any

import pytest
import tomli
from jsonschema import Draft202012Validator, FormatChecker

import calcdoc
from calcdoc.errors import ProjectError
from calcdoc.model.schema import project_schema

ROOT = Path(__file__).resolve().parents[1]
DEMOS = sorted((ROOT / "projects").glob("*.toml"))
STARTER = ROOT / "templates" / "starter.toml"
CASE_FILES = sorted(
    p for p in (ROOT / "tests" / "cases").glob("*.toml") if ".expected" not in p.name
)


def toml_text(data: dict[str, Any]) -> str:
    """TOML text of ``data``: one ``key = value`` line per top-level key, inline below.

    Inline tables and arrays of inline tables are valid TOML wherever a
    value may stand, so this writes any data ``tomli`` reads back unchanged.
    """
    return "".join(f"{_key(k)} = {_value(v)}\n" for k, v in data.items())


def _key(k: str) -> str:
    return json.dumps(k, ensure_ascii=False)  # a quoted key: any name, escaped as TOML allows


def _value(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, (int, float)):
        return repr(v)
    if isinstance(v, (dt.date, dt.datetime)):
        return v.isoformat()
    if isinstance(v, list):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{_key(k)} = {_value(x)}" for k, x in v.items()) + " }"
    raise TypeError(type(v))


def as_json(data: Any) -> Any:
    """TOML data as a TOML language server hands it to a JSON Schema: dates as ISO strings."""
    return json.loads(json.dumps(data, default=lambda d: d.isoformat()))


def read(path: Path) -> dict[str, Any]:
    return tomli.loads(path.read_text(encoding="utf-8"))


_VALIDATOR = None


def validator() -> Draft202012Validator:
    global _VALIDATOR
    if _VALIDATOR is None:
        _VALIDATOR = Draft202012Validator(project_schema(), format_checker=FormatChecker())
    return _VALIDATOR


def schema_errors(data: dict[str, Any]) -> list[str]:
    """Every message the reference validator gives, nested ones (under anyOf) included."""
    out: list[str] = []

    def walk(errors) -> None:
        for e in errors:
            out.append(f"{'/'.join(map(str, e.absolute_path))}: {e.message}")
            walk(e.context or ())

    walk(validator().iter_errors(as_json(data)))
    return out


def loader_faults(data: dict[str, Any]) -> list[tuple[str, str]]:
    """The loader's faults as (key path, message); empty when it accepts the project."""
    try:
        calcdoc.loads(toml_text(data), "p.toml")
    except ProjectError as exc:
        return [(f.path, f.message) for f in exc.faults]
    return []


def edited(data: dict[str, Any], path: str, change) -> dict[str, Any]:
    """A deep copy of ``data`` with ``change(table, last_key)`` applied at a dotted path.

    ``cases[0].set`` reaches into arrays of tables.
    """
    data = copy.deepcopy(data)
    *parents, last = path.split(".")
    at: Any = data
    for part in parents:
        name, _, index = part.partition("[")
        at = at[name]
        if index:
            at = at[int(index.rstrip("]"))]
    name, _, index = last.partition("[")
    if index:
        at = at[name]
        name = int(index.rstrip("]"))  # type: ignore[assignment]
    change(at, name)
    return data


def renamed(data: dict[str, Any], path: str, new: str) -> dict[str, Any]:
    """``data`` with the key at ``path`` renamed to ``new``, keeping its value and place."""

    def change(table: dict[str, Any], key: str) -> None:
        items = list(table.items())
        table.clear()
        table.update((new if k == key else k, v) for k, v in items)

    assert _has(data, path), path
    return edited(data, path, change)


def removed(data: dict[str, Any], path: str) -> dict[str, Any]:
    assert _has(data, path), path
    return edited(data, path, lambda table, key: table.pop(key))


def added(data: dict[str, Any], path: str, value: Any) -> dict[str, Any]:
    return edited(data, path, lambda table, key: table.__setitem__(key, value))


def _has(data: dict[str, Any], path: str) -> bool:
    found = []
    edited(data, path, lambda table, key: found.append(key in table))
    return found == [True]


def require_valid(data: dict[str, Any], what: str) -> None:
    errors = schema_errors(data)
    if errors:
        pytest.fail(f"{what}: not valid under the schema: {errors[:5]}")
