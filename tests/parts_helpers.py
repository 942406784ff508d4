"""Project text for circuits with contacts, diodes, op-amps, capacitors and coils."""

from __future__ import annotations

import calcdoc


def toml_value(v) -> str:
    if isinstance(v, str):
        return f'"{v}"'
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{k} = {toml_value(x)}" for k, x in v.items()) + " }"
    return str(v)


def parts_text(elements, *, extra: str = "", reference: str = "gnd") -> str:
    """TOML for ``elements``: (name, type, (a, b), {key: value}) with values as Python data."""
    lines = ["schema = 1", "[circuit]", f'reference = "{reference}"']
    for name, etype, (a, b), keys in elements:
        lines += [f"[elements.{name}]", f'type = "{etype}"', f'nodes = ["{a}", "{b}"]']
        lines += [f"{k} = {toml_value(v)}" for k, v in keys.items()]
    return "\n".join(lines) + "\n" + extra


def solve_parts(elements, **kw):
    """Results of a circuit given as element tuples (see :func:`parts_text`)."""
    return calcdoc.solve(calcdoc.loads(parts_text(elements, **kw)))


def node_voltages(case) -> dict[str, float]:
    return dict(zip(case.netlist.nodes, case.branches.node_voltage.tolist(), strict=True))


def element_results(case, name: str) -> tuple[float, float]:
    """(voltage, current) of one element."""
    j = case.netlist.index(name)
    return float(case.branches.voltage[j]), float(case.branches.current[j])


def state_of(case, name: str) -> str:
    return case.netlist.state(case.netlist.index(name))
