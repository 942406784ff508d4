"""Reading the other sections: document, sign-off, limits, cases, analysis, sweeps, report."""

from __future__ import annotations

from collections.abc import Mapping
from fractions import Fraction
from typing import Any

from calcdoc.model import keys as file_keys
from calcdoc.model.expressions import (
    names_in,
)
from calcdoc.model.project import (
    AcrossWindow,
    Analysis,
    Case,
    Document,
    Element,
    HistoryEntry,
    Limits,
    NodeWindow,
    Parameter,
    ReportSettings,
    Setting,
    Signature,
    Signoff,
    Sweep,
)
from calcdoc.model.quantities import (
    NONE,
    VOLT,
)
from calcdoc.model.read_circuit import no_value, read_value_expr, resolved_value
from calcdoc.model.read_fields import (
    MAX_LIST_ITEMS,
    NAME_RE,
    Faults,
    check_keys,
    did_you_mean,
    read_date,
    read_derating,
    read_fraction,
    read_quantity,
    read_table,
    read_temperature,
    read_text,
    read_texts,
)

OUTPUT_QUANTITIES = ("voltage", "current", "power")
# The allowed keys and enumerations come from the one declaration of the
# project file (calcdoc.model.keys), from which the JSON Schema is also made.
TOLERANCE_METHODS = file_keys.TOLERANCE_METHODS
PAPERS = file_keys.PAPERS
DOCUMENT_KEYS = file_keys.names("document")
MAX_OUTPUTS = 100  # outputs named in one sensitivity or sweep list


def read_document(raw: Any, faults: Faults) -> Document:
    t = read_table(raw, "document", faults)
    check_keys(t, DOCUMENT_KEYS, "document", faults)
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
        h = read_table(h, path, faults)
        check_keys(h, file_keys.names("document.history"), path, faults)
        if "revision" not in h:
            faults.add(path, "missing key 'revision'")
        history.append(
            HistoryEntry(
                read_text(h, "revision", path, faults) if "revision" in h else "",
                read_date(h, "date", path, faults),
                read_text(h, "description", path, faults),
            )
        )
    return Document(
        title=read_text(t, "title", "document", faults, "Untitled calculation"),
        number=read_text(t, "number", "document", faults),
        revision=read_text(t, "revision", "document", faults),
        date=read_date(t, "date", "document", faults),
        project=read_text(t, "project", "document", faults),
        organisation=read_text(t, "organisation", "document", faults),
        purpose=read_text(t, "purpose", "document", faults),
        scope=read_text(t, "scope", "document", faults),
        assumptions=read_texts(t, "assumptions", "document", faults),
        references=read_texts(t, "references", "document", faults),
        history=tuple(history),
        conclusion=read_text(t, "conclusion", "document", faults),
    )


def read_signoff(raw: Any, faults: Faults) -> Signoff:
    t = read_table(raw, "signoff", faults)
    check_keys(t, file_keys.names("signoff"), "signoff", faults)
    roles: dict[str, Signature | None] = {}
    for role in file_keys.ROLES:
        if role not in t:
            roles[role] = None
            continue
        path = f"signoff.{role}"
        r = read_table(t[role], path, faults)
        check_keys(r, file_keys.names(path), path, faults)
        name = read_text(r, "name", path, faults)
        if not name.strip():
            faults.add(path, "a sign-off needs a 'name' (leave the role out while it is open)")
        roles[role] = Signature(name, read_date(r, "date", path, faults))
    seal = read_text(t, "seal", "signoff", faults) if "seal" in t else None
    return Signoff(seal=seal, **roles)


def read_limits(raw: Any, faults: Faults, nodes: set[str], declared_nodes: Any = ()) -> Limits:
    t = read_table(raw, "limits", faults)
    check_keys(t, file_keys.names("limits"), "limits", faults)
    fr = {}
    for key in file_keys.LIMIT_FRACTIONS:
        if key in t:
            v = read_fraction(t[key], f"limits.{key}", faults, Fraction(0), Fraction(1))
            if v is not None:
                fr[key] = v
    windows = []
    for node, spec in read_table(t.get("nodes"), "limits.nodes", faults).items():
        path = f"limits.nodes.{node}"
        if node not in nodes:
            if node not in declared_nodes:
                faults.add(path, f"no such node{faults.hint(node, nodes)}")
            continue
        spec = read_table(spec, path, faults)
        check_keys(spec, file_keys.names("limits.nodes.*"), path, faults)
        lo = read_quantity(spec["min"], VOLT, f"{path}.min", faults) if "min" in spec else None
        hi = read_quantity(spec["max"], VOLT, f"{path}.max", faults) if "max" in spec else None
        if "min" not in spec and "max" not in spec:
            faults.add(path, "give 'min', 'max' or both")
        if lo is not None and hi is not None and lo.magnitude > hi.magnitude:
            faults.add(path, "'min' is above 'max'")
        windows.append(NodeWindow(node, lo.magnitude if lo else None, hi.magnitude if hi else None))
    return Limits(
        ambient=read_temperature(t.get("ambient"), "limits.ambient", faults),
        derating=read_derating(t.get("derating"), "limits.derating", faults),
        nodes=tuple(windows),
        across=_across(t.get("across"), faults, nodes, declared_nodes),
        **fr,
    )


def _across(raw: Any, faults: Faults, nodes: set[str], declared_nodes: Any) -> tuple:
    """``[[limits.across]]``: windows on V(a) − V(b)."""
    if raw is None:
        return ()
    if not isinstance(raw, list):
        faults.add("limits.across", "expected an array of tables ([[limits.across]])")
        return ()
    out, seen = [], set()
    for i, spec in enumerate(raw):
        path = f"limits.across[{i}]"
        spec = read_table(spec, path, faults)
        check_keys(spec, file_keys.names("limits.across"), path, faults)
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
                faults.add(f"{path}.nodes", f"no such node {n!r}{did_you_mean(n, nodes)}")
        if bad:
            continue
        if pair[0] == pair[1]:
            faults.add(f"{path}.nodes", f"both ends are node {pair[0]!r}")
            continue
        lo = read_quantity(spec["min"], VOLT, f"{path}.min", faults) if "min" in spec else None
        hi = read_quantity(spec["max"], VOLT, f"{path}.max", faults) if "max" in spec else None
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
                read_text(spec, "description", path, faults),
            )
        )
    return tuple(out)


def read_cases(
    raw: Any,
    faults: Faults,
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
        spec = read_table(spec, path, faults)
        check_keys(spec, file_keys.names("cases"), path, faults)
        name = read_text(spec, "name", path, faults)
        if not name.strip():
            faults.add(f"{path}.name", "every case needs a name")
        elif name in seen:
            faults.add(
                f"{path}.name", f"case name {name!r} is used twice (or is the reserved 'nominal')"
            )
        seen.add(name)
        settings = []
        for target, value in read_table(spec.get("set"), f"{path}.set", faults).items():
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
                        spath, no_value(e.kind) + (f"; a case may set {words}" if words else "")
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
            ve = read_value_expr(value, spath, faults, dim)
            if ve is None:
                continue
            if target in params and target in names_in(ve[1]):
                faults.add(spath, "a case cannot define a parameter in terms of itself")
                continue
            q = resolved_value(
                ve, spath, faults, dim, {k: p.value for k, p in params.items()}, params
            )
            if q is not None:
                settings.append(Setting(target, ve[0], ve[1], dim))
        out.append(Case(name, tuple(settings), read_text(spec, "description", path, faults)))
    return out


def parse_output(spec: str) -> tuple[str, str]:
    """Split an output name: ``"field"`` → (node, "voltage"); ``"Rs.power"`` → (element, "power")."""
    if "." in spec:
        head, _, q = spec.rpartition(".")
        if q in OUTPUT_QUANTITIES:
            return head, q
    return spec, "node"


def _outputs(
    value: Any, path: str, faults: Faults, nodes: set[str], elements: Mapping[str, Element]
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


def read_analysis(
    raw: Any, faults: Faults, nodes: set[str], elements: Mapping[str, Element]
) -> Analysis:
    t = read_table(raw, "analysis", faults)
    check_keys(t, file_keys.names("analysis"), "analysis", faults)
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
        kw["temperature"] = read_temperature(t["temperature"], "analysis.temperature", faults)
    if "reference_temperature" in t:
        rt = read_temperature(t["reference_temperature"], "analysis.reference_temperature", faults)
        if rt is not None:
            kw["reference_temperature"] = rt
    return Analysis(**kw)


def read_sweeps(
    raw: Any,
    faults: Faults,
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
        spec = read_table(spec, path, faults)
        check_keys(spec, file_keys.names("sweeps"), path, faults)
        target = spec.get("target")
        if target in elements and not elements[target].main_given:
            faults.add(f"{path}.target", no_value(elements[target].kind))
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
        start = read_quantity(spec["from"], dim, f"{path}.from", faults)
        stop = read_quantity(spec["to"], dim, f"{path}.to", faults)
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
            Sweep(
                target, start, stop, points, scale, outputs, read_text(spec, "name", path, faults)
            )
        )
    return out


def read_report(raw: Any, faults: Faults) -> ReportSettings:
    t = read_table(raw, "report", faults)
    check_keys(t, file_keys.names("report"), "report", faults)
    kw: dict[str, Any] = {}
    if "template" in t:
        kw["template"] = read_text(t, "template", "report", faults, "standard")
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
    kw["conclusion"] = read_text(t, "conclusion", "report", faults)
    return ReportSettings(**kw)
