"""Helpers for the command tests: run calcdoc as a user does, in a subprocess."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
DEMOS = sorted((ROOT / "projects").glob("*.toml"))
DEMO = ROOT / "projects" / "sensor_supply.toml"
DIVIDER = ROOT / "tests" / "cases" / "divider.toml"


def calcdoc_cmd(*args: str | Path) -> list[str]:
    return [sys.executable, "-m", "calcdoc", *map(str, args)]


def run_calcdoc(
    *args: str | Path,
    cwd: Path | None = None,
    prefix: list[str] | None = None,
    timeout: float = 300,
) -> subprocess.CompletedProcess:
    """``calcdoc ARGS`` in a subprocess (this checkout on PYTHONPATH)."""
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(filter(None, [str(ROOT), env.get("PYTHONPATH")]))
    return subprocess.run(
        [*(prefix or []), *calcdoc_cmd(*args)],
        cwd=cwd,
        env=env,
        capture_output=True,
        text=True,
        timeout=timeout,
    )


def partial_files(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.rglob("*") if "calcdoc-partial" in p.name)


def unprivileged() -> list[str]:
    """A command prefix under which file permissions apply, also to root.

    root ignores a folder's write bits; dropping the capabilities that let it
    do so (CAP_DAC_OVERRIDE, CAP_DAC_READ_SEARCH) from the bounding set makes
    the kernel apply them, as it does for any user.
    """
    if os.geteuid() != 0:
        return []
    if shutil.which("setpriv") is None:
        pytest.skip("setpriv (util-linux) is needed to drop root's file-permission override")
    return ["setpriv", "--bounding-set=-dac_override,-dac_read_search"]


def small_disk(tmp_path: Path):
    """``run(kib, script)``: a shell script in a private mount namespace, in a tmpfs of ``kib`` KiB.

    The tmpfs is mounted on ``tmp_path / "disk"`` inside the namespace only,
    so it vanishes with the process; the script runs in it and lists what it
    needs on its standard output.
    """
    if shutil.which("unshare") is None:
        pytest.skip("unshare (util-linux) is needed for a small private file system")
    disk = tmp_path / "disk"
    disk.mkdir()

    def run(kib: int, script: str) -> subprocess.CompletedProcess:
        userns = [] if os.geteuid() == 0 else ["-r"]
        env = dict(os.environ)
        env["PYTHONPATH"] = os.pathsep.join(filter(None, [str(ROOT), env.get("PYTHONPATH")]))
        shell = f"mount -t tmpfs -o size={kib}k tmpfs {disk} && cd {disk} && {script}"
        proc = subprocess.run(
            ["unshare", *userns, "-m", "sh", "-c", shell],
            env=env,
            capture_output=True,
            text=True,
            timeout=300,
        )
        if "mount:" in proc.stderr or "unshare:" in proc.stderr:
            pytest.skip(f"cannot mount a private tmpfs here: {proc.stderr.strip()}")
        return proc

    return run
