"""Comparison of two revisions of a calculation: changed inputs and their effect.

:func:`compare` takes the results of an old and a new revision and lists

- every changed input: elements (added, removed, or a changed type, nodes,
  value text or evaluated value, control, tolerance, rating, description,
  series, temperature coefficient, derating), parameters, limits, cases,
  analysis settings, document fields (history included), sign-off, the
  reference node, sweeps and report settings, and finally the input file's
  SHA-256 (so a comment-only edit still counts as a change);
- the checks whose pass/fail status changed (listed first by every report);
- the effect on the results in each case present in both revisions: node
  voltages, element currents and powers, and check values, limits and
  utilisations.

A result counts as changed only when the difference is meaningful:
``|new - old| > REL_TOL * max(|old|, |new|) + ABS_TOL`` with
``REL_TOL = 1e-9`` and ``ABS_TOL = 1e-12`` (SI units). Round-off from a
re-solve of an unchanged circuit stays well below this.

Everything here is pure and returns frozen dataclasses.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

from calcdoc.format import UNITS, eng
from calcdoc.model.project import Element, Project, Signature, Tolerance
from calcdoc.results import CaseResult, Results

__all__ = [
    "ABS_TOL",
    "REL_TOL",
    "CheckChange",
    "Comparison",
    "InputChange",
    "ResultChange",
    "compare",
    "compare_projects",
    "meaningful",
]

REL_TOL = 1e-9
"""Relative part of the threshold for a meaningful change in a result."""

ABS_TOL = 1e-12
"""Absolute part of the threshold (SI units: V, A, W, or a plain fraction)."""


def meaningful(old: float | None, new: float | None) -> bool:
    """Whether the change from ``old`` to ``new`` exceeds the comparison threshold.

    A value that appears or disappears (None on one side only) is a change.

    >>> meaningful(1.0, 1.0 + 1e-12), meaningful(1.0, 1.001), meaningful(None, 0.0)
    (False, True, True)
    """
    if old is None or new is None:
        return (old is None) != (new is None)
    if not (math.isfinite(old) and math.isfinite(new)):
        return old != new
    return abs(new - old) > REL_TOL * max(abs(old), abs(new)) + ABS_TOL


@dataclass(frozen=True)
class InputChange:
    """One changed input.

    Attributes
    ----------
    section : str
        ``element``, ``parameter``, ``limit``, ``case``, ``analysis``,
        ``document``, ``history``, ``signoff``, ``circuit``, ``sweep``,
        ``report`` or ``input file``.
    subject : str
        What the change is about: element, parameter, node, case or role
        name; ``""`` for a section-wide setting.
    field : str
        The changed property (``value``, ``tolerance``, ``rating.power``,
        ``min``, ``set.PSU``, ``title``, ...); ``""`` when the whole subject
        was added or removed.
    kind : str
        ``added``, ``removed`` or ``changed``.
    old, new : str or None
        The property as written or as printed (None when absent).
    old_number, new_number : float or None
        The evaluated value in SI units where the property is a number.
    key : str
        Project-file key path (``elements.Rs.value``), for messages and for
        revision marks in the package.
    """

    section: str
    subject: str
    field: str
    kind: str
    old: str | None
    new: str | None
    old_number: float | None = None
    new_number: float | None = None
    key: str = ""


@dataclass(frozen=True)
class ResultChange:
    """A result that changed meaningfully in one case.

    Attributes
    ----------
    case : str
        Case name (``nominal`` first).
    kind : str
        ``node`` or ``element``.
    subject : str
        Node or element name.
    quantity : str
        ``voltage`` (node voltage), ``current`` or ``power``.
    unit : str
        ``V``, ``A`` or ``W``.
    old, new : float or None
        Old and new value in SI units (None where the node or element does
        not exist in that revision).
    """

    case: str
    kind: str
    subject: str
    quantity: str
    unit: str
    old: float | None
    new: float | None

    @property
    def delta(self) -> float | None:
        """float or None: ``new - old`` (SI units), None if either is missing."""
        if self.old is None or self.new is None:
            return None
        return self.new - self.old

    @property
    def relative(self) -> float | None:
        """float or None: ``(new - old) / |old|``, None when old is zero or missing."""
        if self.old is None or self.new is None or self.old == 0:
            return None
        return (self.new - self.old) / abs(self.old)

    @property
    def key(self) -> str:
        """str: ``results.<case>.nodes.<node>`` or ``results.<case>.elements.<name>.<quantity>``."""
        if self.kind == "node":
            return f"results.{self.case}.nodes.{self.subject}"
        return f"results.{self.case}.elements.{self.subject}.{self.quantity}"


@dataclass(frozen=True)
class CheckChange:
    """A design check whose status, value, limit or utilisation changed.

    Attributes
    ----------
    case : str
        Case name.
    id : str
        Check identifier (``Rs.power``).
    subject, quantity, unit : str
        As in the check (unit of its value and limit).
    old_status, new_status : str or None
        ``pass``/``fail``; None where the check does not exist in that revision.
    old_value, new_value, old_limit, new_limit : float or None
        Check value and limit in SI units.
    old_utilization, new_utilization : float or None
        Utilisation (value / limit for a maximum); None where not defined.
    """

    case: str
    id: str
    subject: str
    quantity: str
    unit: str
    old_status: str | None
    new_status: str | None
    old_value: float | None
    new_value: float | None
    old_limit: float | None
    new_limit: float | None
    old_utilization: float | None
    new_utilization: float | None

    @property
    def status_changed(self) -> bool:
        """bool: the pass/fail status differs (or the check exists on one side only)."""
        return self.old_status != self.new_status

    @property
    def key(self) -> str:
        """str: ``results.<case>.checks.<id>``."""
        return f"results.{self.case}.checks.{self.id}"


@dataclass(frozen=True)
class Comparison:
    """What changed from an old revision to a new one.

    Attributes
    ----------
    old_path, new_path : str
        Where each revision's project came from.
    old_revision, new_revision : str
        ``document.revision`` of each.
    old_sha256, new_sha256 : str
        SHA-256 of each input file.
    inputs : tuple of InputChange
        Every changed input, in project-file order of sections.
    status_changes : tuple of CheckChange
        Checks whose status changed, failures first.
    check_changes : tuple of CheckChange
        Checks with the same status whose value, limit or utilisation
        changed meaningfully.
    results : tuple of ResultChange
        Meaningful changes of node voltages, element currents and powers.
    cases_compared : tuple of str
        Cases present in both revisions (results compared only there).
    """

    old_path: str
    new_path: str
    old_revision: str
    new_revision: str
    old_sha256: str
    new_sha256: str
    inputs: tuple[InputChange, ...]
    status_changes: tuple[CheckChange, ...]
    check_changes: tuple[CheckChange, ...]
    results: tuple[ResultChange, ...]
    cases_compared: tuple[str, ...]

    @property
    def changed(self) -> bool:
        """bool: anything at all differs, the input file's bytes included."""
        return bool(self.inputs or self.status_changes or self.check_changes or self.results)

    @property
    def changed_keys(self) -> frozenset[str]:
        """frozenset of str: key paths of every changed input and result row.

        Inputs give project-file keys (``elements.Rs.value``, ``elements.R9``
        for a whole added element); results give ``results.<case>.nodes.<n>``,
        ``results.<case>.elements.<name>.<quantity>`` and
        ``results.<case>.checks.<id>``. A report marks a row as revised when
        its key, or a key below it, is in this set (see :meth:`touches`).
        """
        keys = {c.key for c in self.inputs if c.key}
        keys |= {c.key for c in self.results}
        keys |= {c.key for c in (*self.status_changes, *self.check_changes)}
        return frozenset(keys)

    def touches(self, key: str) -> bool:
        """Whether ``key`` or anything below it changed.

        >>> c = Comparison("a", "b", "A", "B", "0", "1", (InputChange("element", "Rs",
        ...     "value", "changed", "4k7", "5k6", key="elements.Rs.value"),), (), (), (), ())
        >>> c.touches("elements.Rs"), c.touches("elements.Rc"), c.touches("elements.R")
        (True, False, False)
        """
        return any(k == key or k.startswith(key + ".") for k in self.changed_keys)

    def to_json(self) -> dict[str, Any]:
        """The comparison as a JSON-ready object (plain floats in SI units, None as null)."""

        def rows(items: Iterable[Any], extra: tuple[str, ...] = ()) -> list[dict[str, Any]]:
            out = []
            for item in items:
                row = {k: _json_number(v) for k, v in dataclasses.asdict(item).items()}
                for name in extra:
                    row[name] = _json_number(getattr(item, name))
                out.append(row)
            return out

        return {
            "old": {
                "path": self.old_path,
                "revision": self.old_revision,
                "sha256": self.old_sha256,
            },
            "new": {
                "path": self.new_path,
                "revision": self.new_revision,
                "sha256": self.new_sha256,
            },
            "changed": self.changed,
            "status_changes": rows(self.status_changes),
            "inputs": rows(self.inputs),
            "checks": rows(self.check_changes),
            "results": rows(self.results, ("delta", "relative")),
            "cases_compared": list(self.cases_compared),
        }


def _json_number(value: Any) -> Any:
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


# ---------------------------------------------------------------- inputs

_Flat = dict[str, tuple[str | None, float | None]]


def _num(x: Any) -> float | None:
    return None if x is None else float(x)


def _frac_text(x: Any) -> str | None:
    return None if x is None else f"{float(x):g}"


def _tolerance_text(t: Tolerance | None) -> str | None:
    if t is None:
        return None
    if t.text:
        return t.text
    if t.minus == t.plus:
        return f"±{float(t.plus) * 100:g} %"
    return f"−{float(t.minus) * 100:g} % / +{float(t.plus) * 100:g} %"


def _signature_text(s: Signature | None) -> str | None:
    if s is None:
        return None
    return f"{s.name} ({s.date.isoformat()})" if s.date else s.name


def _element_fields(e: Element) -> _Flat:
    out: _Flat = {
        "type": (e.type, None),
        "nodes": (" → ".join(e.nodes), None),
        e.kind.main.name: (e.value_text, float(e.value)),
        "description": (e.description or None, None),
        "tolerance": (_tolerance_text(e.tolerance), None),
    }
    if e.control_nodes is not None:
        out["control"] = (" − ".join(e.control_nodes), None)
    if e.control_element is not None:
        out["control"] = (e.control_element, None)
    for quantity, value in e.rating.given():
        out[f"rating.{quantity}"] = (eng(float(value), UNITS[quantity]), float(value))
    if e.series is not None:
        out["series"] = (e.series, None)
    if e.tcr is not None:
        out["tcr"] = (f"{float(e.tcr) * 1e6:g} ppm/K", float(e.tcr))
    if e.derating is not None:
        out["derating"] = (
            f"full to {float(e.derating.knee):g} °C, zero at {float(e.derating.zero):g} °C",
            None,
        )
    return out


def _diff_named(
    section: str,
    prefix: str,
    old: Mapping[str, _Flat],
    new: Mapping[str, _Flat],
) -> list[InputChange]:
    """Changes between two ``name -> {field: (text, number)}`` maps, in new-then-old order."""
    out: list[InputChange] = []
    names = list(new) + [n for n in old if n not in new]
    for name in names:
        key = f"{prefix}.{name}" if prefix else name
        if name not in old:
            out.append(InputChange(section, name, "", "added", None, _summary(new[name]), key=key))
        elif name not in new:
            out.append(
                InputChange(section, name, "", "removed", _summary(old[name]), None, key=key)
            )
        else:
            out += _diff_fields(section, name, key, old[name], new[name])
    return out


def _summary(fields: _Flat) -> str:
    return "; ".join(f"{k} {t}" for k, (t, _n) in fields.items() if t not in (None, ""))


def _diff_fields(section: str, subject: str, key: str, old: _Flat, new: _Flat) -> list[InputChange]:
    out = []
    for name in list(new) + [n for n in old if n not in new]:
        ot, on = old.get(name, (None, None))
        nt, nn = new.get(name, (None, None))
        number_changed = (on is not None or nn is not None) and (
            on is None or nn is None or on != nn
        )
        if ot == nt and not number_changed:
            continue
        kind = (
            "added"
            if ot is None and on is None
            else "removed"
            if nt is None and nn is None
            else "changed"
        )
        full_key = f"{key}.{name}" if key else name
        out.append(InputChange(section, subject, name, kind, ot, nt, on, nn, full_key))
    return out


def _dataclass_fields(obj: Any, skip: tuple[str, ...] = ()) -> _Flat:
    out: _Flat = {}
    for f in dataclasses.fields(obj):
        if f.name in skip:
            continue
        value = getattr(obj, f.name)
        if value is None or value == "" or value == ():
            text: str | None = None
        elif isinstance(value, tuple):
            text = "; ".join(str(v) for v in value)
        elif hasattr(value, "numerator") and not isinstance(value, (bool, int)):
            text = _frac_text(value)
        elif hasattr(value, "isoformat"):
            text = value.isoformat()
        elif dataclasses.is_dataclass(value):
            text = ", ".join(
                f"{g.name} {_frac_text(getattr(value, g.name))}" for g in dataclasses.fields(value)
            )
        else:
            text = str(value)
        number = (
            float(value)
            if isinstance(value, (int, float)) and not isinstance(value, bool)
            else None
        )
        if hasattr(value, "numerator") and not isinstance(value, bool):
            number = float(value)
        out[f.name] = (text, number)
    return out


def _input_changes(old: Project, new: Project) -> list[InputChange]:
    out: list[InputChange] = []
    out += _diff_fields(
        "document",
        "",
        "document",
        _dataclass_fields(old.document, ("history",)),
        _dataclass_fields(new.document, ("history",)),
    )

    def history(p: Project) -> dict[str, _Flat]:
        return {
            h.revision: {
                "date": (h.date.isoformat() if h.date else None, None),
                "description": (h.description or None, None),
            }
            for h in p.document.history
        }

    out += _diff_named("history", "document.history", history(old), history(new))

    def signoff(p: Project) -> _Flat:
        s = p.signoff
        return {
            "prepared": (_signature_text(s.prepared), None),
            "checked": (_signature_text(s.checked), None),
            "approved": (_signature_text(s.approved), None),
            "seal": (s.seal, None),
        }

    out += _diff_fields("signoff", "", "signoff", signoff(old), signoff(new))
    out += _diff_fields(
        "circuit",
        "",
        "circuit",
        {"reference": (old.reference, None)},
        {"reference": (new.reference, None)},
    )

    def parameters(p: Project) -> dict[str, _Flat]:
        return {
            q.name: {
                "value": (q.text, float(q.value)),
                "tolerance": (_tolerance_text(q.tolerance), None),
                "description": (q.description or None, None),
            }
            for q in p.parameters
        }

    out += _diff_named("parameter", "parameters", parameters(old), parameters(new))
    out += _diff_named(
        "element",
        "elements",
        {e.name: _element_fields(e) for e in old.elements},
        {e.name: _element_fields(e) for e in new.elements},
    )

    def limits(p: Project) -> _Flat:
        return _dataclass_fields(p.limits, ("nodes",))

    out += _diff_fields("limit", "", "limits", limits(old), limits(new))

    def windows(p: Project) -> dict[str, _Flat]:
        return {
            w.node: {
                "min": (None if w.min is None else eng(float(w.min), "V"), _num(w.min)),
                "max": (None if w.max is None else eng(float(w.max), "V"), _num(w.max)),
            }
            for w in p.limits.nodes
        }

    out += _diff_named("limit", "limits.nodes", windows(old), windows(new))

    def cases(p: Project) -> dict[str, _Flat]:
        return {
            c.name: {
                **{f"set.{s.target}": (s.text, None) for s in c.settings},
                "description": (c.description or None, None),
            }
            for c in p.cases
        }

    out += _diff_named("case", "cases", cases(old), cases(new))
    out += _diff_fields(
        "analysis", "", "analysis", _dataclass_fields(old.analysis), _dataclass_fields(new.analysis)
    )

    def sweeps(p: Project) -> dict[str, _Flat]:
        return {
            (s.name or f"{s.target} sweep"): {
                "target": (s.target, None),
                "range": (
                    f"{float(s.start):g} to {float(s.stop):g}, {s.points} points, {s.scale}",
                    None,
                ),
                "outputs": (", ".join(s.outputs), None),
            }
            for s in p.sweeps
        }

    out += _diff_named("sweep", "sweeps", sweeps(old), sweeps(new))
    out += _diff_fields(
        "report", "", "report", _dataclass_fields(old.report), _dataclass_fields(new.report)
    )
    if old.sha256 != new.sha256:
        out.append(InputChange("input file", "", "sha256", "changed", old.sha256, new.sha256))
    return out


def compare_projects(old: Project, new: Project) -> tuple[InputChange, ...]:
    """Every changed input between two projects (no solving).

    Parameters
    ----------
    old, new : Project

    Returns
    -------
    tuple of InputChange
    """
    return tuple(_input_changes(old, new))


# ---------------------------------------------------------------- results


def _case_values(r: CaseResult) -> dict[tuple[str, str, str], float]:
    net, br = r.netlist, r.branches
    out: dict[tuple[str, str, str], float] = {}
    for n, v in zip(net.nodes, br.node_voltage.tolist(), strict=True):
        out[("node", n, "voltage")] = float(v)
    for j, name in enumerate(net.names):
        out[("element", name, "current")] = float(br.current[j])
        out[("element", name, "power")] = float(br.power[j])
    return out


_RESULT_UNITS = {"voltage": "V", "current": "A", "power": "W"}


def _util(x: float | None) -> float | None:
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _check_rows(case: str, old: CaseResult | None, new: CaseResult | None) -> list[CheckChange]:
    oc = {c.id: c for c in (old.checks if old else ())}
    nc = {c.id: c for c in (new.checks if new else ())}
    out = []
    for cid in list(nc) + [i for i in oc if i not in nc]:
        o, n = oc.get(cid), nc.get(cid)
        ref = n or o
        assert ref is not None
        row = CheckChange(
            case=case,
            id=cid,
            subject=ref.subject,
            quantity=ref.quantity,
            unit=UNITS.get(ref.quantity, ""),
            old_status=o.status if o else None,
            new_status=n.status if n else None,
            old_value=float(o.value) if o else None,
            new_value=float(n.value) if n else None,
            old_limit=float(o.limit) if o else None,
            new_limit=float(n.limit) if n else None,
            old_utilization=_util(o.utilization) if o else None,
            new_utilization=_util(n.utilization) if n else None,
        )
        if (
            row.status_changed
            or meaningful(row.old_value, row.new_value)
            or meaningful(row.old_limit, row.new_limit)
            or meaningful(row.old_utilization, row.new_utilization)
        ):
            out.append(row)
    return out


def compare(old: Results, new: Results) -> Comparison:
    """Compare two revisions: changed inputs and their effect on the results.

    Parameters
    ----------
    old, new : Results
        Results of the earlier and the later revision (``calcdoc.solve``).

    Returns
    -------
    Comparison
        Only meaningful result changes (see :func:`meaningful`); checks whose
        status changed come first in ``status_changes``, new failures ahead
        of new passes.

    >>> import calcdoc
    >>> text = '''
    ... [elements.V1]
    ... type = "voltage_source"
    ... nodes = ["a", "gnd"]
    ... value = "10 V"
    ... [elements.R1]
    ... type = "resistor"
    ... nodes = ["a", "gnd"]
    ... value = "%s"
    ... '''
    >>> a = calcdoc.solve(calcdoc.loads(text % "1 kohm"))
    >>> b = calcdoc.solve(calcdoc.loads(text % "2 kohm"))
    >>> c = compare(a, b)
    >>> [(i.subject, i.field, i.old, i.new) for i in c.inputs if i.section == "element"]
    [('R1', 'value', '1 kohm', '2 kohm')]
    >>> [(r.subject, r.quantity, r.old, r.new) for r in c.results if r.subject == "R1"]
    [('R1', 'current', 0.01, 0.005), ('R1', 'power', 0.1, 0.05)]
    """
    inputs = _input_changes(old.project, new.project)
    old_cases = {r.name: r for r in old.cases}
    new_cases = {r.name: r for r in new.cases}
    compared = tuple(name for name in new_cases if name in old_cases)
    result_rows: list[ResultChange] = []
    check_rows: list[CheckChange] = []
    for name in compared:
        ov, nv = _case_values(old_cases[name]), _case_values(new_cases[name])
        for key in list(nv) + [k for k in ov if k not in nv]:
            a, b = ov.get(key), nv.get(key)
            if meaningful(a, b):
                kind, subject, quantity = key
                result_rows.append(
                    ResultChange(name, kind, subject, quantity, _RESULT_UNITS[quantity], a, b)
                )
    for name in list(new_cases) + [n for n in old_cases if n not in new_cases]:
        check_rows += _check_rows(name, old_cases.get(name), new_cases.get(name))
    status = [c for c in check_rows if c.status_changed]
    status.sort(key=lambda c: 0 if c.new_status == "fail" else 1)  # stable: case order kept
    return Comparison(
        old_path=old.project.path,
        new_path=new.project.path,
        old_revision=old.project.document.revision,
        new_revision=new.project.document.revision,
        old_sha256=old.project.sha256,
        new_sha256=new.project.sha256,
        inputs=tuple(inputs),
        status_changes=tuple(status),
        check_changes=tuple(c for c in check_rows if not c.status_changed),
        results=tuple(result_rows),
        cases_compared=compared,
    )
