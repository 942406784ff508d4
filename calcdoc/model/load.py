"""Loading: project-file text to a validated, frozen :class:`Project`.

:func:`parse_project` is pure (text in, model out); :func:`read_project`
reads the file.  Every fault is collected with its key path and reported
together in one :class:`~calcdoc.errors.ProjectError`.
"""

from __future__ import annotations

import datetime as dt
import difflib
import gc
import hashlib
import re
from collections.abc import Callable, Mapping
from dataclasses import replace
from fractions import Fraction
from pathlib import Path
from typing import Any

from calcdoc.errors import Fault, ProjectError
from calcdoc.model import keys as file_keys
from calcdoc.model.elements import KINDS, RATING_KEYS, element_keys
from calcdoc.model.expressions import (
    ExpressionError,
    Literal,
    Node,
    evaluate,
    names_in,
    parse_expression,
)
from calcdoc.model.project import (
    AcrossWindow,
    Analysis,
    Case,
    Derating,
    Document,
    Element,
    HistoryEntry,
    KeyValue,
    Limits,
    NodeWindow,
    Parameter,
    Project,
    Rating,
    ReportSettings,
    Setting,
    Signature,
    Signoff,
    Sweep,
    Tolerance,
)
from calcdoc.model.quantities import (
    AMPERE,
    KELVIN,
    NONE,
    PHYSICAL_MAX,
    VOLT,
    WATT,
    Dimension,
    Number,
    Quantity,
    QuantityError,
    dim_div,
    dimension_name,
    outside_physical_range,
    parse_temperature,
)

try:  # tomli's compiled wheels parse about 2x faster than the standard library's tomllib
    import tomli as tomllib
except ImportError:  # pragma: no cover
    import tomllib  # type: ignore[no-redef]

NAME_RE = re.compile(file_keys.NAME_PATTERN)
OUTPUT_QUANTITIES = ("voltage", "current", "power")
# The allowed keys and enumerations come from the one declaration of the
# project file (calcdoc.model.keys), from which the JSON Schema is also made.
TOLERANCE_METHODS = file_keys.TOLERANCE_METHODS
SERIES = file_keys.SERIES
PAPERS = file_keys.PAPERS
TOP_KEYS = file_keys.names("")
DOCUMENT_KEYS = file_keys.names("document")

# ---------------------------------------------------------------- limits
# Resource caps, stated in the README ("Security and limits") and checked
# before the work they bound.
MAX_FILE_BYTES = 20_000_000
MAX_ELEMENTS = 200_000
MAX_NODES = 200_000
MAX_PARAMETERS = 10_000
MAX_CASES = 200
MAX_SWEEPS = 50
MAX_OUTPUTS = 100  # outputs named in one sensitivity or sweep list
MAX_LINE_CHARS = 12_000  # the package prints the input file verbatim, line by line
MAX_LINES = 1_000_000
MAX_TABLES = 250_000  # [table] and [[array]] headers
_TABLE_HEADER = re.compile(r"^[ \t]*\[", re.MULTILINE)
MAX_LIST_ITEMS = 100  # assumptions, references, history entries
MAX_NAME_CHARS = 100  # element, node and parameter names
#: Monte Carlo: samples x (nodes + elements), the size of the sampled results.
MAX_SAMPLE_VALUES = 10_000_000
#: Characters per text field, by key (``MAX_TEXT_CHARS`` for any other).
MAX_TEXT_CHARS = 200
TEXT_LIMITS = {
    "number": 40,
    "revision": 20,
    "name": 100,
    "description": 500,
    "source": 500,
    "basis": 500,
    "seal": 1_000,
    "template": 1_000,
    "assumptions": 1_000,
    "references": 1_000,
    "purpose": 10_000,
    "scope": 10_000,
    "conclusion": 10_000,
}


class _Faults:
    def __init__(self) -> None:
        self.items: list[Fault] = []
        self.hints_left = 100  # "did you mean" is worth a search for the first faults only

    def hint(self, word: str, choices: Any) -> str:
        if self.hints_left <= 0:
            return ""
        self.hints_left -= 1
        return _hint(word, choices)

    def add(
        self, path: str, message: str, line: int | None = None, column: int | None = None
    ) -> None:
        self.items.append(Fault(path, message, line, column))


def _hint(word: str, choices: Any) -> str:
    if len(word) > MAX_NAME_CHARS or len(choices) > 5_000:
        return ""  # a hint is not worth a quadratic search
    cutoff = 0.5 if len(word) <= 3 else 0.6
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=cutoff)
    return f" (did you mean {close[0]!r}?)" if close else ""


def _keys(table: Mapping[str, Any], allowed: Any, path: str, faults: _Faults) -> None:
    unknown = [key for key in table if key not in allowed]
    if len(unknown) > 10:  # one fault for a flood of keys
        shown = ", ".join(repr(k[:40]) for k in unknown[:5])
        faults.add(path or "(top level)", f"{len(unknown):,} unknown keys: {shown}, ...")
        return
    for key in unknown:
        faults.add(f"{path}.{key}" if path else key, f"unknown key{faults.hint(key, allowed)}")


def _join(path: str, key: str) -> str:
    return f"{path}.{key}" if path else key


def _table(value: Any, path: str, faults: _Faults) -> dict[str, Any]:
    if value is None:
        return {}
    if not isinstance(value, dict):
        faults.add(path, f"expected a table, found {_kind(value)}")
        return {}
    return value


def _kind(value: Any) -> str:
    if isinstance(value, float) and value != value:
        return "not a number (nan)"
    if isinstance(value, float) and value in (float("inf"), float("-inf")):
        return "infinity (inf)"
    return {
        str: "a string",
        bool: "true/false",
        int: "an integer",
        float: "a number",
        list: "an array",
        dict: "a table",
        dt.date: "a date",
        dt.datetime: "a date-time",
    }.get(type(value), type(value).__name__)


def _text(table: Mapping[str, Any], key: str, path: str, faults: _Faults, default: str = "") -> str:
    value = table.get(key, default)
    if not isinstance(value, str):
        faults.add(_join(path, key), f"expected a string, found {_kind(value)}")
        return default
    return value if _short_enough(value, key, _join(path, key), faults) else default


def _short_enough(value: str, key: str, path: str, faults: _Faults) -> bool:
    limit = TEXT_LIMITS.get(key, MAX_TEXT_CHARS)
    if len(value) > limit:
        faults.add(path, f"the text is {len(value):,} characters long; the limit is {limit:,}")
        return False
    return True


def _texts(table: Mapping[str, Any], key: str, path: str, faults: _Faults) -> tuple[str, ...]:
    value = table.get(key, [])
    if isinstance(value, str):
        value = [value]
    if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
        faults.add(_join(path, key), "expected an array of strings")
        return ()
    if len(value) > MAX_LIST_ITEMS:
        faults.add(_join(path, key), f"{len(value):,} entries; the limit is {MAX_LIST_ITEMS}")
        return ()
    ok = [_short_enough(v, key, f"{_join(path, key)}[{i}]", faults) for i, v in enumerate(value)]
    return tuple(value) if all(ok) else ()


def _date(table: Mapping[str, Any], key: str, path: str, faults: _Faults) -> dt.date | None:
    value = table.get(key)
    if value is None:
        return None
    if isinstance(value, dt.datetime):
        return value.date()
    if isinstance(value, dt.date):
        return value
    if isinstance(value, str):
        try:
            return dt.date.fromisoformat(value)
        except ValueError:
            pass
    faults.add(_join(path, key), "expected a date such as 2026-11-20")
    return None


def _number(value: Any) -> Fraction | None:
    if isinstance(value, bool):
        return None
    if isinstance(value, int):
        return Fraction(value)
    if isinstance(value, float):
        if value != value or value in (float("inf"), float("-inf")):
            return None
        return Fraction(repr(value))
    return None


def _representable(q: Quantity, path: str, faults: _Faults) -> bool:
    """The value must be one a physical quantity can have (1e-30 to 1e30 in SI, or zero)."""
    why = outside_physical_range(q.magnitude)
    if why:
        faults.add(path, why)
        return False
    return True


def _quantity(value: Any, dim: Dimension, path: str, faults: _Faults) -> Quantity | None:
    """A constant quantity (no parameters) of the given dimension."""
    if dim == NONE:
        num = _number(value)
        if num is not None:
            return Quantity(num, NONE)
    if not isinstance(value, str):
        faults.add(
            path, f"expected a string with units, such as {_example(dim)}, found {_kind(value)}"
        )
        return None
    try:
        q = evaluate(parse_expression(value), {})
    except (ExpressionError, QuantityError) as exc:
        faults.add(path, str(exc))
        return None
    if q.dimension != dim:
        faults.add(
            path,
            f"expected {dimension_name(dim)}, found {dimension_name(q.dimension)} in {value!r}",
        )
        return None
    return q if _representable(q, path, faults) else None


def _example(dim: Dimension) -> str:
    return {VOLT: '"24 V"', AMPERE: '"10 mA"', WATT: '"0.25 W"', NONE: '"1 %"'}.get(
        dim, '"4.7 kohm"'
    )


def _fraction_value(
    value: Any, path: str, faults: _Faults, lo: Fraction, hi: Fraction
) -> Fraction | None:
    q = _quantity(value, NONE, path, faults)
    if q is None:
        return None
    f = Fraction(q.magnitude)
    if not lo < f <= hi:
        faults.add(
            path,
            f"must be greater than {float(lo):g} and at most {float(hi):g}, found {float(f):g}",
        )
        return None
    return f


def _temperature(value: Any, path: str, faults: _Faults) -> Fraction | None:
    if value is None:
        return None
    try:
        t = parse_temperature(value)
    except QuantityError as exc:
        faults.add(path, str(exc))
        return None
    if t < Fraction("-273.15"):
        faults.add(path, "below absolute zero")
        return None
    if t > PHYSICAL_MAX:
        faults.add(path, "the temperature is too high to be a physical value")
        return None
    return t


def _tolerance(value: Any, path: str, faults: _Faults) -> Tolerance | None:
    if value is None:
        return None
    if isinstance(value, dict):
        _keys(value, file_keys.names_of(file_keys.TOLERANCE_KEYS), path, faults)
        if "minus" not in value or "plus" not in value:
            faults.add(path, "an asymmetric tolerance needs both 'minus' and 'plus'")
            return None
        minus = _quantity(value["minus"], NONE, _join(path, "minus"), faults)
        plus = _quantity(value["plus"], NONE, _join(path, "plus"), faults)
        text = f"−{value['minus']} / +{value['plus']}"
    else:
        minus = plus = _quantity(value, NONE, path, faults)
        text = f"±{value}" if isinstance(value, str) else f"±{value}"
    if minus is None or plus is None:
        return None
    m, p = Fraction(minus.magnitude), Fraction(plus.magnitude)
    if m < 0 or p < 0:
        faults.add(path, 'a tolerance is given as a positive share, e.g. "1 %"')
        return None
    if m >= 1:
        faults.add(path, "a minus tolerance of 100 % or more would make the value zero or negative")
        return None
    return Tolerance(m, p, text)


def _derating(value: Any, path: str, faults: _Faults) -> Derating | None:
    if value is None:
        return None
    table = _table(value, path, faults)
    _keys(table, file_keys.names_of(file_keys.DERATING_KEYS), path, faults)
    knee = _temperature(table.get("knee"), _join(path, "knee"), faults)
    zero = _temperature(table.get("zero"), _join(path, "zero"), faults)
    if knee is None or zero is None:
        if "knee" not in table or "zero" not in table:
            faults.add(
                path, "a derating curve needs 'knee' (full rating up to) and 'zero' (no rating at)"
            )
        return None
    if zero <= knee:
        faults.add(_join(path, "zero"), "the zero-rating temperature must be above the knee")
        return None
    return Derating(knee, zero)


def _name_ok(name: str, path: str, faults: _Faults, what: str) -> bool:
    if isinstance(name, str) and len(name) > MAX_NAME_CHARS:
        faults.add(path[:60] + "...", f"a {what} name is at most {MAX_NAME_CHARS} characters long")
        return False
    if not isinstance(name, str) or not NAME_RE.fullmatch(name):
        faults.add(path, f"{what} name {name!r} may hold only letters, digits, '_', '-' and '.'")
        return False
    return True


# ---------------------------------------------------------------- sections


def _document(raw: Any, faults: _Faults) -> Document:
    t = _table(raw, "document", faults)
    _keys(t, DOCUMENT_KEYS, "document", faults)
    history = []
    hist = t.get("history", [])
    if not isinstance(hist, list):
        faults.add("document.history", "expected an array of tables ([[document.history]])")
        hist = []
    elif len(hist) > MAX_LIST_ITEMS:
        faults.add("document.history", f"{len(hist):,} entries; the limit is {MAX_LIST_ITEMS}")
        hist = []
    for i, h in enumerate(hist):
        path = f"document.history[{i}]"
        h = _table(h, path, faults)
        _keys(h, file_keys.names("document.history"), path, faults)
        if "revision" not in h:
            faults.add(path, "missing key 'revision'")
        history.append(
            HistoryEntry(
                _text(h, "revision", path, faults) if "revision" in h else "",
                _date(h, "date", path, faults),
                _text(h, "description", path, faults),
            )
        )
    return Document(
        title=_text(t, "title", "document", faults, "Untitled calculation"),
        number=_text(t, "number", "document", faults),
        revision=_text(t, "revision", "document", faults),
        date=_date(t, "date", "document", faults),
        project=_text(t, "project", "document", faults),
        organisation=_text(t, "organisation", "document", faults),
        purpose=_text(t, "purpose", "document", faults),
        scope=_text(t, "scope", "document", faults),
        assumptions=_texts(t, "assumptions", "document", faults),
        references=_texts(t, "references", "document", faults),
        history=tuple(history),
        conclusion=_text(t, "conclusion", "document", faults),
    )


def _signoff(raw: Any, faults: _Faults) -> Signoff:
    t = _table(raw, "signoff", faults)
    _keys(t, file_keys.names("signoff"), "signoff", faults)
    roles: dict[str, Signature | None] = {}
    for role in file_keys.ROLES:
        if role not in t:
            roles[role] = None
            continue
        path = f"signoff.{role}"
        r = _table(t[role], path, faults)
        _keys(r, file_keys.names(path), path, faults)
        name = _text(r, "name", path, faults)
        if not name.strip():
            faults.add(path, "a sign-off needs a 'name' (leave the role out while it is open)")
        roles[role] = Signature(name, _date(r, "date", path, faults))
    seal = _text(t, "seal", "signoff", faults) if "seal" in t else None
    return Signoff(seal=seal, **roles)


def _parameters(raw: Any, faults: _Faults) -> tuple[dict[str, Quantity], list[Parameter]]:
    t = _table(raw, "parameters", faults)
    entries: dict[str, tuple[str, Node, Any, str]] = {}
    for name, spec in t.items():
        path = f"parameters.{name}"
        if not _name_ok(name, path, faults, "parameter"):
            continue
        tol_raw, desc = None, ""
        if isinstance(spec, dict):
            _keys(spec, file_keys.names("parameters.*"), path, faults)
            desc = _text(spec, "description", path, faults)
            tol_raw = spec.get("tolerance")
            if "value" not in spec:
                faults.add(path, "missing key 'value'")
                continue
            spec, path = spec["value"], f"{path}.value"
        if isinstance(spec, float) and _number(spec) is None:
            faults.add(path, f"{_kind(spec)} is not a value a physical quantity can have")
            continue
        if isinstance(spec, (int, float)) and not isinstance(spec, bool):
            spec = repr(spec)
        if not isinstance(spec, str):
            faults.add(path, f'expected a value string such as "85 m", found {_kind(spec)}')
            continue
        try:
            expr = parse_expression(spec)
        except (ExpressionError, QuantityError) as exc:
            faults.add(path, str(exc))
            continue
        entries[name] = (spec, expr, tol_raw, desc)

    values = _resolve_parameters(entries, faults)
    params = []
    for name, (text, expr, tol_raw, desc) in entries.items():
        if name in values:
            tol = _tolerance(tol_raw, f"parameters.{name}.tolerance", faults)
            params.append(Parameter(name, text, expr, values[name], tol, desc))
    return values, params


def _resolve_parameters(entries: Mapping[str, tuple[str, Node, Any, str]], faults: _Faults):
    """Evaluate parameters in dependency order: an iterative depth-first walk.

    No recursion per parameter, so thousands of parameters defined in any
    order resolve without exhausting the interpreter's stack.
    """
    values: dict[str, Quantity] = {}
    state: dict[str, int] = {}  # 1 on the current chain, 2 done
    failed: set[str] = set()

    def deps(name: str):
        return iter(sorted(names_in(entries[name][1])))

    for root in entries:
        if state.get(root):
            continue
        state[root] = 1
        chain, pending = [root], [deps(root)]
        while chain:
            name = chain[-1]
            dep = next(pending[-1], None)
            if dep is None:  # every dependency seen: evaluate this one
                chain.pop()
                pending.pop()
                state[name] = 2
                if name not in failed:
                    _evaluate_parameter(name, entries[name][1], values, faults, failed)
                if chain and name in failed:
                    failed.add(chain[-1])
            elif dep not in entries:
                faults.add(
                    f"parameters.{name}", f"unknown parameter {dep!r}{faults.hint(dep, entries)}"
                )
                failed.add(name)
            elif state.get(dep) == 2:
                if dep in failed:
                    failed.add(name)
            elif state.get(dep) == 1:
                cycle = [*chain[chain.index(dep) :], dep]
                faults.add(
                    f"parameters.{dep}",
                    "parameters refer to each other in a cycle: " + " → ".join(cycle),
                )
                failed.update(cycle)
            else:
                state[dep] = 1
                chain.append(dep)
                pending.append(deps(dep))
    return values


def _evaluate_parameter(
    name: str, expr: Node, values: dict[str, Quantity], faults: _Faults, failed: set[str]
) -> None:
    try:
        q = evaluate(expr, values)
    except ExpressionError as exc:
        faults.add(f"parameters.{name}", str(exc))
        failed.add(name)
        return
    if _representable(q, f"parameters.{name}", faults):
        values[name] = q
    else:
        failed.add(name)


def _value_expr(value: Any, path: str, faults: _Faults, dim: Dimension) -> tuple[str, Node] | None:
    if isinstance(value, float) and _number(value) is None:
        faults.add(path, f"{_kind(value)} is not a value a physical quantity can have")
        return None
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        if dim != NONE:
            faults.add(path, f"write the value with its unit, such as {_example(dim)}")
            return None
        value = repr(value)
    if not isinstance(value, str):
        faults.add(path, f"expected a value string such as {_example(dim)}, found {_kind(value)}")
        return None
    try:
        return value, parse_expression(value)
    except (ExpressionError, QuantityError) as exc:
        faults.add(path, str(exc))
        return None


def _resolved(
    text_expr: tuple[str, Node],
    path: str,
    faults: _Faults,
    dim: Dimension,
    params: Mapping[str, Quantity],
    known_params: Any,
) -> Quantity | None:
    text, expr = text_expr
    if isinstance(expr, Literal):
        q = expr.value
        if q.dimension != dim:
            faults.add(
                path,
                f"expected {dimension_name(dim)}, found {dimension_name(q.dimension)} in {text!r}",
            )
            return None
        return q if _representable(q, path, faults) else None
    for dep in names_in(expr):
        if dep not in params:
            if dep in known_params:
                return None  # the parameter's own fault is already reported
            faults.add(path, f"unknown parameter {dep!r}{faults.hint(dep, known_params)}")
            return None
    try:
        q = evaluate(expr, params)
    except ExpressionError as exc:
        faults.add(path, str(exc))
        return None
    if q.dimension != dim:
        faults.add(
            path, f"expected {dimension_name(dim)}, found {dimension_name(q.dimension)} in {text!r}"
        )
        return None
    return q if _representable(q, path, faults) else None


def _node_ok(name: Any, good: set[str]) -> bool:
    if name in good:
        return True
    if isinstance(name, str) and NAME_RE.fullmatch(name):
        good.add(name)
        return True
    return False


def _elements(
    raw: Any, faults: _Faults, params: Mapping[str, Quantity], param_names: Any
) -> list[Element]:
    """Every ``[elements.NAME]`` table, validated against the element table."""
    if not isinstance(raw, dict):
        _table(raw, "elements", faults)
        return []
    if not raw:
        faults.add("elements", "the circuit has no elements")
    out: list[Element] = []
    kinds_list = list(KINDS)
    allowed_of = {t: frozenset(element_keys(k)) for t, k in KINDS.items()}
    # the common plain element (type, nodes and its one number) takes a short path
    plain_keys = {
        t: frozenset(("type", "nodes", k.main.name))
        for t, k in KINDS.items()
        if len(k.keys) == 1 and not k.control and not k.states
    }
    literal: dict[tuple[str, Dimension], tuple[Quantity, Node]] = {}
    good_nodes: set[str] = set()
    name_ok = NAME_RE.fullmatch
    for name, spec in raw.items():
        if isinstance(spec, dict) and len(name) <= MAX_NAME_CHARS and name_ok(name):
            etype = spec.get("type")
            plain = plain_keys.get(etype) if isinstance(etype, str) else None
            if plain is not None and spec.keys() == plain:
                e = _plain_element(name, spec, etype, literal, good_nodes)
                if e is not None:
                    out.append(e)
                    continue
        path = f"elements.{name}"
        if not _name_ok(name, path, faults, "element"):
            continue
        if not isinstance(spec, dict):
            faults.add(path, f"expected a table, found {_kind(spec)}")
            continue
        etype = spec.get("type")
        if etype is None:
            faults.add(path, "missing key 'type' (one of: " + ", ".join(KINDS) + ")")
            continue
        kind = KINDS.get(etype) if isinstance(etype, str) else None
        if kind is None:
            faults.add(
                f"{path}.type", f"unknown element type {etype!r}{_hint(str(etype), kinds_list)}"
            )
            continue
        allowed = allowed_of[etype]
        if not allowed.issuperset(spec):
            _element_keys(spec, kind, allowed, path, faults)
        element = _element(name, spec, kind, path, faults, params, param_names, good_nodes)
        if element is not None:
            out.append(element)
    return out


def _plain_element(name: str, spec: dict, etype: str, literal: dict, good_nodes: set[str]):
    """An element with only ``type``, ``nodes`` and a literal main value, when all is well.

    Returns None whenever anything needs a closer look (the full path then
    reports it); the literal values seen are kept in ``literal``.
    """
    nodes = spec["nodes"]
    if not (isinstance(nodes, list) and len(nodes) == 2):
        return None
    a, b = nodes
    if a == b or not (_node_ok(a, good_nodes) and _node_ok(b, good_nodes)):
        return None
    kind = KINDS[etype]
    key = kind.main
    text = spec[key.name]
    if not isinstance(text, str):
        return None
    q = literal.get((text, key.dimension))
    if q is None:
        scratch = _Faults()
        vexpr = _value_expr(text, "", scratch, key.dimension)
        if vexpr is None or not isinstance(vexpr[1], Literal):
            return None
        q = _resolved(vexpr, "", scratch, key.dimension, {}, ())
        if q is None or scratch.items:
            return None
        literal[(text, key.dimension)] = q = (q, vexpr[1])
    quantity, expr = q
    return Element(name, etype, (a, b), quantity.magnitude, text, expr)


def _element_keys(spec, kind, allowed, path: str, faults: _Faults) -> None:
    """Name each key the type does not take, with a hint."""
    others = {k.name for t in KINDS.values() for k in t.keys} | {"control", "state"}
    for key in spec:
        if key in allowed:
            continue
        if key in others:
            takes = ", ".join(f"'{k.name}'" for k in kind.keys)
            faults.add(f"{path}.{key}", f"a {kind.type} takes no '{key}' (its numbers: {takes})")
        else:
            faults.add(f"{path}.{key}", f"unknown key{_hint(key, sorted(allowed))}")


def _element(
    name: str, spec: dict, kind, path: str, faults: _Faults, params, param_names, good_nodes
) -> Element | None:
    etype = kind.type
    nodes = spec.get("nodes")
    ok = True
    if (
        not isinstance(nodes, list)
        or len(nodes) != 2
        or not (_node_ok(nodes[0], good_nodes) and _node_ok(nodes[1], good_nodes))
    ):
        words = " and ".join(kind.terminals)
        faults.add(f"{path}.nodes", f'expected two node names ({words}), such as ["bus", "gnd"]')
        ok = False
    elif nodes[0] == nodes[1]:
        faults.add(f"{path}.nodes", f"both terminals are on node {nodes[0]!r}")
        ok = False
    numbers: dict[str, tuple[Quantity, str, Node]] = {}
    for key in kind.keys:
        kpath = f"{path}.{key.name}"
        if key.name not in spec:
            if key.required:
                faults.add(path, f"missing key '{key.name}' ({key.words or key.name})")
                ok = False
            continue
        vexpr = _value_expr(spec[key.name], kpath, faults, key.dimension)
        value = (
            _resolved(vexpr, kpath, faults, key.dimension, params, param_names) if vexpr else None
        )
        if value is None or vexpr is None:
            ok = False
            continue
        numbers[key.name] = (value, vexpr[0], vexpr[1])
    control_nodes = control_element = None
    if kind.control is not None:
        c = spec.get("control")
        if c is None:
            faults.add(path, "missing key 'control'")
            ok = False
        elif kind.control == "nodes":
            if not isinstance(c, list) or len(c) != 2 or not all(isinstance(n, str) for n in c):
                faults.add(
                    f"{path}.control", 'expected the controlling node pair, such as ["in", "gnd"]'
                )
                ok = False
            elif c[0] == c[1]:
                faults.add(f"{path}.control", f"both control terminals are on node {c[0]!r}")
                ok = False
            else:
                control_nodes = (c[0], c[1])
        elif not isinstance(c, str):
            faults.add(
                f"{path}.control",
                "expected the name of the element whose current controls this one",
            )
            ok = False
        elif c == name:
            faults.add(f"{path}.control", "an element cannot be controlled by its own current")
            ok = False
        else:
            control_element = c
    state = None
    if kind.settable:
        state = spec.get("state", kind.settable[0])
        if state not in kind.settable:
            faults.add(
                f"{path}.state",
                f"expected one of {', '.join(kind.settable)}{_hint(str(state), kind.settable)}",
            )
            ok = False
    windows = []
    for w in kind.windows:
        if w.name in spec:
            got = _window(spec[w.name], w, f"{path}.{w.name}", faults)
            if got is None:
                ok = False
            else:
                windows.append((w.name, *got))
    symbol = None
    if "symbol" in spec:
        if spec["symbol"] not in kind.drawings:
            faults.add(
                f"{path}.symbol",
                f"expected one of {', '.join(kind.drawings)}"
                f"{_hint(str(spec['symbol']), kind.drawings)}",
            )
        else:
            symbol = spec["symbol"]
    rating = Rating()
    if "rating" in spec:
        rpath = f"{path}.rating"
        r = _table(spec["rating"], rpath, faults)
        _keys(r, kind.ratings, rpath, faults)
        got = {}
        for q in kind.ratings:
            if q in r:
                v = _quantity(r[q], RATING_KEYS[q].dimension, f"{rpath}.{q}", faults)
                if v is not None and v.magnitude <= 0:
                    faults.add(f"{rpath}.{q}", "a rating must be positive")
                elif v is not None:
                    got[q] = v.magnitude
        rating = Rating(**got)
    tol = _tolerance(spec.get("tolerance"), f"{path}.tolerance", faults)
    series = None
    if "series" in spec:
        s = spec["series"]
        if s not in SERIES:
            faults.add(
                f"{path}.series", f"expected one of {', '.join(SERIES)}{_hint(str(s), SERIES)}"
            )
        elif kind.main.unit != "Ω":
            faults.add(f"{path}.series", "a preferred-value series applies to resistances only")
        else:
            series = s
    tcr = None
    if "tcr" in spec:
        q = _quantity(spec["tcr"], dim_div(NONE, KELVIN), f"{path}.tcr", faults)
        tcr = q.magnitude if q else None
    derating = _derating(spec.get("derating"), f"{path}.derating", faults)
    desc = _text(spec, "description", path, faults)
    source = _text(spec, "source", path, faults)
    basis = _text(spec, "basis", path, faults)
    main = kind.main.name
    if not ok or (main not in numbers and kind.main.required):
        return None
    if main in numbers:
        value, text, expr = numbers[main]
    else:  # an optional main value left out: a placeholder the laws drop
        if tol is not None:
            faults.add(f"{path}.tolerance", _no_value(kind))
        value = Quantity(Fraction(0), kind.main.dimension)
        text, expr = "", Literal(value, "")
    more = tuple(KeyValue(k, q.magnitude, t, x) for k, (q, t, x) in numbers.items() if k != main)
    return Element(
        name=name,
        type=etype,
        nodes=(nodes[0], nodes[1]),
        value=value.magnitude,
        value_text=text,
        value_expr=expr,
        control_nodes=control_nodes,
        control_element=control_element,
        tolerance=tol,
        rating=rating,
        description=desc,
        source=source,
        basis=basis,
        series=series,
        tcr=tcr,
        derating=derating,
        more=more,
        state=state,
        main_given=main in numbers,
        windows=tuple(windows),
        symbol=symbol,
    )


def _no_value(kind) -> str:
    """Why an element whose main value is left out cannot be varied."""
    if not kind.has_value:
        return f"a {kind.type} has no value to vary"
    return f"no '{kind.main.name}' is given ({kind.main.words} taken as ideal), so it cannot vary"


def _window(value: Any, key, path: str, faults: _Faults) -> tuple[Number, Number] | None:
    """A ``[low, high]`` pair of quantities of the key's dimension."""
    if not isinstance(value, list) or len(value) != 2:
        faults.add(path, f'expected [low, high], such as ["-13 {key.unit}", "13 {key.unit}"]')
        return None
    lo = _quantity(value[0], key.dimension, f"{path}[0]", faults)
    hi = _quantity(value[1], key.dimension, f"{path}[1]", faults)
    if lo is None or hi is None:
        return None
    if lo.magnitude >= hi.magnitude:
        faults.add(path, "the low end must be below the high end")
        return None
    return lo.magnitude, hi.magnitude


def _limits(raw: Any, faults: _Faults, nodes: set[str], declared_nodes: Any = ()) -> Limits:
    t = _table(raw, "limits", faults)
    _keys(t, file_keys.names("limits"), "limits", faults)
    fr = {}
    for key in file_keys.LIMIT_FRACTIONS:
        if key in t:
            v = _fraction_value(t[key], f"limits.{key}", faults, Fraction(0), Fraction(1))
            if v is not None:
                fr[key] = v
    windows = []
    for node, spec in _table(t.get("nodes"), "limits.nodes", faults).items():
        path = f"limits.nodes.{node}"
        if node not in nodes:
            if node not in declared_nodes:
                faults.add(path, f"no such node{faults.hint(node, nodes)}")
            continue
        spec = _table(spec, path, faults)
        _keys(spec, file_keys.names("limits.nodes.*"), path, faults)
        lo = _quantity(spec["min"], VOLT, f"{path}.min", faults) if "min" in spec else None
        hi = _quantity(spec["max"], VOLT, f"{path}.max", faults) if "max" in spec else None
        if "min" not in spec and "max" not in spec:
            faults.add(path, "give 'min', 'max' or both")
        if lo is not None and hi is not None and lo.magnitude > hi.magnitude:
            faults.add(path, "'min' is above 'max'")
        windows.append(NodeWindow(node, lo.magnitude if lo else None, hi.magnitude if hi else None))
    return Limits(
        ambient=_temperature(t.get("ambient"), "limits.ambient", faults),
        derating=_derating(t.get("derating"), "limits.derating", faults),
        nodes=tuple(windows),
        across=_across(t.get("across"), faults, nodes, declared_nodes),
        **fr,
    )


def _across(raw: Any, faults: _Faults, nodes: set[str], declared_nodes: Any) -> tuple:
    """``[[limits.across]]``: windows on V(a) − V(b)."""
    if raw is None:
        return ()
    if not isinstance(raw, list):
        faults.add("limits.across", "expected an array of tables ([[limits.across]])")
        return ()
    out, seen = [], set()
    for i, spec in enumerate(raw):
        path = f"limits.across[{i}]"
        spec = _table(spec, path, faults)
        _keys(spec, file_keys.names("limits.across"), path, faults)
        name = spec.get("name")
        if not isinstance(name, str) or not NAME_RE.fullmatch(name):
            faults.add(
                f"{path}.name", "every window needs a name of letters, digits, '_', '-', '.'"
            )
            continue
        if name in seen:
            faults.add(f"{path}.name", f"window name {name!r} is used twice")
            continue
        seen.add(name)
        pair = spec.get("nodes")
        if (
            not isinstance(pair, list)
            or len(pair) != 2
            or not all(isinstance(n, str) for n in pair)
        ):
            faults.add(f"{path}.nodes", 'expected two node names, such as ["tx_plus", "tx_minus"]')
            continue
        bad = [n for n in pair if n not in nodes]
        for n in bad:
            if n not in declared_nodes:
                faults.add(f"{path}.nodes", f"no such node {n!r}{_hint(n, nodes)}")
        if bad:
            continue
        if pair[0] == pair[1]:
            faults.add(f"{path}.nodes", f"both ends are node {pair[0]!r}")
            continue
        lo = _quantity(spec["min"], VOLT, f"{path}.min", faults) if "min" in spec else None
        hi = _quantity(spec["max"], VOLT, f"{path}.max", faults) if "max" in spec else None
        if "min" not in spec and "max" not in spec:
            faults.add(path, "give 'min', 'max' or both")
            continue
        if lo is not None and hi is not None and lo.magnitude > hi.magnitude:
            faults.add(path, "'min' is above 'max'")
            continue
        out.append(
            AcrossWindow(
                name,
                (pair[0], pair[1]),
                lo.magnitude if lo else None,
                hi.magnitude if hi else None,
                _text(spec, "description", path, faults),
            )
        )
    return tuple(out)


def _cases(
    raw: Any,
    faults: _Faults,
    elements: Mapping[str, Element],
    params: Mapping[str, Parameter],
    declared: Any = (),
) -> list[Case]:
    if raw is None:
        return []
    if not isinstance(raw, list):
        faults.add("cases", "expected an array of tables ([[cases]])")
        return []
    out, seen = [], {"nominal"}
    targets = [*elements, *params]
    for i, spec in enumerate(raw):
        path = f"cases[{i}]"
        spec = _table(spec, path, faults)
        _keys(spec, file_keys.names("cases"), path, faults)
        name = _text(spec, "name", path, faults)
        if not name.strip():
            faults.add(f"{path}.name", "every case needs a name")
        elif name in seen:
            faults.add(
                f"{path}.name", f"case name {name!r} is used twice (or is the reserved 'nominal')"
            )
        seen.add(name)
        settings = []
        for target, value in _table(spec.get("set"), f"{path}.set", faults).items():
            spath = f"{path}.set.{target}"
            if target in elements:
                e = elements[target]
                if e.kind.settable and isinstance(value, str) and value in e.kind.settable:
                    settings.append(Setting(target, value, None, NONE, state=True))
                    continue
                if e.kind.searched and isinstance(value, str) and value in e.kind.states:
                    faults.add(spath, f"the state of a {e.type} is found by the solver, not set")
                    continue
                if not e.main_given:
                    words = f"one of {', '.join(e.kind.settable)}" if e.kind.settable else ""
                    faults.add(
                        spath, _no_value(e.kind) + (f"; a case may set {words}" if words else "")
                    )
                    continue
                dim = e.kind.main.dimension
            elif target in params:
                dim = params[target].value.dimension
            else:
                if target not in declared:
                    faults.add(
                        spath, f"no element or parameter of that name{faults.hint(target, targets)}"
                    )
                continue
            ve = _value_expr(value, spath, faults, dim)
            if ve is None:
                continue
            if target in params and target in names_in(ve[1]):
                faults.add(spath, "a case cannot define a parameter in terms of itself")
                continue
            q = _resolved(ve, spath, faults, dim, {k: p.value for k, p in params.items()}, params)
            if q is not None:
                settings.append(Setting(target, ve[0], ve[1], dim))
        out.append(Case(name, tuple(settings), _text(spec, "description", path, faults)))
    return out


def parse_output(spec: str) -> tuple[str, str]:
    """Split an output name: ``"field"`` → (node, "voltage"); ``"Rs.power"`` → (element, "power")."""
    if "." in spec:
        head, _, q = spec.rpartition(".")
        if q in OUTPUT_QUANTITIES:
            return head, q
    return spec, "node"


def _outputs(
    value: Any, path: str, faults: _Faults, nodes: set[str], elements: Mapping[str, Element]
) -> tuple[str, ...]:
    if value is None:
        return ()
    if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
        faults.add(path, 'expected an array of output names, such as ["field", "Rs.power"]')
        return ()
    if len(value) > MAX_OUTPUTS:
        faults.add(path, f"{len(value):,} outputs; the limit is {MAX_OUTPUTS}")
        return ()
    good = []
    for i, v in enumerate(value):
        subject, q = parse_output(v)
        if (q == "node" and subject in nodes) or (q != "node" and subject in elements):
            good.append(v)
        else:
            hint = ""
            if faults.hints_left > 0:
                hint = faults.hint(v, [*nodes, *(f"{e}.power" for e in elements)])
            faults.add(
                f"{path}[{i}]", f"{v!r} is neither a node nor ELEMENT.voltage/current/power{hint}"
            )
    return tuple(good)


def _analysis(
    raw: Any, faults: _Faults, nodes: set[str], elements: Mapping[str, Element]
) -> Analysis:
    t = _table(raw, "analysis", faults)
    _keys(t, file_keys.names("analysis"), "analysis", faults)
    kw: dict[str, Any] = {}
    method = t.get("tolerance", "none")
    if method not in TOLERANCE_METHODS:
        faults.add(
            "analysis.tolerance",
            f"expected one of {', '.join(TOLERANCE_METHODS)}{faults.hint(str(method), TOLERANCE_METHODS)}",
        )
    else:
        kw["tolerance"] = method
    for key in ("samples", "seed"):
        lo, hi = file_keys.span(f"analysis.{key}")
        if key in t:
            v = t[key]
            if not isinstance(v, int) or isinstance(v, bool) or not lo <= v <= hi:
                faults.add(f"analysis.{key}", f"expected a whole number from {lo} to {hi}")
            else:
                kw[key] = v
    if "distribution" in t:
        if t["distribution"] not in file_keys.DISTRIBUTIONS:
            faults.add("analysis.distribution", 'expected "uniform" or "normal"')
        else:
            kw["distribution"] = t["distribution"]
    kw["sensitivity"] = _outputs(
        t.get("sensitivity"), "analysis.sensitivity", faults, nodes, elements
    )
    if "temperature" in t:
        kw["temperature"] = _temperature(t["temperature"], "analysis.temperature", faults)
    if "reference_temperature" in t:
        rt = _temperature(t["reference_temperature"], "analysis.reference_temperature", faults)
        if rt is not None:
            kw["reference_temperature"] = rt
    return Analysis(**kw)


def _sweeps(
    raw: Any,
    faults: _Faults,
    nodes: set[str],
    elements: Mapping[str, Element],
    params: Mapping[str, Parameter],
) -> list[Sweep]:
    if raw is None:
        return []
    if not isinstance(raw, list):
        faults.add("sweeps", "expected an array of tables ([[sweeps]])")
        return []
    out = []
    for i, spec in enumerate(raw):
        path = f"sweeps[{i}]"
        spec = _table(spec, path, faults)
        _keys(spec, file_keys.names("sweeps"), path, faults)
        target = spec.get("target")
        if target in elements and not elements[target].main_given:
            faults.add(f"{path}.target", _no_value(elements[target].kind))
            continue
        if target in elements:
            dim = elements[target].kind.main.dimension
        elif target in params:
            dim = params[target].value.dimension
        else:
            faults.add(
                f"{path}.target",
                f"no element or parameter of that name{faults.hint(str(target), [*elements, *params])}",
            )
            continue
        missing = [k for k in ("from", "to", "outputs") if k not in spec]
        if missing:
            faults.add(path, "missing key " + ", ".join(repr(m) for m in missing))
            continue
        start = _quantity(spec["from"], dim, f"{path}.from", faults)
        stop = _quantity(spec["to"], dim, f"{path}.to", faults)
        points = spec.get("points", 41)
        lo, hi = file_keys.span("sweeps.points")
        if not isinstance(points, int) or isinstance(points, bool) or not lo <= points <= hi:
            faults.add(f"{path}.points", f"expected a whole number from {lo} to {hi}")
            continue
        scale = spec.get("scale", "linear")
        if scale not in file_keys.SCALES:
            faults.add(f"{path}.scale", 'expected "linear" or "log"')
            continue
        outputs = _outputs(spec.get("outputs"), f"{path}.outputs", faults, nodes, elements)
        if not outputs:
            continue
        if start is None or stop is None:
            continue
        if start.magnitude == stop.magnitude:
            faults.add(f"{path}.to", "the range is empty")
            continue
        if scale == "log" and (start.magnitude <= 0 or stop.magnitude <= 0):
            faults.add(f"{path}.scale", "a log sweep needs positive end points")
            continue
        out.append(
            Sweep(target, start, stop, points, scale, outputs, _text(spec, "name", path, faults))
        )
    return out


def _report(raw: Any, faults: _Faults) -> ReportSettings:
    t = _table(raw, "report", faults)
    _keys(t, file_keys.names("report"), "report", faults)
    kw: dict[str, Any] = {}
    if "template" in t:
        kw["template"] = _text(t, "template", "report", faults, "standard")
    if "paper" in t:
        if t["paper"] not in PAPERS:
            faults.add(
                "report.paper", f'expected "A4" or "Letter"{faults.hint(str(t["paper"]), PAPERS)}'
            )
        else:
            kw["paper"] = t["paper"]
    if "significant_figures" in t:
        v = t["significant_figures"]
        lo, hi = file_keys.span("report.significant_figures")
        if not isinstance(v, int) or isinstance(v, bool) or not lo <= v <= hi:
            faults.add("report.significant_figures", f"expected a whole number from {lo} to {hi}")
        else:
            kw["significant_figures"] = v
    kw["conclusion"] = _text(t, "conclusion", "report", faults)
    return ReportSettings(**kw)


def _check_references(elements: list[Element], reference: str, faults: _Faults) -> None:
    nodes = {n for e in elements for n in e.nodes}
    names = {e.name for e in elements}
    if elements and reference not in nodes:
        faults.add(
            "circuit.reference",
            f"reference node {reference!r} is not a terminal of any element{faults.hint(reference, nodes)}",
        )
    for e in elements:
        if e.control_nodes:
            for n in e.control_nodes:
                if n not in nodes:
                    faults.add(
                        f"elements.{e.name}.control", f"no such node {n!r}{faults.hint(n, nodes)}"
                    )
        if e.control_element and e.control_element not in names:
            faults.add(
                f"elements.{e.name}.control",
                f"no such element {e.control_element!r}{faults.hint(e.control_element, names)}",
            )


def _toml(text: str, faults: _Faults) -> dict[str, Any] | None:
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        m = re.search(r"\(at line (\d+), column (\d+)\)", msg)
        line = col = None
        if m:
            line, col = int(m.group(1)), int(m.group(2))
            msg = msg[: m.start()].strip()
        elif getattr(exc, "lineno", None):
            line, col = exc.lineno, exc.colno  # type: ignore[attr-defined]
        faults.add("", f"TOML syntax error: {msg}", line, col)
        return None
    except RecursionError:
        faults.add("", "TOML syntax error: nested too deeply")
        return None
    except ValueError as exc:  # e.g. an integer of thousands of digits
        faults.add("", f"TOML value that cannot be read: {_plain(str(exc))}")
        return None


def _plain(message: str) -> str:
    return "a number has too many digits" if "digits" in message else "unreadable value"


def _declared_nodes(raw: Any) -> set[str]:
    """Node names written in the element tables, valid or not (to avoid cascading faults)."""
    out: set[str] = set()
    if isinstance(raw, dict):
        for spec in raw.values():
            if isinstance(spec, dict) and isinstance(spec.get("nodes"), list):
                out.update(n for n in spec["nodes"] if isinstance(n, str))
    return out


def parse_project(source: bytes | str, path: str = "<input>") -> Project:
    """Validate project-file text into a :class:`Project`.

    Parameters
    ----------
    source : bytes or str
        The TOML text.
    path : str
        Shown in error messages and recorded in the model.

    Returns
    -------
    Project

    Raises
    ------
    ProjectError
        With every fault found.

    >>> p = parse_project('''
    ... [elements.V1]
    ... type = "voltage_source"
    ... nodes = ["in", "gnd"]
    ... value = "10 V"
    ... [elements.R1]
    ... type = "resistor"
    ... nodes = ["in", "out"]
    ... value = "1 kohm"
    ... [elements.R2]
    ... type = "resistor"
    ... nodes = ["out", "gnd"]
    ... value = "1k"
    ... ''')
    >>> [e.name for e in p.elements], p.nodes
    (['V1', 'R1', 'R2'], ('gnd', 'in', 'out'))
    """
    # The loader makes millions of small acyclic objects on a large file; the
    # cyclic collector would walk them all again and again for nothing.
    collecting = gc.isenabled()
    gc.disable()
    try:
        return _parse_project(source, path)
    finally:
        if collecting:
            gc.enable()


def _parse_project(source: bytes | str, path: str) -> Project:
    if len(source) > MAX_FILE_BYTES:
        raise ProjectError([Fault("", _too_big(len(source)))], path)
    try:
        raw_bytes = source.encode("utf-8") if isinstance(source, str) else bytes(source)
    except UnicodeEncodeError as exc:
        raise ProjectError(
            [Fault("", f"the text is not valid Unicode (character {exc.start + 1})")], path
        ) from None
    faults = _Faults()
    try:
        text = raw_bytes.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise ProjectError(
            [Fault("", f"the file is not UTF-8 text (byte {exc.start + 1})")], path
        ) from None
    text = text.removeprefix("\ufeff")  # a byte-order mark is accepted
    _check_lines(text, path)
    data = _toml(text, faults)
    if data is None:
        raise ProjectError(faults.items, path)
    declared_nodes = _check_counts(data, path)
    _keys(data, TOP_KEYS, "", faults)
    schema = data.get("schema", 1)
    if schema != 1 or isinstance(schema, bool):
        faults.add("schema", f"this calcdoc reads schema 1, found {schema!r}")
    circuit = _table(data.get("circuit"), "circuit", faults)
    _keys(circuit, file_keys.names("circuit"), "circuit", faults)
    reference = _text(circuit, "reference", "circuit", faults, "gnd")
    if not NAME_RE.fullmatch(reference):
        faults.add(
            "circuit.reference", "a node name may hold only letters, digits, '_', '-' and '.'"
        )
    document = _document(data.get("document"), faults)
    signoff = _signoff(data.get("signoff"), faults)
    param_values, params = _parameters(data.get("parameters"), faults)
    param_names = set(_table(data.get("parameters"), "parameters", _Faults()))
    if "elements" not in data:
        faults.add("elements", "the circuit has no elements ([elements.NAME] tables)")
    elements = (
        _elements(data.get("elements", {}), faults, param_values, param_names)
        if "elements" in data
        else []
    )
    _check_references(elements, reference, faults)
    nodes = {n for e in elements for n in e.nodes}
    by_name = {e.name: e for e in elements}
    clash = sorted(set(by_name) & {p.name for p in params})
    for name in clash:
        faults.add(
            f"parameters.{name}",
            f"{name!r} is also an element name; case settings would be ambiguous",
        )
    limits = _limits(data.get("limits"), faults, nodes, declared_nodes)
    pmap = {p.name: p for p in params}
    declared = set(data["elements"]) if isinstance(data.get("elements"), dict) else set()
    declared |= param_names
    cases = _cases(data.get("cases"), faults, by_name, pmap, declared)
    analysis = _analysis(data.get("analysis"), faults, nodes, by_name)
    sweeps = _sweeps(data.get("sweeps"), faults, nodes, by_name, pmap)
    report = _report(data.get("report"), faults)
    if faults.items:
        raise ProjectError(faults.items, path)
    project = Project(
        path=path,
        source=raw_bytes,
        sha256=hashlib.sha256(raw_bytes).hexdigest(),
        document=document,
        signoff=signoff,
        reference=reference,
        parameters=tuple(params),
        elements=tuple(elements),
        limits=limits,
        cases=tuple(cases),
        analysis=analysis,
        sweeps=tuple(sweeps),
        report=report,
    )
    _check_case_values(project, faults)
    _check_sample_size(project, faults)
    if faults.items:
        raise ProjectError(faults.items, path)
    warnings = _case_clashes("element", [e.name for e in project.elements])
    warnings += _case_clashes("node", list(project.nodes))
    warnings += _fixed_further_keys(project)
    return replace(project, warnings=tuple(warnings)) if warnings else project


def _too_big(size: int, *, at_least: bool = False) -> str:
    size_text = f"more than {MAX_FILE_BYTES:,}" if at_least else f"{size:,}"
    return (
        f"the file is {size_text} bytes; the limit for a project file is "
        f"{MAX_FILE_BYTES:,} bytes ({MAX_FILE_BYTES // 1_000_000} MB)"
    )


def _check_lines(text: str, path: str) -> None:
    """Refuse, before parsing, a file with too many lines or tables, or a line too long.

    Parsing time and memory grow with the number of TOML tables and keys;
    the package prints every line of the input verbatim.
    """
    if len(text) <= MAX_LINE_CHARS:
        return
    lines = text.count("\n") + 1
    if lines > MAX_LINES:
        raise ProjectError([Fault("", f"{lines:,} lines; the limit is {MAX_LINES:,}")], path)
    headers = len(_TABLE_HEADER.findall(text))
    if headers > MAX_TABLES:
        raise ProjectError([Fault("", f"{headers:,} [tables]; the limit is {MAX_TABLES:,}")], path)
    longest = max(text.splitlines() or [""], key=len)
    if len(longest) > MAX_LINE_CHARS:
        line = text.count("\n", 0, text.index(longest)) + 1
        raise ProjectError(
            [
                Fault(
                    "",
                    f"the line is {len(longest):,} characters long; the limit is "
                    f"{MAX_LINE_CHARS:,} (continue a long text on the next line with a "
                    'backslash at the end of the line, in a """...""" string)',
                    line,
                )
            ],
            path,
        )


def _check_counts(data: Mapping[str, Any], path: str) -> set[str]:
    """Refuse oversized sections before any work is spent on them (one fault each).

    Returns the node names written in the element tables.
    """
    over = []
    for key, limit, what in (
        ("elements", MAX_ELEMENTS, "elements"),
        ("parameters", MAX_PARAMETERS, "parameters"),
        ("cases", MAX_CASES, "cases"),
        ("sweeps", MAX_SWEEPS, "sweeps"),
    ):
        section = data.get(key)
        if isinstance(section, (dict, list)) and len(section) > limit:
            over.append(Fault(key, f"{len(section):,} {what}; the limit is {limit:,}"))
    elements = data.get("elements")
    nodes: set[str] = set()
    if not over and isinstance(elements, dict):
        nodes = _declared_nodes(elements)
        if len(nodes) > MAX_NODES:
            over.append(Fault("elements", f"{len(nodes):,} nodes; the limit is {MAX_NODES:,}"))
    if over:
        raise ProjectError(over, path)
    return nodes


def _check_sample_size(project: Project, faults: _Faults) -> None:
    """Monte Carlo keeps every sample's results: cap samples x (nodes + elements)."""
    a = project.analysis
    if a.tolerance != "montecarlo":
        return
    size = len(project.nodes) + len(project.elements)
    if a.samples * size > MAX_SAMPLE_VALUES:
        faults.add(
            "analysis.samples",
            f"{a.samples:,} samples of {len(project.nodes):,} nodes and "
            f"{len(project.elements):,} elements exceed the limit of "
            f"samples x (nodes + elements) = {MAX_SAMPLE_VALUES:,}; "
            f"use at most {max(MAX_SAMPLE_VALUES // size, 0):,} samples",
        )


def _fixed_further_keys(project: Project) -> list[str]:
    """Warnings for further keys that name a parameter a case, sweep or tolerance changes.

    Only an element's main value is evaluated again when a parameter
    changes; a further key (a diode's forward voltage, a contact's
    resistance) keeps the value it has with every parameter nominal.
    """
    params = {q.name: q for q in project.parameters}
    why: dict[str, set[str]] = {}
    for case in project.cases:
        for s in case.settings:
            if s.target in params:
                why.setdefault(s.target, set()).add(f"case {case.name!r}")
    for sw in project.sweeps:
        if sw.target in params:
            why.setdefault(sw.target, set()).add("a sweep")
    if project.analysis.tolerance != "none":
        for q in project.parameters:
            if q.tolerance is not None:
                why.setdefault(q.name, set()).add("the tolerance analysis")
    changed = True
    while changed:  # parameters defined from changed ones change too
        changed = False
        for q in project.parameters:
            if q.name not in why and (hit := names_in(q.expr) & why.keys()):
                why[q.name] = set().union(*(why[h] for h in hit))
                changed = True
    out = []
    for e in project.elements:
        for k in e.more:
            hit = sorted(names_in(k.expr) & why.keys())
            if hit:
                by = sorted(set().union(*(why[h] for h in hit)))
                out.append(
                    f"elements.{e.name}.{k.key}: uses parameter {', '.join(map(repr, hit))}, "
                    f"which {', '.join(by)} changes; only main values follow a parameter, "
                    f"so there this key keeps its value with every parameter nominal"
                )
    return out


def _case_clashes(what: str, names: list[str]) -> list[str]:
    """Warnings for names that differ only in upper and lower case."""
    groups: dict[str, list[str]] = {}
    for n in names:
        groups.setdefault(n.casefold(), []).append(n)
    return [
        f"{what} names {', '.join(repr(n) for n in group)} differ only in upper and lower case; "
        "they are different names, but a reader may take them for one"
        for group in groups.values()
        if len(set(group)) > 1
    ]


def _check_case_values(project: Project, faults: _Faults) -> None:
    """Every case must give every element a finite, computable value."""
    from calcdoc.model.values import element_values

    for i, case in enumerate(project.cases):
        if not case.settings:
            continue
        path = f"cases[{i}].set"
        try:
            values = element_values(project, case)
        except ExpressionError as exc:
            faults.add(path, f"with these settings an element value cannot be computed: {exc}")
            continue
        for e in project.elements:
            _representable(
                Quantity(values[e.name], e.kind.main.dimension),
                f"{path} (elements.{e.name})",
                faults,
            )


def read_project(path: str | Path, *, reader: Callable[[Path], bytes] | None = None) -> Project:
    """Read and validate a project file.

    Raises
    ------
    ProjectError
        The file is missing, unreadable or invalid.
    """
    p = Path(path)
    try:
        data = reader(p) if reader else _read_bounded(p)
    except OSError as exc:
        raise ProjectError(
            [Fault("", f"cannot read the file: {exc.strerror or exc}")], str(path)
        ) from None
    from calcdoc.model.assets import with_assets

    return with_assets(parse_project(data, str(path)), p)


def _read_bounded(path: Path) -> bytes:
    """The file's bytes; a file over the size cap is refused before it is read."""
    size = path.stat().st_size
    if size > MAX_FILE_BYTES:
        raise ProjectError([Fault("", _too_big(size))], str(path))
    with path.open("rb") as fh:  # a device or pipe has no size: read at most one byte more
        data = fh.read(MAX_FILE_BYTES + 1)
    if len(data) > MAX_FILE_BYTES:
        raise ProjectError([Fault("", _too_big(len(data), at_least=True))], str(path))
    return data
