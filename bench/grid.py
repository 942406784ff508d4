"""Write an N x N resistor grid project (a current source between corners)."""

from __future__ import annotations

import sys


def grid_project(n: int) -> str:
    out = [
        "schema = 1",
        "[document]",
        f'title = "Resistor grid {n} x {n} (benchmark)"',
        "[circuit]",
        'reference = "n0_0"',
        "[elements.Iin]",
        'type = "current_source"',
        f'nodes = ["n0_0", "n{n - 1}_{n - 1}"]',
        'value = "1 mA"',
    ]
    for i in range(n):
        for j in range(n):
            if j + 1 < n:
                out += [
                    f"[elements.h{i}_{j}]",
                    'type = "resistor"',
                    f'nodes = ["n{i}_{j}", "n{i}_{j + 1}"]',
                    'value = "1 kohm"',
                ]
            if i + 1 < n:
                out += [
                    f"[elements.v{i}_{j}]",
                    'type = "resistor"',
                    f'nodes = ["n{i}_{j}", "n{i + 1}_{j}"]',
                    'value = "1 kohm"',
                ]
    return "\n".join(out) + "\n"


if __name__ == "__main__":
    sys.stdout.write(grid_project(int(sys.argv[1])))
