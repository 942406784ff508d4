"""Golden cases: tests/cases/NAME.toml beside NAME.expected.toml.

The expected file holds hand-derived values as arithmetic on plain numbers
(its header states the derivation); they are evaluated here with Python's
own arithmetic, never by calcdoc, and every node, element quantity and
check of the results must be listed and agree.
"""

from __future__ import annotations

import ast
import math
import operator
from pathlib import Path

import pytest

import calcdoc

try:
    import tomllib
except ImportError:  # Python 3.10
    import tomli as tomllib

CASES = sorted((Path(__file__).parent / "cases").glob("*.toml"))
CASES = [c for c in CASES if not c.name.endswith(".expected.toml")]

_OPS = {
    ast.Add: operator.add,
    ast.Sub: operator.sub,
    ast.Mult: operator.mul,
    ast.Div: operator.truediv,
    ast.Pow: operator.pow,
}


def hand(text: str) -> float:
    """Evaluate plain arithmetic (numbers, + − × ÷ and powers) from the expected file."""

    def ev(node):
        if isinstance(node, ast.Expression):
            return ev(node.body)
        if isinstance(node, ast.Constant) and isinstance(node.value, (int, float)):
            return node.value
        if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub):
            return -ev(node.operand)
        if isinstance(node, ast.BinOp) and type(node.op) in _OPS:
            return _OPS[type(node.op)](ev(node.left), ev(node.right))
        raise ValueError(f"not plain arithmetic: {text!r}")

    return float(ev(ast.parse(text, mode="eval")))


def near(got: float, want: float) -> bool:
    return math.isclose(got, want, rel_tol=1e-12, abs_tol=1e-15)


@pytest.mark.parametrize("case", CASES, ids=[c.stem for c in CASES])
def test_golden(case):
    doc = calcdoc.to_json(calcdoc.solve(calcdoc.load(case)))
    want = tomllib.loads(case.with_suffix(".expected.toml").read_text())
    got = doc["cases"][0]
    assert set(got["nodes"]) == set(want["nodes"])
    for node, text in want["nodes"].items():
        assert near(got["nodes"][node], hand(text)), (node, got["nodes"][node], text)
    assert set(got["elements"]) == set(want["elements"])
    for name, quantities in want["elements"].items():
        for q, text in quantities.items():
            assert near(got["elements"][name][q], hand(text)), (name, q, text)
    checks = {c["id"]: c for c in got["checks"]}
    assert set(checks) == set(want["checks"])
    for cid, (value, limit) in want["checks"].items():
        assert near(checks[cid]["value"], hand(value)) and near(checks[cid]["limit"], hand(limit))
    # consistency of the record itself: KCL and the power ledger close
    assert all(abs(v) <= 1e-15 for v in got["kcl"].values())
    assert abs(got["power"]["imbalance"]) <= 1e-15
