"""Project-file text from element tuples, shared by the tests."""

from __future__ import annotations


def project_text(elements, *, reference="gnd", extra=""):
    """TOML text for ``elements``: (name, type, (a, b), value[, {extra keys}])."""
    lines = ["schema = 1", "[circuit]", f'reference = "{reference}"']
    for item in elements:
        name, etype, (a, b), value, *rest = item
        key = "gain" if etype in ("vcvs", "vccs", "ccvs", "cccs") else "value"
        lines += [
            f"[elements.{name}]",
            f'type = "{etype}"',
            f'nodes = ["{a}", "{b}"]',
            f'{key} = "{value}"',
        ]
        for k, v in (rest[0] if rest else {}).items():
            lines.append(f"{k} = {v}")
    return "\n".join(lines) + "\n" + extra


UNIT = {
    "resistor": "ohm",
    "voltage_source": "V",
    "current_source": "A",
    "vcvs": "",
    "vccs": "S",
    "ccvs": "ohm",
    "cccs": "",
    "thevenin": "V",
    "contact": "ohm",
    "winding": "",
}


def rows_text(rows) -> str:
    """Project text from (calcdoc type, Part, value text or None, extra keys)."""
    lines = ["schema = 1"]
    for etype, p, text, extra in rows:
        key = "gain" if etype in ("vcvs", "vccs", "ccvs", "cccs") else "value"
        number = p.value if p.value.denominator == 1 else float(p.value)  # exact decimals here
        value = text if text is not None else f"{number} {UNIT[etype]}".strip()
        lines += [
            f"[elements.{p.name}]",
            f'type = "{etype}"',
            f'nodes = ["{p.a}", "{p.b}"]',
            f'{key} = "{value}"',
        ]
        if isinstance(p.control, tuple):
            lines.append(f'control = ["{p.control[0]}", "{p.control[1]}"]')
        elif p.control:
            lines.append(f'control = "{p.control}"')
        lines += [f"{k} = {v}" for k, v in extra.items()]
    return "\n".join(lines) + "\n"
