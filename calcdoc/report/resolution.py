"""What a printed number can resolve: the print resolution of each case.

A case solved in exact rational arithmetic has no residual; its results
are converted to floating point once, so sums of them (KCL, KVL, power
balance) carry rounding of about 10⁻¹⁶ of the largest term.  A case solved
in floating point carries the solver's estimated relative error (after
iterative refinement, usually near 10⁻¹⁶).
Anything smaller than :data:`RELATIVE` (or that rounding bound, when larger)
of the largest value of its kind in the case cannot be told from zero: it
is printed as 0 and the resolution is stated.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from calcdoc.report.access import is_exact

RELATIVE = 1e-9
EPSILON = 2.2e-16  # float64 unit roundoff (IEEE 754 binary64)


def step(scale: float, relative: float) -> float:
    """``relative × scale`` rounded up to a power of ten (1e-30 for a zero scale).

    >>> step(0.02856, 1e-9), step(10.0, 1e-9), step(0.0, 1e-9)
    (1e-10, 1e-08, 1e-30)
    """
    x = abs(scale) * relative
    if not math.isfinite(x) or x <= 0:
        return 1e-30
    return float(10.0 ** math.ceil(math.log10(x) - 1e-12))


@dataclass(frozen=True)
class Resolution:
    """Print resolution of one case: currents (A), voltages (V), powers (W)."""

    current: float
    voltage: float
    power: float
    relative: float
    exact: bool

    def of(self, unit: str) -> float:
        return {"A": self.current, "V": self.voltage, "W": self.power}[unit]

    def clip(self, value: float, unit: str) -> float:
        """``value``, or 0 when it is below the resolution of its unit."""
        return 0.0 if abs(value) < self.of(unit) else float(value)


def case_resolution(case) -> Resolution:
    """The print resolution of a solved case (see the module text)."""
    br = case.branches
    exact = is_exact(case.solution)
    rel = RELATIVE
    if not exact:
        err = case.solution.error_estimate
        err = float(err) if err is not None and math.isfinite(err) else 1e-3
        rel = min(max(RELATIVE, 10 * err, 10 * EPSILON), 1e-3)

    def top(a) -> float:
        return float(np.max(np.abs(a))) if len(a) else 0.0

    return Resolution(
        step(top(br.current), rel),
        step(max(top(br.voltage), top(br.node_voltage)), rel),
        step(top(br.power), rel),
        rel,
        exact,
    )
