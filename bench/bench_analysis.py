"""Benchmark of the tolerance analyses (issue 5 targets), run by hand:

    python3 bench/bench_analysis.py

1. 10,000 Monte Carlo samples of a 50-node circuit. Target: under 2 s.
2. Exact extreme-value analysis over 12 toleranced values (4,096 vertices). Target: under 2 s.
Times are for the analysis itself (the project already loaded and the nominal case solved).
"""

from __future__ import annotations

import time

import calcdoc
from calcdoc.analysis.tolerance import tolerance_result


def ladder(nodes: int, toleranced: int, method: str, samples: int = 10000) -> str:
    out = ['[elements.V1]\ntype = "voltage_source"\nnodes = ["n1", "gnd"]\nvalue = "12 V"']
    k = 0
    for i in range(1, nodes):
        b = f"n{i + 1}" if i + 1 < nodes else "gnd"
        for a2, b2 in ((f"n{i}", b), (f"n{i}", "gnd")):
            k += 1
            tol = '\ntolerance = "1 %"' if k <= toleranced else ""
            out.append(
                f'[elements.R{k}]\ntype = "resistor"\nnodes = ["{a2}", "{b2}"]\nvalue = "{100 + k} ohm"{tol}\nrating = {{ power = "0.25 W" }}'
            )
    out.append(f'[analysis]\ntolerance = "{method}"\nsamples = {samples}\nseed = 1')
    return "\n".join(out) + "\n"


def timed(text: str) -> tuple[float, object]:
    p = calcdoc.loads(text)
    from calcdoc.pipeline import solve_cases

    r = solve_cases(p)
    t = time.perf_counter()
    res = tolerance_result(p, r[0])
    return time.perf_counter() - t, res


def main() -> None:
    timed(ladder(10, 4, "montecarlo", 100))  # warm up imports
    t, res = timed(ladder(51, 100, "montecarlo"))
    print(
        f"Monte Carlo, 50 nodes ({len(res.quantities)} toleranced), {res.solved} samples: {t:.2f} s (target < 2 s)"
    )
    t, res = timed(ladder(20, 12, "extreme"))
    print(
        f"extreme value, {len(res.quantities)} toleranced, {res.solved} vertices: {t:.2f} s (target < 2 s)"
    )


if __name__ == "__main__":
    main()
