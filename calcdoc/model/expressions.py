"""Safe arithmetic expressions over quantities and parameters.

Values in a project file may be expressions such as
``"2 * conductor_r * run_length"`` or ``"(21 mohm/m) * 85 m"``.  They are
read by the small recursive-descent parser below into a tree of frozen
nodes and evaluated on :class:`~calcdoc.model.quantities.Quantity` values.
Nothing is ever passed to ``eval``, ``exec`` or a symbolic library: the
only things an expression can do are the four operations, powers,
parentheses, parameter names and the functions ``sqrt``, ``abs``, ``min``
and ``max``.

A name that directly follows a number is read as that number's unit
(``85 m``); any other name is a parameter.

>>> e = parse_expression("2 * rc * len")
>>> sorted(names_in(e))
['len', 'rc']
>>> from calcdoc.model.quantities import parse_quantity
>>> env = {"rc": parse_quantity("21 mohm/m"), "len": parse_quantity("85 m")}
>>> evaluate(e, env).magnitude
Fraction(357, 100)
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache

from calcdoc.model.quantities import (
    MAX_UNIT_POWER,
    NONE,
    Quantity,
    QuantityError,
    check_dimension,
    dim_div,
    dim_mul,
    dim_pow,
    dimension_name,
    is_unit,
    parse_number,
    parse_quantity,
    parse_rkm,
    unit_factor,
)

MAX_LENGTH = 500
MAX_DEPTH = 40
MAX_EXPONENT = 12
FUNCTIONS = ("sqrt", "abs", "min", "max")
#: Names that look like numbers but are none: refused with their meaning.
NOT_NUMBERS = {"inf": "infinity", "infinity": "infinity", "nan": "not a number"}
#: Exact fractions whose numerator or denominator exceeds this are carried as floats.
EXACT_LIMIT = 10**60
#: Any intermediate result beyond this (either way, in powers of two) is refused.
_BINARY_RANGE = 1000


class ExpressionError(ValueError):
    """The expression is malformed or its dimensions do not agree."""


# ------------------------------------------------------------------ nodes


@dataclass(frozen=True)
class Literal:
    value: Quantity
    text: str


@dataclass(frozen=True)
class Name:
    name: str


@dataclass(frozen=True)
class Unary:
    op: str
    operand: Node


@dataclass(frozen=True)
class Binary:
    op: str
    left: Node
    right: Node


@dataclass(frozen=True)
class Call:
    function: str
    args: tuple[Node, ...]


Node = Literal | Name | Unary | Binary | Call

# ------------------------------------------------------------------ tokens

_TOKEN = re.compile(
    r"""
    (?P<space>\s+)
  | (?P<number>(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)
  | (?P<op>\*\*|[-+*/^(),%])
  | (?P<name>[A-Za-z_µμΩΩ][A-Za-z0-9_.µμΩΩ-]*)
    """,
    re.VERBOSE,
)


def _tokens(text: str) -> list[tuple[str, str, int]]:
    out: list[tuple[str, str, int]] = []
    pos = 0
    while pos < len(text):
        m = _TOKEN.match(text, pos)
        if not m:
            raise ExpressionError(f"unexpected character {text[pos]!r} at position {pos + 1}")
        kind = m.lastgroup
        assert kind is not None
        if kind != "space":
            out.append((kind, m.group(), m.start()))
        pos = m.end()
    return out


class _Parser:
    def __init__(self, text: str) -> None:
        self.text = text
        self.toks = _tokens(text)
        self.i = 0
        self.depth = 0

    def peek(self, k: int = 0) -> tuple[str, str] | None:
        j = self.i + k
        return self.toks[j][:2] if j < len(self.toks) else None

    def take(self) -> tuple[str, str]:
        tok = self.peek()
        if tok is None:
            raise ExpressionError("the expression ends too early")
        self.i += 1
        return tok

    def _unit_power(self) -> str:
        """A whole-number power written on a unit (``ohm^2``) belongs to the unit."""
        op, num = self.peek(), self.peek(1)
        if op and op[1] in ("^", "**") and num and num[0] == "number" and num[1].isdigit():
            if len(num[1].lstrip("0")) > 2 or int(num[1]) > MAX_UNIT_POWER:
                raise ExpressionError(f"powers on a unit are limited to ±{MAX_UNIT_POWER}")
            self.take()
            self.take()
            return "^" + num[1]
        return ""

    def adjacent(self) -> bool:
        """True when the next token touches the previous one (no space)."""
        if self.i == 0 or self.i >= len(self.toks):
            return False
        _, prev, start = self.toks[self.i - 1]
        return start + len(prev) == self.toks[self.i][2]

    def expect(self, value: str) -> None:
        tok = self.take()
        if tok[1] != value:
            raise ExpressionError(f"expected {value!r}, found {tok[1]!r}")

    def parse(self) -> Node:
        node = self.sum()
        if self.peek() is not None:
            raise ExpressionError(f"unexpected {self.peek()[1]!r}")  # type: ignore[index]
        return node

    def nest(self) -> None:
        self.depth += 1
        if self.depth > MAX_DEPTH:
            raise ExpressionError("the expression is nested too deeply")

    def sum(self) -> Node:
        node = self.product()
        while (tok := self.peek()) and tok[1] in "+-" and tok[0] == "op":
            self.take()
            node = Binary(tok[1], node, self.product())
        return node

    def product(self) -> Node:
        node = self.unary()
        while (tok := self.peek()) and tok[0] == "op" and tok[1] in ("*", "/"):
            self.take()
            node = Binary(tok[1], node, self.unary())
        return node

    def unary(self) -> Node:
        tok = self.peek()
        if tok and tok[0] == "op" and tok[1] in "+-":
            self.take()
            self.nest()
            node = Unary(tok[1], self.unary())
            self.depth -= 1
            return node
        return self.power()

    def power(self) -> Node:
        base = self.atom()
        tok = self.peek()
        if tok and tok[1] in ("^", "**"):
            self.take()
            self.nest()
            node = Binary("^", base, self.unary())
            self.depth -= 1
            return node
        return base

    def atom(self) -> Node:
        kind, text = self.take()
        if kind == "number":
            return self.number(text)
        if kind == "name":
            if text.lower() in NOT_NUMBERS:
                raise ExpressionError(
                    f"{text!r} ({NOT_NUMBERS[text.lower()]}) is not a value a physical "
                    "quantity can have"
                )
            nxt = self.peek()
            if nxt and nxt[1] == "(":
                if text not in FUNCTIONS:
                    raise ExpressionError(
                        f"unknown function {text!r} (allowed: {', '.join(FUNCTIONS)})"
                    )
                self.take()
                args = [self.sum()]
                while self.peek() and self.peek()[1] == ",":  # type: ignore[index]
                    self.take()
                    args.append(self.sum())
                self.expect(")")
                return Call(text, tuple(args))
            return Name(text)
        if text == "(":
            self.nest()
            node = self.sum()
            self.expect(")")
            self.depth -= 1
            return node
        raise ExpressionError(f"unexpected {text!r}")

    def number(self, text: str) -> Node:
        """A number, with the unit that directly follows it (if any)."""
        nxt = self.peek()
        # RKM code split by the tokenizer: "4k7" -> number "4", name "k7"
        if nxt and nxt[0] == "name" and self.adjacent():
            rkm = parse_rkm(text + nxt[1])
            if rkm is not None:
                self.take()
                return Literal(
                    Quantity(_finite(rkm), parse_quantity(text + nxt[1]).dimension), text + nxt[1]
                )
        unit_parts: list[str] = []
        if nxt and nxt[1] == "%":
            self.take()
            unit_parts.append("%")
        elif nxt and nxt[0] == "name":
            if nxt[1].lower() in NOT_NUMBERS:
                raise ExpressionError(
                    f"{nxt[1]!r} ({NOT_NUMBERS[nxt[1].lower()]}) is not a value a physical "
                    "quantity can have"
                )
            if not is_unit(nxt[1]):
                raise ExpressionError(f"{nxt[1]!r} after {text} is not a unit")
            self.take()
            unit_parts.append(nxt[1] + self._unit_power())
            # compound units: "21 mohm/m", "100 ppm/K"
            while (
                (op := self.peek())
                and op[1] == "/"
                and (u := self.peek(1))
                and u[0] == "name"
                and is_unit(u[1])
                and not (self.peek(2) and self.peek(2)[1] == "(")  # type: ignore[index]
            ):
                self.take()
                self.take()
                unit_parts.append("/" + u[1] + self._unit_power())
        unit = "".join(unit_parts)
        try:
            factor, dim = unit_factor(unit)
            number = parse_number(text)
        except QuantityError as exc:
            raise ExpressionError(str(exc)) from exc
        value = Quantity(_finite(number * factor), dim)
        return Literal(value, f"{text} {unit}".strip())


@lru_cache(maxsize=65536)
def parse_expression(text: str) -> Node:
    """Parse a value expression into a tree.

    Parameters
    ----------
    text : str
        The expression text.

    Returns
    -------
    Node
        The expression tree.

    Raises
    ------
    ExpressionError
        Malformed, too long or too deeply nested.
    """
    if not isinstance(text, str):
        raise ExpressionError("expected a string")
    if len(text) > MAX_LENGTH:
        raise ExpressionError(f"the expression is longer than {MAX_LENGTH} characters")
    if not text.strip():
        raise ExpressionError("the value is empty")
    # a whole RKM code or a plain "number unit" needs no tree
    if _PLAIN.fullmatch(text):
        try:
            q = parse_quantity(text)
        except QuantityError:
            pass
        else:
            return Literal(Quantity(_finite(q.magnitude), q.dimension), text.strip())
    return _Parser(text).parse()


_PLAIN = re.compile(
    r"\s*[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?\s*[^\s*+()^,-]*\s*|\s*\d*[RKkMGT]\d*\s*"
)


def names_in(node: Node) -> set[str]:
    """Parameter names the expression refers to."""
    if isinstance(node, Name):
        return {node.name}
    if isinstance(node, Unary):
        return names_in(node.operand)
    if isinstance(node, Binary):
        return names_in(node.left) | names_in(node.right)
    if isinstance(node, Call):
        out: set[str] = set()
        for a in node.args:
            out |= names_in(a)
        return out
    return set()


def _same_dim(a: Quantity, b: Quantity, what: str) -> None:
    if a.dimension != b.dimension:
        raise ExpressionError(
            f"cannot {what} {dimension_name(a.dimension)} and {dimension_name(b.dimension)}"
        )


def _finite(x: Fraction | float) -> Fraction | float:
    """Keep every intermediate result small: a bounded fraction or a finite float.

    Every operand of every operation passes through here, so no arithmetic
    in :func:`evaluate` works on numbers of more than a few thousand bits.
    """
    if isinstance(x, int):
        x = Fraction(x)
    elif not isinstance(x, (Fraction, float)):
        x = float(x)  # a numpy scalar from an analysis override
    if isinstance(x, float):
        if not math.isfinite(x):
            raise ExpressionError("the result is too large to compute with")
        if x != 0 and abs(x) < 1e-300:
            raise ExpressionError("the result is too small to compute with")
        return x
    if abs(x.numerator) > EXACT_LIMIT or x.denominator > EXACT_LIMIT:
        if x.numerator == 0:
            return x
        # decide the size from the bit lengths before dividing (no overflow, no underflow)
        bits = abs(x.numerator).bit_length() - x.denominator.bit_length()
        if bits > _BINARY_RANGE:
            raise ExpressionError("the result is too large to compute with")
        if bits < -_BINARY_RANGE:
            raise ExpressionError("the result is too small to compute with")
        return _finite(float(x))
    return x


def _quantity(magnitude: Fraction | float, dimension, *, nonzero: bool = False) -> Quantity:
    """A bounded result; ``nonzero`` when the operands make zero impossible (float underflow)."""
    try:
        dim = check_dimension(dimension)
    except QuantityError as exc:
        raise ExpressionError(str(exc)) from None
    if nonzero and magnitude == 0:
        raise ExpressionError("the result is too small to compute with")
    return Quantity(_finite(magnitude), dim)


def evaluate(node: Node, env: Mapping[str, Quantity]) -> Quantity:
    """Evaluate an expression tree.

    Parameters
    ----------
    node : Node
        From :func:`parse_expression`.
    env : mapping of str to Quantity
        Parameter values.

    Returns
    -------
    Quantity
        Exact (Fraction) where only the four operations and integer powers
        are used, float otherwise.

    Raises
    ------
    ExpressionError
        Unknown name, division by zero, mismatched dimensions.
    """
    try:
        return _evaluate(node, env)
    except OverflowError:
        raise ExpressionError("the result is too large to compute with") from None
    except ZeroDivisionError:
        raise ExpressionError("division by zero") from None
    except RecursionError:
        raise ExpressionError("the expression is nested too deeply") from None


def _evaluate(node: Node, env: Mapping[str, Quantity]) -> Quantity:
    if isinstance(node, Literal):
        return node.value
    if isinstance(node, Name):
        if node.name not in env:
            raise ExpressionError(f"unknown parameter {node.name!r}")
        return env[node.name]
    if isinstance(node, Unary):
        v = _evaluate(node.operand, env)
        return Quantity(-v.magnitude if node.op == "-" else v.magnitude, v.dimension)
    if isinstance(node, Binary):
        a = _evaluate(node.left, env)
        b = _evaluate(node.right, env)
        if node.op in "+-":
            _same_dim(a, b, "add" if node.op == "+" else "subtract")
            mag = a.magnitude + b.magnitude if node.op == "+" else a.magnitude - b.magnitude
            return _quantity(mag, a.dimension)
        if node.op == "*":
            return _quantity(
                a.magnitude * b.magnitude,
                dim_mul(a.dimension, b.dimension),
                nonzero=a.magnitude != 0 and b.magnitude != 0,
            )
        if node.op == "/":
            if b.magnitude == 0:
                raise ExpressionError("division by zero")
            return _quantity(
                a.magnitude / b.magnitude,
                dim_div(a.dimension, b.dimension),
                nonzero=a.magnitude != 0,
            )
        # power
        if b.dimension != NONE:
            raise ExpressionError("an exponent must be dimensionless")
        e = b.magnitude
        if e != int(e):
            if a.dimension != NONE:
                raise ExpressionError("a quantity with units can only be raised to a whole power")
            if a.magnitude < 0:
                raise ExpressionError("a negative number raised to a fractional power")
            return _quantity(math.pow(float(a.magnitude), float(e)), NONE, nonzero=a.magnitude != 0)
        n = int(e)
        if abs(n) > MAX_EXPONENT:
            raise ExpressionError(f"exponents are limited to ±{MAX_EXPONENT}")
        if n < 0 and a.magnitude == 0:
            raise ExpressionError("division by zero")
        return _quantity(a.magnitude**n, dim_pow(a.dimension, n), nonzero=a.magnitude != 0)
    if isinstance(node, Call):
        args = [_evaluate(a, env) for a in node.args]
        if node.function in ("sqrt", "abs") and len(args) != 1:
            raise ExpressionError(f"{node.function}() takes one argument")
        if node.function == "abs":
            return Quantity(abs(args[0].magnitude), args[0].dimension)
        if node.function == "sqrt":
            v = args[0]
            if any(d % 2 for d in v.dimension):
                raise ExpressionError("sqrt() of a quantity whose units have no square root")
            if v.magnitude < 0:
                raise ExpressionError("sqrt() of a negative number")
            root = _exact_sqrt(v.magnitude)
            return Quantity(root, tuple(d // 2 for d in v.dimension))  # type: ignore[arg-type]
        for b in args[1:]:
            _same_dim(args[0], b, "compare")
        pick = min if node.function == "min" else max
        return pick(args, key=lambda q: q.magnitude)
    raise ExpressionError("malformed expression")  # pragma: no cover


def _exact_sqrt(x: Fraction | float) -> Fraction | float:
    if isinstance(x, Fraction):
        n, d = math.isqrt(x.numerator), math.isqrt(x.denominator)
        if n * n == x.numerator and d * d == x.denominator:
            return Fraction(n, d)
    return math.sqrt(float(x))


def to_text(node: Node) -> str:
    """Render the tree back as plain text (for the report)."""
    if isinstance(node, Literal):
        return node.text
    if isinstance(node, Name):
        return node.name
    if isinstance(node, Unary):
        return f"{node.op}{to_text(node.operand)}"
    if isinstance(node, Binary):
        op = {"^": "^"}.get(node.op, node.op)
        return f"({to_text(node.left)} {op} {to_text(node.right)})"
    return f"{node.function}({', '.join(to_text(a) for a in node.args)})"
