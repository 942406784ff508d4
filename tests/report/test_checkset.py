"""The check set: one set that the cover, the conclusion and `calcdoc check` all count over.

Expected values come from the JSON results object (design.md section 6:
``cases[i].checks`` and, with tolerance analysis, ``cases[i].tolerance.checks``),
never from the check-set code itself.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

import calcdoc
from calcdoc.checkset import TOLERANCE, VALUES, check_set, check_summary
from calcdoc.cli import main

ROOT = Path(__file__).resolve().parents[2]
PROJECTS = sorted((ROOT / "projects").glob("*.toml"))


def json_checks(doc: dict) -> list[tuple[str, str, dict]]:
    """(case, scope, check object) for every check the JSON results hold."""
    out = []
    for case in doc["cases"]:
        out += [(case["name"], VALUES, c) for c in case["checks"]]
        out += [(case["name"], TOLERANCE, c) for c in case.get("tolerance", {}).get("checks", [])]
    return out


@pytest.fixture(scope="module", params=[p.stem for p in PROJECTS])
def demo(request):
    results = calcdoc.solve(calcdoc.load(ROOT / "projects" / f"{request.param}.toml"))
    return request.param, results, calcdoc.to_json(results)


def test_set_is_every_check_in_every_case_and_at_every_worst_case(demo):
    _, results, doc = demo
    expected = [(case, scope, c["id"]) for case, scope, c in json_checks(doc)]
    assert [(r.case, r.scope, r.check.id) for r in check_set(results)] == expected
    # each demo runs a tolerance analysis, so half the set is at the worst case
    assert sum(scope == TOLERANCE for _, scope, _ in expected) * 2 == len(expected)


def test_summary_counts_and_worst_match_the_json(demo):
    _, results, doc = demo
    checks = json_checks(doc)
    s = check_summary(results)
    assert s.count == len(checks)
    assert len(s.failed) == sum(c["status"] == "fail" for _, _, c in checks)
    worst = max(c["utilization"] for _, _, c in checks if c["utilization"] is not None)
    assert s.worst.utilization == pytest.approx(worst, rel=1e-12)


def test_check_command_counts_the_same_set(demo, capsys):
    name, _, doc = demo
    checks = json_checks(doc)
    failing = sum(c["status"] == "fail" for _, _, c in checks)
    status = main(["check", str(ROOT / "projects" / f"{name}.toml")])
    out = capsys.readouterr().out
    assert status == (1 if failing else 0)
    m = re.search(r"^(\d+) checks \(.*\): (\d+) pass, (\d+) fail$", out, re.M)
    assert m, out
    assert (int(m[1]), int(m[2]), int(m[3])) == (len(checks), len(checks) - failing, failing)
    worst = max(c["utilization"] for _, _, c in checks if c["utilization"] is not None)
    assert f"Worst utilisation: {worst * 100:.1f} %" in out
    assert "(s)" not in out


def test_a_failure_only_at_the_worst_case_fails_the_check_command(tmp_path, capsys):
    # 10 V across 1 kΩ ± 5 %: 100 mW as solved; at the low resistance extreme
    # P = V²/R = 100 / 950 = 105.3 mW (Ohm's law, common practice, no source).
    # A 0.104 W rating passes as solved (96.2 %) and fails at the worst case.
    project = tmp_path / "p.toml"
    project.write_text(
        "schema = 1\n"
        '[elements.V1]\ntype = "voltage_source"\nnodes = ["a", "gnd"]\nvalue = "10 V"\n'
        '[elements.R1]\ntype = "resistor"\nnodes = ["a", "gnd"]\nvalue = "1 kohm"\n'
        'tolerance = "5 %"\nrating = { power = "0.104 W" }\n'
        '[analysis]\ntolerance = "extreme"\n'
    )
    assert main(["check", str(project)]) == 1
    out = capsys.readouterr().out
    assert (
        "2 checks (1 check in 1 case as solved, 1 at the tolerance worst case): 1 pass, 1 fail"
        in out
    )
    assert "Worst utilisation: 101.2 %" in out  # 105.26 mW / 104 mW


@pytest.mark.parametrize("demo", sorted(p.stem for p in (ROOT / "projects").glob("*.toml")))
def test_the_set_read_from_the_json_counts_the_same(demo):
    from calcdoc.checkset import check_summary, document_check_set, summarise

    results = calcdoc.solve(calcdoc.load(ROOT / "projects" / f"{demo}.toml"))
    a = check_summary(results)
    b = summarise(document_check_set(calcdoc.to_json(results)), len(results.cases))
    assert (a.count, len(a.failed), a.at_tolerance) == (b.count, len(b.failed), b.at_tolerance)
    assert [(r.case, r.scope, r.check.id) for r in a.rows] == [
        (r.case, r.scope, r.check.id) for r in b.rows
    ]
    assert (a.worst is None) == (b.worst is None)
    if a.worst is not None:
        assert a.worst.utilization == b.worst.utilization
