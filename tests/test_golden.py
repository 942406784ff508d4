"""Golden cases (tests/cases/NAME.toml beside NAME.expected.json).

Each case file states its hand check in its header comment; the expected
JSON was produced once, compared with those hand values, and is kept as
data so any change in results is seen.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

import calcdoc

CASES = sorted((Path(__file__).parent / "cases").glob("*.toml"))


def close(a, b, path=""):
    if isinstance(a, dict):
        assert a.keys() == b.keys(), path
        for k in a:
            close(a[k], b[k], f"{path}.{k}")
    elif isinstance(a, list):
        assert len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            close(x, y, f"{path}[{i}]")
    elif isinstance(a, float) and isinstance(b, float):
        assert math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-12), (path, a, b)
    else:
        assert a == b, (path, a, b)


@pytest.mark.parametrize("case", CASES, ids=[c.stem for c in CASES])
def test_golden(case):
    got = calcdoc.to_json(calcdoc.solve(calcdoc.load(case)))
    got.pop("tool")
    got["input"].pop("path")
    want = json.loads(case.with_suffix("").with_suffix(".expected.json").read_text())
    close(got, want)


def test_hand_values():
    # Hand check written in tests/cases/divider.toml: V(out) = 12 x 2200/6900.
    r = calcdoc.to_json(
        calcdoc.solve(calcdoc.load(CASES[[c.stem for c in CASES].index("divider")]))
    )
    assert r["cases"][0]["nodes"]["out"] == pytest.approx(12 * 2200 / 6900, rel=1e-15)
    assert r["cases"][0]["elements"]["R1"]["power"] == pytest.approx(
        (12 / 6900) ** 2 * 4700, rel=1e-15
    )
