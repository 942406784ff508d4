"""calcdoc: calculation records for linear DC circuits.

Load a project file, solve it by Modified Nodal Analysis, verify the
results and write the calculation package::

    import calcdoc
    project = calcdoc.load("project.toml")
    results = calcdoc.solve(project)
    results.cases[0].checks
"""

from __future__ import annotations

from typing import TYPE_CHECKING

__version__ = "0.1.0"

if TYPE_CHECKING:  # pragma: no cover
    from calcdoc.model.project import Project
    from calcdoc.results import Results


def load(path):  # noqa: ANN001 - thin re-export
    """Read and validate a project file; see :func:`calcdoc.model.load.read_project`."""
    from calcdoc.model.load import read_project

    return read_project(path)


def loads(text, path: str = "<input>") -> Project:
    """Validate project-file text; see :func:`calcdoc.model.load.parse_project`."""
    from calcdoc.model.load import parse_project

    return parse_project(text, path)


def solve(project: Project) -> Results:
    """Solve, verify and analyse every case; see :func:`calcdoc.pipeline.analyse`."""
    from calcdoc.pipeline import analyse

    return analyse(project)


def to_json(results: Results) -> dict:
    """The design.md section 6 results object."""
    from calcdoc.results_json import results_document

    return results_document(results)
