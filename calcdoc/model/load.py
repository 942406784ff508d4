"""Loading: project-file text to a validated, frozen :class:`Project`.

:func:`parse_project` is pure (text in, model out); :func:`read_project`
reads the file.  Every fault is collected with its key path and reported
together in one :class:`~calcdoc.errors.ProjectError`.

This module holds the file as a whole (its size caps, the TOML text, the
order of the sections, the checks across sections and the warnings); the
values are read by :mod:`calcdoc.model.read_fields`, the circuit by
:mod:`calcdoc.model.read_circuit` and the other sections by
:mod:`calcdoc.model.read_sections`.
"""

from __future__ import annotations

import gc
import hashlib
import re
from collections.abc import Callable, Mapping
from dataclasses import replace
from pathlib import Path
from typing import Any

from calcdoc.errors import Fault, ProjectError
from calcdoc.model import keys as file_keys
from calcdoc.model.expressions import (
    ExpressionError,
    names_in,
)
from calcdoc.model.project import (
    Project,
)
from calcdoc.model.quantities import (
    Quantity,
)
from calcdoc.model.read_circuit import check_references, read_elements, read_parameters
from calcdoc.model.read_fields import (
    NAME_RE,
    Faults,
    check_keys,
    read_table,
    read_text,
    representable,
)
from calcdoc.model.read_sections import (
    read_analysis,
    read_cases,
    read_document,
    read_limits,
    read_report,
    read_signoff,
    read_sweeps,
)
from calcdoc.model.values import affected_parameters

try:  # tomli's compiled wheels parse about 2x faster than the standard library's tomllib
    import tomli as tomllib
except ImportError:  # pragma: no cover
    import tomllib  # type: ignore[no-redef]

TOP_KEYS = file_keys.names("")

# Resource caps, stated in the README ("Security and limits") and checked
# before the work they bound.
MAX_FILE_BYTES = 20_000_000
MAX_ELEMENTS = 200_000
MAX_NODES = 200_000
MAX_PARAMETERS = 10_000
MAX_CASES = 200
MAX_SWEEPS = 50
MAX_LINE_CHARS = 12_000  # the package prints the input file verbatim, line by line
MAX_LINES = 1_000_000
MAX_TABLES = 250_000  # [table] and [[array]] headers
_TABLE_HEADER = re.compile(r"^[ \t]*\[", re.MULTILINE)
#: Monte Carlo: samples x (nodes + elements), the size of the sampled results.
MAX_SAMPLE_VALUES = 10_000_000


def _toml(text: str, faults: Faults) -> dict[str, Any] | None:
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
    faults = Faults()
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
    check_keys(data, TOP_KEYS, "", faults)
    schema = data.get("schema", 1)
    if schema != 1 or isinstance(schema, bool):
        faults.add("schema", f"this calcdoc reads schema 1, found {schema!r}")
    circuit = read_table(data.get("circuit"), "circuit", faults)
    check_keys(circuit, file_keys.names("circuit"), "circuit", faults)
    reference = read_text(circuit, "reference", "circuit", faults, "gnd")
    if not NAME_RE.fullmatch(reference):
        faults.add(
            "circuit.reference", "a node name may hold only letters, digits, '_', '-' and '.'"
        )
    document = read_document(data.get("document"), faults)
    signoff = read_signoff(data.get("signoff"), faults)
    param_values, params = read_parameters(data.get("parameters"), faults)
    param_names = set(read_table(data.get("parameters"), "parameters", Faults()))
    if "elements" not in data:
        faults.add("elements", "the circuit has no elements ([elements.NAME] tables)")
    elements = (
        read_elements(data.get("elements", {}), faults, param_values, param_names)
        if "elements" in data
        else []
    )
    check_references(elements, reference, faults)
    nodes = {n for e in elements for n in e.nodes}
    by_name = {e.name: e for e in elements}
    clash = sorted(set(by_name) & {p.name for p in params})
    for name in clash:
        faults.add(
            f"parameters.{name}",
            f"{name!r} is also an element name; case settings would be ambiguous",
        )
    limits = read_limits(data.get("limits"), faults, nodes, declared_nodes)
    pmap = {p.name: p for p in params}
    declared = set(data["elements"]) if isinstance(data.get("elements"), dict) else set()
    declared |= param_names
    cases = read_cases(data.get("cases"), faults, by_name, pmap, declared)
    analysis = read_analysis(data.get("analysis"), faults, nodes, by_name)
    sweeps = read_sweeps(data.get("sweeps"), faults, nodes, by_name, pmap)
    report = read_report(data.get("report"), faults)
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


def _check_sample_size(project: Project, faults: Faults) -> None:
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
    reach = {name: affected_parameters(project, {name}) for name in why}
    out = []
    for e in project.elements:
        for k in e.more:
            used = names_in(k.expr)
            hit = sorted(used & set().union(*reach.values())) if reach else []
            if hit:
                by = sorted(set().union(*(why[c] for c, r in reach.items() if used & r)))
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


def _check_case_values(project: Project, faults: Faults) -> None:
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
            representable(
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
