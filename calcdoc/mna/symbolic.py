"""Closed-form solution in element symbols, for small circuits.

For a circuit with at most ``MAX_UNKNOWNS`` unknowns and ``MAX_ELEMENTS``
elements, the MNA equations are solved in symbols (sympy), each element
name standing for its value, and every unknown is given as a simplified
rational function of the element values.  This lets a checker verify a
node voltage by hand (for a divider: V(out) = V1·R2/(R1 + R2)).  Larger
circuits get no closed form: the expressions grow too fast to be useful or
quick.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from calcdoc.mna.formulation import Formulation
from calcdoc.model.quantities import Number

MAX_UNKNOWNS = 8
MAX_ELEMENTS = 16


@dataclass(frozen=True)
class ClosedForm:
    """Each unknown as an expression in element symbols.

    Attributes
    ----------
    unknowns : tuple of str
        ``V(node)`` / ``I(element)`` names.
    text : tuple of str
        Plain-text expression of each unknown.
    latex : tuple of str
        The same in LaTeX (typeset by the report's equation layout).
    values : tuple of float
        Each expression evaluated with the case's values (equals the
        numeric solution; checked in tests).
    expressions : tuple
        The sympy expressions themselves.
    """

    unknowns: tuple[str, ...]
    text: tuple[str, ...]
    latex: tuple[str, ...]
    values: tuple[float, ...]
    expressions: tuple


def _safe(name: str) -> str:
    return "s_" + "".join(c if c.isalnum() else "_" for c in name)


def closed_form(form: Formulation | None, values: Mapping[str, Number]) -> ClosedForm | None:
    """Solve the equations in symbols; None when the circuit is too large.

    Parameters
    ----------
    form : Formulation or None
    values : mapping of element name to value (SI)

    Returns
    -------
    ClosedForm or None

    >>> from calcdoc.results import Netlist
    >>> from calcdoc.mna.formulation import formulation
    >>> import numpy as np
    >>> net = Netlist(("gnd", "in", "out"), ("V1", "R1", "R2"),
    ...     ("voltage_source", "resistor", "resistor"), np.array([1, 1, 2]),
    ...     np.array([0, 2, 0]), (10, 1000, 1000), {}, {})
    >>> cf = closed_form(formulation(net), dict(zip(net.names, net.values)))
    >>> cf.text[1], cf.values[1]
    ('R2*V1/(R1 + R2)', 5.0)
    """
    if form is None or len(form.unknowns) > MAX_UNKNOWNS:
        return None
    names = sorted(
        {
            s
            for eq in form.equations
            for t in (*eq.lhs, *eq.rhs)
            for s in (t.coefficient.numerator, t.coefficient.denominator)
            if s is not None
        }
    )
    if len(names) > MAX_ELEMENTS or not form.unknowns:
        return None
    import sympy

    sym = {n: sympy.Symbol(n) for n in names}
    col = {u: i for i, u in enumerate(form.unknowns)}
    n = len(form.unknowns)
    A = sympy.zeros(n, n)
    z = sympy.zeros(n, 1)

    def coef(c) -> sympy.Expr:
        v = sympy.Integer(c.sign)
        if c.numerator:
            v *= sym[c.numerator]
        if c.denominator:
            v /= sym[c.denominator]
        return v

    for r, eq in enumerate(form.equations):
        for t in eq.lhs:
            A[r, col[t.unknown]] += coef(t.coefficient)
        for t in eq.rhs:
            z[r] += coef(t.coefficient)
    try:
        x = A.LUsolve(z)
    except (ValueError, ZeroDivisionError, sympy.matrices.exceptions.NonInvertibleMatrixError):
        return None
    exprs = tuple(sympy.factor(sympy.cancel(sympy.together(e))) for e in x)
    subs = {
        sym[k]: sympy.Rational(str(values[k])) if not isinstance(values[k], float) else values[k]
        for k in names
    }
    vals = tuple(float(e.subs(subs)) for e in exprs)
    latex_names = {sym[k]: sympy.Symbol(_latex_name(k)) for k in names}
    return ClosedForm(
        form.unknowns,
        tuple(str(e) for e in exprs),
        tuple(sympy.latex(e.subs(latex_names)) for e in exprs),
        vals,
        exprs,
    )


def _latex_name(name: str) -> str:
    """A symbol typeset as the name it is, upright (``R12`` stays ``R12``, no subscripts)."""
    safe = "".join(c for c in name if c.isalnum() or c in "_.-()")
    return r"\mathrm{" + safe.replace("_", r"\_") + "}"
