"""``calcdoc new``: the starter project, its keys, and new -> check -> build."""

from __future__ import annotations

import os
import re

import tomli
from command_helpers import ROOT, run_calcdoc, unprivileged
from pypdf import PdfReader

from calcdoc.model.elements import KINDS, RATING_KEYS, element_keys
from calcdoc.model.load import TOP_KEYS
from calcdoc.model.read_sections import DOCUMENT_KEYS

ELEMENT_KEYS = {k for kind in KINDS.values() for k in element_keys(kind)}

STARTER = ROOT / "templates" / "starter.toml"

# Keys of the tables whose key lists live inside the loader's functions
# (calcdoc/model/load.py); the public lists above are imported.
OTHER_KEYS = {
    "document.history": ("revision", "date", "description"),
    "signoff": ("prepared", "checked", "approved", "seal"),
    "signoff.ROLE": ("name", "date"),
    "circuit": ("reference",),
    "parameters.NAME": ("value", "tolerance", "description"),
    "elements.NAME.tolerance": ("minus", "plus"),
    "elements.NAME.derating": ("knee", "zero"),
    "limits": (
        "power_fraction",
        "voltage_fraction",
        "current_fraction",
        "ambient",
        "derating",
        "nodes",
    ),
    "limits.nodes.NAME": ("min", "max"),
    "cases": ("name", "set", "description"),
    "analysis": (
        "tolerance",
        "samples",
        "seed",
        "distribution",
        "sensitivity",
        "temperature",
        "reference_temperature",
    ),
    "sweeps": ("name", "target", "from", "to", "points", "scale", "outputs"),
    "report": ("template", "paper", "significant_figures", "conclusion"),
}


def test_starter_names_every_key_set_or_commented():
    text = STARTER.read_text(encoding="utf-8")
    keys = {*TOP_KEYS, *DOCUMENT_KEYS, *ELEMENT_KEYS, *RATING_KEYS}
    keys |= {k for ks in OTHER_KEYS.values() for k in ks}
    # a key is present as `key = ...` (or `[key]`, `[[key]]`, `[elements.X]`), possibly
    # after a comment mark; inline tables count too: `{ power = ..., voltage = ... }`
    missing = [
        k
        for k in sorted(keys)
        if not re.search(rf"(^|[\s{{,#\[.])({k})\s*(=|\]|\.)", text, re.MULTILINE)
    ]
    assert missing == []
    # and the starter parses as TOML with a schema and a document number
    data = tomli.loads(text)
    assert data["schema"] == 1 and data["document"]["number"]


def test_new_check_build_round_trip(tmp_path):
    new = run_calcdoc("new", "mine.toml", cwd=tmp_path)
    assert new.returncode == 0, new.stderr
    made = tmp_path / "mine.toml"
    assert made.read_bytes() == STARTER.read_bytes()
    assert "calcdoc check mine.toml" in new.stdout
    check = run_calcdoc("check", "mine.toml", cwd=tmp_path)
    assert check.returncode == 0, check.stdout + check.stderr  # the example passes its checks
    assert "RESULT: PASS" in check.stdout
    build = run_calcdoc("build", "mine.toml", "-q", cwd=tmp_path)
    assert build.returncode == 0, build.stderr
    number = tomli.loads(made.read_text(encoding="utf-8"))["document"]["number"]
    package = tmp_path / f"{number}-revA.pdf"
    reader = PdfReader(package)
    assert "mine.toml" in reader.attachments  # the package carries its input
    assert reader.attachments["mine.toml"][0] == made.read_bytes()


def test_new_never_overwrites(tmp_path):
    existing = tmp_path / "mine.toml"
    existing.write_text("schema = 1\n# my work\n")
    proc = run_calcdoc("new", existing)
    assert proc.returncode == 2
    assert proc.stderr.startswith("calcdoc: error: ") and str(existing) in proc.stderr
    assert "already exists" in proc.stderr
    assert existing.read_text() == "schema = 1\n# my work\n"
    link = tmp_path / "dangling.toml"
    link.symlink_to(tmp_path / "nowhere.toml")
    proc = run_calcdoc("new", link)
    assert proc.returncode == 2 and "already exists" in proc.stderr
    assert not (tmp_path / "nowhere.toml").exists()


def test_new_into_a_folder_that_cannot_be_written(tmp_path):
    locked = tmp_path / "locked"
    locked.mkdir()
    locked.chmod(0o555)
    try:
        proc = run_calcdoc("new", locked / "mine.toml", prefix=unprivileged())
    finally:
        locked.chmod(0o755)
    assert proc.returncode == 2
    assert f"{locked / 'mine.toml'}: cannot write the output" in proc.stderr
    assert "not writable" in proc.stderr and "Traceback" not in proc.stderr
    assert os.listdir(locked) == []


def test_new_file_mode_follows_the_umask(tmp_path):
    import subprocess
    import sys

    env = dict(os.environ, PYTHONPATH=str(ROOT))
    for umask, mode in ((0o022, 0o644), (0o077, 0o600), (0o002, 0o664)):
        out = tmp_path / f"u{umask:03o}.toml"
        subprocess.run(
            [sys.executable, "-m", "calcdoc", "new", str(out)],
            env=env,
            check=True,
            capture_output=True,
            preexec_fn=lambda m=umask: os.umask(m),
        )
        # what any program creating a file gets: 0666 less the umask (POSIX open(2))
        assert out.stat().st_mode & 0o777 == mode
