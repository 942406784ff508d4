"""Design checks: ratings, source capability and node voltage windows.

A check compares a result with a limit and passes or fails; a failure is a
result, never an exception.  Limits follow the design policy in
``[limits]``: an element's rated power × ``power_fraction`` × the
temperature derating factor at ``limits.ambient``; its rated voltage ×
``voltage_fraction``; its rated current × ``current_fraction``.
"""

from __future__ import annotations

from dataclasses import dataclass

from calcdoc.analysis.derating import derating_curve, derating_factor
from calcdoc.mna.branches import Branches
from calcdoc.mna.netlist import Netlist
from calcdoc.model.project import Project


@dataclass(frozen=True)
class Check:
    """One design check.

    Attributes
    ----------
    id : str
        ``"Rs.power"``, ``"nodes.field.min"``.
    subject : str
        Element or node name.
    quantity : str
        ``power``, ``voltage``, ``current`` (elements) or ``node voltage``.
    value, limit : float
        Result and allowed limit (SI). For element checks the value is a
        magnitude; for a node window it is the signed node voltage.
    bound : str
        ``"max"`` (value must not exceed limit) or ``"min"``.
    utilization : float or None
        value / limit for ``max`` checks; limit / value for a ``min`` check
        when both are positive; otherwise None.
    margin : float
        How far the value is inside the limit (negative when failing).
    basis : str
        How the limit was obtained, in words.
    """

    id: str
    subject: str
    quantity: str
    value: float
    limit: float
    bound: str
    utilization: float | None
    margin: float
    basis: str

    @property
    def status(self) -> str:
        return "pass" if self.margin >= 0 else "fail"

    @property
    def passed(self) -> bool:
        return self.margin >= 0


def _pct(x) -> str:
    return f"{float(x) * 100:g} %"


def design_checks(project: Project, net: Netlist, br: Branches) -> tuple[Check, ...]:
    """Every rating and limit check for one solved case.

    Parameters
    ----------
    project : Project
    net : Netlist
    br : Branches

    Returns
    -------
    tuple of Check
        In element order, then node windows.
    """
    lim = project.limits
    out: list[Check] = []
    for j, e in enumerate(project.elements):
        r = e.rating
        if r.power is not None:
            curve = derating_curve(e, lim)
            factor = derating_factor(curve, lim.ambient)
            limit = float(r.power * lim.power_fraction * factor)
            basis = f"rated {float(r.power):g} W × {_pct(lim.power_fraction)} policy"
            if lim.ambient is not None:
                basis += (
                    f" × {float(factor):.3g} derating at {float(lim.ambient):g} °C "
                    f"(knee {float(curve.knee):g} °C, zero {float(curve.zero):g} °C)"
                )
            value = abs(float(br.power[j]))
            out.append(_max_check(f"{e.name}.power", e.name, "power", value, limit, basis))
        if r.voltage is not None:
            limit = float(r.voltage * lim.voltage_fraction)
            basis = f"rated {float(r.voltage):g} V × {_pct(lim.voltage_fraction)} policy"
            out.append(
                _max_check(
                    f"{e.name}.voltage", e.name, "voltage", abs(float(br.voltage[j])), limit, basis
                )
            )
        if r.current is not None:
            limit = float(r.current * lim.current_fraction)
            what = "capability" if e.type in ("voltage_source", "current_source") else "rated"
            basis = f"{what} {float(r.current):g} A × {_pct(lim.current_fraction)} policy"
            out.append(
                _max_check(
                    f"{e.name}.current", e.name, "current", abs(float(br.current[j])), limit, basis
                )
            )
    index = {n: i for i, n in enumerate(net.nodes)}
    for w in lim.nodes:
        v = float(br.node_voltage[index[w.node]])
        if w.min is not None:
            lo = float(w.min)
            util = lo / v if lo > 0 and v > 0 else None
            out.append(
                Check(
                    f"nodes.{w.node}.min",
                    w.node,
                    "node voltage",
                    v,
                    lo,
                    "min",
                    util,
                    v - lo,
                    "window minimum",
                )
            )
        if w.max is not None:
            hi = float(w.max)
            util = v / hi if hi > 0 and v >= 0 else None
            out.append(
                Check(
                    f"nodes.{w.node}.max",
                    w.node,
                    "node voltage",
                    v,
                    hi,
                    "max",
                    util,
                    hi - v,
                    "window maximum",
                )
            )
    return tuple(out)


def _max_check(
    cid: str, subject: str, quantity: str, value: float, limit: float, basis: str
) -> Check:
    util = value / limit if limit > 0 else float("inf")
    return Check(cid, subject, quantity, value, limit, "max", util, limit - value, basis)
