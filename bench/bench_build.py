"""Benchmark of `calcdoc build` (issue 4 and 14 targets), run by hand:

    python3 bench/bench_build.py

1. A demo project's whole package, as a fresh process (imports included).
   Target: under 1.5 s wall (issue 14; was 3 s).
2. A generated network of 200 nodes and 400 elements (a random connected
   resistor mesh with sources), whole package including equations.
   Target: under 60 s and 1 GB peak.
"""

from __future__ import annotations

import random
import subprocess
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent


def network(nodes: int = 200, elements: int = 400, seed: int = 5) -> str:
    rng = random.Random(seed)
    out = [
        "schema = 1",
        "[document]",
        'title = "Generated 200-node network (benchmark)"',
        'number = "BENCH-1"',
        'revision = "A"',
        "date = 2026-12-01",
    ]
    names = ["gnd"] + [f"n{i}" for i in range(1, nodes)]
    count = 0

    def add(kind: str, a: str, b: str, value: str, extra: str = "") -> None:
        nonlocal count
        count += 1
        out.extend(
            [
                f"[elements.E{count}]",
                f'type = "{kind}"',
                f'nodes = ["{a}", "{b}"]',
                f'value = "{value}"',
            ]
        )
        if extra:
            out.append(extra)

    add("voltage_source", "n1", "gnd", "24 V", 'rating = { current = "5 A" }')
    add("current_source", "gnd", "n2", "10 mA")
    for i in range(1, nodes):  # a spanning tree keeps it connected
        add(
            "resistor",
            names[i],
            names[rng.randrange(0, i)],
            f"{rng.randint(10, 9999)} ohm",
            'rating = { power = "0.25 W" }',
        )
    while count < elements:
        a, b = rng.sample(names, 2)
        add("resistor", a, b, f"{rng.randint(10, 9999)} ohm", 'rating = { power = "0.25 W" }')
    return "\n".join(out) + "\n"


def run(args: list[str]) -> tuple[float, float]:
    code = (
        "import resource,subprocess,sys,time;t=time.perf_counter();"
        "subprocess.run(sys.argv[1:],check=True,stdout=subprocess.DEVNULL);"
        "print(time.perf_counter()-t, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss/1024)"
    )
    out = subprocess.run(
        [sys.executable, "-c", code, *args], check=True, capture_output=True, text=True
    )
    wall, mem = out.stdout.split()
    return float(wall), float(mem)


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        demo = ROOT / "projects" / "sensor_supply.toml"
        times = [
            run([sys.executable, "-m", "calcdoc", "build", str(demo), "-q", "-o", f"{tmp}/d.pdf"])
            for _ in range(3)
        ]
        print(
            f"demo package (sensor_supply): best {min(t for t, _ in times):.2f} s, peak {max(m for _, m in times):.0f} MB (target < 1.5 s)"
        )
        big = Path(tmp) / "net200.toml"
        big.write_text(network())
        wall, mem = run(
            [sys.executable, "-m", "calcdoc", "build", str(big), "-q", "-o", f"{tmp}/n.pdf"]
        )
        size = Path(f"{tmp}/n.pdf").stat().st_size
        print(
            f"200 nodes / 400 elements: {wall:.1f} s, peak {mem:.0f} MB, {size / 1e6:.1f} MB file (target < 60 s, < 1024 MB)"
        )


if __name__ == "__main__":
    main()
