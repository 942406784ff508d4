"""Tests for calcdoc.model.history.

The ordering rule (letters A < B < ... < Z < AA, numbers numerically, drafts
by letter before numbered issues) is the usual drawing-register convention
(common practice, no source); dates are compared as calendar dates.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import calcdoc
from calcdoc.model.history import history_findings, revision_key, same_revision_warning

DEMO = Path(__file__).resolve().parents[2] / "projects" / "sensor_supply.toml"

CIRCUIT = """
[elements.V1]
type = "voltage_source"
nodes = ["a", "gnd"]
value = "10 V"
[elements.R1]
type = "resistor"
nodes = ["a", "gnd"]
value = "1 kohm"
"""


def project(revision: str, history: list[tuple[str, str]], date: str | None = "2026-11-20"):
    lines = ["[document]", f'revision = "{revision}"']
    if date:
        lines.append(f"date = {date}")
    for rev, when in history:
        lines += [
            "[[document.history]]",
            f'revision = "{rev}"',
            f"date = {when}",
            'description = "issue"',
        ]
    return calcdoc.loads("\n".join(lines) + "\n" + CIRCUIT, "p.toml")


def test_demo_project_history_is_consistent() -> None:
    assert history_findings(calcdoc.load(DEMO)) == ()


@pytest.mark.parametrize(
    ("revisions", "ordered"),
    [
        (["A", "B", "C"], True),
        (["Y", "Z", "AA"], True),
        (["0", "1", "2", "10"], True),
        (["A", "B", "0", "1"], True),  # drafts by letter, then numbered issues
        (["P1", "P2", "P10"], True),
        (["B", "A"], False),
        (["10", "9"], False),
        (["AA", "Z"], False),
        (["0", "A"], False),
    ],
)
def test_revision_order(revisions: list[str], ordered: bool) -> None:
    history = [(r, f"2026-01-{i + 1:02d}") for i, r in enumerate(revisions)]
    current = revisions[-1]
    findings = history_findings(project(current, history, date=history[-1][1]))
    assert (findings == ()) is ordered, findings
    if not ordered:
        assert findings[0].severity == "error" and "listed after" in findings[0].message


def test_dates_must_not_go_backwards() -> None:
    (f,) = history_findings(project("B", [("A", "2026-10-02"), ("B", "2026-09-30")], "2026-09-30"))
    assert f.severity == "error" and f.key == "document.history[1].date"
    assert "before revision 'A'" in f.message
    # The same day twice is fine.
    assert (
        history_findings(project("B", [("A", "2026-10-02"), ("B", "2026-10-02")], "2026-10-02"))
        == ()
    )


def test_current_revision_stated_only_in_document() -> None:
    assert history_findings(project("B", [("A", "2026-10-02")])) == ()
    (f,) = history_findings(project("A", [("B", "2026-10-02")]))
    assert f.key == "document.revision" and "does not come after" in f.message
    (g,) = history_findings(project("B", [("A", "2026-12-02")], date="2026-11-20"))
    assert g.key == "document.date"


def test_current_revision_must_be_the_last_history_entry() -> None:
    findings = history_findings(
        project("B", [("A", "2026-10-02"), ("B", "2026-11-20"), ("C", "2026-11-21")])
    )
    assert any("followed in the history by 'C'" in f.message for f in findings)


def test_duplicate_and_unrecognised_revisions() -> None:
    dup = history_findings(project("B", [("A", "2026-10-01"), ("A", "2026-10-02")]))
    assert any("appears twice" in f.message for f in dup)
    odd = history_findings(project("B", [("1.2", "2026-10-01")]))
    assert [f.severity for f in odd] == ["warning"]


def test_revision_key_rule() -> None:
    assert revision_key("b") == revision_key("B")
    assert revision_key("Z") < revision_key("AA")
    assert revision_key("9") < revision_key("10")
    assert revision_key("B-draft") is None


def test_same_revision_warning() -> None:
    old = project("B", [("A", "2026-10-02")])
    text = same_revision_warning(old, old, inputs_changed=True)
    assert text is not None and "still 'B'" in text and "p.toml" in text
    assert same_revision_warning(old, old, inputs_changed=False) is None
    newer = project("C", [("A", "2026-10-02"), ("B", "2026-11-20")], "2026-12-01")
    assert same_revision_warning(old, newer, inputs_changed=True) is None
    assert "comes before" in same_revision_warning(newer, old, inputs_changed=True)


def _bijective_letters(n: int) -> str:
    """n >= 1 in bijective base 26 (1 = A, 26 = Z, 27 = AA), as spreadsheet columns count."""
    out = ""
    while n:
        n, r = divmod(n - 1, 26)
        out = chr(ord("A") + r) + out
    return out


@settings(deadline=None, max_examples=200)
@given(st.integers(1, 20000), st.integers(1, 20000))
def test_letter_revisions_follow_bijective_base_26(a: int, b: int) -> None:
    # Letter revisions count like bijective base-26 numerals (A..Z, AA..ZZ,
    # AAA..), the usual way lettered revisions continue past Z (common
    # practice, no source); their order must match the numbers'.
    ka, kb = revision_key(_bijective_letters(a)), revision_key(_bijective_letters(b))
    assert (ka < kb) == (a < b) and (ka == kb) == (a == b)


@settings(deadline=None, max_examples=200)
@given(st.integers(0, 10**6), st.integers(0, 10**6))
def test_numbered_revisions_order_numerically(a: int, b: int) -> None:
    assert (revision_key(str(a)) < revision_key(str(b))) == (a < b)
