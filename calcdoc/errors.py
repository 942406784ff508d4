"""Exceptions named after the condition they report.

Bad input is collected into one :class:`ProjectError` holding every
:class:`Fault` (file, key path, message, optional line/column); a circuit
that cannot be solved raises :class:`SingularCircuitError` naming the nodes
or elements at fault.  A failed rating is *not* an exception: it is a check
result.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass


@dataclass(frozen=True)
class Fault:
    """One problem in the input, located by key path.

    Parameters
    ----------
    path : str
        Dotted key path, e.g. ``"elements.Rs.value"`` (``""`` for the file).
    message : str
        What is wrong, in plain words.
    line, column : int or None
        Position in the file, for syntax errors.
    """

    path: str
    message: str
    line: int | None = None
    column: int | None = None

    def describe(self, file: str | None = None) -> str:
        where = file or "<input>"
        if self.line is not None:
            where += f":{self.line}"
            if self.column is not None:
                where += f":{self.column}"
        key = f" {self.path}:" if self.path else ""
        return f"{where}:{key} {self.message}"


class CalcdocError(Exception):
    """Base class of every error calcdoc raises on purpose."""


class ProjectError(CalcdocError):
    """The project file (or another input) is invalid.

    Holds every fault found, so that one run reports all of them.
    """

    def __init__(self, faults: Iterable[Fault], file: str | None = None) -> None:
        self.faults = tuple(faults)
        self.file = file
        super().__init__(self.message)

    @property
    def message(self) -> str:
        lines = [f.describe(self.file) for f in self.faults]
        if len(lines) > 1:
            head = f"{self.file or '<input>'}: {len(lines)} problems in the input"
            return "\n".join([head, *("  " + ln for ln in lines)])
        return lines[0] if lines else f"{self.file or '<input>'}: invalid input"

    def with_file(self, file: str) -> ProjectError:
        """Return the same faults attributed to ``file``."""
        return ProjectError(self.faults, file)


class SingularCircuitError(CalcdocError):
    """The circuit equations have no unique solution.

    Parameters
    ----------
    condition : str
        Short name of the failure mode, e.g. ``"floating node"``,
        ``"voltage loop"``, ``"current-source cut set"``, ``"singular system"``.
    detail : str
        Plain-words explanation naming the nodes or elements at fault.
    culprits : tuple of str
        The node or element names involved.
    """

    def __init__(self, condition: str, detail: str, culprits: Iterable[str] = ()) -> None:
        self.condition = condition
        self.detail = detail
        self.culprits = tuple(culprits)
        super().__init__(f"{condition}: {detail}")


class PackageError(CalcdocError):
    """A calculation package (PDF) cannot be read or lacks its embedded data."""
