"""Tests for calcdoc.record.compare and ``calcdoc diff``.

Two revisions of the demo project projects/sensor_supply.toml differ in the
sensor load resistor Rs (4k7 -> 5k6). Expected results are closed form: the
branch is a series pair, so V(field) = V_PSU * Rs / (Rc + Rs) and
P(Rs) = V(field)^2 / Rs (voltage divider and Joule's law, common practice,
no source), with Rc = 2 * 21 mohm/m * 85 m = 3.57 ohm from the file.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

import calcdoc
from calcdoc.cli import main
from calcdoc.record.compare import REL_TOL, compare, compare_projects, meaningful

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "projects" / "sensor_supply.toml"
RC = 2 * 0.021 * 85  # ohm, from the demo file's parameters


def revision_c_text() -> str:
    """The demo project as revision C: Rs 4k7 -> 5k6, with a history entry."""
    text = DEMO.read_text(encoding="utf-8")
    assert text.count('value = "4k7"') == 1
    text = text.replace('value = "4k7"', 'value = "5k6"')
    head, sep, rest = text.partition('revision = "B"')  # the [document] key comes first
    text = head + 'revision = "C"' + rest
    entry = (
        '\n[[document.history]]\nrevision = "C"\ndate = 2026-12-01\n'
        'description = "Sensor load changed to 5k6"\n'
    )
    return text.replace("\n[signoff]", entry + "\n[signoff]", 1)


@pytest.fixture(scope="module")
def revisions(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    folder = tmp_path_factory.mktemp("revisions")
    old = folder / "sensor_supply_B.toml"
    new = folder / "sensor_supply_C.toml"
    old.write_bytes(DEMO.read_bytes())
    new.write_text(revision_c_text(), encoding="utf-8")
    return old, new


@pytest.fixture(scope="module")
def comparison(revisions):
    old, new = revisions
    return compare(calcdoc.solve(calcdoc.load(old)), calcdoc.solve(calcdoc.load(new)))


def field_voltage(v_psu: float, rs: float) -> float:
    return v_psu * rs / (RC + rs)


def test_changed_inputs_name_the_resistor_and_the_document_fields(comparison) -> None:
    elements = [c for c in comparison.inputs if c.section == "element"]
    assert [(c.subject, c.field, c.old, c.new) for c in elements] == [("Rs", "value", "4k7", "5k6")]
    (rs,) = elements
    assert rs.old_number == pytest.approx(4700.0) and rs.new_number == pytest.approx(5600.0)
    assert rs.key == "elements.Rs.value"
    revision = [c for c in comparison.inputs if c.key == "document.revision"]
    assert [(c.old, c.new) for c in revision] == [("B", "C")]
    history = [c for c in comparison.inputs if c.section == "history"]
    assert [(c.subject, c.kind) for c in history] == [("C", "added")]
    assert comparison.inputs[-1].section == "input file"
    # Nothing else in the inputs changed.
    assert {c.section for c in comparison.inputs} == {
        "document",
        "history",
        "element",
        "input file",
    }


def test_result_changes_match_the_closed_form_divider(comparison) -> None:
    rows = {(r.case, r.kind, r.subject, r.quantity): r for r in comparison.results}
    for case, v_psu in (("nominal", 24.0), ("Low line", 21.6), ("High line", 26.4)):
        field = rows[(case, "node", "field", "voltage")]
        assert field.old == pytest.approx(field_voltage(v_psu, 4700), rel=1e-12)
        assert field.new == pytest.approx(field_voltage(v_psu, 5600), rel=1e-12)
        assert field.delta == pytest.approx(field.new - field.old)
        power = rows[(case, "element", "Rs", "power")]
        assert power.new == pytest.approx(field_voltage(v_psu, 5600) ** 2 / 5600, rel=1e-12)
        # The supply and reference nodes are fixed by the source: not listed.
        assert (case, "node", "bus", "voltage") not in rows
        assert (case, "node", "gnd", "voltage") not in rows
    assert comparison.cases_compared == ("nominal", "Low line", "High line")


def test_check_whose_status_changed_is_listed(comparison) -> None:
    # High line: P(Rs) = (26.4 * 4700 / 4703.57)^2 / 4700 = 0.1481 W > 0.125 W
    # (half of 0.25 W); with 5k6 it is 0.1243 W, so the check now passes.
    old_p = field_voltage(26.4, 4700) ** 2 / 4700
    new_p = field_voltage(26.4, 5600) ** 2 / 5600
    assert old_p > 0.125 > new_p
    (change,) = comparison.status_changes
    assert (change.case, change.id, change.old_status, change.new_status) == (
        "High line",
        "Rs.power",
        "fail",
        "pass",
    )
    assert change.new_utilization == pytest.approx(new_p / 0.125, rel=1e-12)
    assert all(not c.status_changed for c in comparison.check_changes)
    assert comparison.changed
    assert comparison.touches("elements.Rs")
    assert comparison.touches("results.High line.checks.Rs.power")
    assert not comparison.touches("elements.Rc")


def test_identical_revisions_compare_unchanged(revisions) -> None:
    old, _new = revisions
    results = calcdoc.solve(calcdoc.load(old))
    same = compare(results, calcdoc.solve(calcdoc.load(old)))
    assert not same.changed
    assert same.inputs == () and same.results == () and same.status_changes == ()


def test_comment_only_edit_counts_as_changed_text() -> None:
    text = DEMO.read_text(encoding="utf-8")
    a = calcdoc.loads(text, "a.toml")
    b = calcdoc.loads(text + "\n# reviewed\n", "b.toml")
    changes = compare_projects(a, b)
    assert [(c.section, c.field) for c in changes] == [("input file", "sha256")]


def test_added_and_removed_elements_and_parameter_changes() -> None:
    base = """
[parameters]
r = "1 kohm"
[elements.V1]
type = "voltage_source"
nodes = ["a", "gnd"]
value = "10 V"
[elements.R1]
type = "resistor"
nodes = ["a", "gnd"]
value = "r"
"""
    extra = '[elements.R2]\ntype = "resistor"\nnodes = ["a", "gnd"]\nvalue = "10 kohm"\n'
    old = calcdoc.solve(calcdoc.loads(base))
    new = calcdoc.solve(calcdoc.loads(base.replace('"1 kohm"', '"2 kohm"') + extra))
    c = compare(old, new)
    rows = {(i.section, i.subject, i.field): i for i in c.inputs}
    assert rows[("parameter", "r", "value")].new == "2 kohm"
    # R1's text is unchanged but its evaluated value follows the parameter.
    r1 = rows[("element", "R1", "value")]
    assert (r1.old, r1.new, r1.old_number, r1.new_number) == ("r", "r", 1000.0, 2000.0)
    assert rows[("element", "R2", "")].kind == "added"
    added = [r for r in c.results if r.subject == "R2"]
    # Ohm's law: 10 V across 10 kohm is 1 mA (common practice, no source).
    assert {r.quantity: (r.old, r.new) for r in added}["current"] == (None, pytest.approx(1e-3))
    back = compare(new, old)
    assert {(i.subject, i.kind) for i in back.inputs if i.field == ""} == {("R2", "removed")}


def test_threshold_ignores_round_off_only() -> None:
    assert not meaningful(23.98, 23.98 * (1 + REL_TOL / 10))
    assert meaningful(23.98, 23.98 * (1 + REL_TOL * 10))
    assert not meaningful(0.0, 1e-13)


def test_json_is_plain_and_complete(comparison) -> None:
    doc = comparison.to_json()
    text = json.dumps(doc, allow_nan=False)
    back = json.loads(text)
    assert back["changed"] is True
    assert back["status_changes"][0]["id"] == "Rs.power"
    assert any(r["subject"] == "Rs" and r["field"] == "value" for r in back["inputs"])
    assert all("delta" in r for r in back["results"])


# ---------------------------------------------------------------- command line


def test_diff_command_prints_status_change_first(revisions, capsys) -> None:
    old, new = revisions
    assert main(["diff", str(old), str(new)]) == 0
    out = capsys.readouterr().out
    assert out.index("Checks whose status changed") < out.index("Changed inputs")
    assert out.index("Changed inputs") < out.index("Effect on results")
    assert "Rs.power" in out and "FAIL" in out
    assert "Rs value" in out and "4k7" in out and "5k6" in out
    assert "node field" in out


def test_diff_exit_code_option(revisions, capsys) -> None:
    old, new = revisions
    assert main(["diff", str(old), str(new), "--exit-code"]) == 1
    assert main(["diff", str(old), str(old), "--exit-code"]) == 0
    out = capsys.readouterr().out
    assert "No differences" in out


def test_diff_json_output(revisions, capsys) -> None:
    old, new = revisions
    assert main(["diff", str(old), str(new), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["old"]["revision"] == "B" and doc["new"]["revision"] == "C"
    assert doc["status_changes"][0]["new_status"] == "pass"


def test_diff_bad_input_exits_2_naming_the_file(revisions, tmp_path, capsys) -> None:
    old, _new = revisions
    broken = tmp_path / "broken.toml"
    broken.write_text("schema = 1\n[elements.R1\n", encoding="utf-8")
    assert main(["diff", str(old), str(broken)]) == 2
    err = capsys.readouterr().err
    assert str(broken) in err and "Traceback" not in err
    fake_pdf = tmp_path / "fake.pdf"
    fake_pdf.write_bytes(b"%PDF-1.7\nnot really a pdf\n")
    assert main(["diff", str(fake_pdf), str(old)]) == 2
    err = capsys.readouterr().err
    assert str(fake_pdf) in err and "Traceback" not in err
    assert main(["diff", str(tmp_path / "missing.toml"), str(old)]) == 2
    assert "missing.toml" in capsys.readouterr().err
