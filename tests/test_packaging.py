"""Installed like any Python tool: what the wheel holds, styles found by name, the version.

The full check (build a wheel, install it into a fresh virtual environment,
build a package in each style from an empty folder) runs in .ci/run.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from importlib import metadata
from pathlib import Path

import setuptools
import tomli
from pypdf import PdfReader

ROOT = Path(__file__).resolve().parent.parent
PYPROJECT = tomli.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
DIVIDER = ROOT / "tests" / "cases" / "divider.toml"


def calcdoc(*args, cwd: Path, pythonpath: Path = ROOT) -> subprocess.CompletedProcess:
    env = dict(os.environ, PYTHONPATH=str(pythonpath))
    return subprocess.run(
        [sys.executable, "-m", "calcdoc", *map(str, args)],
        cwd=cwd,
        env=env,
        capture_output=True,
        text=True,
        timeout=300,
    )


def test_every_package_and_the_templates_are_listed():
    tool = PYPROJECT["tool"]["setuptools"]
    on_disk = setuptools.find_packages(where=str(ROOT), include=["calcdoc*"])
    assert sorted(tool["packages"]) == sorted([*on_disk, "calcdoc.templates"])
    assert tool["package-dir"] == {"calcdoc.templates": "templates"}  # one source: templates/
    data = PYPROJECT["tool"]["setuptools"]["package-data"]
    assert data["calcdoc.templates"] == ["*.toml"]
    for patterns in data.values():  # every pattern names files that exist
        assert all(
            list(ROOT.glob(f"calcdoc/{p}")) or list(ROOT.glob(f"templates/{p}")) for p in patterns
        )
    assert {p.name for p in (ROOT / "templates").glob("*.toml")} >= {
        "standard.toml",
        "compact.toml",
        "starter.toml",
    }


def test_styles_by_name_from_an_empty_folder(tmp_path):
    for style, width in (("standard", 595), ("compact", 612)):  # A4 and US Letter, in points
        project = tmp_path / f"{style}.toml"
        project.write_text(DIVIDER.read_text() + f'\n[report]\ntemplate = "{style}"\n')
        proc = calcdoc("build", project.name, "-o", f"{style}.pdf", "-q", cwd=tmp_path)
        assert proc.returncode == 0, proc.stderr
        page = PdfReader(tmp_path / f"{style}.pdf").pages[0]
        assert round(float(page.mediabox.width)) == width


def test_missing_styles_are_an_error_not_a_silent_default(tmp_path):
    # an installation whose styles went missing: only the calcdoc package, no templates
    broken = tmp_path / "site"
    shutil.copytree(
        ROOT / "calcdoc", broken / "calcdoc", ignore=shutil.ignore_patterns("__pycache__")
    )
    work = tmp_path / "work"
    work.mkdir()
    shutil.copy(DIVIDER, work / "p.toml")
    proc = calcdoc("build", "p.toml", "-q", cwd=work, pythonpath=broken)
    assert proc.returncode == 2
    assert "report.template" in proc.stderr and "no report style 'standard'" in proc.stderr
    assert not list(work.glob("*.pdf"))


def test_version_names_the_libraries_that_shape_the_results(tmp_path):
    proc = calcdoc("--version", cwd=tmp_path)
    assert proc.returncode == 0
    first, second = proc.stdout.splitlines()
    assert first == f"calcdoc {PYPROJECT['project']['version']}"  # one place: pyproject.toml
    for lib in ("numpy", "scipy", "sympy", "reportlab"):
        assert f"{lib} {metadata.version(lib)}" in second


def test_version_is_quick_and_imports_no_numerical_library():
    code = (
        "import sys, contextlib, io\n"
        "from calcdoc.cli import main\n"
        "with contextlib.suppress(SystemExit), contextlib.redirect_stdout(io.StringIO()):\n"
        "    main(['--version'])\n"
        "print(sorted(m for m in ('numpy', 'scipy', 'sympy', 'reportlab') if m in sys.modules))"
    )
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    out = subprocess.run(
        [sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True
    )
    assert out.stdout.strip() == "[]"
