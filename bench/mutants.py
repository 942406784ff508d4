"""Mutation testing of the engine: how many small faults does the test suite catch?

Run by hand (it takes a while; never part of the test suite)::

    python3 bench/mutants.py                 # 25 mutants per module, seed 1
    python3 bench/mutants.py -n 40 --seed 7 calcdoc/mna/stamps.py
    python3 bench/mutants.py --list calcdoc/mna/solve.py

Each mutant changes one operator or number in one module of a scratch
copy of the repository (+ ↔ −, * ↔ /, < ↔ <=, > ↔ >=, == ↔ !=, and ↔ or,
a unary minus dropped, an integer increased by one, a float doubled or,
for 0.0, made 1.0) and runs the tests that cover the module, stopping at
the first failure.  A mutant is *killed* when a test fails or the run
times out.  Survivors are listed with their line so the tests can be
strengthened.

What is counted
---------------
- A change that leaves the text's value unchanged is not generated (it
  is not a mutant: ``0.0`` doubled is ``0.0``).
- **Tuning constants** are counted apart: a number in a module-level
  assignment of one UPPER_CASE name to one number literal
  (``DENSE_LIMIT = 400``, ``SMALL = 2000``, ``ERROR_WARNING = 1e-9``).
  Such a constant picks where one method gives way to another or when a
  note is written; moving it by one or doubling it changes which correct
  method runs, not the result, so most of these mutants are equivalent.
  Every one of them is still run (none is sampled away) and its figure
  printed beside the score, and the *raw* figure counts them in; the
  *adjusted* figure, the score, leaves them out.  The rule is by form,
  not by outcome: numbers inside functions, tables and tuples
  (``OWN, CONDUCTANCE, CURRENT = 0, 1, 2``) are always scored, and so is
  every tolerance written inside the code.
- Other equivalent mutants are counted as survivors, so the score is a
  lower bound.

Each module's sample depends only on the seed and the module (running one
module alone samples the same mutants as the full run).
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

ENGINE_TESTS = [
    "tests/mna",
    "tests/verify",
    "tests/analysis",
    "tests/test_golden.py",
    "tests/test_engine_basics.py",
]


def _tests(first: str) -> list[str]:
    """The engine tests, the module's own test directory first (quickest kill)."""
    return [first, *(t for t in ENGINE_TESTS if t != first)]


TARGETS = {
    "calcdoc/mna/stamps.py": _tests("tests/mna"),
    "calcdoc/mna/formulation.py": _tests("tests/mna"),
    "calcdoc/mna/branches.py": _tests("tests/mna"),
    "calcdoc/mna/solve.py": _tests("tests/mna"),
    "calcdoc/mna/diagnose.py": _tests("tests/mna"),
    "calcdoc/mna/batch.py": _tests("tests/mna"),
    "calcdoc/verify/balance.py": _tests("tests/verify"),
    "calcdoc/verify/checks.py": _tests("tests/verify"),
    "calcdoc/analysis/tolerance.py": _tests("tests/analysis"),
    "calcdoc/analysis/sensitivity.py": _tests("tests/analysis"),
    # the record's verification is tested on packages, not through the engine tests
    "calcdoc/record/verify.py": ["tests/record", "tests/commands"],
}

SWAPS = {
    ast.Add: ("+", "-"),
    ast.Sub: ("-", "+"),
    ast.Mult: ("*", "/"),
    ast.Div: ("/", "*"),
    ast.Lt: ("<", "<="),
    ast.LtE: ("<=", "<"),
    ast.Gt: (">", ">="),
    ast.GtE: (">=", ">"),
    ast.Eq: ("==", "!="),
    ast.NotEq: ("!=", "=="),
}


@dataclass(frozen=True)
class Mutant:
    path: str
    line: int
    start: int  # offset in the file
    end: int
    old: str
    new: str
    constant: bool = False  # in a module-level UPPER_CASE number constant

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


def _constant_spans(tree: ast.Module) -> list[tuple[int, int, int, int]]:
    """(line, col, end line, end col) of each module-level ``NAME = number`` value."""
    out = []
    for node in tree.body:
        if isinstance(node, ast.Assign):
            targets, value = node.targets, node.value
        elif isinstance(node, ast.AnnAssign) and node.value is not None:
            targets, value = [node.target], node.value
        else:
            continue
        if not all(isinstance(t, ast.Name) and t.id.isupper() for t in targets):
            continue
        inner = value.operand if isinstance(value, ast.UnaryOp) else value
        if isinstance(inner, ast.Constant) and type(inner.value) in (int, float):
            out.append((value.lineno, value.col_offset, value.end_lineno, value.end_col_offset))
    return out


def _changed(node: ast.Constant) -> str | None:
    """The mutated literal, or None where the change would leave the value as it is."""
    v = node.value
    new = v + 1 if isinstance(v, int) else (v * 2 if v != 0 else 1.0)
    return None if new == v else repr(new)


def mutants(path: str) -> list[Mutant]:
    text = (ROOT / path).read_text()
    tree = ast.parse(text)
    off = _offsets(text)
    docs = _docstring_nodes(tree)
    spans = _constant_spans(tree)

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
            between_text = text[
                at(node.values[0].end_lineno, node.values[0].end_col_offset) : at(
                    node.values[1].lineno, node.values[1].col_offset
                )
            ]
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
            new = _changed(node)
            if new is None:
                continue
            lo, hi = at(node.lineno, node.col_offset), at(node.end_lineno, node.end_col_offset)
            out.append(Mutant(path, node.lineno, lo, hi, text[lo:hi], new))
    constant = [(at(a, b), at(c, d)) for a, b, c, d in spans]
    return [
        Mutant(m.path, m.line, m.start, m.end, m.old, m.new, True)
        if any(lo <= m.start and m.end <= hi for lo, hi in constant)
        else m
        for m in out
    ]


def run(copy: Path, m: Mutant, tests: list[str], timeout: float) -> bool:
    """True when the mutant is killed."""
    target = copy / m.path
    original = target.read_text()
    target.write_text(original[: m.start] + m.new + original[m.end :])
    env = dict(os.environ, PYTHONPATH=str(copy), PYTHONDONTWRITEBYTECODE="1")
    try:
        proc = subprocess.run(
            [
                sys.executable,
                "-m",
                "pytest",
                "-x",
                "-q",
                "-p",
                "no:cacheprovider",
                "--no-header",
                "-W",
                "ignore::DeprecationWarning",
                *tests,
            ],
            cwd=copy,
            env=env,
            capture_output=True,
            timeout=timeout,
        )
        return proc.returncode != 0
    except subprocess.TimeoutExpired:
        return True
    finally:
        target.write_text(original)


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("modules", nargs="*", default=list(TARGETS))
    ap.add_argument("-n", type=int, default=25, help="scored mutants sampled per module")
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--timeout", type=float, default=300)
    ap.add_argument("--list", action="store_true", help="list every mutant and stop")
    ap.add_argument(
        "--no-constants",
        action="store_true",
        help="skip the tuning-constant mutants (no raw figure)",
    )
    args = ap.parse_args()
    if args.list:
        for path in args.modules:
            for m in mutants(path):
                print(("constant  " if m.constant else "scored    ") + m.describe())
        return 0
    with tempfile.TemporaryDirectory(prefix="calcdoc-mutants-") as tmp:
        copy = Path(tmp) / "repo"
        shutil.copytree(ROOT, copy, ignore=shutil.ignore_patterns(".git", "__pycache__", "*.pdf"))
        totals = {"scored": [0, 0], "constant": [0, 0]}  # [killed, run]
        survivors: list[Mutant] = []
        for path in args.modules:
            pool = mutants(path)
            scored = [m for m in pool if not m.constant]
            constants = [] if args.no_constants else [m for m in pool if m.constant]
            rng = random.Random(f"{args.seed}:{path}")
            sample = rng.sample(scored, min(args.n, len(scored)))
            t0 = time.perf_counter()
            counts = {}
            for label, group in (("scored", sample), ("constant", constants)):
                k = 0
                for m in group:
                    if run(copy, m, TARGETS.get(path, ["tests"]), args.timeout):
                        k += 1
                    else:
                        survivors.append(m)
                counts[label] = (k, len(group))
                totals[label][0] += k
                totals[label][1] += len(group)
            (k, n), (kc, nc) = counts["scored"], counts["constant"]
            print(
                f"{path}: {k}/{n} killed ({len(scored)} possible); tuning constants "
                f"{kc}/{nc}; raw {k + kc}/{n + nc} in {time.perf_counter() - t0:.0f} s",
                flush=True,
            )
        (k, n), (kc, nc) = totals["scored"], totals["constant"]
        print(f"\nadjusted: killed {k} of {n} mutants: {100 * k / max(n, 1):.1f} %")
        print(
            f"raw (tuning constants counted in): killed {k + kc} of {n + nc}: "
            f"{100 * (k + kc) / max(n + nc, 1):.1f} %"
        )
        for m in survivors:
            print("  survived:", ("(constant) " if m.constant else "") + m.describe())
    return 0


if __name__ == "__main__":
    sys.exit(main())
