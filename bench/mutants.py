"""Mutation testing of the engine: how many small faults does the test suite catch?

Run by hand (it takes a while; never part of the test suite)::

    python3 bench/mutants.py                 # 25 mutants per module, seed 1
    python3 bench/mutants.py -n 40 --seed 7 calcdoc/mna/stamps.py

Each mutant changes one operator or number in one module of a scratch
copy of the repository (+ ↔ −, * ↔ /, < ↔ <=, > ↔ >=, == ↔ !=, and ↔ or,
a unary minus dropped, a small integer changed by one, a float doubled)
and runs the tests that cover the module, stopping at the first failure.
A mutant is *killed* when a test fails or the run times out.  Survivors
are listed with their line so the tests can be strengthened; equivalent
mutants (changes that cannot alter behaviour) are counted as survivors,
so the figure is a lower bound.
"""

from __future__ import annotations

import argparse
import ast
import os
import random
import shutil
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent

TARGETS = {
    "calcdoc/mna/stamps.py": ["tests/mna", "tests/test_golden.py", "tests/verify"],
    "calcdoc/mna/formulation.py": ["tests/mna", "tests/test_golden.py"],
    "calcdoc/mna/branches.py": ["tests/mna", "tests/test_golden.py", "tests/verify"],
    "calcdoc/mna/solve.py": ["tests/mna", "tests/test_golden.py"],
    "calcdoc/mna/diagnose.py": ["tests/mna"],
    "calcdoc/mna/batch.py": ["tests/analysis"],
    "calcdoc/verify/balance.py": ["tests/verify", "tests/mna", "tests/test_golden.py"],
    "calcdoc/verify/checks.py": ["tests/verify", "tests/test_golden.py", "tests/analysis"],
    "calcdoc/analysis/tolerance.py": ["tests/analysis"],
    "calcdoc/analysis/sensitivity.py": ["tests/analysis"],
}

SWAPS = {
    ast.Add: ("+", "-"), ast.Sub: ("-", "+"), ast.Mult: ("*", "/"), ast.Div: ("/", "*"),
    ast.Lt: ("<", "<="), ast.LtE: ("<=", "<"), ast.Gt: (">", ">="), ast.GtE: (">=", ">"),
    ast.Eq: ("==", "!="), ast.NotEq: ("!=", "=="),
}  # fmt: skip


@dataclass(frozen=True)
class Mutant:
    path: str
    line: int
    start: int  # offset in the file
    end: int
    old: str
    new: str

    def describe(self) -> str:
        return f"{self.path}:{self.line}: {self.old!r} -> {self.new!r}"


def _offsets(text: str) -> list[int]:
    out, pos = [0], 0
    for line in text.splitlines(keepends=True):
        pos += len(line)
        out.append(pos)
    return out


def _docstring_nodes(tree: ast.AST) -> set[int]:
    out = set()
    for node in ast.walk(tree):
        if isinstance(node, (ast.Module, ast.FunctionDef, ast.ClassDef, ast.AsyncFunctionDef)):
            body = getattr(node, "body", [])
            if body and isinstance(body[0], ast.Expr) and isinstance(body[0].value, ast.Constant):
                out.add(id(body[0].value))
    return out


def mutants(path: str) -> list[Mutant]:
    text = (ROOT / path).read_text()
    tree = ast.parse(text)
    off = _offsets(text)
    docs = _docstring_nodes(tree)

    lines = text.splitlines(keepends=True)

    def at(line: int, col: int) -> int:
        """File offset of a line and an ast column (a UTF-8 byte offset)."""
        return off[line - 1] + len(lines[line - 1].encode()[:col].decode())

    out: list[Mutant] = []

    def between(a: ast.AST, b: ast.AST, op: type) -> None:
        old, new = SWAPS[op]
        lo, hi = at(a.end_lineno, a.end_col_offset), at(b.lineno, b.col_offset)
        seg = text[lo:hi]
        k = seg.find(old)
        while k >= 0 and old in ("<", ">") and seg[k : k + 2] in ("<=", ">="):
            k = seg.find(old, k + 2)
        if k >= 0:
            out.append(Mutant(path, a.end_lineno, lo + k, lo + k + len(old), old, new))

    for node in ast.walk(tree):
        if isinstance(node, ast.BinOp) and type(node.op) in SWAPS:
            between(node.left, node.right, type(node.op))
        elif isinstance(node, ast.Compare):
            left = node.left
            for op, right in zip(node.ops, node.comparators, strict=True):
                if type(op) in SWAPS:
                    between(left, right, type(op))
                left = right
        elif isinstance(node, ast.BoolOp) and len(node.values) >= 2:
            word, other = ("and", "or") if isinstance(node.op, ast.And) else ("or", "and")
            between_text = text[at(node.values[0].end_lineno, node.values[0].end_col_offset) :
                                at(node.values[1].lineno, node.values[1].col_offset)]  # fmt: skip
            k = between_text.find(word)
            if k >= 0:
                lo = at(node.values[0].end_lineno, node.values[0].end_col_offset) + k
                out.append(Mutant(path, node.lineno, lo, lo + len(word), word, other))
        elif isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub):
            lo = at(node.lineno, node.col_offset)
            if text[lo] == "-":
                out.append(Mutant(path, node.lineno, lo, lo + 1, "-", ""))
        elif (
            isinstance(node, ast.Constant)
            and id(node) not in docs
            and isinstance(node.value, (int, float))
            and not isinstance(node.value, bool)
            and node.lineno == node.end_lineno
        ):
            lo, hi = at(node.lineno, node.col_offset), at(node.end_lineno, node.end_col_offset)
            old = text[lo:hi]
            new = repr(node.value + 1) if isinstance(node.value, int) else repr(node.value * 2)
            out.append(Mutant(path, node.lineno, lo, hi, old, new))
    return out


def run(copy: Path, m: Mutant, tests: list[str], timeout: float) -> bool:
    """True when the mutant is killed."""
    target = copy / m.path
    original = target.read_text()
    target.write_text(original[: m.start] + m.new + original[m.end :])
    env = dict(os.environ, PYTHONPATH=str(copy), PYTHONDONTWRITEBYTECODE="1")
    try:
        proc = subprocess.run(
            [sys.executable, "-m", "pytest", "-x", "-q", "-p", "no:cacheprovider",
             "--no-header", "-W", "ignore::DeprecationWarning", *tests],
            cwd=copy, env=env, capture_output=True, timeout=timeout,
        )  # fmt: skip
        return proc.returncode != 0
    except subprocess.TimeoutExpired:
        return True
    finally:
        target.write_text(original)


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("modules", nargs="*", default=list(TARGETS))
    ap.add_argument("-n", type=int, default=25, help="mutants sampled per module")
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--timeout", type=float, default=300)
    args = ap.parse_args()
    rng = random.Random(args.seed)
    with tempfile.TemporaryDirectory(prefix="calcdoc-mutants-") as tmp:
        copy = Path(tmp) / "repo"
        shutil.copytree(ROOT, copy, ignore=shutil.ignore_patterns(".git", "__pycache__", "*.pdf"))
        total = killed = 0
        survivors: list[Mutant] = []
        for path in args.modules:
            pool = mutants(path)
            sample = rng.sample(pool, min(args.n, len(pool)))
            k = 0
            t0 = time.perf_counter()
            for m in sample:
                if run(copy, m, TARGETS.get(path, ["tests"]), args.timeout):
                    k += 1
                else:
                    survivors.append(m)
            total += len(sample)
            killed += k
            print(f"{path}: {k}/{len(sample)} killed ({len(pool)} possible) "
                  f"in {time.perf_counter() - t0:.0f} s", flush=True)  # fmt: skip
        print(f"\nkilled {killed} of {total} mutants: {100 * killed / max(total, 1):.1f} %")
        for m in survivors:
            print("  survived:", m.describe())
    return 0


if __name__ == "__main__":
    sys.exit(main())
