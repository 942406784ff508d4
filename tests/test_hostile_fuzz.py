"""Hypothesis over the loader and the command line with hostile project files.

Control characters, huge and tiny numbers, towers of powers, deep nesting
and long texts: every file either loads or is refused with exit status 2,
nothing shows an exception name, and nothing printed carries a raw control
character.  (No timing is asserted; the inputs that used to hang are run
in a child process under a timeout in ``test_hostile.py``.)
"""

from __future__ import annotations

import contextlib
import io
import json
import re

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import calcdoc
from calcdoc.cli import main
from calcdoc.errors import ProjectError
from calcdoc.output import UNSAFE

EXCEPTION_NAME = re.compile(r"\b[A-Z]\w*(Error|Exception)\b|Traceback")
SETTINGS = settings(
    deadline=None,
    max_examples=120,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture],
)

CONTROLS = "\x00\x07\x08\t\n\r\x1b\x7f\x85\x9b\u061c\u200e\u202a\u202e\u2066\u2069\u2028\ufeff"
hostile_text = st.one_of(
    st.text(alphabet=CONTROLS + "[];m0123456789 abcz/", max_size=60),
    st.text(
        alphabet=st.characters(
            codec="utf-8", categories=("Cc", "Cf", "Zl", "Zp", "Ll", "Nd", "Sm", "Zs")
        ),
        max_size=40,
    ),
    st.one_of(st.integers(0, 300), st.integers(0, 120_000)).map(lambda n: "z" * n),
)
benign_value = st.sampled_from(["1 kohm", "2.2 kΩ * 2", "4k7", "1/(1/(1 kohm) + 1/(3 kohm))"])

mantissa = st.from_regex(r"\A[0-9]{1,30}(\.[0-9]{0,30})?\Z")
exponent = st.one_of(st.integers(-400, 400), st.integers(-(10**12), 10**12))
number = st.one_of(
    mantissa,
    st.builds(lambda m, e: f"{m}e{e}", mantissa, exponent),
    st.sampled_from(["inf", "nan", "Infinity", "-inf", "0", "0e999999999", "1" * 120]),
)
unit = st.sampled_from(["ohm", "kohm", "Mohm", "mohm", "V", "mA", "W", "", "%", "ppm", "m"])
unit_power = st.one_of(st.just(""), st.integers(-5, 10**9).map(lambda n: f"^{n}"))


@st.composite
def value_text(draw) -> str:
    """A value expression built to overflow, underflow or nest."""
    base = f"{draw(number)} {draw(unit)}{draw(unit_power)}".strip()
    for _ in range(draw(st.integers(0, 4))):
        op = draw(st.sampled_from(["^", "*", "/", "+", "-", "**"]))
        other = draw(st.one_of(number, st.integers(-20, 10**6).map(str)))
        base = f"({base}) {op} {other}" if draw(st.booleans()) else f"{base} {op} {other}"
    depth = draw(st.one_of(st.just(0), st.integers(0, 60)))
    return "(" * depth + base + ")" * depth


def toml_string(text: str) -> str:
    """A TOML basic string holding ``text`` (JSON's escapes are TOML's, DEL aside)."""
    return json.dumps(text, ensure_ascii=False).replace("\x7f", "\\u007f")


def deep_array(depth: int) -> str:
    return "[" * depth + "]" * depth


@st.composite
def hostile_project(draw) -> str:
    title = toml_string(draw(hostile_text))
    case = toml_string("case " + draw(hostile_text))
    desc = toml_string(draw(hostile_text))
    value = toml_string(draw(st.one_of(benign_value, value_text())))
    tail = draw(
        st.one_of(
            st.just(""),
            st.just(""),
            st.integers(1, 3000).map(lambda d: f"junk = {deep_array(d)}\n"),
            st.integers(1, 600).map(lambda d: "junk = " + "{a=" * d + "1" + "}" * d + "\n"),
            st.sampled_from(["[parameters]\nx = inf\n", "[parameters]\nx = 1e999\n"]),
        )
    )
    return (
        f"[document]\ntitle = {title}\n"
        '[elements.V1]\ntype = "voltage_source"\nnodes = ["a", "gnd"]\nvalue = "5 V"\n'
        f'[elements.R1]\ntype = "resistor"\nnodes = ["a", "gnd"]\nvalue = {value}\n'
        f"description = {desc}\n"
        f'rating = {{ power = "1 W" }}\n'
        f'[[cases]]\nname = {case}\nset = {{ V1 = "6 V" }}\n' + tail
    )


@SETTINGS
@given(hostile_project())
def test_loader_refuses_or_loads_and_names_no_exception(text):
    try:
        project = calcdoc.loads(text, "fuzz.toml")
    except ProjectError as exc:
        assert exc.faults and exc.message.startswith("fuzz.toml")
        assert not EXCEPTION_NAME.search(exc.message)
    else:
        for e in project.elements:  # whatever loaded is a physical value
            assert e.value == 0 or 1e-30 <= abs(float(e.value)) <= 1e30


@SETTINGS
@given(st.lists(value_text(), min_size=1, max_size=3))
def test_hostile_values_anywhere_a_value_goes(values):
    keys = ["value", "rating = { voltage = %s }", "tolerance"]
    lines = ['[elements.R1]\ntype = "resistor"\nnodes = ["a", "gnd"]']
    for key, v in zip(keys, values, strict=False):
        lines.append(key % toml_string(v) if "%" in key else f"{key} = {toml_string(v)}")
    text = (
        '[elements.V1]\ntype = "voltage_source"\nnodes = ["a", "gnd"]\nvalue = "5 V"\n'
        + "\n".join(lines)
        + "\n"
    )
    try:
        calcdoc.loads(text, "fuzz.toml")
    except ProjectError as exc:
        assert not EXCEPTION_NAME.search(exc.message)


@SETTINGS
@given(hostile_project())
def test_command_line_exit_status_and_safe_terminal(tmp_path_factory, text):
    f = tmp_path_factory.mktemp("fuzz") / "p.toml"
    f.write_text(text, encoding="utf-8")
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(["check", str(f)])
    assert code in (0, 1, 2)
    assert not EXCEPTION_NAME.search(err.getvalue())
    for stream in (out.getvalue(), err.getvalue()):
        assert not UNSAFE.search(stream.replace("\n", ""))
    if code == 2:
        assert out.getvalue() == ""
        assert err.getvalue().startswith("calcdoc: error: ")
    else:
        results = [ln for ln in out.getvalue().splitlines() if ln.startswith("RESULT:")]
        assert results == ["RESULT: FAIL" if code == 1 else "RESULT: PASS"]
