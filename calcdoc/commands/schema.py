"""``calcdoc schema``: print the project file's JSON Schema (draft 2020-12)."""

from __future__ import annotations

from calcdoc.model.schema import project_schema


def run(args, term) -> int:
    term.json(project_schema(), compact=False)
    return 0
