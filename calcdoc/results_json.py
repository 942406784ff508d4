"""The JSON results object (design.md section 6), from results alone.

Every number is a plain float in SI units; no NaN or infinity ever
appears: :func:`finite` replaces what a float cannot hold with ``None`` and
:func:`results_document` asserts the whole object is finite.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from calcdoc import __version__
from calcdoc.model.elements import KINDS
from calcdoc.results import CaseResult, Results, StateSearch


def _f(x: Any) -> float | None:
    if x is None:
        return None
    v = float(x)
    return v if math.isfinite(v) else None


def finite(obj: Any) -> Any:
    """The same object with every non-finite float replaced by None."""
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: finite(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [finite(v) for v in obj]
    return obj


def floats(values: np.ndarray) -> list[float | None]:
    """An array as plain floats, anything non-finite as None (checked in bulk)."""
    if np.all(np.isfinite(values)):
        return values.tolist()
    return [_f(v) for v in values.tolist()]


BULK = ("nodes", "elements", "kcl", "kvl")
"""Per-case keys whose numbers are made finite where they are built (large circuits)."""


def case_document(r: CaseResult) -> dict[str, Any]:
    """The JSON object of one case (design.md section 6)."""
    net, br = r.netlist, r.branches
    nodes = dict(zip(net.nodes, floats(br.node_voltage), strict=True))
    elements = {
        name: {"voltage": v, "current": i, "power": p}
        for name, v, i, p in zip(
            net.names, floats(br.voltage), floats(br.current), floats(br.power), strict=True
        )
    }
    for j, name in enumerate(net.names):  # the element table says who has a state or energy
        kind = KINDS[net.types[j]]
        if kind.states:
            elements[name]["state"] = net.state(j)
        if kind.energy is not None and br.energy is not None:
            elements[name]["energy"] = float(br.energy[j])
    kcl = dict(zip(net.nodes[1:], floats(r.kcl[1:]), strict=True))
    if r.kvl.listed:
        kvl = [{"loop": list(lp.elements), "sum": _f(lp.sum)} for lp in r.kvl.loops]
    else:
        sums = floats(np.asarray(r.kvl.sums, dtype=float))
        kvl = [{"chord": c, "sum": v} for c, v in zip(r.kvl.chords, sums, strict=True)]
    return {
        "name": r.name,
        "nodes": nodes,
        "elements": elements,
        "power": {
            "absorbed": r.ledger.absorbed,
            "delivered": r.ledger.delivered,
            "imbalance": r.ledger.imbalance,
        },
        "kcl": kcl,
        "kvl": kvl,
        "checks": [
            {
                "id": c.id,
                "subject": c.subject,
                "quantity": c.quantity,
                "value": c.value,
                "limit": c.limit,
                "utilization": _f(c.utilization),
                "margin": c.margin,
                "bound": c.bound,
                "status": c.status,
            }
            for c in r.checks
        ],
        "solver": {
            "method": r.solution.method,
            "unknowns": len(r.solution.unknowns),
            "residual": _f(r.solution.residual),
            "condition": _f(r.solution.condition),
            "error_estimate": _f(r.solution.error_estimate),
            "refinement_steps": r.solution.refinement_steps,
            "kcl_max": float(np.max(np.abs(r.kcl))) if len(r.kcl) else 0.0,
            "kvl_max": r.kvl.max_abs_sum,
            "warnings": list(r.solution.warnings),
            **({"state_search": state_search(r.states)} if r.states is not None else {}),
        },
        **({"device_states": device_states(r.states)} if r.states is not None else {}),
    }


def state_search(s: StateSearch) -> dict[str, Any]:
    """How the device states were found (the ``solver`` block's ``state_search``)."""
    out = {"method": s.method, "iterations": s.iterations, "pieces": s.pieces}
    return out | ({"note": s.note} if s.note else {})


def device_states(s: StateSearch) -> dict[str, Any]:
    """Each searched device's state, its linear model and the tests that confirm it."""
    return {
        d.element: {
            "state": d.state,
            "law": d.law,
            "tests": [
                {
                    "test": t.text,
                    "quantity": t.quantity,
                    "value": t.value,
                    "limit": t.limit,
                    "margin": t.margin,
                    "holds": t.holds,
                }
                for t in d.tests
            ],
        }
        for d in s.devices
    }


def results_document(results: Results) -> dict[str, Any]:
    """The whole ``calcdoc solve --json`` object (no NaN or infinity anywhere)."""
    p = results.project
    cases = [case_document(r) for r in results.cases]
    for stage, data in results.extra.items():
        per_case = getattr(data, "per_case_json", None)
        if per_case is not None:
            for doc, extra in zip(cases, per_case(), strict=True):
                if extra is not None:
                    doc[stage] = extra
    cases = [{k: (v if k in BULK else finite(v)) for k, v in doc.items()} for doc in cases]
    out: dict[str, Any] = {
        "tool": {"name": "calcdoc", "version": __version__},
        "input": {"path": p.path, "sha256": p.sha256},
        "cases": cases,
    }
    for stage, data in results.extra.items():
        whole = getattr(data, "project_json", None)
        if whole is not None:
            out[stage] = finite(whole())
    return out
