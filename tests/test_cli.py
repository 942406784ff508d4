"""Command line: exit statuses, messages, JSON contract, no tracebacks."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from calcdoc.cli import main

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "projects" / "sensor_supply.toml"
DIVIDER = ROOT / "tests" / "cases" / "divider.toml"


def run(capsys, *argv):
    code = main(list(argv))
    out = capsys.readouterr()
    return code, out.out, out.err


def test_solve_tables(capsys):
    code, out, err = run(capsys, "solve", str(DIVIDER))
    assert code == 0 and err == ""
    assert "3.826 V" in out and "4.700 kΩ" in out


def test_solve_json_follows_contract(capsys):
    code, out, _ = run(capsys, "solve", str(DEMO), "--json")
    assert code == 0
    doc = json.loads(out)
    assert doc["tool"]["name"] == "calcdoc"
    assert len(doc["input"]["sha256"]) == 64
    assert doc["cases"][0]["name"] == "nominal"
    assert [c["name"] for c in doc["cases"][1:]] == ["Low line", "High line"]
    for case in doc["cases"]:
        assert set(case) >= {"name", "nodes", "elements", "power", "kcl", "kvl", "checks"}
        assert case["nodes"]["gnd"] == 0.0
        for el in case["elements"].values():
            assert set(el) == {"voltage", "current", "power"}
            assert all(type(v) is float for v in el.values())
        assert set(case["power"]) == {"absorbed", "delivered", "imbalance"}
        for loop in case["kvl"]:
            assert isinstance(loop["loop"], list) and type(loop["sum"]) is float
        for chk in case["checks"]:
            assert chk["status"] in ("pass", "fail")
            assert {"id", "subject", "quantity", "value", "limit", "utilization"} <= set(chk)


def test_check_exit_status(capsys, tmp_path):
    assert run(capsys, "check", str(DIVIDER))[0] == 0
    code, out, _ = run(capsys, "check", str(DEMO))  # the demo fails its low-line window on purpose
    assert code == 1 and "FAIL" in out and "nodes.field.min" in out


BAD = {
    "syntax": ("[elements.R1\n", "bad.toml:1"),
    "dimension": (
        '[elements.R1]\ntype = "resistor"\nnodes = ["a", "gnd"]\nvalue = "5 V"\n',
        "elements.R1.value",
    ),
    "unknown key": (
        '[elements.V1]\ntype = "voltage_source"\nnodes = ["a", "gnd"]\nvalue = "5 V"\n'
        '[elements.R1]\ntype = "resistor"\nnodes = ["a", "gnd"]\nvalue = "5 ohm"\nratng = {}\n',
        "elements.R1.ratng",
    ),
    "floating": (
        '[elements.V1]\ntype = "voltage_source"\nnodes = ["a", "gnd"]\nvalue = "5 V"\n'
        '[elements.R1]\ntype = "resistor"\nnodes = ["x", "y"]\nvalue = "5 ohm"\n',
        "floating node",
    ),
    "zero ohm": (
        '[elements.V1]\ntype = "voltage_source"\nnodes = ["a", "gnd"]\nvalue = "5 V"\n'
        '[elements.R1]\ntype = "resistor"\nnodes = ["a", "gnd"]\nvalue = "0 ohm"\n',
        "elements.R1.value: zero-ohm resistor",
    ),
    "too large": (
        '[elements.V1]\ntype = "voltage_source"\nnodes = ["a", "gnd"]\nvalue = "1e400 V"\n'
        '[elements.R1]\ntype = "resistor"\nnodes = ["a", "gnd"]\nvalue = "5 ohm"\n',
        "elements.V1.value: the number 1e400 is far outside the range of physical values",
    ),
    "case divides by zero": (
        '[parameters]\nx = "1 ohm"\n[elements.V1]\ntype = "voltage_source"\nnodes = ["a", "gnd"]\n'
        'value = "1 V"\n[elements.R1]\ntype = "resistor"\nnodes = ["a", "gnd"]\nvalue = "1 ohm * 1 ohm / x"\n'
        '[[cases]]\nname = "z"\nset = { x = "0 ohm" }\n',
        "cases[0].set: with these settings",
    ),
    "hostile": (
        '[elements.V1]\ntype = "voltage_source"\nnodes = ["a", "gnd"]\nvalue = "__import__(\'os\')"\n',
        "elements.V1.value",
    ),
}


@pytest.mark.parametrize("kind", list(BAD))
@pytest.mark.parametrize("command", ["solve", "check"])
def test_bad_input_exit_2_one_message(capsys, tmp_path, kind, command):
    text, words = BAD[kind]
    f = tmp_path / "bad.toml"
    f.write_text(text)
    code, out, err = run(capsys, command, str(f))
    assert code == 2
    assert out == ""
    assert err.startswith("calcdoc: error: ") and str(f) in err and words in err
    assert "Traceback" not in err


def test_missing_file(capsys, tmp_path):
    code, _, err = run(capsys, "solve", str(tmp_path / "none.toml"))
    assert code == 2 and "cannot read" in err


def test_subprocess_has_no_traceback(tmp_path):
    f = tmp_path / "bad.toml"
    f.write_text('[elements.R1]\ntype = "resistor"\nnodes = ["a"]\n')
    proc = subprocess.run(
        [sys.executable, "-m", "calcdoc", "solve", str(f)], capture_output=True, text=True
    )
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr and proc.stderr.count("calcdoc: error:") == 1


def test_help_is_quick_to_import():
    # --help must not import the heavy numerical libraries (the timing itself
    # lives in bench/bench_solve.py).
    code = "import sys, calcdoc.cli; calcdoc.cli.parser(); print(sorted(m for m in ('numpy','scipy','sympy','reportlab','matplotlib','pint') if m in sys.modules))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"
