"""calcdoc: calculation records for linear DC circuits.

Load a project file, solve it by Modified Nodal Analysis, verify the
results and write the calculation package::

    import calcdoc
    project = calcdoc.load("project.toml")
    results = calcdoc.solve(project)
    results.cases[0].checks
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING


def _version() -> str:
    """The version named once, in pyproject.toml: read from the installed metadata.

    A source checkout put on ``sys.path`` without installing (``PYTHONPATH``)
    reads the same line from its own pyproject.toml, so the version printed
    is always that of the code that runs.
    """
    checkout = Path(__file__).resolve().parent.parent / "pyproject.toml"
    if checkout.is_file():
        import tomli

        project = tomli.loads(checkout.read_text(encoding="utf-8")).get("project", {})
        if project.get("name") == "calcdoc" and "version" in project:
            return str(project["version"])
    from importlib import metadata

    try:
        return metadata.version("calcdoc")
    except metadata.PackageNotFoundError:  # pragma: no cover - neither installed nor a checkout
        return "0+unknown"


__version__ = _version()

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
