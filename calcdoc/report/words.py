"""Words for people: check and case labels, and the record's status.

A check is named as a checker says it ("R5 power", "Node out window,
upper"), never by its key path; the status is derived from the sign-off
entries and the verdict of the check set together.
"""

from __future__ import annotations

from dataclasses import dataclass

from calcdoc.format import counted


def case_label(name: str) -> str:
    """``"nominal"`` → ``"Nominal"``; a case's own name with a capital first letter."""
    return name[:1].upper() + name[1:] if name else name


def check_label(check) -> str:
    """``Rs.power`` → ``"Rs power"``; ``nodes.out.max`` → ``"Node out window, upper"``.

    >>> from types import SimpleNamespace as NS
    >>> check_label(NS(id="nodes.out.max", subject="out", quantity="node voltage"))
    'Node out window, upper'
    >>> check_label(NS(id="D1.reverse_voltage", subject="D1", quantity="reverse_voltage"))
    'D1 reverse voltage'
    """
    cid = check.id
    if cid.startswith("nodes.") and cid.rsplit(".", 1)[-1] in ("min", "max"):
        side = "lower" if cid.endswith(".min") else "upper"
        return f"Node {check.subject} window, {side}"
    if cid.startswith("across."):
        return f"Across {check.subject}"
    quantity = (
        cid[len(check.subject) + 1 :] if cid.startswith(check.subject + ".") else check.quantity
    )
    return f"{check.subject} {quantity.replace('_', ' ')}"


def check_id_label(cid: str) -> str:
    """A label from a check id alone: ``nodes.out.max`` → ``"Node out window, upper"``.

    >>> check_id_label("RL.power"), check_id_label("nodes.out.min")
    ('RL power', 'Node out window, lower')
    """
    if cid.startswith("nodes.") and cid.rsplit(".", 1)[-1] in ("min", "max"):
        side = "lower" if cid.endswith(".min") else "upper"
        return f"Node {cid[6:].rsplit('.', 1)[0]} window, {side}"
    if cid.startswith("across."):
        return f"Across {cid[7:]}"
    subject, _, quantity = cid.rpartition(".")
    return f"{subject} {quantity.replace('_', ' ')}" if subject else cid


def scope_label(row) -> str:
    """Where a check-set row was taken: ``"as solved"`` or ``"tolerance worst case"``."""
    return "tolerance worst case" if row.scope == "tolerance" else "as solved"


def place(row) -> str:
    """``"case Overload 150 %, tolerance worst case"``."""
    return f"case {case_label(row.case)}, {scope_label(row)}"


ROLES = ("prepared", "checked", "approved")
STEPS = ("Draft", "Prepared, awaiting check", "Checked, awaiting approval", "Approved")


@dataclass(frozen=True)
class Status:
    """The record's status.

    Attributes
    ----------
    text : str
        For the cover and every sheet's footer.
    approved : bool
        Approved, checked and prepared are signed (name and date), in that
        order, and every check passes.
    fit : bool
        Every check of the check set passes.
    problems : tuple of str
        Sign-off entries that do not count, and why.
    """

    text: str
    approved: bool
    fit: bool
    problems: tuple[str, ...] = ()


def record_status(signoff, failing: int, total: int, findings: int = 0) -> Status:
    """Status from the sign-off entries and the verdict.

    A role counts as signed when its entry has a name and a date; the
    record reaches a step only when every earlier role has signed too.  A
    record with a failing check is not fit for approval, whatever its
    entries say.
    """
    problems = []
    step = 0
    for k, role in enumerate(ROLES):
        who = getattr(signoff, role)
        signed = who is not None and bool(who.name.strip()) and who.date is not None
        if who is not None and not signed:
            problems.append(f"the {role} entry has no date, so it does not count as signed")
        elif signed and step < k:
            problems.append(f"the {role} entry does not count while {ROLES[step]} has not signed")
        elif signed and step == k:
            step = k + 1
    fit = failing == 0
    if not fit:
        text = f"Not fit for approval: {failing} of {counted(total, 'check')} fail"
        if step == 3:
            problems.append("the approval entry does not stand while checks fail")
        return Status(text, False, False, tuple(problems))
    text = STEPS[step]
    if findings:
        text += f"; {counted(findings, 'open finding')}"
    return Status(text, step == 3, True, tuple(problems))
