"""Reading one value of the project file: texts, dates, quantities, tolerances.

Each reader takes the raw TOML value and its key path, returns the checked
value or None, and adds any fault (with its key path) to a :class:`Faults`
collection, so that every fault of a file is reported together.
"""

from __future__ import annotations

import datetime as dt
import difflib
import re
from collections.abc import Mapping
from fractions import Fraction
from typing import Any

from calcdoc.errors import Fault
from calcdoc.model import keys as file_keys
from calcdoc.model.expressions import (
    ExpressionError,
    evaluate,
    parse_expression,
)
from calcdoc.model.project import (
    Derating,
    Tolerance,
)
from calcdoc.model.quantities import (
    AMPERE,
    NONE,
    PHYSICAL_MAX,
    VOLT,
    WATT,
    Dimension,
    Quantity,
    QuantityError,
    dimension_name,
    outside_physical_range,
    parse_temperature,
)

NAME_RE = re.compile(file_keys.NAME_PATTERN)
SERIES = file_keys.SERIES
MAX_LIST_ITEMS = 100  # assumptions, references, history entries
MAX_NAME_CHARS = 100  # element, node and parameter names
#: Characters per text field, by key (``MAX_TEXT_CHARS`` for any other).
MAX_TEXT_CHARS = 200
TEXT_LIMITS = {
    "number": 40,
    "revision": 20,
    "name": 100,
    "description": 500,
    "source": 500,
    "basis": 500,
    "seal": 1_000,
    "template": 1_000,
    "assumptions": 1_000,
    "references": 1_000,
    "purpose": 10_000,
    "scope": 10_000,
    "conclusion": 10_000,
}


class Faults:
    """The faults found so far in one project file, each with its key path."""

    def __init__(self) -> None:
        self.items: list[Fault] = []
        self.hints_left = 100  # "did you mean" is worth a search for the first faults only

    def hint(self, word: str, choices: Any) -> str:
        if self.hints_left <= 0:
            return ""
        self.hints_left -= 1
        return did_you_mean(word, choices)

    def add(
        self, path: str, message: str, line: int | None = None, column: int | None = None
    ) -> None:
        self.items.append(Fault(path, message, line, column))


def did_you_mean(word: str, choices: Any) -> str:
    if len(word) > MAX_NAME_CHARS or len(choices) > 5_000:
        return ""  # a hint is not worth a quadratic search
    cutoff = 0.5 if len(word) <= 3 else 0.6
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=cutoff)
    return f" (did you mean {close[0]!r}?)" if close else ""


def check_keys(table: Mapping[str, Any], allowed: Any, path: str, faults: Faults) -> None:
    unknown = [key for key in table if key not in allowed]
    if len(unknown) > 10:  # one fault for a flood of keys
        shown = ", ".join(repr(k[:40]) for k in unknown[:5])
        faults.add(path or "(top level)", f"{len(unknown):,} unknown keys: {shown}, ...")
        return
    for key in unknown:
        faults.add(f"{path}.{key}" if path else key, f"unknown key{faults.hint(key, allowed)}")


def _join(path: str, key: str) -> str:
    return f"{path}.{key}" if path else key


def read_table(value: Any, path: str, faults: Faults) -> dict[str, Any]:
    if value is None:
        return {}
    if not isinstance(value, dict):
        faults.add(path, f"expected a table, found {kind_of(value)}")
        return {}
    return value


def kind_of(value: Any) -> str:
    if isinstance(value, float) and value != value:
        return "not a number (nan)"
    if isinstance(value, float) and value in (float("inf"), float("-inf")):
        return "infinity (inf)"
    return {
        str: "a string",
        bool: "true/false",
        int: "an integer",
        float: "a number",
        list: "an array",
        dict: "a table",
        dt.date: "a date",
        dt.datetime: "a date-time",
    }.get(type(value), type(value).__name__)


def read_text(
    table: Mapping[str, Any], key: str, path: str, faults: Faults, default: str = ""
) -> str:
    value = table.get(key, default)
    if not isinstance(value, str):
        faults.add(_join(path, key), f"expected a string, found {kind_of(value)}")
        return default
    return value if _short_enough(value, key, _join(path, key), faults) else default


def _short_enough(value: str, key: str, path: str, faults: Faults) -> bool:
    limit = TEXT_LIMITS.get(key, MAX_TEXT_CHARS)
    if len(value) > limit:
        faults.add(path, f"the text is {len(value):,} characters long; the limit is {limit:,}")
        return False
    return True


def read_texts(table: Mapping[str, Any], key: str, path: str, faults: Faults) -> tuple[str, ...]:
    value = table.get(key, [])
    if isinstance(value, str):
        value = [value]
    if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
        faults.add(_join(path, key), "expected an array of strings")
        return ()
    if len(value) > MAX_LIST_ITEMS:
        faults.add(_join(path, key), f"{len(value):,} entries; the limit is {MAX_LIST_ITEMS}")
        return ()
    ok = [_short_enough(v, key, f"{_join(path, key)}[{i}]", faults) for i, v in enumerate(value)]
    return tuple(value) if all(ok) else ()


def read_date(table: Mapping[str, Any], key: str, path: str, faults: Faults) -> dt.date | None:
    value = table.get(key)
    if value is None:
        return None
    if isinstance(value, dt.datetime):
        return value.date()
    if isinstance(value, dt.date):
        return value
    if isinstance(value, str):
        try:
            return dt.date.fromisoformat(value)
        except ValueError:
            pass
    faults.add(_join(path, key), "expected a date such as 2026-11-20")
    return None


def read_number(value: Any) -> Fraction | None:
    if isinstance(value, bool):
        return None
    if isinstance(value, int):
        return Fraction(value)
    if isinstance(value, float):
        if value != value or value in (float("inf"), float("-inf")):
            return None
        return Fraction(repr(value))
    return None


def representable(q: Quantity, path: str, faults: Faults) -> bool:
    """The value must be one a physical quantity can have (1e-30 to 1e30 in SI, or zero)."""
    why = outside_physical_range(q.magnitude)
    if why:
        faults.add(path, why)
        return False
    return True


def read_quantity(value: Any, dim: Dimension, path: str, faults: Faults) -> Quantity | None:
    """A constant quantity (no parameters) of the given dimension."""
    if dim == NONE:
        num = read_number(value)
        if num is not None:
            return Quantity(num, NONE)
    if not isinstance(value, str):
        faults.add(
            path, f"expected a string with units, such as {example_of(dim)}, found {kind_of(value)}"
        )
        return None
    try:
        q = evaluate(parse_expression(value), {})
    except (ExpressionError, QuantityError) as exc:
        faults.add(path, str(exc))
        return None
    if q.dimension != dim:
        faults.add(
            path,
            f"expected {dimension_name(dim)}, found {dimension_name(q.dimension)} in {value!r}",
        )
        return None
    return q if representable(q, path, faults) else None


def example_of(dim: Dimension) -> str:
    return {VOLT: '"24 V"', AMPERE: '"10 mA"', WATT: '"0.25 W"', NONE: '"1 %"'}.get(
        dim, '"4.7 kohm"'
    )


def read_fraction(
    value: Any, path: str, faults: Faults, lo: Fraction, hi: Fraction
) -> Fraction | None:
    q = read_quantity(value, NONE, path, faults)
    if q is None:
        return None
    f = Fraction(q.magnitude)
    if not lo < f <= hi:
        faults.add(
            path,
            f"must be greater than {float(lo):g} and at most {float(hi):g}, found {float(f):g}",
        )
        return None
    return f


def read_temperature(value: Any, path: str, faults: Faults) -> Fraction | None:
    if value is None:
        return None
    try:
        t = parse_temperature(value)
    except QuantityError as exc:
        faults.add(path, str(exc))
        return None
    if t < Fraction("-273.15"):
        faults.add(path, "below absolute zero")
        return None
    if t > PHYSICAL_MAX:
        faults.add(path, "the temperature is too high to be a physical value")
        return None
    return t


def read_tolerance(value: Any, path: str, faults: Faults) -> Tolerance | None:
    if value is None:
        return None
    if isinstance(value, dict):
        check_keys(value, file_keys.names_of(file_keys.TOLERANCE_KEYS), path, faults)
        if "minus" not in value or "plus" not in value:
            faults.add(path, "an asymmetric tolerance needs both 'minus' and 'plus'")
            return None
        minus = read_quantity(value["minus"], NONE, _join(path, "minus"), faults)
        plus = read_quantity(value["plus"], NONE, _join(path, "plus"), faults)
        text = f"−{value['minus']} / +{value['plus']}"
    else:
        minus = plus = read_quantity(value, NONE, path, faults)
        text = f"±{value}" if isinstance(value, str) else f"±{value}"
    if minus is None or plus is None:
        return None
    m, p = Fraction(minus.magnitude), Fraction(plus.magnitude)
    if m < 0 or p < 0:
        faults.add(path, 'a tolerance is given as a positive share, e.g. "1 %"')
        return None
    if m >= 1:
        faults.add(path, "a minus tolerance of 100 % or more would make the value zero or negative")
        return None
    return Tolerance(m, p, text)


def read_derating(value: Any, path: str, faults: Faults) -> Derating | None:
    if value is None:
        return None
    table = read_table(value, path, faults)
    check_keys(table, file_keys.names_of(file_keys.DERATING_KEYS), path, faults)
    knee = read_temperature(table.get("knee"), _join(path, "knee"), faults)
    zero = read_temperature(table.get("zero"), _join(path, "zero"), faults)
    if knee is None or zero is None:
        if "knee" not in table or "zero" not in table:
            faults.add(
                path, "a derating curve needs 'knee' (full rating up to) and 'zero' (no rating at)"
            )
        return None
    if zero <= knee:
        faults.add(_join(path, "zero"), "the zero-rating temperature must be above the knee")
        return None
    return Derating(knee, zero)


def check_name(name: str, path: str, faults: Faults, what: str) -> bool:
    if isinstance(name, str) and len(name) > MAX_NAME_CHARS:
        faults.add(path[:60] + "...", f"a {what} name is at most {MAX_NAME_CHARS} characters long")
        return False
    if not isinstance(name, str) or not NAME_RE.fullmatch(name):
        faults.add(path, f"{what} name {name!r} may hold only letters, digits, '_', '-' and '.'")
        return False
    return True
