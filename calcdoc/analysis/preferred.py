"""IEC 60063 preferred number series E3 to E192.

E3 to E24 are written out as the standard tabulates them (from memory;
E24 has the well-known departures from the rounded geometric series,
2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2).  E48, E96 and E192 are the
geometric series 10^(i/N) rounded to three significant figures, with the
one tabulated departure 9.20 in E192 (from memory).  Their nesting
(each series every other value of the next) is checked in the tests.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

E24 = (1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
       3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1)  # fmt: skip


def _geometric(n: int) -> tuple[float, ...]:
    vals = [round(10 ** (i / n), 2) for i in range(n)]
    if n == 192:
        vals[vals.index(9.19)] = 9.20
    return tuple(vals)


SERIES: dict[str, tuple[float, ...]] = {
    "E24": E24,
    "E12": E24[::2],
    "E6": E24[::4],
    "E3": E24[::8],
    "E48": _geometric(48),
    "E96": _geometric(96),
    "E192": _geometric(192),
}


@dataclass(frozen=True)
class PreferredFinding:
    element: str
    series: str
    value: float
    in_series: bool
    below: float
    above: float


def nearest(value: float, series: str) -> tuple[bool, float, float]:
    """Whether ``value`` (Ω) is in the series, and the nearest preferred values below and above."""
    if value <= 0:
        return False, 0.0, 0.0
    exp = math.floor(math.log10(value))
    mant = value / 10**exp
    table = SERIES[series]
    ext = (
        [v * 10 ** (exp - 1) for v in table]
        + [v * 10**exp for v in table]
        + [v * 10 ** (exp + 1) for v in table]
    )
    hit = any(math.isclose(mant * 10**exp, v, rel_tol=1e-9) for v in ext)
    below = max((v for v in ext if v <= value * (1 + 1e-12)), default=0.0)
    above = min((v for v in ext if v >= value * (1 - 1e-12)), default=0.0)
    return hit, below, above


def preferred_findings(project, values) -> tuple[PreferredFinding, ...]:
    """Each element that declares a series: is its (case) value in it?"""
    out = []
    for e in project.elements:
        if e.series:
            v = float(values[e.name])
            ok, lo, hi = nearest(v, e.series)
            out.append(PreferredFinding(e.name, e.series, v, ok, lo, hi))
    return tuple(out)
