"""Reading the circuit: ``[parameters]`` and ``[elements.*]``.

Parameters are evaluated in dependency order; each element is checked
against its entry of the element table (terminals, number keys, ratings,
states) and its values evaluated with the parameters.
"""

from __future__ import annotations

from collections.abc import Mapping
from fractions import Fraction
from typing import Any

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
    Element,
    KeyValue,
    Parameter,
    Rating,
)
from calcdoc.model.quantities import (
    KELVIN,
    NONE,
    Dimension,
    Number,
    Quantity,
    QuantityError,
    dim_div,
    dimension_name,
)
from calcdoc.model.read_fields import (
    MAX_NAME_CHARS,
    NAME_RE,
    SERIES,
    Faults,
    check_keys,
    check_name,
    did_you_mean,
    example_of,
    kind_of,
    read_derating,
    read_number,
    read_quantity,
    read_table,
    read_text,
    read_tolerance,
    representable,
)


def read_parameters(raw: Any, faults: Faults) -> tuple[dict[str, Quantity], list[Parameter]]:
    t = read_table(raw, "parameters", faults)
    entries: dict[str, tuple[str, Node, Any, str]] = {}
    for name, spec in t.items():
        path = f"parameters.{name}"
        if not check_name(name, path, faults, "parameter"):
            continue
        tol_raw, desc = None, ""
        if isinstance(spec, dict):
            check_keys(spec, file_keys.names("parameters.*"), path, faults)
            desc = read_text(spec, "description", path, faults)
            tol_raw = spec.get("tolerance")
            if "value" not in spec:
                faults.add(path, "missing key 'value'")
                continue
            spec, path = spec["value"], f"{path}.value"
        if isinstance(spec, float) and read_number(spec) is None:
            faults.add(path, f"{kind_of(spec)} is not a value a physical quantity can have")
            continue
        if isinstance(spec, (int, float)) and not isinstance(spec, bool):
            spec = repr(spec)
        if not isinstance(spec, str):
            faults.add(path, f'expected a value string such as "85 m", found {kind_of(spec)}')
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
            tol = read_tolerance(tol_raw, f"parameters.{name}.tolerance", faults)
            params.append(Parameter(name, text, expr, values[name], tol, desc))
    return values, params


def _resolve_parameters(entries: Mapping[str, tuple[str, Node, Any, str]], faults: Faults):
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
    name: str, expr: Node, values: dict[str, Quantity], faults: Faults, failed: set[str]
) -> None:
    try:
        q = evaluate(expr, values)
    except ExpressionError as exc:
        faults.add(f"parameters.{name}", str(exc))
        failed.add(name)
        return
    if representable(q, f"parameters.{name}", faults):
        values[name] = q
    else:
        failed.add(name)


def read_value_expr(
    value: Any, path: str, faults: Faults, dim: Dimension
) -> tuple[str, Node] | None:
    if isinstance(value, float) and read_number(value) is None:
        faults.add(path, f"{kind_of(value)} is not a value a physical quantity can have")
        return None
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        if dim != NONE:
            faults.add(path, f"write the value with its unit, such as {example_of(dim)}")
            return None
        value = repr(value)
    if not isinstance(value, str):
        faults.add(
            path, f"expected a value string such as {example_of(dim)}, found {kind_of(value)}"
        )
        return None
    try:
        return value, parse_expression(value)
    except (ExpressionError, QuantityError) as exc:
        faults.add(path, str(exc))
        return None


def resolved_value(
    text_expr: tuple[str, Node],
    path: str,
    faults: Faults,
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
        return q if representable(q, path, faults) else None
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
    return q if representable(q, path, faults) else None


def _node_ok(name: Any, good: set[str]) -> bool:
    if name in good:
        return True
    if isinstance(name, str) and NAME_RE.fullmatch(name):
        good.add(name)
        return True
    return False


def read_elements(
    raw: Any, faults: Faults, params: Mapping[str, Quantity], param_names: Any
) -> list[Element]:
    """Every ``[elements.NAME]`` table, validated against the element table."""
    if not isinstance(raw, dict):
        read_table(raw, "elements", faults)
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
        if not check_name(name, path, faults, "element"):
            continue
        if not isinstance(spec, dict):
            faults.add(path, f"expected a table, found {kind_of(spec)}")
            continue
        etype = spec.get("type")
        if etype is None:
            faults.add(path, "missing key 'type' (one of: " + ", ".join(KINDS) + ")")
            continue
        kind = KINDS.get(etype) if isinstance(etype, str) else None
        if kind is None:
            faults.add(
                f"{path}.type",
                f"unknown element type {etype!r}{did_you_mean(str(etype), kinds_list)}",
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
        scratch = Faults()
        vexpr = read_value_expr(text, "", scratch, key.dimension)
        if vexpr is None or not isinstance(vexpr[1], Literal):
            return None
        q = resolved_value(vexpr, "", scratch, key.dimension, {}, ())
        if q is None or scratch.items:
            return None
        literal[(text, key.dimension)] = q = (q, vexpr[1])
    quantity, expr = q
    return Element(name, etype, (a, b), quantity.magnitude, text, expr)


def _element_keys(spec, kind, allowed, path: str, faults: Faults) -> None:
    """Name each key the type does not take, with a hint."""
    others = {k.name for t in KINDS.values() for k in t.keys} | {"control", "state"}
    for key in spec:
        if key in allowed:
            continue
        if key in others:
            takes = ", ".join(f"'{k.name}'" for k in kind.keys)
            faults.add(f"{path}.{key}", f"a {kind.type} takes no '{key}' (its numbers: {takes})")
        else:
            faults.add(f"{path}.{key}", f"unknown key{did_you_mean(key, sorted(allowed))}")


def _element(
    name: str, spec: dict, kind, path: str, faults: Faults, params, param_names, good_nodes
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
        vexpr = read_value_expr(spec[key.name], kpath, faults, key.dimension)
        value = (
            resolved_value(vexpr, kpath, faults, key.dimension, params, param_names)
            if vexpr
            else None
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
                f"expected one of {', '.join(kind.settable)}{did_you_mean(str(state), kind.settable)}",
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
                f"{did_you_mean(str(spec['symbol']), kind.drawings)}",
            )
        else:
            symbol = spec["symbol"]
    rating = Rating()
    if "rating" in spec:
        rpath = f"{path}.rating"
        r = read_table(spec["rating"], rpath, faults)
        check_keys(r, kind.ratings, rpath, faults)
        got = {}
        for q in kind.ratings:
            if q in r:
                v = read_quantity(r[q], RATING_KEYS[q].dimension, f"{rpath}.{q}", faults)
                if v is not None and v.magnitude <= 0:
                    faults.add(f"{rpath}.{q}", "a rating must be positive")
                elif v is not None:
                    got[q] = v.magnitude
        rating = Rating(**got)
    tol = read_tolerance(spec.get("tolerance"), f"{path}.tolerance", faults)
    series = None
    if "series" in spec:
        s = spec["series"]
        if s not in SERIES:
            faults.add(
                f"{path}.series",
                f"expected one of {', '.join(SERIES)}{did_you_mean(str(s), SERIES)}",
            )
        elif kind.main.unit != "Ω":
            faults.add(f"{path}.series", "a preferred-value series applies to resistances only")
        else:
            series = s
    tcr = None
    if "tcr" in spec:
        q = read_quantity(spec["tcr"], dim_div(NONE, KELVIN), f"{path}.tcr", faults)
        tcr = q.magnitude if q else None
    derating = read_derating(spec.get("derating"), f"{path}.derating", faults)
    desc = read_text(spec, "description", path, faults)
    source = read_text(spec, "source", path, faults)
    basis = read_text(spec, "basis", path, faults)
    main = kind.main.name
    if not ok or (main not in numbers and kind.main.required):
        return None
    if main in numbers:
        value, text, expr = numbers[main]
    else:  # an optional main value left out: a placeholder the laws drop
        if tol is not None:
            faults.add(f"{path}.tolerance", no_value(kind))
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


def no_value(kind) -> str:
    """Why an element whose main value is left out cannot be varied."""
    if not kind.has_value:
        return f"a {kind.type} has no value to vary"
    return f"no '{kind.main.name}' is given ({kind.main.words} taken as ideal), so it cannot vary"


def _window(value: Any, key, path: str, faults: Faults) -> tuple[Number, Number] | None:
    """A ``[low, high]`` pair of quantities of the key's dimension."""
    if not isinstance(value, list) or len(value) != 2:
        faults.add(path, f'expected [low, high], such as ["-13 {key.unit}", "13 {key.unit}"]')
        return None
    lo = read_quantity(value[0], key.dimension, f"{path}[0]", faults)
    hi = read_quantity(value[1], key.dimension, f"{path}[1]", faults)
    if lo is None or hi is None:
        return None
    if lo.magnitude >= hi.magnitude:
        faults.add(path, "the low end must be below the high end")
        return None
    return lo.magnitude, hi.magnitude


def check_references(elements: list[Element], reference: str, faults: Faults) -> None:
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
