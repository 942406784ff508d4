"""Design checks: ratings, source capability and node voltage windows.

A check compares a result with a limit and passes or fails; a failure is a
result, never an exception.  Limits follow the design policy in
``[limits]``: an element's rated power × ``power_fraction`` × the
temperature derating factor at ``limits.ambient``; its rated voltage ×
``voltage_fraction``; its rated current × ``current_fraction``.

Which ratings an element accepts is a column of the element table; what
each rating is compared with is the one table :data:`RATINGS` below.  Pair
keys of the table's ``windows`` column (an op-amp's ``output_range``) and
``[[limits.across]]`` windows are checked by :func:`range_check`, against
the nearer end of their range.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from calcdoc.model.derating import derating_curve, derating_factor
from calcdoc.model.project import Limits, Project
from calcdoc.results import Branches, Check, Netlist

__all__ = [
    "Check",
    "RATINGS",
    "Rating",
    "design_checks",
    "max_check",
    "range_check",
    "window_check",
]


@dataclass(frozen=True)
class Rating:
    """A rating key: what it limits, in which unit, and the result it is compared with.

    ``measure`` turns the element result named by ``of`` (``voltage``,
    ``current`` or ``power``) into the value checked against the limit; it
    works on arrays of any shape (a case, or a batch of value sets) and is
    largest at an end of any interval of its input.
    """

    key: str
    quantity: str
    unit: str
    policy: str  # the [limits] fraction that scales it
    of: str
    measure: Callable[[np.ndarray], np.ndarray]
    not_in: tuple[str, ...] = ()  # states in which the rating is not checked


RATINGS: dict[str, Rating] = {
    r.key: r
    for r in (
        Rating("power", "power", "W", "power_fraction", "power", np.abs),
        Rating("voltage", "voltage", "V", "voltage_fraction", "voltage", np.abs),
        Rating("current", "current", "A", "current_fraction", "current", np.abs),
        Rating(
            "reverse_voltage",
            "reverse voltage",
            "V",
            "voltage_fraction",
            "voltage",
            lambda v: np.maximum(-v, 0.0),
            ("breakdown",),  # a zener in breakdown is meant to be there
        ),
    )
}


def _pct(x) -> str:
    return f"{float(x) * 100:g} %"


def rating_limit(project: Project, element, key: str) -> tuple[float, str]:
    """The allowed value of one rating (SI) and how it was obtained, in words."""
    lim: Limits = project.limits
    rated = getattr(element.rating, key)
    rating = RATINGS[key]
    fraction = getattr(lim, rating.policy)
    words = "capability" if element.kind.supply and key == "current" else "rated"
    basis = f"{words} {float(rated):g} {rating.unit} × {_pct(fraction)} policy"
    limit = rated * fraction
    if key == "power":
        curve = derating_curve(element, lim)
        factor = derating_factor(curve, lim.ambient)
        limit = limit * factor
        if lim.ambient is not None:
            basis += (
                f" × {float(factor):.3g} derating at {float(lim.ambient):g} °C "
                f"(knee {float(curve.knee):g} °C, zero {float(curve.zero):g} °C)"
            )
    return float(limit), basis


def max_check(
    cid: str, subject: str, quantity: str, value: float, limit: float, basis: str
) -> Check:
    util = value / limit if limit > 0 else float("inf")
    return Check(cid, subject, quantity, value, limit, "max", util, limit - value, basis)


def window_check(
    cid: str, subject: str, quantity: str, value: float, limit: float, bound: str, basis: str
) -> Check:
    """A signed value against a lower (``min``) or upper (``max``) bound."""
    if bound == "min":
        util = limit / value if limit > 0 and value > 0 else None
        return Check(cid, subject, quantity, value, limit, "min", util, value - limit, basis)
    util = value / limit if limit > 0 and value >= 0 else None
    return Check(cid, subject, quantity, value, limit, "max", util, limit - value, basis)


def range_check(
    cid: str, subject: str, quantity: str, value: float, low, high, basis: str
) -> Check:
    """A signed value against a range: the check of the nearer end (the smaller margin)."""
    ends = []
    if low is not None:
        ends.append(
            window_check(cid, subject, quantity, value, float(low), "min", f"{basis}, lower end")
        )
    if high is not None:
        ends.append(
            window_check(cid, subject, quantity, value, float(high), "max", f"{basis}, upper end")
        )
    return min(ends, key=lambda c: c.margin)


def element_checks(project: Project, net: Netlist, br: Branches, j: int) -> list[Check]:
    """The rating and window checks of element ``j`` in its state."""
    e = project.elements[j]
    out: list[Check] = []
    state = net.state(j)
    for key, rating in RATINGS.items():
        if getattr(e.rating, key, None) is None or state in rating.not_in:
            continue
        limit, basis = rating_limit(project, e, key)
        value = float(rating.measure(getattr(br, rating.of)[j]))
        out.append(max_check(f"{e.name}.{key}", e.name, rating.quantity, value, limit, basis))
    windows = {w.name: w for w in e.kind.windows}
    for key, low, high in e.windows:
        w = windows[key]
        value = float(getattr(br, w.of)[j])
        out.append(
            range_check(
                f"{e.name}.{key}",
                e.name,
                w.quantity,
                value,
                low,
                high,
                f"{w.words} {float(low):g} to {float(high):g} {w.unit}",
            )
        )
    return out


def design_checks(project: Project, net: Netlist, br: Branches) -> tuple[Check, ...]:
    """Every rating and limit check for one solved case.

    Returns
    -------
    tuple of Check
        In element order (ratings in table order, then windows), then node
        windows, then ``[[limits.across]]`` windows.
    """
    out: list[Check] = []
    for j in range(len(project.elements)):
        out += element_checks(project, net, br, j)
    index = {n: i for i, n in enumerate(net.nodes)}
    for w in project.limits.nodes:
        v = float(br.node_voltage[index[w.node]])
        if w.min is not None:
            out.append(
                window_check(
                    f"nodes.{w.node}.min",
                    w.node,
                    "node voltage",
                    v,
                    float(w.min),
                    "min",
                    "window minimum",
                )
            )
        if w.max is not None:
            out.append(
                window_check(
                    f"nodes.{w.node}.max",
                    w.node,
                    "node voltage",
                    v,
                    float(w.max),
                    "max",
                    "window maximum",
                )
            )
    for w in project.limits.across:
        a, b = w.nodes
        v = float(br.node_voltage[index[a]] - br.node_voltage[index[b]])
        out.append(
            range_check(
                f"across.{w.name}",
                w.name,
                "voltage across",
                v,
                w.min,
                w.max,
                f"window on V({a}) − V({b})",
            )
        )
    return tuple(out)
