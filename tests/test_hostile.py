"""Hostile and oversized input, as a careless user or a hostile sender meets it.

Every case runs the command line on a real file.  Inputs that used to run
for minutes run in a child process under a generous timeout: the test
fails by hanging past it, never by a measured time.
"""

from __future__ import annotations

import io
import json
import os
import re
import signal
import subprocess
import sys
import unicodedata
from pathlib import Path

import pytest

import calcdoc.model.load as load
from calcdoc.cli import EXIT_INTERRUPTED, main
from calcdoc.output import UNSAFE, Terminal, terminal_safe

ROOT = Path(__file__).resolve().parent.parent
TIMEOUT = 120  # seconds; generous on a busy machine, far below "runs for ever"
EXCEPTION_NAME = re.compile(r"\b[A-Z]\w*(Error|Exception|Interrupt)\b|Traceback")

SUPPLY = '[elements.V1]\ntype = "voltage_source"\nnodes = ["a", "gnd"]\nvalue = "5 V"\n'


def resistor(value: str, name: str = "R1", nodes=("a", "gnd"), extra: str = "") -> str:
    return (
        f'[elements.{name}]\ntype = "resistor"\nnodes = ["{nodes[0]}", "{nodes[1]}"]\n'
        f'value = "{value}"\n{extra}'
    )


def run(capsys, *argv):
    code = main([str(a) for a in argv])
    out = capsys.readouterr()
    return code, out.out, out.err


def run_child(*argv, timeout: float = TIMEOUT) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "calcdoc", *map(str, argv)],
        capture_output=True,
        text=True,
        timeout=timeout,
    )


def write(tmp_path: Path, text: str, name: str = "p.toml") -> Path:
    f = tmp_path / name
    f.write_text(text, encoding="utf-8")
    return f


# ------------------------------------------------------------ 1. numbers

HOSTILE_VALUES = {
    # value text: words the message must hold
    "1e100000000 ohm": "the number 1e100000000 is far outside the range of physical values",
    "1e-100000000 ohm": "far outside the range of physical values",
    "1 ohm^100000000": "powers on a unit are limited to ±12",
    "1 kohm^100000000": "powers on a unit are limited to ±12",
    "1 kohm**99999999": "powers on a unit are limited to ±12",
    "(1e300)^1.5 * 1 ohm": "far outside the range of physical values",
    "(1e150)^2.5 * 1 ohm": "too large to compute with",
    "(1e25)^1.5 * 1 ohm": "too large to be a physical quantity",
    "1e400 ohm": "the number 1e400 is far outside the range",
    "2^2^2^2^2^2^2 * 1 ohm": "exponents are limited to ±12",
    "((((((2^12)^12)^12)^12)^12)^12) * 1 ohm": "too large to compute with",
    "1e31 ohm": "too large to be a physical quantity (magnitudes from 1e-30 to 1e30",
    "1e-31 ohm": "too small to be a physical quantity",
    "99999999999999999999999999999999999999k9": "too large to be a physical quantity",
    "inf ohm": "'inf' (infinity) is not a value",
    "nan ohm": "'nan' (not a number) is not a value",
}


@pytest.mark.parametrize("value", list(HOSTILE_VALUES))
def test_hostile_numbers_end_quickly_with_the_key_named(tmp_path, value):
    f = write(tmp_path, SUPPLY + resistor(value))
    proc = run_child("solve", f)
    assert proc.returncode == 2
    assert proc.stdout == ""
    assert f"{f}: elements.R1.value: " in proc.stderr
    assert HOSTILE_VALUES[value] in proc.stderr
    assert not EXCEPTION_NAME.search(proc.stderr)


@pytest.mark.parametrize(
    ("toml", "key", "words"),
    [
        ("[parameters]\nx = inf\n", "parameters.x", "infinity (inf)"),
        ("[parameters]\nx = nan\n", "parameters.x", "not a number (nan)"),
        ("[parameters]\nx = -inf\n", "parameters.x", "infinity (inf)"),
        ("[limits]\npower_fraction = inf\n", "limits.power_fraction", "infinity (inf)"),
        ("[limits]\npower_fraction = nan\n", "limits.power_fraction", "not a number (nan)"),
        ('[limits]\nambient = "1e999999999 degC"\n', "limits.ambient", "far outside"),
        ('[parameters]\na = "1e20"\nb = "a^12"\n', "parameters.b", "too large to be a physical"),
    ],
)
def test_infinite_and_huge_numbers_elsewhere(tmp_path, capsys, toml, key, words):
    f = write(tmp_path, SUPPLY + resistor("1 kohm") + toml)
    code, out, err = run(capsys, "check", f)
    assert code == 2 and out == ""
    assert f"{key}: " in err and words in err
    assert not EXCEPTION_NAME.search(err)


def test_zero_stays_a_value(tmp_path, capsys):
    # a 0 V source beside a 5 V one: zero is a physical value, only huge and tiny ones are not
    f = write(
        tmp_path,
        SUPPLY
        + resistor("1 kohm")
        + '[elements.V0]\ntype = "voltage_source"\nnodes = ["b", "gnd"]\nvalue = "0 V"\n'
        + resistor("1 kohm", "R2", ("b", "gnd")),
    )
    code, out, _ = run(capsys, "solve", f)
    assert code == 0 and "V0" in out


def test_units_with_absurd_powers_are_refused(tmp_path, capsys):
    chain = "".join(
        f'q{i} = "{"a" if i == 0 else f"q{i - 1}"} * {"a" if i == 0 else f"q{i - 1}"}"\n'
        for i in range(40)
    )
    f = write(tmp_path, '[parameters]\na = "1 m"\n' + chain + SUPPLY + resistor("1 kohm"))
    code, _, err = run(capsys, "check", f)
    assert code == 2 and "units have powers beyond ±60" in err


# ------------------------------------------------------------ 2. no exception names


def test_five_thousand_parameters_in_reverse_order_resolve(tmp_path):
    # each parameter is defined through the next one: a chain 5,000 deep
    chain = "".join(f'p{i} = "p{i + 1} * 1"\n' for i in range(5000))
    f = write(tmp_path, "[parameters]\n" + chain + 'p5000 = "2 kohm"\n' + SUPPLY + resistor("p0"))
    proc = run_child("solve", f, "--json")
    assert proc.returncode == 0, proc.stderr
    current = json.loads(proc.stdout)["cases"][0]["elements"]["R1"]["current"]
    assert current == pytest.approx(5 / 2000)  # Ohm's law: 5 V across 2 kΩ


def test_five_thousand_parameters_in_a_cycle(tmp_path):
    chain = "".join(f'p{i} = "p{(i + 1) % 5000} * 1"\n' for i in range(5000))
    f = write(tmp_path, "[parameters]\n" + chain + SUPPLY + resistor("p0"))
    proc = run_child("check", f)
    assert proc.returncode == 2
    assert "parameters refer to each other in a cycle" in proc.stderr
    assert not EXCEPTION_NAME.search(proc.stderr)


def test_toml_integer_of_thousands_of_digits(tmp_path, capsys):
    f = write(tmp_path, SUPPLY + resistor("1 kohm") + "[analysis]\nseed = 1" + "0" * 5000 + "\n")
    code, _, err = run(capsys, "check", f)
    assert code == 2 and "a number has too many digits" in err
    assert not EXCEPTION_NAME.search(err)


def test_deeply_nested_arrays(tmp_path, capsys):
    f = write(tmp_path, "x = " + "[" * 5000 + "]" * 5000 + "\n" + SUPPLY)
    code, _, err = run(capsys, "check", f)
    assert code == 2 and "nested too deeply" in err
    assert not EXCEPTION_NAME.search(err)


def test_internal_error_names_no_exception(monkeypatch, capsys, tmp_path):
    import calcdoc.commands.solve as solve

    def broken(args, term):
        raise ValueError("ValueError: something deep inside")

    monkeypatch.setattr(solve, "run", broken)
    code, _, err = run(capsys, "solve", tmp_path / "p.toml")
    assert code == 2 and "internal error" in err
    assert not EXCEPTION_NAME.search(err)


# ------------------------------------------------------------ 3. resource caps


def test_fifty_megabyte_project_is_refused_before_reading(tmp_path, capsys):
    f = tmp_path / "big.toml"
    with f.open("wb") as fh:
        fh.write(SUPPLY.encode())
        fh.truncate(50_000_000)  # sparse: a 50 MB file that costs no disk
    code, out, err = run(capsys, "solve", f)
    assert code == 2 and out == ""
    assert "the file is 50,000,000 bytes; the limit for a project file is 20,000,000" in err


@pytest.mark.skipif(not Path("/dev/zero").exists(), reason="needs /dev/zero")
def test_endless_device_is_refused_after_the_cap(capsys):
    code, _, err = run(capsys, "check", "/dev/zero")
    assert code == 2 and "more than 20,000,000 bytes" in err


def test_megabyte_title_is_refused(tmp_path, capsys):
    f = write(tmp_path, '[document]\ntitle = """' + "x" * 1_000_000 + '"""\n' + SUPPLY)
    code, _, err = run(capsys, "build", f, "-o", tmp_path / "out.pdf")
    assert code == 2
    assert "line is 1,000,0" in err  # one line: refused before parsing, with its line number
    f = write(tmp_path, '[document]\ntitle = """\\\n' + "xxxxxxxxx\\\n" * 1000 + '"""\n' + SUPPLY)
    code, _, err = run(capsys, "build", f, "-o", tmp_path / "out.pdf")
    assert (
        code == 2 and "document.title: the text is 9,000 characters long; the limit is 200" in err
    )
    assert not (tmp_path / "out.pdf").exists()


@pytest.mark.parametrize(
    ("key", "text", "limit"),
    [
        ("document.number", '[document]\nnumber = "{}"\n', 40),
        ("document.purpose", '[document]\npurpose = """{}"""\n', 10_000),
        ("elements.R1.description", None, 500),
        ("cases[0].name", '[[cases]]\nname = """{}"""\nset = {{ V1 = "6 V" }}\n', 100),
    ],
)
def test_text_fields_have_stated_limits(tmp_path, capsys, key, text, limit):
    long = "\\\n".join(["y" * 100] * (limit // 100 + 1))  # continued lines, no long line
    if text is None:
        project = SUPPLY + resistor("1 kohm", extra=f'description = """{long}"""\n')
    else:
        project = SUPPLY + resistor("1 kohm") + text.format(long)
    code, _, err = run(capsys, "check", write(tmp_path, project))
    assert code == 2 and f"{key}: the text is" in err and f"the limit is {limit:,}" in err


def test_monte_carlo_size_is_refused_up_front(tmp_path, capsys):
    # 10^6 samples of 600 elements: refused before any sample is drawn
    parts = [SUPPLY]
    for i in range(300):
        parts.append(resistor("1 kohm", f"R{i}", ("a", f"n{i}"), 'tolerance = "1 %"\n'))
        parts.append(resistor("1 kohm", f"S{i}", (f"n{i}", "gnd")))
    parts.append('[analysis]\ntolerance = "montecarlo"\nsamples = 1000000\n')
    code, _, err = run(capsys, "check", write(tmp_path, "".join(parts)))
    assert code == 2
    assert "analysis.samples: 1,000,000 samples of 302 nodes and 601 elements" in err
    assert "use at most 11,074 samples" in err  # 10,000,000 // (302 + 601)


@pytest.mark.parametrize(
    ("cap", "section", "make"),
    [
        (
            "MAX_ELEMENTS",
            "elements",
            lambda n: "".join(resistor("1k", f"E{i}") for i in range(n - 2)),
        ),
        (
            "MAX_PARAMETERS",
            "parameters",
            lambda n: "[parameters]\n" + "".join(f'p{i} = "1"\n' for i in range(n)),
        ),
        ("MAX_CASES", "cases", lambda n: '[[cases]]\nname = "c"\n' * n),
        ("MAX_SWEEPS", "sweeps", lambda n: '[[sweeps]]\ntarget = "R0"\n' * n),
    ],
)
def test_counts_are_capped_before_the_work(monkeypatch, tmp_path, capsys, cap, section, make):
    # the cap lowered to 5 so that the file stays small; the check is the one users meet
    monkeypatch.setattr(load, cap, 5)
    project = SUPPLY + resistor("1k", "R0") + make(6)
    code, _, err = run(capsys, "check", write(tmp_path, project))
    assert code == 2 and f"{section}: 6 {section}; the limit is 5" in err


def test_nodes_are_capped(monkeypatch, tmp_path, capsys):
    monkeypatch.setattr(load, "MAX_NODES", 5)
    chain = "".join(resistor("1k", f"R{i}", (f"n{i}", f"n{i + 1}")) for i in range(6))
    code, _, err = run(capsys, "check", write(tmp_path, SUPPLY + chain))
    assert code == 2 and "elements: 9 nodes; the limit is 5" in err


def test_too_many_lines_are_refused_before_parsing(tmp_path, capsys):
    code, _, err = run(capsys, "check", write(tmp_path, SUPPLY + "#\n" * 1_000_001))
    assert code == 2 and "lines; the limit is 1,000,000" in err


def test_flood_of_unknown_keys_is_one_fault(tmp_path, capsys):
    keys = "".join(f"[junk{i}]\n" for i in range(5000))
    code, _, err = run(capsys, "check", write(tmp_path, SUPPLY + resistor("1k") + keys))
    assert code == 2
    assert "(top level): 5,000 unknown keys: 'junk0', 'junk1'" in err
    assert len(err.splitlines()) == 1


def test_many_faults_are_counted_not_all_listed(tmp_path, capsys):
    bad = "".join(resistor("5 V", f"R{i}") for i in range(80))
    code, _, err = run(capsys, "check", write(tmp_path, SUPPLY + bad))
    assert code == 2
    assert "80 problems in the input" in err and "... and 30 more" in err


# ------------------------------------------------------------ 4. terminal safety

PAINT = "\x1b[1A\x1b[2K\rRESULT: PASS"  # cursor up, erase line, carriage return


def assert_safe(text: str) -> None:
    assert not UNSAFE.search(text.replace("\n", "")), repr(text)


def test_title_cannot_paint_over_the_verdict(tmp_path, capsys):
    title = PAINT.replace("\x1b", "\\u001b").replace("\r", "\\r") + "\\u202e\\u009b2J"
    project = (
        f'[document]\ntitle = "{title}"\n'
        + SUPPLY
        + resistor("1 kohm", extra='rating = { power = "1 mW" }\n')
        + '[[cases]]\nname = "late\\u001b[31m\\u2067"\nset = { V1 = "6 V" }\n'
    )
    code, out, err = run(capsys, "check", write(tmp_path, project))
    assert code == 1
    assert_safe(out)
    assert_safe(err)
    assert "\\x1b[1A\\x1b[2K\\rRESULT: PASS\\u202e\\x9b2J" in out
    assert [ln for ln in out.splitlines() if ln.startswith("RESULT")] == ["RESULT: FAIL"]
    assert "late\\x1b[31m\\u2067" in out


def test_json_output_keeps_the_text_and_escapes_it(tmp_path, capsys):
    project = (
        '[document]\ntitle = "a\\u202eb\\u0085c"\n'
        + SUPPLY
        + resistor("1 kohm")
        + '[[cases]]\nname = "x\\u2028y\\u001b"\nset = { V1 = "6 V" }\n'
    )
    code, out, _ = run(capsys, "solve", write(tmp_path, project), "--json")
    assert code == 0
    assert_safe(out)
    doc = json.loads(out)
    assert doc["cases"][1]["name"] == "x\u2028y\x1b"  # the same text, only escaped on screen


def test_error_messages_quoting_hostile_keys_are_escaped(tmp_path, capsys):
    project = SUPPLY + resistor("1 kohm") + '"\\u001b]0;owned\\u0007\\u202e" = 1\n'
    code, out, err = run(capsys, "check", write(tmp_path, project))
    assert code == 2 and out == ""
    assert_safe(err)
    assert "\\x1b]0;owned\\x07\\u202e: unknown key" in err
    assert err.count("\n") == 1


def test_every_line_printed_is_escaped():
    out, err = io.StringIO(), io.StringIO()
    term = Terminal(out, err)
    term.line("a\x1bb")
    term.table(["h\x9b"], [["c\u202ed"]])
    term.error("e\rf", "g\x00h")
    term.warning("w\u2066")
    assert_safe(out.getvalue())
    assert_safe(err.getvalue())
    assert out.getvalue().splitlines()[0] == "a\\x1bb"
    assert err.getvalue().splitlines() == [
        "calcdoc: error: e\\rf",
        "g\\x00h",
        "calcdoc: warning: w\\u2066",
    ]
    js = io.StringIO()
    Terminal(js, err).json({"k": "v\u202e\U000e0041"})
    assert_safe(js.getvalue())
    assert json.loads(js.getvalue()) == {"k": "v\u202e\U000e0041"}


def test_escape_set_covers_the_unicode_control_and_format_characters():
    # Reference: the running Python's Unicode database (unicodedata): every
    # control (Cc), format (Cf), surrogate (Cs), line (Zl) and paragraph (Zp)
    # separator is escaped; letters, marks, symbols and spaces are left alone.
    missing = [
        hex(cp)
        for cp in range(sys.maxunicode + 1)
        if unicodedata.category(chr(cp)) in ("Cc", "Cf", "Cs", "Zl", "Zp")
        and not UNSAFE.fullmatch(chr(cp))
    ]
    assert missing == []
    for ch in "aΩµ±≤ \u00a0\u2009é\u0301中🙂":
        assert terminal_safe(ch) == ch


# ------------------------------------------------------------ 5. messages


def test_byte_order_mark_is_accepted(tmp_path, capsys):
    f = tmp_path / "bom.toml"
    f.write_bytes(b"\xef\xbb\xbf" + (SUPPLY + resistor("1 kohm")).encode())
    code, out, err = run(capsys, "solve", f)
    assert code == 0 and err == "" and "R1" in out


def test_names_differing_only_in_case_are_warned(tmp_path, capsys):
    project = (
        SUPPLY
        + resistor("1 kohm")
        + resistor("2 kohm", "r1", ("A", "gnd"))
        + resistor("1 kohm", "R3", ("a", "A"))
    )
    code, _, err = run(capsys, "check", write(tmp_path, project))
    assert code == 0
    lines = err.splitlines()
    assert len(lines) == 2
    assert "warning:" in lines[0] and "element names 'R1', 'r1' differ only in" in lines[0]
    assert "node names 'a', 'A' differ only in" in lines[1]


def test_syntax_error_names_the_line(tmp_path, capsys):
    code, _, err = run(capsys, "check", write(tmp_path, SUPPLY + "value = = 3\n"))
    assert code == 2 and re.search(r"p\.toml:5:\d+: TOML syntax error", err)


# ------------------------------------------------------------ 6. Ctrl-C


def test_interrupt_in_process_is_status_130(monkeypatch, capsys, tmp_path):
    import calcdoc.commands.check as check

    def stopped(args, term):
        raise KeyboardInterrupt

    monkeypatch.setattr(check, "run", stopped)
    code, out, err = run(capsys, "check", tmp_path / "p.toml")
    # 130 = 128 + SIGINT (2): the shell convention for a command ended by a signal
    # (GNU Bash manual, "Exit Status"; from memory)
    assert code == EXIT_INTERRUPTED == 130
    assert out == "" and err == "calcdoc: error: interrupted\n"


@pytest.mark.skipif(os.name != "posix", reason="sends SIGINT")
def test_ctrl_c_ends_a_running_command_with_one_line(tmp_path):
    script = (
        "import sys, time\n"
        "import calcdoc.commands.solve as s\n"
        "def slow(args, term):\n"
        "    print('started', file=sys.stderr, flush=True)\n"
        "    time.sleep(600)\n"
        "s.run = slow\n"
        "sys.argv = ['calcdoc', 'solve', 'p.toml']\n"
        "from calcdoc.cli import entry\n"
        "entry()\n"
    )
    with subprocess.Popen(
        [sys.executable, "-c", script], stderr=subprocess.PIPE, text=True, cwd=tmp_path
    ) as proc:
        try:
            assert proc.stderr.readline() == "started\n"
            proc.send_signal(signal.SIGINT)
            rest = proc.stderr.read()
            assert proc.wait(timeout=TIMEOUT) == 130
        finally:
            proc.kill()
    assert rest == "calcdoc: error: interrupted\n"
