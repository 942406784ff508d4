"""Worst values across operating cases, and which case gives each."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Worst:
    subject: str
    quantity: str
    min: float
    min_case: str
    max: float
    max_case: str


@dataclass(frozen=True)
class Envelope:
    """Per node voltage and element power: lowest and highest across cases; per check: worst utilisation."""

    nodes: tuple[Worst, ...]
    powers: tuple[Worst, ...]
    checks: tuple[
        tuple[str, float | None, str, str], ...
    ]  # id, worst utilisation, case, status there

    def to_json(self) -> dict:
        w = lambda x: {"min": x.min, "min_case": x.min_case, "max": x.max, "max_case": x.max_case}  # noqa: E731
        return {
            "nodes": {x.subject: w(x) for x in self.nodes},
            "powers": {x.subject: w(x) for x in self.powers},
            "checks": [
                {"id": i, "utilization": u, "case": c, "status": s} for i, u, c, s in self.checks
            ],
        }


def envelope(cases) -> Envelope:
    """The envelope of solved cases (the nominal one included)."""
    first = cases[0]
    nodes = []
    for k, n in enumerate(first.netlist.nodes[1:], 1):
        vals = [(float(c.branches.node_voltage[k]), c.name) for c in cases]
        lo, hi = min(vals), max(vals)
        nodes.append(Worst(n, "voltage", lo[0], lo[1], hi[0], hi[1]))
    powers = []
    for j, e in enumerate(first.netlist.names):
        vals = [(float(c.branches.power[j]), c.name) for c in cases]
        lo, hi = min(vals), max(vals)
        powers.append(Worst(e, "power", lo[0], lo[1], hi[0], hi[1]))
    worst: dict[str, tuple[float | None, str, str]] = {}
    for c in cases:
        for ch in c.checks:
            u = ch.utilization
            prev = worst.get(ch.id)
            key = -1.0 if u is None else u
            if (
                prev is None
                or key > (-1.0 if prev[0] is None else prev[0])
                or (not ch.passed and prev[2] == "pass")
            ):
                worst[ch.id] = (u, c.name, ch.status)
    return Envelope(tuple(nodes), tuple(powers), tuple((i, *v) for i, v in worst.items()))
