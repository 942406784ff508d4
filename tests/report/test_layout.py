"""Page-break rules of the layout vocabulary, checked on tables split by hand."""

from __future__ import annotations

import pytest

import calcdoc
from calcdoc.report.fonts import register_fonts
from calcdoc.report.layout import Layout
from calcdoc.report.text import display_order, printable

DIVIDER = "tests/cases/divider.toml"


@pytest.fixture(scope="module")
def lay():
    results = calcdoc.solve(calcdoc.load(DIVIDER))
    p = results.project
    return Layout(results, p.assets.style, register_fonts(), 480.0, 4)


@pytest.mark.parametrize("rows", [3, 4, 5, 9, 30])
def test_a_table_never_leaves_one_row_alone_on_a_sheet(lay, rows):
    t = lay.table(["Item", "Value"], [(f"row {k}", f"{k} V") for k in range(rows)], [2, 1])
    t.wrap(480, 1e6)
    heights = t._rowHeights
    for k in range(1, rows + 1):  # room for the header and k rows, and a little more
        room = sum(heights[: 1 + k]) + 0.5
        parts = t.split(480, room)
        if parts == []:
            continue  # the table moves to the next sheet whole
        if len(parts) == 1:
            continue  # it fits
        first = len(parts[0]._cellvalues) - 1  # the header repeats on every part
        second = len(parts[1]._cellvalues) - 1
        assert first >= 2 and second >= 2, (rows, k, first, second)
        assert first + second == rows


def test_printable_text_replaces_undrawable_characters_and_orders_right_to_left(lay):
    font = lay.fonts.regular
    assert printable("12 V \u6f22", font) == "12 V \ufffd"  # CJK is not in the embedded face
    hebrew = "\u05d0\u05d1\u05d2"  # alef bet gimel, logical order
    assert display_order(f"Site {hebrew} 42") == f"Site {hebrew[::-1]} 42"
    # digits inside a right-to-left run keep their own order (Unicode bidi rule, UAX #9)
    assert display_order(f"{hebrew} 12 {hebrew}") == f"{hebrew[::-1]} 12 {hebrew[::-1]}"
