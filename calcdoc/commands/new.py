"""``calcdoc new FILE``: write the starter project; an existing file is never overwritten."""

from __future__ import annotations

import os
from pathlib import Path

from calcdoc.errors import CalcdocError
from calcdoc.fileio import OutputExistsError, check_output, shipped, write_atomic


def run(args, term) -> int:
    out = Path(args.file)
    if os.path.lexists(out):
        raise OutputExistsError(f"{out}: already exists; calcdoc new never overwrites a file")
    check_output(out)
    try:
        starter = shipped("starter.toml").read_bytes()
    except OSError as exc:  # pragma: no cover - a broken installation
        raise CalcdocError(
            f"the starter project is missing from this installation: {exc}"
        ) from None
    write_atomic(out, starter, replace=False)
    term.line(f"wrote {out}: a starter project with an invented example; make it yours, then")
    term.line(f"  calcdoc check {out}")
    term.line(f"  calcdoc build {out}")
    return 0
