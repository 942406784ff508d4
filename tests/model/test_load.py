"""Validation: every fault named by file, key path and cause, all collected."""

from __future__ import annotations

import contextlib

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import calcdoc
from calcdoc.errors import ProjectError

GOOD = """
schema = 1
[document]
title = "Divider"
revision = "A"
[parameters]
r_top = "4k7"
r_bot = "r_top / 2"
[elements.V1]
type = "voltage_source"
nodes = ["in", "gnd"]
value = "12 V"
rating = { current = "1 A" }
[elements.R1]
type = "resistor"
nodes = ["in", "out"]
value = "r_top"
tolerance = "1 %"
rating = { power = "0.25 W", voltage = "200 V" }
[elements.R2]
type = "resistor"
nodes = ["out", "gnd"]
value = "r_bot"
tolerance = { minus = "2 %", plus = "1 %" }
[limits]
power_fraction = 0.5
[limits.nodes.out]
min = "3 V"
max = "5 V"
[[cases]]
name = "High line"
set = { V1 = "13.2 V", r_top = "5 kohm" }
[analysis]
tolerance = "extreme"
"""


def faults_of(text: str) -> list[tuple[str, str]]:
    with pytest.raises(ProjectError) as info:
        calcdoc.loads(text, "p.toml")
    return [(f.path, f.message) for f in info.value.faults]


def test_good_project_loads():
    p = calcdoc.loads(GOOD)
    assert [e.name for e in p.elements] == ["V1", "R1", "R2"]
    assert float(p.element("R2").value) == 2350.0
    assert p.element("R2").tolerance.minus == pytest.approx(0.02)


def replace(old: str, new: str) -> str:
    assert old in GOOD
    return GOOD.replace(old, new, 1)


@pytest.mark.parametrize(
    ("text", "path", "words"),
    [
        (
            replace('tolerance = "1 %"', 'tolerence = "1 %"'),
            "elements.R1.tolerence",
            "did you mean 'tolerance'",
        ),
        (
            replace('rating = { power = "0.25 W"', 'rating = { powr = "0.25 W"'),
            "elements.R1.rating.powr",
            "did you mean 'power'",
        ),
        (replace('value = "r_top"', 'value = "12 V"'), "elements.R1.value", "expected resistance"),
        (replace('value = "12 V"', 'value = "12 kohm"'), "elements.V1.value", "expected voltage"),
        (
            replace('type = "resistor"', 'type = "resistr"'),
            "elements.R1.type",
            "did you mean 'resistor'",
        ),
        (
            replace('value = "r_top"', 'value = "r_tpo"'),
            "elements.R1.value",
            "did you mean 'r_top'",
        ),
        (replace('r_top = "4k7"', 'r_top = "r_bot * 2"'), "parameters.r_top", "cycle"),
        (
            replace('nodes = ["out", "gnd"]', 'nodes = ["out", "out"]'),
            "elements.R2.nodes",
            "both terminals",
        ),
        (
            replace("[limits.nodes.out]", "[limits.nodes.ot]"),
            "limits.nodes.ot",
            "did you mean 'out'",
        ),
        (
            replace('set = { V1 = "13.2 V"', 'set = { V2 = "13.2 V"'),
            "cases[0].set.V2",
            "did you mean 'V1'",
        ),
        (
            replace('tolerance = "extreme"', 'tolerance = "extremes"'),
            "analysis.tolerance",
            "did you mean 'extreme'",
        ),
        (
            replace("power_fraction = 0.5", "power_fraction = 1.5"),
            "limits.power_fraction",
            "at most 1",
        ),
        (replace("[document]", "[documnet]"), "documnet", "did you mean 'document'"),
        (replace('value = "12 V"', "value = 12"), "elements.V1.value", "with its unit"),
        (replace('tolerance = "1 %"', 'tolerance = "-1 %"'), "elements.R1.tolerance", "positive"),
        (
            GOOD
            + '\n[elements.E1]\ntype = "vcvs"\nnodes = ["x", "gnd"]\ngain = "2"\ncontrol = ["in", "nowhere"]\n',
            "elements.E1.control",
            "no such node",
        ),
        (
            GOOD
            + '\n[elements.F1]\ntype = "cccs"\nnodes = ["out", "gnd"]\ngain = "2"\ncontrol = "Vx"\n',
            "elements.F1.control",
            "no such element",
        ),
        (
            GOOD.replace("[circuit]", "") + '\n[circuit]\nreference = "ground"\n',
            "circuit.reference",
            "not a terminal",
        ),
        ("schema = 2\n" + GOOD.replace("schema = 1", ""), "schema", "schema 1"),
    ],
)
def test_fault_names_key_path(text, path, words):
    faults = faults_of(text)
    assert any(p == path and words in m for p, m in faults), faults


def test_all_faults_collected_in_one_error():
    text = replace('tolerance = "1 %"', 'tolerence = "1 %"').replace(
        'value = "12 V"', 'value = "12 A"'
    )
    with pytest.raises(ProjectError) as info:
        calcdoc.loads(text, "p.toml")
    assert len(info.value.faults) == 2
    assert info.value.message.startswith("p.toml: 2 problems")


def test_syntax_error_names_line_and_column():
    with pytest.raises(ProjectError) as info:
        calcdoc.loads('schema = 1\n[elements.R1\ntype = "resistor"\n', "p.toml")
    f = info.value.faults[0]
    assert f.line == 2 and f.column is not None
    assert info.value.message.startswith("p.toml:2:")


def test_not_utf8():
    with pytest.raises(ProjectError, match="not UTF-8"):
        calcdoc.loads(b"\xff\xfe\x00", "p.toml")


def test_missing_file_is_input_error(tmp_path):
    with pytest.raises(ProjectError, match="cannot read"):
        calcdoc.load(tmp_path / "nope.toml")


# ---- fuzzing: random and mutated project files raise only ProjectError


@settings(deadline=None, max_examples=200, suppress_health_check=[HealthCheck.too_slow])
@given(st.data())
def test_mutated_projects_raise_only_project_errors(data):
    text = GOOD
    for _ in range(data.draw(st.integers(1, 4))):
        pos = data.draw(st.integers(0, len(text)))
        op = data.draw(st.sampled_from(["delete", "insert", "replace"]))
        chunk = data.draw(
            st.text(alphabet='[]{}="., 0123456789abcdefkVWAΩ%#\n-_', min_size=1, max_size=6)
        )
        if op == "delete":
            text = text[:pos] + text[pos + len(chunk) :]
        elif op == "insert":
            text = text[:pos] + chunk + text[pos:]
        else:
            text = text[:pos] + chunk + text[pos + len(chunk) :]
    try:
        calcdoc.loads(text, "fuzz.toml")
    except ProjectError as exc:
        assert exc.message.startswith("fuzz.toml")


@settings(deadline=None, max_examples=100)
@given(st.binary(max_size=200))
def test_random_bytes_raise_only_project_errors(blob):
    with contextlib.suppress(ProjectError):
        calcdoc.loads(blob, "fuzz.toml")


# ---- hostile and oversized input at the loader

V_AND_R = """
[elements.V1]
type = "voltage_source"
nodes = ["a", "gnd"]
value = "5 V"
[elements.R1]
type = "resistor"
nodes = ["a", "gnd"]
value = "{value}"
"""


def test_parameters_resolve_in_any_order_without_recursion():
    # p0 = p1 + 1 Ω, p1 = p2 + 1 Ω, ... p4999 = 1 Ω: p0 = 5000 Ω (arithmetic series)
    chain = "".join(f'p{i} = "p{i + 1} + 1 ohm"\n' for i in range(4999))
    p = calcdoc.loads("[parameters]\n" + chain + 'p4999 = "1 ohm"\n' + V_AND_R.format(value="p0"))
    assert p.element("R1").value == 5000


def test_parameter_cycle_is_named():
    text = '[parameters]\na = "b * 2"\nb = "c * 2"\nc = "a * 2"\n' + V_AND_R.format(value="1k")
    [(path, message)] = faults_of(text)
    assert path == "parameters.a" and message.endswith("a → b → c → a")


@pytest.mark.parametrize(
    ("value", "ok"),
    [
        ("1e30 ohm", True),
        ("1.000001e30 ohm", False),
        ("1e-30 ohm", True),
        ("0.99e-30 ohm", False),
        ("1 Tohm * 1 Tohm * 1 Tohm / 1 ohm^2", False),  # 1e36 Ω
    ],
)
def test_physical_range_is_the_stated_one(value, ok):
    text = V_AND_R.format(value=value)
    if ok:
        assert calcdoc.loads(text).element("R1").value > 0
    else:
        [(path, message)] = faults_of(text)
        assert path == "elements.R1.value" and "to be a physical quantity" in message


def test_parameter_outside_the_physical_range_is_named():
    text = '[parameters]\nbig = "1e31 m"\n' + V_AND_R.format(value="1k")
    assert faults_of(text) == [
        (
            "parameters.big",
            "the value is too large to be a physical quantity "
            "(magnitudes from 1e-30 to 1e30 in SI units, or zero)",
        )
    ]


def test_toml_infinity_is_named():
    text = V_AND_R.format(value="1k") + "[limits]\nvoltage_fraction = -inf\n"
    [(path, message)] = faults_of(text)
    assert path == "limits.voltage_fraction" and "infinity (inf)" in message


def test_byte_order_mark_is_accepted_and_hashed_as_given():
    import hashlib

    raw = b"\xef\xbb\xbf" + V_AND_R.format(value="1k").encode()
    p = calcdoc.loads(raw)
    assert p.sha256 == hashlib.sha256(raw).hexdigest()  # the file as it is on disk


def test_names_differing_in_case_are_warnings_not_faults():
    text = V_AND_R.format(value="1k") + (
        '[elements.r1]\ntype = "resistor"\nnodes = ["A", "a"]\nvalue = "1k"\n'
    )
    p = calcdoc.loads(text)
    assert len(p.warnings) == 2
    assert "element names 'R1', 'r1'" in p.warnings[0]
    assert "node names 'a', 'A'" in p.warnings[1]
    assert calcdoc.loads(V_AND_R.format(value="1k")).warnings == ()


def test_long_key_paths_and_many_faults_stay_readable():
    long_key = "k" * 5000
    text = V_AND_R.format(value="1k") + f"{long_key} = 1\n"
    with pytest.raises(ProjectError) as info:
        calcdoc.loads(text, "p.toml")
    assert len(info.value.message) < 400 and info.value.message.endswith("...: unknown key")


def test_case_override_at_the_end_of_a_long_parameter_chain():
    # a case sets the last of 5,000 chained parameters; every dependant follows
    chain = "".join(f'p{i} = "p{i + 1} + 1 ohm"\n' for i in range(4999))
    text = (
        "[parameters]\n"
        + chain
        + 'p4999 = "1 ohm"\n'
        + V_AND_R.format(value="p0")
        + '[[cases]]\nname = "more"\nset = { p4999 = "1001 ohm" }\n'
    )
    from calcdoc.model.values import element_values

    p = calcdoc.loads(text)
    assert element_values(p, p.cases[0])["R1"] == 4999 + 1001  # arithmetic series


def test_text_that_is_not_unicode_is_an_input_error():
    with pytest.raises(ProjectError, match="not valid Unicode"):
        calcdoc.loads("title = '\ud800'", "p.toml")


FURTHER_KEY = """
[parameters]
vf = "0.7 V"
rd = "vf / 1 A"
[elements.V1]
type = "voltage_source"
nodes = ["a", "gnd"]
value = "5 V"
[elements.R1]
type = "resistor"
nodes = ["a", "k"]
value = "1 kohm"
[elements.D1]
type = "diode"
nodes = ["k", "gnd"]
forward_voltage = "vf"
resistance = "rd"
{cases}
"""


def test_a_further_key_on_a_parameter_a_case_changes_is_a_warning():
    # only main values are evaluated again per case: the reader must be told
    changed = calcdoc.loads(
        FURTHER_KEY.format(cases='[[cases]]\nname = "hot"\nset = { vf = "0.6 V" }')
    )
    assert len(changed.warnings) == 1
    w = changed.warnings[0]
    assert w.startswith("elements.D1.resistance: uses parameter 'rd'") and "case 'hot'" in w
    # the main value (forward_voltage) follows the parameter: no warning for it,
    # and none at all when nothing changes the parameter
    assert calcdoc.loads(FURTHER_KEY.format(cases="")).warnings == ()
