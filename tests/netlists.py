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
