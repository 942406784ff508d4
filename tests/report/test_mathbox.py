"""The equation typesetter against the font files (read here with fontTools) and TeX's rules.

Widths are checked against the advance widths stored in the DejaVu faces,
read independently with fontTools; spacing against TeX's table of spaces
between atom classes (D. E. Knuth, The TeXbook, chapter 18, rules for
math spacing: thin 3 mu, medium 4 mu, thick 5 mu of 18 mu to the em;
from memory).
"""

from __future__ import annotations

import math

import pytest
from fontTools.ttLib import TTFont
from hypothesis import given, settings
from hypothesis import strategies as st

from calcdoc.report.fonts import register_fonts
from calcdoc.report.mathbox import CLOSE, MOVE, Char, Fenced, Frac, Group, Scripts, outline, read

SIZE = 10.0
PIECES = [
    *"ab1-+=(){}^_\\ ,.$",
    r"\frac",
    r"\left",
    r"\right",
    r"\mathrm",
    r"\cdot",
    "\x00",
    "\u202e",
]


@pytest.fixture(scope="module")
def fonts():
    fs = register_fonts()
    return TTFont(str(fs.regular_path)), TTFont(str(fs.italic_path))


def advance(font: TTFont, ch: str) -> float:
    """Advance width of one character at SIZE points, from the font's own tables."""
    name = font.getBestCmap()[ord(ch)]
    return font["hmtx"][name][0] / font["head"].unitsPerEm * SIZE


def width(tex: str) -> float:
    return outline(tex, SIZE)[1]


def test_an_upright_name_is_as_wide_as_its_letters(fonts):
    up, _ = fonts
    assert width(r"$\mathrm{Rc}$") == pytest.approx(advance(up, "R") + advance(up, "c"))


def test_a_quantity_letter_outside_a_name_is_italic(fonts):
    up, it = fonts
    assert width("$V$") == pytest.approx(advance(it, "V"))
    assert width(r"$\mathrm{V}$") == pytest.approx(advance(up, "V"))


def test_binary_operator_gets_medium_spaces_a_relation_thick_ones(fonts):
    up, _ = fonts
    a, b = advance(up, "a"), advance(up, "b")
    # TeX: Ord Bin Ord -> medium space (4/18 em) each side; Ord Rel Ord -> thick (5/18 em)
    assert width(r"$\mathrm{a} + \mathrm{b}$") == pytest.approx(
        a + advance(up, "+") + b + 2 * 4 / 18 * SIZE
    )
    assert width(r"$\mathrm{a} = \mathrm{b}$") == pytest.approx(
        a + advance(up, "=") + b + 2 * 5 / 18 * SIZE
    )


def test_a_leading_sign_is_unary_and_a_minus_sign_not_a_hyphen(fonts):
    up, _ = fonts
    # TeX: a Bin atom at the start of a list becomes Ord (no space); minus is U+2212
    assert width(r"$-\mathrm{a}$") == pytest.approx(advance(up, "\u2212") + advance(up, "a"))
    assert width(r"$\mathrm{a} - \mathrm{b}$") == pytest.approx(
        advance(up, "a") + advance(up, "\u2212") + advance(up, "b") + 2 * 4 / 18 * SIZE
    )


def test_a_hyphen_inside_a_name_stays_a_hyphen_without_spaces(fonts):
    up, _ = fonts
    assert width(r"$\mathrm{R-1}$") == pytest.approx(
        advance(up, "R") + advance(up, "-") + advance(up, "1")
    )


def test_thin_space_and_upright_unit_prefix(fonts):
    up, _ = fonts
    # a unit symbol and its prefix are upright (SI brochure, 9th ed., 5.2; from memory)
    assert width(r"$1\,\mathrm{\mu}\mathrm{A}$") == pytest.approx(
        advance(up, "1") + 3 / 18 * SIZE + advance(up, "\u03bc") + advance(up, "A")
    )


def test_subscript_is_smaller_and_below_the_baseline(fonts):
    up, it = fonts
    segs, w, h, d = outline(r"$V_{\mathrm{x}}$", SIZE)
    assert w == pytest.approx(advance(it, "V") + 0.7 * advance(up, "x"))
    assert d > 0.0  # the subscript hangs below the baseline
    assert outline("$V$", SIZE)[3] == pytest.approx(0.0, abs=0.05)


def test_fraction_puts_numerator_above_and_denominator_below_a_bar_on_the_axis(fonts):
    up, _ = fonts
    segs, w, h, d = outline(r"$\frac{\mathrm{a}}{\mathrm{b}}$", SIZE)
    assert w >= max(advance(up, "a"), advance(up, "b"))
    # the bar is the last closed rectangle; its middle is the middle of the minus sign
    minus = up["glyf"][up.getBestCmap()[0x2212]]
    axis = (minus.yMin + minus.yMax) / 2 / up["head"].unitsPerEm * SIZE
    rect = [s for s in segs[-5:]]
    assert [code for _, code in rect][0] == MOVE and rect[-1][1] == CLOSE
    ys = [pts[1] for pts, code in rect if code != CLOSE]
    assert (min(ys) + max(ys)) / 2 == pytest.approx(axis, abs=0.01)
    assert h > axis and d > 0.0  # numerator above the bar, denominator below the baseline


def test_parentheses_grow_to_enclose_a_fraction():
    plain = outline(r"$\left(\mathrm{a}\right)$", SIZE)
    tall = outline(r"$\left(\frac{\mathrm{a}}{\mathrm{b}}\right)$", SIZE)
    frac = outline(r"$\frac{\mathrm{a}}{\mathrm{b}}$", SIZE)
    assert tall[2] >= frac[2] and tall[3] >= frac[3]
    assert tall[2] + tall[3] > plain[2] + plain[3]


def test_reader_builds_the_structure_sympy_writes():
    g = read(r"$- \frac{\mathrm{PSU}}{\left(\mathrm{Rc} + \mathrm{Rs}\right)^{2}}$")
    assert isinstance(g, Group)
    assert isinstance(g.items[0], Char) and g.items[0].text == "-"
    frac = g.items[1]
    assert isinstance(frac, Frac)
    den = frac.den.items[0]
    assert isinstance(den, Scripts) and isinstance(den.base, Fenced)
    assert [c.text for c in frac.num.items[0].items] == list("PSU")


def test_text_outside_the_subset_is_typeset_not_refused():
    for tex in (r"$\alpha + \unknown{x}$", "${{{a", "$}}a_$", "$^$", r"$\left($", "$\\$", ""):
        segs, w, h, d = outline(tex, SIZE)
        assert all(math.isfinite(v) for v in (w, h, d))


@settings(deadline=None, max_examples=150)
@given(st.lists(st.sampled_from(PIECES), max_size=40).map("".join))
def test_any_text_gives_a_finite_outline(tex):
    segs, w, h, d = outline(tex, SIZE)
    assert all(math.isfinite(v) for v in (w, h, d)) and w >= 0 and h >= 0 and d >= 0
    assert all(math.isfinite(v) for pts, _ in segs for v in pts)
