"""Equation markup for the engine's equation objects (layout only: no arithmetic on results).

The markup is the TeX subset that :mod:`calcdoc.report.mathbox` reads.

One convention throughout: the quantity letters V and I are italic; every
element and node name is upright and written as in the project file (no
automatic subscripts); a product is written with a centre dot, so names
never run together.  Each MNA equation becomes breakable pieces, in
symbols (element names stand for their values) or with the values
substituted; a number and its unit always stay in one piece.  Terms of one
element that share a divisor are written as one fraction,
``(V_a − V_b)/R1``, as a checker would write them by hand.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from calcdoc.format import eng, number

_SUPER = str.maketrans("⁰¹²³⁴⁵⁶⁷⁸⁹⁻", "0123456789-")


def _escape(name: str) -> str:
    return (
        name.replace("\\", "")
        .replace("$", "")
        .replace("{", "")
        .replace("}", "")
        .replace("_", r"\_")
    )


def tex_name(name: str) -> str:
    """An element or node name, upright and as written: ``R12`` → ``\\mathrm{R12}``."""
    return r"\mathrm{" + _escape(name) + "}"


def tex_unknown(u: str) -> str:
    """``V(in)`` → ``V_{\\mathrm{in}}``; ``I(PSU)`` → ``I_{\\mathrm{PSU}}``."""
    head, _, rest = u.partition("(")
    return f"{head}_{{{tex_name(rest[:-1])}}}"


def tex_number(value: float, sig: int) -> str:
    """A plain number in equation markup, ``1.994\\times10^{-6}`` beyond 0.001 … 9999."""
    text = number(value, sig).replace("−", "-")
    if "×" in text:
        mant, _, exp = text.partition(" × 10")
        return f"{mant}\\times 10^{{{exp.translate(_SUPER)}}}"
    return text


def tex_quantity(value: float, unit: str, sig: int) -> str:
    """A value with its unit in equation markup (``4.700\\,\\mathrm{k}\\Omega``), one unbreakable piece."""
    if unit in ("V/V", "A/A", ""):
        return tex_number(value, sig)
    s = eng(value, unit, sig).replace("−", "-")
    num, _, u = s.partition(" ")
    prefix, sym = (u[: -len(unit)], unit) if u.endswith(unit) else (u, "")
    sym_tex = r"\Omega" if sym == "Ω" else (r"\mathrm{" + sym + "}" if sym else "")
    pre_tex = r"\mathrm{\mu}" if prefix == "µ" else (r"\mathrm{" + prefix + "}" if prefix else "")
    return f"{num}\\,{pre_tex}{sym_tex}"


def _sym(name: str, values, units, sig: int, paren: bool = True) -> str:
    if values is None:
        return tex_name(name)
    unit = units[name] if units else ""
    q = tex_quantity(float(values[name]), unit, sig)
    return f"({q})" if paren else q


def _groups(terms: Sequence[Any]) -> list[list[Any]]:
    out: list[list[Any]] = []
    for t in terms:
        c = t.coefficient
        if (
            out
            and out[-1][0].element == t.element
            and out[-1][0].coefficient.numerator == c.numerator
            and out[-1][0].coefficient.denominator == c.denominator
            and t.unknown is not None
            and out[-1][0].unknown is not None
            and (c.numerator or c.denominator)
        ):
            out[-1].append(t)
        else:
            out.append([t])
    return out


def _side(terms, values, units, sig) -> list[str]:
    if not terms:
        return ["0"]
    pieces = []
    for k, group in enumerate(_groups(terms)):
        c0 = group[0].coefficient
        lead = c0.sign
        if len(group) == 1:
            body = tex_unknown(group[0].unknown) if group[0].unknown else ""
        else:
            parts = []
            for i, t in enumerate(group):
                s = t.coefficient.sign * lead
                parts.append(
                    ("" if i == 0 else (" + " if s > 0 else " - ")) + tex_unknown(t.unknown)
                )
            body = "".join(parts)
        num = _sym(c0.numerator, values, units, sig) if c0.numerator else ""
        dot = r" \cdot "
        if len(group) > 1:
            inner = "(" + body + ")"
            top = num + dot + inner if num else body
        else:
            top = (num + dot + body) if (num and body) else (num or body)
        if c0.denominator:
            text = (
                r"\frac{"
                + (top or "1")
                + "}{"
                + _sym(c0.denominator, values, units, sig, paren=False)
                + "}"
            )
        else:
            text = top if (len(group) == 1 or num) else "(" + body + ")"
        sign = "-" if lead < 0 else "+"
        pieces.append((sign + " " + text) if (k or sign == "-") else text)
    return pieces


def equation_pieces(
    eq,
    values: Mapping[str, float] | None = None,
    units: Mapping[str, str] | None = None,
    sig: int = 4,
) -> list[str]:
    """Breakable equation-markup pieces of ``lhs = rhs``.

    Parameters
    ----------
    eq : Equation
        An MNA equation object (``lhs`` and ``rhs`` terms).
    values : mapping, optional
        Element values to substitute for the symbols.
    units : mapping, optional
        The unit of each symbol (for the substituted values).
    sig : int
        Significant figures of substituted values.
    """
    left = _side(eq.lhs, values, units, sig)
    right = _side(eq.rhs, values, units, sig)
    return [*left, "= " + right[0], *right[1:]]


def closed_form_tex(expr) -> str:
    """A sympy expression with upright names and centre-dot products."""
    import sympy

    names = {s: tex_name(s.name) for s in expr.free_symbols}
    return sympy.latex(expr, symbol_names=names, mul_symbol="dot")
