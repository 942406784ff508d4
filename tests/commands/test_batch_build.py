"""``calcdoc build FILE... | FOLDER``: a set of records, the register, ``--changed``.

Run in subprocesses on real folders, as a user meets it. Expected values
come from the files themselves (hashlib over the bytes on disk, the
project files read with tomli, the packages read with pypdf), never from
calcdoc's own output.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import os
import shutil
import signal
import subprocess
import time
from pathlib import Path

import pytest
import tomli
from command_helpers import (
    DEMO,
    DEMOS,
    DIVIDER,
    ROOT,
    calcdoc_cmd,
    partial_files,
    run_calcdoc,
    unprivileged,
)
from pypdf import PdfReader

BROKEN = '[elements.R1\ntype = "resistor"\n'  # a TOML syntax error on line 1


def sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def package_of(project: Path) -> Path:
    d = tomli.loads(project.read_text(encoding="utf-8"))["document"]
    return project.parent / f"{d['number']}-rev{d['revision']}.pdf"


def register_rows(folder: Path) -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO((folder / "register.csv").read_text("utf-8"))))


def embedded(pdf: Path) -> tuple[bytes, dict]:
    reader = PdfReader(pdf)
    name = reader.metadata["/CalcdocInput"]
    return reader.attachments[name][0], json.loads(reader.attachments["results.json"][0])


@pytest.fixture(scope="module")
def demo_set(tmp_path_factory):
    """The demo projects and a broken one in a folder, built as a set with -j 2."""
    folder = tmp_path_factory.mktemp("set")
    for demo in DEMOS:
        shutil.copy(demo, folder / demo.name)
    (folder / "broken.toml").write_text(BROKEN)
    proc = run_calcdoc("build", folder, "-j", "2")
    return folder, proc


def test_one_broken_record_does_not_stop_the_others(demo_set):
    folder, proc = demo_set
    assert proc.returncode == 2  # the worst of the set
    for demo in DEMOS:
        package = package_of(folder / demo.name)
        source, _ = embedded(package)
        assert source == demo.read_bytes()
    errors = [ln for ln in proc.stderr.splitlines() if ln.startswith("calcdoc: error:")]
    assert len(errors) == 1 and "broken.toml:1" in errors[0]
    assert partial_files(folder) == []


def test_plain_progress_lines_and_summary(demo_set):
    _, proc = demo_set
    lines = proc.stdout.splitlines()
    n = len(DEMOS) + 1  # the demos and the broken project
    assert sorted(ln.split("]")[0] for ln in lines if ln.startswith("[")) == [
        f"[{k}/{n}" for k in range(1, n + 1)
    ]
    assert "\r" not in proc.stdout + proc.stderr  # no terminal: no progress line
    summary = lines[lines.index(next(ln for ln in lines if ln.startswith("No."))) :]
    assert len([ln for ln in summary if ln.strip()[:1].isdigit() and ".toml" in ln]) == n
    assert any("broken.toml" in ln and "not built" in ln for ln in summary)
    assert f"{n} records: {n - 1} built, 0 unchanged, 1 not built" in proc.stdout


def test_register_lists_every_record(demo_set):
    folder, _ = demo_set
    rows = register_rows(folder)
    names = sorted([d.name for d in DEMOS] + ["broken.toml"])
    assert [r["project"] for r in rows] == names  # a folder's records in name order
    for row in rows:
        project = folder / row["project"]
        assert row["input_sha256"] == sha(project)
        if row["project"] == "broken.toml":
            assert row["result"] == "not built" and row["package"] == ""
            assert row["message"].startswith("broken.toml:1")
            continue
        doc = tomli.loads(project.read_text(encoding="utf-8"))["document"]
        assert (row["document"], row["revision"], row["title"]) == (
            doc["number"],
            doc["revision"],
            doc["title"],
        )
        package = package_of(project)
        assert row["package"] == package.name and row["package_sha256"] == sha(package)
        _, results = embedded(package)
        # the check set of the cover: every case's checks, each also at its tolerance worst case
        checks = [
            c
            for case in results["cases"]
            for c in [*case["checks"], *(case.get("tolerance") or {}).get("checks", [])]
        ]
        assert int(row["checks_run"]) == len(checks)
        worst = max(c["utilization"] for c in checks if c["utilization"] is not None)
        assert float(row["worst_utilisation_percent"]) == pytest.approx(100 * worst, abs=0.05)
    by_name = {r["project"]: r for r in rows}
    # the sensor supply demo fails its low-line window and its high-line dissipation by design
    assert by_name["sensor_supply.toml"]["checks_result"] == "FAIL"
    assert float(by_name["sensor_supply.toml"]["worst_utilisation_percent"]) > 100
    assert by_name["bridge_amplifier.toml"]["checks_result"] == "PASS"


def test_register_pdf_for_a_project_lead(demo_set):
    folder, _ = demo_set
    reader = PdfReader(folder / "register.pdf")
    page = reader.pages[0]
    assert (round(float(page.mediabox.width)), round(float(page.mediabox.height))) == (842, 595)
    text = " ".join(" ".join(p.extract_text() for p in reader.pages).split())
    for row in register_rows(folder):
        assert row["input_sha256"] in text
        if row["document"]:
            assert row["document"] in text and row["title"] in text
    assert "NOT BUILT" in text and "reviewed by a qualified engineer" in text
    for p in reader.pages:  # every font embedded (the package's own faces)
        for font in p["/Resources"]["/Font"].values():
            desc = font.get_object().get("/DescendantFonts")
            face = desc[0].get_object() if desc else font.get_object()
            assert "/FontFile2" in face["/FontDescriptor"]


def test_register_is_byte_identical_on_a_second_run(demo_set, tmp_path):
    folder, _ = demo_set
    first = {n: (folder / n).read_bytes() for n in ("register.csv", "register.pdf")}
    packages = {d.name: sha(package_of(folder / d.name)) for d in DEMOS}
    again = run_calcdoc("build", folder, "-j", "1", "-q")
    assert again.returncode == 2
    assert {n: (folder / n).read_bytes() for n in first} == first
    assert {d.name: sha(package_of(folder / d.name)) for d in DEMOS} == packages


def test_list_of_files_writes_the_register_in_the_current_folder(tmp_path):
    a, b = tmp_path / "a", tmp_path / "b"
    a.mkdir()
    b.mkdir()
    shutil.copy(DEMO, a / "supply.toml")
    shutil.copy(DIVIDER, b / "divider.toml")
    here = tmp_path / "here"
    here.mkdir()
    proc = run_calcdoc("build", a / "supply.toml", b / "divider.toml", cwd=here)
    assert proc.returncode == 0, proc.stderr
    rows = register_rows(here)
    assert [r["project"] for r in rows] == ["../a/supply.toml", "../b/divider.toml"]
    assert rows[0]["package"] == "../a/DEMO-101-revB.pdf"
    assert (here / "register.pdf").is_file() and not (a / "register.csv").exists()


def test_records_sharing_a_package_name_are_not_built(tmp_path):
    shutil.copy(DEMO, tmp_path / "one.toml")
    shutil.copy(DEMO, tmp_path / "two.toml")  # same document number and revision
    proc = run_calcdoc("build", tmp_path, "-q")
    assert proc.returncode == 2
    assert not (tmp_path / "DEMO-101-revB.pdf").exists()
    rows = register_rows(tmp_path)
    assert [r["result"] for r in rows] == ["not built", "not built"]
    assert "two.toml" in rows[0]["message"] and "one.toml" in rows[1]["message"]


def test_single_file_options_are_refused_for_a_set(tmp_path):
    shutil.copy(DEMO, tmp_path / "one.toml")
    for extra in (["-o", "x.pdf"], ["--previous", str(DEMO)], ["--sign", "k.p12"]):
        proc = run_calcdoc("build", tmp_path, *extra)
        assert proc.returncode == 2 and "for one project file only" in proc.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["one.toml"]
    empty = tmp_path / "empty"
    empty.mkdir()
    proc = run_calcdoc("build", empty)
    assert proc.returncode == 2 and "no project files" in proc.stderr
    proc = run_calcdoc("build", tmp_path, "-j", "0")
    assert proc.returncode == 2 and "at least 1" in proc.stderr


def test_register_folder_that_cannot_be_written_is_refused_first(tmp_path):
    shutil.copy(DEMO, tmp_path / "one.toml")
    tmp_path.chmod(0o555)
    try:
        proc = run_calcdoc("build", tmp_path, prefix=unprivileged())
    finally:
        tmp_path.chmod(0o755)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
    assert proc.stderr.strip() == (
        f"calcdoc: error: {tmp_path / 'register.pdf'}: cannot write the output: "
        f"the folder {tmp_path} is not writable"
    )
    assert sorted(p.name for p in tmp_path.iterdir()) == ["one.toml"]  # nothing was built


# ---------------------------------------------------------------- --changed


def test_changed_skips_unchanged_and_rebuilds_the_rest(tmp_path):
    for demo in DEMOS[:2]:
        shutil.copy(demo, tmp_path / demo.name)
    shutil.copy(DEMO, tmp_path / "supply.toml")
    assert run_calcdoc("build", tmp_path, "-q").returncode == 0
    stamp = {p.name: p.stat().st_mtime_ns for p in tmp_path.glob("*.pdf")}
    supply = tmp_path / "supply.toml"
    old_package = package_of(supply)  # DEMO-101-revB.pdf
    # a component change, issued as revision C; the project lists B in its history
    text = supply.read_text().replace('value = "4k7"', 'value = "5k6"')
    text = text.replace(
        'revision = "B"\ndate = 2026-11-20\nproject', 'revision = "C"\ndate = 2026-12-01\nproject'
    )
    text = text.replace(
        "[signoff]",
        '[[document.history]]\nrevision = "C"\ndate = 2026-12-01\ndescription = "Larger load resistor"\n\n[signoff]',
    )
    supply.write_text(text)
    time.sleep(0.01)
    proc = run_calcdoc("build", tmp_path, "--changed")
    assert proc.returncode == 0, proc.stderr
    rows = {r["project"]: r for r in register_rows(tmp_path)}
    assert rows["supply.toml"]["result"] == "built" and rows["supply.toml"]["revision"] == "C"
    for demo in DEMOS[:2]:
        assert rows[demo.name]["result"] == "unchanged"
        assert (
            package_of(tmp_path / demo.name).stat().st_mtime_ns
            == stamp[package_of(tmp_path / demo.name).name]
        )
        assert f"{demo.name}: unchanged" in proc.stdout
    new_package = package_of(supply)
    assert new_package.name == "DEMO-101-revC.pdf" and old_package.is_file()
    source, _ = embedded(new_package)
    assert source == supply.read_bytes()
    # revision C was compared with the package of revision B found beside it
    flat = " ".join(" ".join(p.extract_text() for p in PdfReader(new_package).pages).split())
    assert "Changes from revision B" in flat and "5k6" in flat and "4k7" in flat


def test_changed_rebuilds_a_package_of_another_calcdoc_version(tmp_path):
    # a copy of this checkout that calls itself version 0.0.1 builds the first package
    other = tmp_path / "other"
    shutil.copytree(
        ROOT / "calcdoc", other / "calcdoc", ignore=shutil.ignore_patterns("__pycache__")
    )
    shutil.copytree(ROOT / "templates", other / "templates")
    (other / "pyproject.toml").write_text('[project]\nname = "calcdoc"\nversion = "0.0.1"\n')
    work = tmp_path / "work"
    work.mkdir()
    shutil.copy(DIVIDER, work / "divider.toml")
    env = dict(os.environ, PYTHONPATH=str(other))
    subprocess.run(
        calcdoc_cmd("build", work / "divider.toml", "-q"), env=env, check=True, cwd=tmp_path
    )
    package = next(work.glob("*.pdf"))
    assert embedded(package)[1]["tool"]["version"] == "0.0.1"
    proc = run_calcdoc("build", work / "divider.toml", "--changed")
    assert proc.returncode == 0 and "wrote" in proc.stdout
    assert embedded(package)[1]["tool"]["version"] != "0.0.1"
    proc = run_calcdoc("build", work / "divider.toml", "--changed")
    assert proc.returncode == 0 and "unchanged" in proc.stdout


# ---------------------------------------------------------------- terminal and stops


def test_progress_display_on_a_terminal(tmp_path):
    import pty

    for demo in DEMOS[:2]:
        shutil.copy(demo, tmp_path / demo.name)
    master, slave = pty.openpty()
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    proc = subprocess.Popen(
        calcdoc_cmd("build", tmp_path, "-j", "2"),
        env=env,
        stdin=slave,
        stdout=subprocess.PIPE,
        stderr=slave,
    )
    os.close(slave)
    seen = b""
    while True:
        try:
            chunk = os.read(master, 4096)
        except OSError:  # the terminal closed with the process
            break
        if not chunk:
            break
        seen += chunk
    out, _ = proc.communicate(timeout=300)
    os.close(master)
    assert proc.returncode == 0
    screen = seen.decode("utf-8", "replace")
    assert "\r" in screen and "0/2 records" in screen and "elapsed" in screen
    assert "building" in screen and "1/2 records" in screen
    assert b"[1/2]" not in out  # the plain lines are for logs, not terminals


def _children(pid: int) -> list[int]:
    out = []
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                stat = (entry / "stat").read_text()
            except OSError:
                continue
            if int(stat.rsplit(")", 1)[1].split()[1]) == pid:
                out.append(int(entry.name))
    return out


def _alive(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state not in ("Z", "X")


@pytest.mark.parametrize("signame", ["SIGTERM", "SIGINT"])
def test_stopping_a_set_stops_its_workers_and_leaves_no_partial_file(tmp_path, signame):
    for demo in DEMOS:
        shutil.copy(demo, tmp_path / demo.name)
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    proc = subprocess.Popen(
        calcdoc_cmd("build", tmp_path, "-j", "2", "-q"),
        env=env,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    workers: set[int] = set()
    deadline = time.monotonic() + 60
    while len(workers) < 2 and time.monotonic() < deadline:  # wait for the pool to start
        workers |= {c for c in _children(proc.pid) if c != proc.pid}
        time.sleep(0.05)
    time.sleep(1.0)
    proc.send_signal(getattr(signal, signame))
    _, err = proc.communicate(timeout=120)
    assert proc.returncode != 0 and "Traceback" not in err
    deadline = time.monotonic() + 10
    while any(_alive(w) for w in workers) and time.monotonic() < deadline:
        time.sleep(0.05)
    assert workers and not any(_alive(w) for w in workers)
    assert partial_files(tmp_path) == []
    assert not (tmp_path / "register.csv").exists()


def test_changed_warns_when_a_revision_is_replaced_by_other_inputs(tmp_path):
    supply = tmp_path / "supply.toml"
    shutil.copy(DEMO, supply)
    assert run_calcdoc("build", supply, "-q").returncode == 0
    supply.write_text(supply.read_text().replace('value = "4k7"', 'value = "5k6"'))
    proc = run_calcdoc("build", supply, "--changed", "-q")
    assert proc.returncode == 0 and "wrote" in proc.stdout  # rebuilt, as asked
    assert "warning" in proc.stderr and "revision is still 'B'" in proc.stderr
