"""The proof of the device states on the final solution, and its last correction.

After the state search (:mod:`calcdoc.mna.states`) the circuit is solved
in the states found by the ordinary solver, exactly where it is small.
:func:`device_states` then evaluates every device's test on that
solution: a conducting piece needs its current in its own direction
(I ≥ 0 forward, I ≤ 0 in breakdown), a piece that does not conduct needs
its slack (V ≤ Vf, V ≥ −Vbr).  On an exact solution the margins are
exact.  The search itself runs in floating point, so a device within
rounding of a threshold may fail its exact test by a hair;
:func:`repair` moves it to the state its failing test points to, and the
pipeline solves again (at most once per element).
"""

from __future__ import annotations

import numpy as np

from calcdoc.mna.states import ROUNDING, Found, with_states
from calcdoc.model.elements import KINDS, Knee
from calcdoc.results import Branches, DeviceState, Netlist, StateSearch, StateTest

# --------------------------------------------------------------------------


def _key_value(net: Netlist, j: int, key: str):
    kind = KINDS[net.types[j]]
    if key == kind.main.name:
        return net.values[j]
    for jj, k, v in net.more:
        if jj == j and k == key:
            return v
    return None


def _tests(net: Netlist, br: Branches, j: int) -> list[tuple[Knee, StateTest]]:
    """Each piece of device ``j`` with its test on the solution (exact where the solve was)."""
    kind = KINDS[net.types[j]]
    exact = br.exact_node_voltage is not None and br.exact_current is not None
    big_i = float(np.max(np.abs(br.current))) if len(br.current) else 0.0
    big_v = float(np.max(np.abs(br.node_voltage))) if len(br.node_voltage) else 0.0
    state = net.state(j)
    if exact:
        nv = br.exact_node_voltage
        v = nv[int(net.a[j])] - nv[int(net.b[j])]  # type: ignore[index]
        i = br.exact_current[j]  # type: ignore[index]
    else:
        v, i = float(br.voltage[j]), float(br.current[j])
    out = []
    for knee in kind.knees:
        thr = _key_value(net, j, knee.threshold)
        if thr is None:
            continue
        d = knee.direction
        if state == knee.state:
            bound = "min" if d > 0 else "max"
            margin = d * i
            text = "I ≥ 0" if d > 0 else "I ≤ 0"
            value, limit, qty, tol = i, 0, "current", ROUNDING * big_i
        else:
            bound = "max" if d > 0 else "min"
            limit = d * thr
            margin = thr - d * v
            text = f"V ≤ {knee.symbol}" if d > 0 else f"V ≥ −{knee.symbol}"
            value, qty = v, "voltage"
            tol = ROUNDING * max(big_v, abs(float(thr)))
        ok = margin >= 0 if exact else float(margin) >= -tol
        out.append(
            (knee, StateTest(text, qty, bound, float(value), float(limit), float(margin), bool(ok)))
        )
    out.sort(key=lambda kt: kt[1].quantity != "current")  # the conducting piece's test first
    return out


def device_states(net: Netlist, br: Branches, found: Found, repairs: int = 0) -> StateSearch:
    """Every searched device's state with the tests that confirm it, on the solution.

    Uses the exact node voltages and currents where the solve was exact, so
    the margins are then exact too.  ``repairs``: states changed after the
    search (:func:`repair`), counted with its iterations.
    """
    out = []
    for j, t in enumerate(net.types):
        kind = KINDS[t]
        if kind.searched:
            tests = tuple(test for _, test in _tests(net, br, j))
            state = net.state(j)
            out.append(DeviceState(net.names[j], state, kind.laws[state].text, tests))
    note = f"{repairs} state change(s) after the search, on the exact solution" if repairs else ""
    return StateSearch(found.method, found.iterations + repairs, found.pieces, tuple(out), note)


def repair(net: Netlist, br: Branches) -> Netlist | None:
    """The states one step nearer consistency, or None when every test holds.

    The search runs in floating point; on an exact solution a device within
    rounding of a threshold may fail its test by a hair.  Each such device
    moves to the state its failing test points to: a conducting piece with
    current against it stops conducting, a piece whose slack is negative
    starts.
    """
    changes: dict[int, str] = {}
    for j, t in enumerate(net.types):
        kind = KINDS[t]
        if not kind.searched:
            continue
        for knee, test in _tests(net, br, j):
            if not test.holds:
                changes[j] = kind.states[0] if net.state(j) == knee.state else knee.state
                break
    return with_states(net, changes) if changes else None


__all__ = ["device_states", "repair"]


def solve_in_states(net: Netlist):
    """Solve a netlist, its piecewise-linear devices in the states their tests confirm.

    Without such devices this is :func:`calcdoc.mna.solve.solve` and
    :func:`calcdoc.mna.branches.branches`.  With them the states are found
    (:func:`calcdoc.mna.states.find_states`), the circuit is solved in them,
    a device within rounding of a threshold is moved by its failing test
    (on the exact solution where there is one), and the tests of every
    device are proved on the final solution.

    Returns
    -------
    (Netlist, Solution, Branches, StateSearch or None)

    Raises
    ------
    SingularCircuitError
        Also ``"no consistent states"``, naming the devices whose tests fail.
    """
    from dataclasses import replace

    from calcdoc.errors import SingularCircuitError
    from calcdoc.mna.branches import branches
    from calcdoc.mna.solve import solve
    from calcdoc.mna.states import find_states, searched

    found = None
    if searched(net):
        found = find_states(net)
        net = replace(net, states=found.states)
    sol = solve(net)
    br = branches(net, sol)
    repairs = 0
    while found is not None and repairs < len(net.names):
        fixed = repair(net, br)
        if fixed is None:
            break
        net, repairs = fixed, repairs + 1
        sol = solve(net)
        br = branches(net, sol)
    if found is None:
        return net, sol, br, None
    proof = device_states(net, br, found, repairs)
    if not proof.holds:
        bad = [d.element for d in proof.devices if not d.holds]
        raise SingularCircuitError(
            "no consistent states",
            f"the states found for {', '.join(bad)} fail their own tests on the solution "
            "(the circuit is too close to a threshold for the rounding of the solve)",
            bad,
        )
    return net, sol, br, proof
