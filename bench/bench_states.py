"""Benchmark of the diode state search, run by hand:

    python3 bench/bench_states.py [--size 200] [--runs 3]

A ladder of ``size`` rungs: a 24 V source feeds node n1; series resistors
join n(k) to n(k+1); every rung has a shunt resistor to the reference and
a diode from n(k) to the reference, with forward voltages spread from
0.3 V to 3.3 V, every fifth one a zener (breakdown 2 to 12 V) and every
seventh one reversed, so that the voltage along the ladder puts some
diodes in conduction, some in breakdown and leaves the rest blocking.

Prints, best of ``runs``: Lemke pivots, the time of the state search
alone, the time of the whole case (search, solve, derive, verify), and
how many devices ended in each state.
"""

from __future__ import annotations

import argparse
import sys
import time
from collections import Counter
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

import calcdoc  # noqa: E402
from calcdoc.mna.netlist import netlist  # noqa: E402
from calcdoc.mna.states import find_states  # noqa: E402
from calcdoc.pipeline import solve_case  # noqa: E402


def ladder(size: int) -> str:
    lines = [
        "[elements.V1]",
        'type = "voltage_source"',
        'nodes = ["n1", "gnd"]',
        'value = "24 V"',
    ]
    for k in range(1, size + 1):
        vf = 0.3 + 3.0 * ((k * 37) % 101) / 100
        a, b = (f"n{k}", "gnd") if k % 7 else ("gnd", f"n{k}")
        lines += [
            f"[elements.D{k}]",
            'type = "diode"',
            f'nodes = ["{a}", "{b}"]',
            f'forward_voltage = "{vf:.3f} V"',
            'resistance = "500 ohm"',
        ]
        if k % 5 == 0:
            lines.append(f'breakdown_voltage = "{2 + (k % 11):.1f} V"')
        lines += [
            f"[elements.Rs{k}]",
            'type = "resistor"',
            f'nodes = ["n{k}", "gnd"]',
            'value = "20 kohm"',
        ]
        if k < size:
            lines += [
                f"[elements.R{k}]",
                'type = "resistor"',
                f'nodes = ["n{k}", "n{k + 1}"]',
                'value = "0.5 ohm"',
            ]
    return "\n".join(lines) + "\n"


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--size", type=int, default=200)
    ap.add_argument("--runs", type=int, default=3)
    args = ap.parse_args()
    project = calcdoc.loads(ladder(args.size))
    net = netlist(project)
    search = case = float("inf")
    for _ in range(args.runs):
        t = time.perf_counter()
        found = find_states(net)
        search = min(search, time.perf_counter() - t)
        t = time.perf_counter()
        result = solve_case(project)
        case = min(case, time.perf_counter() - t)
    states = Counter(s for s, ty in zip(found.states, net.types, strict=True) if ty == "diode")
    print(f"{args.size}-diode ladder: {found.pieces} conducting pieces searched")
    print(f"  method: {found.method}; pivots: {found.iterations}")
    print(
        f"  state search: {search * 1000:.1f} ms; whole case: {case * 1000:.1f} ms "
        f"({result.solution.method}, {len(result.solution.unknowns)} unknowns)"
    )
    print("  states: " + ", ".join(f"{n} {s}" for s, n in sorted(states.items())))
    print(f"  every device's test holds: {result.states.holds}")


if __name__ == "__main__":
    main()
