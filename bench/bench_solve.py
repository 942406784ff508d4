"""Benchmark of `calcdoc solve` (issue 3 targets), run by hand:

    python3 bench/bench_solve.py [--runs 5] [--big 300]

1. 100 x 100 resistor grid (10,000 nodes) through `calcdoc solve --json`
   against the floor script bench/floor_solve.py (tomllib + scipy.sparse
   assembly + spsolve of the same file); runs interleaved, best of N.
   Target: within 1.5x of the floor (3x at most).
2. 300 x 300 grid (90,000 nodes): `calcdoc solve` wall time and peak
   memory. Target: under 30 s and 2 GB.
3. `calcdoc --help` wall time. Target: under 0.5 s.
"""

from __future__ import annotations

import argparse
import os
import resource
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
OUT = HERE / "out"
sys.path.insert(0, str(HERE))
from grid import grid_project  # noqa: E402


def timed(cmd: list[str]) -> tuple[float, float]:
    """Wall seconds and peak RSS (MB) of one child process."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    t = time.perf_counter()
    subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL)
    wall = time.perf_counter() - t
    after = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    return wall, max(after, before) / 1024


def peak_of(cmd: list[str]) -> tuple[float, float]:
    """Wall seconds and peak RSS (MB) measured with a fresh child."""
    wall, mem, _ = measured(cmd)
    return wall, mem


def measured(cmd: list[str]) -> tuple[float, float, float]:
    """Wall seconds, peak RSS (MB) and CPU seconds (user + system) of a fresh child.

    CPU time is what to compare on a shared machine: wall time grows with
    whatever else runs, CPU time much less.
    """
    code = (
        "import resource,subprocess,sys,time;t=time.perf_counter();"
        "subprocess.run(sys.argv[1:],check=True,stdout=subprocess.DEVNULL);"
        "u=resource.getrusage(resource.RUSAGE_CHILDREN);"
        "print(time.perf_counter()-t, u.ru_maxrss/1024, u.ru_utime+u.ru_stime)"
    )
    out = subprocess.run(
        [sys.executable, "-c", code, *cmd], check=True, capture_output=True, text=True
    )
    wall, mem, cpu = out.stdout.split()
    return float(wall), float(mem), float(cpu)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--runs", type=int, default=5)
    ap.add_argument("--big", type=int, default=300)
    args = ap.parse_args()
    OUT.mkdir(exist_ok=True)
    g100 = OUT / "grid100.toml"
    g100.write_text(grid_project(100))
    calcdoc = [sys.executable, "-m", "calcdoc"]
    floor_t, ours_t = [], []
    for _ in range(args.runs):  # interleaved, best of N
        floor_t.append(measured([sys.executable, str(HERE / "floor_solve.py"), str(g100)]))
        ours_t.append(measured([*calcdoc, "solve", "--json", str(g100)]))
    fw, ow = min(t[0] for t in floor_t), min(t[0] for t in ours_t)
    fc, oc = min(t[2] for t in floor_t), min(t[2] for t in ours_t)
    print(
        f"grid 100x100 wall: floor {fw:.2f} s, calcdoc solve --json {ow:.2f} s, ratio {ow / fw:.2f}"
    )
    print(
        f"grid 100x100 CPU:  floor {fc:.2f} s, calcdoc solve --json {oc:.2f} s, ratio {oc / fc:.2f} "
        "(target <= 1.5)"
    )
    print(f"load average: {os.getloadavg()[0]:.1f}")
    help_t = min(peak_of([*calcdoc, "--help"])[0] for _ in range(args.runs))
    print(f"calcdoc --help: {help_t:.3f} s (target < 0.5)")
    if args.big:
        big = OUT / f"grid{args.big}.toml"
        if not big.exists():
            big.write_text(grid_project(args.big))
        wall, mem = peak_of([*calcdoc, "solve", "--json", str(big)])
        n = args.big
        print(
            f"grid {n}x{n} ({n * n} nodes): {wall:.1f} s, peak {mem:.0f} MB (target < 30 s, < 2048 MB)"
        )
        wall, mem = peak_of([*calcdoc, "solve", str(big)])
        print(f"grid {n}x{n} tables: {wall:.1f} s, peak {mem:.0f} MB")


if __name__ == "__main__":
    os.environ.setdefault("PYTHONHASHSEED", "0")
    main()
