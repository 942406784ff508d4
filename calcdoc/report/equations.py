"""Mathtext for the engine's equation objects (layout only: no arithmetic on results).

Each MNA equation is turned into breakable pieces of mathtext, in symbols
(element names stand for their values) or with the values substituted.
Terms of one element that share a divisor are written as one fraction,
``(V_a − V_b)/R_1``, as a checker would write them by hand.
"""

from __future__ import annotations

from collections.abc import Mapping

from calcdoc.format import VALUE_UNITS, eng
from calcdoc.report.mathtext import tex_name
from calcdoc.results import Equation, Term


def tex_unknown(u: str) -> str:
    """``V(in)`` → ``V_{in}``; ``I(PSU)`` → ``I_{PSU}``."""
    head, _, rest = u.partition("(")
    inner = rest[:-1]
    esc = (
        inner.replace("\\", "")
        .replace("_", r"\_")
        .replace("{", "")
        .replace("}", "")
        .replace("$", "")
    )
    return f"{head}_{{\\mathrm{{{esc}}}}}"


def tex_quantity(value: float, unit: str, sig: int) -> str:
    """A value with its unit in mathtext (``4.7\\,\\mathrm{k}\\Omega``)."""
    if unit in ("V/V", "A/A", ""):
        text = f"{float(value):.{sig}g}"
        return text.replace("e", r"\times 10^{") + "}" if "e" in text else text
    s = eng(value, unit, sig).replace("−", "-")
    num, _, u = s.partition(" ")
    u = u.replace("Ω", r"\Omega").replace("µ", r"\mu ")
    if u.startswith(r"\mu "):
        u = (
            r"\mu\mathrm{"
            + u[4:].replace(r"\Omega", "}\\Omega").rstrip()
            + ("}" if r"\Omega" not in u else "")
        )
        u = u.replace(r"\mathrm{}", "")
    elif r"\Omega" in u:
        pre = u.replace(r"\Omega", "")
        u = (r"\mathrm{" + pre + "}" if pre else "") + r"\Omega"
    else:
        u = r"\mathrm{" + u + "}"
    return f"{num}\\,{u}"


def _sym(name: str, values, kinds, sig: int, paren: bool = True) -> str:
    if values is None:
        return tex_name(name)
    # ``kinds``: element types by element name, or units by symbol name (further keys, R(K1))
    unit = "" if not kinds else VALUE_UNITS.get(kinds[name], kinds[name])
    q = tex_quantity(float(values[name]), unit, sig)
    return f"({q})" if paren else q


def _groups(terms: tuple[Term, ...]) -> list[list[Term]]:
    out: list[list[Term]] = []
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


def _side(terms, values, kinds, sig) -> list[str]:
    if not terms:
        return ["0"]
    pieces = []
    for k, group in enumerate(_groups(terms)):
        c0 = group[0].coefficient
        lead = group[0].coefficient.sign
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
        num = _sym(c0.numerator, values, kinds, sig) if c0.numerator else ""
        if c0.denominator:
            top = (num + (r"\," if num and body else "") + (body or "")) or "1"
            if len(group) > 1 and num:
                top = num + r"\,(" + body + ")"
            text = (
                r"\frac{" + top + "}{" + _sym(c0.denominator, values, kinds, sig, paren=False) + "}"
            )
        elif num:
            text = num + (
                (r"\,(" + body + ")") if len(group) > 1 else (r"\," + body if body else "")
            )
        else:
            text = body if len(group) == 1 else "(" + body + ")"
        sign = "-" if lead < 0 else "+"
        pieces.append((sign + " " + text) if (k or sign == "-") else text)
    return pieces


def equation_pieces(
    eq: Equation,
    values: Mapping[str, float] | None = None,
    kinds: Mapping[str, str] | None = None,
    sig: int = 4,
) -> list[str]:
    """Breakable mathtext pieces of ``lhs = rhs``.

    Parameters
    ----------
    eq : Equation
    values : mapping, optional
        Element values to substitute for the symbols.
    kinds : mapping, optional
        For the value units: each symbol's unit (``Formulation.units()``), or
        element types by element name.
    sig : int
        Significant figures of substituted values.
    """
    left = _side(eq.lhs, values, kinds, sig)
    right = _side(eq.rhs, values, kinds, sig)
    return [*left, "= " + right[0], *right[1:]]
