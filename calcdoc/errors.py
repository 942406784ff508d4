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
        key = f" {_clip(self.path, MAX_PATH_CHARS)}:" if self.path else ""
        return f"{where}:{key} {_clip(self.message, MAX_MESSAGE_CHARS)}"


#: A key path or message quoting hostile input is shortened to this many characters.
MAX_PATH_CHARS = 200
MAX_MESSAGE_CHARS = 1000
#: At most this many faults are listed; the rest are counted.
MAX_FAULTS_SHOWN = 50


def _clip(text: str, limit: int) -> str:
    return text if len(text) <= limit else text[: limit - 3] + "..."


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
        return "\n".join(self.lines)

    @property
    def lines(self) -> tuple[str, ...]:
        """The message as lines: one per fault (at most ``MAX_FAULTS_SHOWN``) under a head."""
        lines = [f.describe(self.file) for f in self.faults[:MAX_FAULTS_SHOWN]]
        if len(self.faults) > 1:
            head = f"{self.file or '<input>'}: {len(self.faults)} problems in the input"
            more = len(self.faults) - len(lines)
            tail = [f"  ... and {more} more"] if more else []
            return (head, *("  " + ln for ln in lines), *tail)
        return (lines[0],) if lines else (f"{self.file or '<input>'}: invalid input",)

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
