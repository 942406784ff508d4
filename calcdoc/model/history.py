"""Checks of a project's revision history, and the same-revision warning.

Revision identifiers are ordered as follows (our rule, documented here):

- letters only, upper or lower case: ``A < B < ... < Z < AA < AB``
  (shorter first, then alphabetical, case ignored);
- digits only: numerically, ``0 < 1 < 2 < 10``;
- letters followed by digits (``P1``, ``C02``): by the letters as above,
  then by the number;
- when a history mixes these forms, every letters-only revision comes
  before every digits-only one (drafts ``A, B`` before issues ``0, 1``),
  and letter-plus-number revisions come after both;
- any other form (``1.2``, ``B-draft``) is reported and left out of the
  order check.

:func:`history_findings` checks that the history lists revisions in that
order without repeats, that dates never go backwards, and that the current
``document.revision`` is either the last history entry or, when absent from
the history, comes after it (the current revision "stated as current").
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from calcdoc.model.project import Project

__all__ = ["HistoryFinding", "history_findings", "revision_key", "same_revision_warning"]

_LETTERS = re.compile(r"[A-Za-z]+")
_DIGITS = re.compile(r"[0-9]+")
_COMPOUND = re.compile(r"([A-Za-z]+)([0-9]+)")


def revision_key(revision: str) -> tuple | None:
    """Sort key of a revision identifier, or None if its form is not recognised.

    >>> sorted(["B", "AA", "A", "Z"], key=revision_key)
    ['A', 'B', 'Z', 'AA']
    >>> sorted(["10", "2", "0"], key=revision_key)
    ['0', '2', '10']
    >>> revision_key("B") < revision_key("0") < revision_key("P1") < revision_key("P2")
    True
    >>> revision_key("1.2") is None
    True
    """
    text = revision.strip()
    if _LETTERS.fullmatch(text):
        return (0, len(text), text.upper(), 0)
    if _DIGITS.fullmatch(text):
        return (1, 0, "", int(text))
    m = _COMPOUND.fullmatch(text)
    if m:
        letters, number = m.groups()
        return (2, len(letters), letters.upper(), int(number))
    return None


@dataclass(frozen=True)
class HistoryFinding:
    """One problem found in the revision history.

    Attributes
    ----------
    severity : str
        ``error`` (the record contradicts itself) or ``warning``.
    key : str
        Project-file key path (``document.history[2].date``).
    message : str
        A plain sentence.
    """

    severity: str
    key: str
    message: str


def history_findings(project: Project) -> tuple[HistoryFinding, ...]:
    """Check the revision history of a project.

    Parameters
    ----------
    project : Project

    Returns
    -------
    tuple of HistoryFinding
        In history order; empty when the history is consistent.
    """
    doc = project.document
    history = doc.history
    out: list[HistoryFinding] = []
    seen: dict[str, int] = {}
    last_key: tuple | None = None
    last_rev: str | None = None
    last_date = None
    last_date_rev: str | None = None
    for i, entry in enumerate(history):
        where = f"document.history[{i}]"
        rev = entry.revision
        if rev in seen:
            out.append(
                HistoryFinding(
                    "error",
                    f"{where}.revision",
                    f"revision {rev!r} appears twice in the history "
                    f"(entries {seen[rev] + 1} and {i + 1})",
                )
            )
        else:
            seen[rev] = i
        key = revision_key(rev)
        if key is None:
            out.append(
                HistoryFinding(
                    "warning",
                    f"{where}.revision",
                    f"revision {rev!r} is not letters, digits or letters "
                    "followed by digits; its order is not checked",
                )
            )
        elif last_key is not None and key < last_key:
            out.append(
                HistoryFinding(
                    "error",
                    f"{where}.revision",
                    f"revision {rev!r} is listed after {last_rev!r}, "
                    "which comes later in revision order",
                )
            )
        elif last_key is not None and key == last_key and rev != last_rev:
            out.append(
                HistoryFinding(
                    "error",
                    f"{where}.revision",
                    f"revision {rev!r} is the same revision as {last_rev!r} written differently",
                )
            )
        if key is not None:
            last_key, last_rev = key, rev
        if entry.date is not None:
            if last_date is not None and entry.date < last_date:
                out.append(
                    HistoryFinding(
                        "error",
                        f"{where}.date",
                        f"revision {rev!r} is dated {entry.date.isoformat()}, "
                        f"before revision {last_date_rev!r} "
                        f"({last_date.isoformat()})",
                    )
                )
            last_date, last_date_rev = entry.date, rev
    current = doc.revision
    if not current:
        if history:
            out.append(
                HistoryFinding(
                    "warning",
                    "document.revision",
                    "the history lists revisions but document.revision is not stated",
                )
            )
        return tuple(out)
    if current in seen:
        index = seen[current]
        entry = history[index]
        if index != len(history) - 1:
            later = ", ".join(repr(h.revision) for h in history[index + 1 :])
            out.append(
                HistoryFinding(
                    "error",
                    f"document.history[{index}].revision",
                    f"the current revision {current!r} is followed in the history by {later}",
                )
            )
        if entry.date is not None and doc.date is not None and entry.date != doc.date:
            out.append(
                HistoryFinding(
                    "warning",
                    f"document.history[{index}].date",
                    f"the history dates the current revision {current!r} "
                    f"{entry.date.isoformat()}, the document "
                    f"{doc.date.isoformat()}",
                )
            )
        return tuple(out)
    # The current revision is stated only in [document]: it must follow the history.
    key = revision_key(current)
    if key is None:
        out.append(
            HistoryFinding(
                "warning",
                "document.revision",
                f"revision {current!r} is not letters, digits or letters "
                "followed by digits; its order is not checked",
            )
        )
    elif last_key is not None and key <= last_key:
        out.append(
            HistoryFinding(
                "error",
                "document.revision",
                f"the current revision {current!r} does not come after the "
                f"last revision in the history, {last_rev!r}",
            )
        )
    if doc.date is not None and last_date is not None and doc.date < last_date:
        out.append(
            HistoryFinding(
                "error",
                "document.date",
                f"the document is dated {doc.date.isoformat()}, before "
                f"revision {last_date_rev!r} ({last_date.isoformat()})",
            )
        )
    return tuple(out)


def same_revision_warning(old: Project, new: Project, inputs_changed: bool) -> str | None:
    """The warning for a build whose revision equals the previous one while inputs changed.

    Parameters
    ----------
    old, new : Project
        The previous revision (baseline) and the one being built.
    inputs_changed : bool
        Whether any input other than the file text changed (for a
        :class:`~calcdoc.record.compare.Comparison` ``c``:
        ``any(i.section != "input file" for i in c.inputs)``).

    Returns
    -------
    str or None
        The warning text, or None when there is nothing to warn about. Also
        warns when the new revision comes before the previous one.
    """
    old_rev, new_rev = old.document.revision, new.document.revision
    if inputs_changed and old_rev == new_rev:
        return (
            f"{new.path}: the inputs changed since the previous revision but the revision is "
            f"still {new_rev!r}: raise document.revision and add a document.history entry"
        )
    ok, nk = revision_key(old_rev), revision_key(new_rev)
    if ok is not None and nk is not None and nk < ok:
        return f"{new.path}: revision {new_rev!r} comes before the previous revision {old_rev!r}"
    return None
