"""Design checks: ratings, source capability and node voltage windows.

A check compares a result with a limit and passes or fails; a failure is a
result, never an exception.  Limits follow the design policy in
``[limits]``: an element's rated power × ``power_fraction`` × the
temperature derating factor at ``limits.ambient``; its rated voltage ×
``voltage_fraction``; its rated current × ``current_fraction``.

Which ratings an element accepts is a column of the element table; what
each rating is compared with is the one table :data:`RATINGS` below.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from calcdoc.model.derating import derating_curve, derating_factor
from calcdoc.model.project import Limits, Project
from calcdoc.results import Branches, Check, Netlist

__all__ = ["Check", "RATINGS", "Rating", "design_checks", "max_check", "window_check"]


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
        ),  # fmt: skip
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


def window_check(cid: str, subject: str, quantity: str, value: float, limit: float,
                 bound: str, basis: str) -> Check:  # fmt: skip
    """A signed value against a lower (``min``) or upper (``max``) bound."""
    if bound == "min":
        util = limit / value if limit > 0 and value > 0 else None
        return Check(cid, subject, quantity, value, limit, "min", util, value - limit, basis)
    util = value / limit if limit > 0 and value >= 0 else None
    return Check(cid, subject, quantity, value, limit, "max", util, limit - value, basis)


def design_checks(project: Project, net: Netlist, br: Branches) -> tuple[Check, ...]:
    """Every rating and limit check for one solved case.

    Returns
    -------
    tuple of Check
        In element order (ratings in table order), then node windows.
    """
    out: list[Check] = []
    for j, e in enumerate(project.elements):
        r = e.rating
        if (
            r.power is None
            and r.voltage is None
            and r.current is None
            and r.reverse_voltage is None
        ):
            continue
        for key, rating in RATINGS.items():
            if getattr(e.rating, key, None) is None:
                continue
            limit, basis = rating_limit(project, e, key)
            value = float(rating.measure(getattr(br, rating.of)[j]))
            out.append(max_check(f"{e.name}.{key}", e.name, rating.quantity, value, limit, basis))
    index = {n: i for i, n in enumerate(net.nodes)}
    for w in project.limits.nodes:
        v = float(br.node_voltage[index[w.node]])
        if w.min is not None:
            out.append(window_check(f"nodes.{w.node}.min", w.node, "node voltage", v,
                                    float(w.min), "min", "window minimum"))  # fmt: skip
        if w.max is not None:
            out.append(window_check(f"nodes.{w.node}.max", w.node, "node voltage", v,
                                    float(w.max), "max", "window maximum"))  # fmt: skip
    return tuple(out)
