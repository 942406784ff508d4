"""Benchmark of a set of records (issue 14 targets), run by hand:

    python3 bench/bench_batch.py [--records 40] [--repeat 5]

1. The demo build, ``calcdoc build projects/sensor_supply.toml``, as a fresh
   process (imports included), median of ``--repeat`` runs.
   Target: under 1.5 s.
2. A set of ``--records`` demo-sized records (the three demo projects
   copied round-robin, each with its own document number) built by
   ``calcdoc build FOLDER -j CPUS``. Target: within 1.3 x of
   (single-record build time x records / CPUs), the single-record time
   being the median of (1) over the three demos.
3. ``--changed`` over the same set when nothing changed (every record skipped).

Figures are printed; nothing is asserted (timings are never tests).
"""

from __future__ import annotations

import argparse
import os
import re
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
DEMOS = sorted((ROOT / "projects").glob("*.toml"))


CPU = {"last": 0.0}  # CPU seconds (user + system) of the last run, its worker processes included


def wall(args: list[str], cwd: Path) -> float:
    """Wall time of ``calcdoc ARGS``; its CPU time is left in ``CPU["last"]``."""
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t = time.perf_counter()
    subprocess.run(
        [sys.executable, "-m", "calcdoc", *args],
        cwd=cwd,
        env=env,
        check=False,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    elapsed = time.perf_counter() - t
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    CPU["last"] = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return elapsed


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--records", type=int, default=40)
    ap.add_argument("--repeat", type=int, default=5)
    opts = ap.parse_args()
    cpus = len(os.sched_getaffinity(0))
    with tempfile.TemporaryDirectory() as tmp:
        work = Path(tmp)
        print(f"{cpus} CPUs; load average {os.getloadavg()[0]:.2f} at the start")
        singles = {}
        for demo in DEMOS:
            times, cpu = [], []
            for _ in range(opts.repeat):
                times.append(wall(["build", str(demo), "-o", str(work / "one.pdf"), "-q"], work))
                cpu.append(CPU["last"])
            singles[demo.stem] = statistics.median(times)
            print(
                f"single build {demo.stem:18s} median {singles[demo.stem]:.2f} s "
                f"(min {min(times):.2f}, max {max(times):.2f}; imports included; "
                f"CPU {statistics.median(cpu):.2f} s)"
            )
        one = statistics.median(singles.values())
        folder = work / "set"
        folder.mkdir()
        for i in range(opts.records):
            demo = DEMOS[i % len(DEMOS)]
            text = demo.read_text(encoding="utf-8")
            text = re.sub(
                r'^number = ".*"$',
                f'number = "BENCH-{i + 1:03d}"',
                text,
                count=1,
                flags=re.MULTILINE,
            )
            (folder / f"record_{i + 1:03d}.toml").write_text(text, encoding="utf-8")
        batch = wall(["build", str(folder), "-j", str(cpus), "-q"], work)
        batch_cpu = CPU["last"]
        target = 1.3 * one * opts.records / cpus
        print(
            f"set of {opts.records} records, -j {cpus}: {batch:.1f} s; ideal "
            f"{one * opts.records / cpus:.1f} s, target {target:.1f} s "
            f"({batch / (one * opts.records / cpus):.2f} x ideal); CPU {batch_cpu:.1f} s, "
            f"{batch_cpu / opts.records:.2f} s a record"
        )
        serial = wall(["build", str(folder), "-j", "1", "-q"], work)
        print(
            f"same set, -j 1: {serial:.1f} s ({serial / opts.records:.2f} s a record, "
            f"speed-up with -j {cpus}: {serial / batch:.2f})"
        )
        skipped = wall(["build", str(folder), "--changed", "-q"], work)
        print(f"same set, --changed, nothing changed: {skipped:.1f} s")
        print(f"load average {os.getloadavg()[0]:.2f} at the end")
        shutil.rmtree(folder)


if __name__ == "__main__":
    main()
