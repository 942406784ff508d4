"""The solver's method choice, its figures (residual, condition, error) and its refusals.

The thresholds are those documented in :mod:`calcdoc.mna.solve` ("n ≤
EXACT_LIMIT", "n ≤ DENSE_LIMIT", numbers growing *beyond* EXACT_BITS
bits), set here around small circuits; the figures are recomputed in the
tests from matrices written by hand (nodal analysis, common practice, no
source), with numpy and exact fractions.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
from netlists import project_text

import calcdoc
from calcdoc.errors import SingularCircuitError
from calcdoc.mna import solve as solve_mod
from calcdoc.pipeline import solve_case

DIVIDER = [
    ("V1", "voltage_source", ("a", "gnd"), "10 V"),
    ("R1", "resistor", ("a", "b"), "1 kohm"),
    ("R2", "resistor", ("b", "gnd"), "3 kohm"),
]  # 3 unknowns: V(a), V(b), I(V1)


def case(elements, monkeypatch=None, **limits):
    for name, value in limits.items():
        monkeypatch.setattr(solve_mod, name, value)
    return solve_case(calcdoc.loads(project_text(elements)))


@pytest.mark.parametrize(
    ("limits", "method", "kept"),
    [
        ({"EXACT_LIMIT": 3}, "exact rational", True),  # n ≤ EXACT_LIMIT: exact
        ({"EXACT_LIMIT": 2}, "dense LU", True),
        ({"EXACT_LIMIT": 2, "DENSE_LIMIT": 3}, "dense LU", True),  # n ≤ DENSE_LIMIT: dense
        ({"EXACT_LIMIT": 2, "DENSE_LIMIT": 2}, "sparse LU", False),  # equations not kept
    ],
)
def test_method_by_size_at_the_documented_limits(monkeypatch, limits, method, kept):
    r = case(DIVIDER, monkeypatch, **limits)
    assert r.solution.method == method
    assert (r.solution.formulation is not None) == kept
    assert r.branches.node_voltage[2] == pytest.approx(7.5, rel=1e-15, abs=0)  # 10 V · 3k/(1k + 3k)


def test_a_value_that_is_not_rational_takes_the_float_path():
    r = case(
        [
            ("V1", "voltage_source", ("a", "gnd"), "1 V"),
            ("R1", "resistor", ("a", "gnd"), "sqrt(2) * 1 kohm"),
        ]
    )
    assert r.solution.method == "dense LU"
    assert r.branches.current[1] == pytest.approx(1 / (2**0.5 * 1000), rel=1e-15, abs=0)


def test_exact_elimination_gives_way_beyond_the_bit_limit(monkeypatch):
    # 3 A into 1 Ω: the eliminated row is [1, 3]; its largest number, 3, has
    # 2 bits. Not beyond 2 bits: exact. Beyond 1 bit: floating point, said so.
    els = [("I1", "current_source", ("gnd", "a"), "3 A"), ("R1", "resistor", ("a", "gnd"), "1 ohm")]
    r = case(els, monkeypatch, EXACT_BITS=2)
    assert r.solution.method == "exact rational" and r.solution.warnings == ()
    assert r.solution.refinement_steps == 0 and r.solution.error_estimate is None
    r = case(els, monkeypatch, EXACT_BITS=1)
    assert r.solution.method == "dense LU"
    assert r.solution.warnings == (
        "exact elimination outgrew 1-bit numbers; solved in floating point",
    )
    assert r.branches.node_voltage[1] == 3.0


def test_a_solution_exact_in_floats_needs_one_zero_correction(monkeypatch):
    # 2 A into 0.5 Ω: V(a) = 1 V is exact in floating point, so the residual is
    # zero and the one correction solved is zero: no error left.
    r = case(
        [
            ("I1", "current_source", ("gnd", "a"), "2 A"),
            ("R1", "resistor", ("a", "gnd"), "0.5 ohm"),
        ],
        monkeypatch,
        EXACT_LIMIT=0,
    )
    s = r.solution
    assert (s.method, s.refinement_steps, s.error_estimate, s.residual) == ("dense LU", 1, 0, 0)
    assert s.condition == 1.0  # a 1×1 matrix


@pytest.mark.parametrize("path", ["dense", "sparse"])
def test_relative_residual_recomputed_exactly(monkeypatch, path):
    # 4 V across 3 Ω. Unknowns V(a), I(V1); rows KCL(a), law of V1:
    #   A = [[1/3, 1], [1, 0]], z = [0, 4]; ‖A‖∞ = 4/3, ‖z‖∞ = 4 (by hand).
    # I(V1) = −4/3 is not a float, so the residual of the float solution is
    # not zero; it is recomputed here exactly from the reported x.
    limits = {"EXACT_LIMIT": 0} | ({"DENSE_LIMIT": 0} if path == "sparse" else {})
    r = case(
        [("V1", "voltage_source", ("a", "gnd"), "4 V"), ("R1", "resistor", ("a", "gnd"), "3 ohm")],
        monkeypatch,
        **limits,
    )
    va, iv = (Fraction(v) for v in r.solution.x)
    res = max(abs(0 - (va / 3 + iv)), abs(4 - va))
    want = res / (Fraction(4, 3) * max(abs(va), abs(iv)) + 4)
    assert res > 0
    assert r.solution.residual == pytest.approx(float(want), rel=1e-2, abs=0)
    assert r.solution.error_estimate < 1e-15 and r.solution.warnings == ()


def equilibrated_condition(A: np.ndarray) -> float:
    """1-norm condition of A scaled by powers of two, rows first, then columns.

    The documented equilibration (module docstring of calcdoc.mna.solve),
    written here: each row, then each column, divided by the power of two
    nearest its largest magnitude.
    """
    r = 2.0 ** -np.round(np.log2(np.abs(A).max(axis=1)))
    As = A * r[:, None]
    c = 2.0 ** -np.round(np.log2(np.abs(As).max(axis=0)))
    return float(np.linalg.cond(As * c[None, :], 1))


@pytest.mark.parametrize("path", ["dense", "sparse"])
def test_condition_of_the_equilibrated_matrix(monkeypatch, path):
    # 1 A into a; 1 Ω a–gnd, 1 kΩ a–b, 10 Ω b–gnd, 1 MΩ b–c, 1 MΩ c–gnd: the
    # nodal conductance matrix A below, written by hand; rows spanning six
    # decades, so equilibration matters.
    els = [
        ("I1", "current_source", ("gnd", "a"), "1 A"),
        ("R1", "resistor", ("a", "gnd"), "1 ohm"),
        ("R2", "resistor", ("a", "b"), "1 kohm"),
        ("R3", "resistor", ("b", "c"), "1 Mohm"),
        ("R4", "resistor", ("c", "gnd"), "1 Mohm"),
        ("R5", "resistor", ("b", "gnd"), "10 ohm"),
    ]
    g1, g2, g3, g4, g5 = 1.0, 1e-3, 1e-6, 1e-6, 0.1
    A = np.array([[g1 + g2, -g2, 0], [-g2, g2 + g3 + g5, -g3], [0, -g3, g3 + g4]])
    limits = {"EXACT_LIMIT": 0} | ({"DENSE_LIMIT": 0} if path == "sparse" else {})
    r = case(els, monkeypatch, **limits)
    want = equilibrated_condition(A)
    assert want < 20 < np.linalg.cond(A, 1)  # equilibration matters here
    if path == "dense":
        assert r.solution.condition == pytest.approx(want, rel=1e-12, abs=0)
    else:  # a 1-norm estimate: a lower bound, and close for a 3×3 matrix
        assert want / 3 <= r.solution.condition <= want * (1 + 1e-12)
    np.testing.assert_allclose(r.solution.x, np.linalg.solve(A, [1.0, 0, 0]), rtol=1e-14)


def test_large_unknowns_are_not_taken_for_large_errors(monkeypatch):
    # 100 kV across 3 mΩ: I = −33.3 MA through the source (Ohm's law). The
    # estimated error is relative to the size of x, so it stays at rounding level.
    r = case(
        [
            ("V1", "voltage_source", ("a", "gnd"), "100 kV"),
            ("R1", "resistor", ("a", "gnd"), "3 mohm"),
        ],
        monkeypatch,
        EXACT_LIMIT=0,
    )
    assert r.solution.x[1] == pytest.approx(-1e5 / 3e-3, rel=1e-15, abs=0)
    assert r.solution.error_estimate < 1e-15 and r.solution.warnings == ()


GAIN_CANCELS = [
    ("V1", "voltage_source", ("a", "gnd"), "5 V"),
    ("R1", "resistor", ("a", "b"), "1 kohm"),
    ("E1", "vcvs", ("b", "gnd"), "1", {"control": '["b", "gnd"]'}),
]


@pytest.mark.parametrize(
    ("limits", "how"),
    [
        ({}, "exact rank"),
        ({"EXACT_LIMIT": 0}, "numerical rank"),
        ({"EXACT_LIMIT": 0, "DENSE_LIMIT": 0}, "numerical rank"),
    ],
)
def test_gains_that_cancel_name_the_null_space(monkeypatch, limits, how):
    # E1 reads V(b) = 1·V(b): no equation fixes V(b). By hand, the null
    # vector of A is V(a) = 0, V(b) = t, I(V1) = t/R1, I(E1) = −t/R1.
    with pytest.raises(SingularCircuitError) as info:
        case(GAIN_CANCELS, monkeypatch, **limits)
    e = info.value
    assert e.condition == "singular system"
    assert e.culprits == ("V(b)", "I(V1)", "I(E1)")
    assert e.detail == (
        "the voltage of node b, the current of V1 and the current of E1 are not determined "
        f"by the equations ({how}); check the dependent-source gains and controls, which "
        "can cancel"
    )


@pytest.mark.parametrize(
    ("limits", "how"),
    [
        ({}, "exact rank"),
        ({"EXACT_LIMIT": 0}, "numerical rank"),
        ({"EXACT_LIMIT": 0, "DENSE_LIMIT": 0}, "numerical rank"),
    ],
)
def test_a_voltage_no_equation_mentions(monkeypatch, limits, how):
    # E1 alone at node b reads V(b) = 1·V(b): the row of E1 and the column of
    # V(b) are zero; the null vector is V(b) alone.
    with pytest.raises(SingularCircuitError) as info:
        case(
            [
                ("V1", "voltage_source", ("a", "gnd"), "5 V"),
                ("R1", "resistor", ("a", "gnd"), "1 kohm"),
                ("E1", "vcvs", ("b", "gnd"), "1", {"control": '["b", "gnd"]'}),
            ],
            monkeypatch,
            **limits,
        )
    assert info.value.culprits == ("V(b)",)
    assert info.value.detail == (
        f"the voltage of node b is not determined by the equations ({how}); check the "
        "dependent-source gains and controls, which can cancel"
    )


def test_null_space_components_at_rounding_level_are_not_named(monkeypatch):
    # With R1 = 1 GΩ the null vector is (V(b), I(V1), I(E1)) = (1, 1e-9, −1e-9)·t:
    # on the float path the currents are a billionth of the voltage, below
    # what the numerical rank resolves, and only V(b) is named.
    els = [GAIN_CANCELS[0], ("R1", "resistor", ("a", "b"), "1 Gohm"), GAIN_CANCELS[2]]
    with pytest.raises(SingularCircuitError) as info:
        case(els, monkeypatch, EXACT_LIMIT=0)
    assert info.value.culprits == ("V(b)",)


ONE_NODE = [
    ("I1", "current_source", ("gnd", "a"), "2 A"),
    ("R1", "resistor", ("a", "gnd"), "0.5 ohm"),
]


def test_a_zero_error_is_never_warned(monkeypatch):
    # ERROR_WARNING: "when that estimate exceeds ERROR_WARNING the solution
    # carries a warning"; an estimate of exactly zero exceeds no level, even zero.
    r = case(ONE_NODE, monkeypatch, EXACT_LIMIT=0, ERROR_WARNING=0.0)
    assert r.solution.error_estimate == 0 and r.solution.warnings == ()


@pytest.mark.parametrize("path", ["dense", "sparse"])
def test_singular_at_the_condition_limit(monkeypatch, path):
    # SINGULAR: "condition at or above which a float system counts as
    # singular". A 1×1 matrix has condition exactly 1: at a limit of 1 it is refused.
    limits = {"EXACT_LIMIT": 0, "SINGULAR": 1.0} | ({"DENSE_LIMIT": 0} if path == "sparse" else {})
    with pytest.raises(SingularCircuitError) as info:
        case(ONE_NODE, monkeypatch, **limits)
    assert info.value.condition == "singular system" and info.value.culprits == ("V(a)",)


def test_refinement_stops_at_its_step_limit(monkeypatch):
    # The 1e11-conditioned pair of nodes (1 mΩ link, 100 MΩ to ground each;
    # see test_numerics) needs more than one correction; MAX_REFINEMENT caps them.
    els = [
        ("I1", "current_source", ("gnd", "a"), "1 nA"),
        ("R1", "resistor", ("a", "b"), "1 mohm"),
        ("R2", "resistor", ("b", "gnd"), "100 Mohm"),
        ("R3", "resistor", ("a", "gnd"), "100 Mohm"),
    ]
    free = case(els, monkeypatch, EXACT_LIMIT=0).solution.refinement_steps
    assert free > 1
    for cap in (0, 1):
        monkeypatch.setattr(solve_mod, "MAX_REFINEMENT", cap)
        assert case(els, monkeypatch).solution.refinement_steps == cap


@pytest.mark.parametrize("path", ["dense", "sparse"])
def test_column_equilibration_of_a_high_gain_stage(monkeypatch, path):
    # 1 V at x, a VCVS of gain 10⁶ from x to o, 1 kΩ load at o. Unknowns V(x),
    # V(o), I(V1), I(E1); rows KCL(x), KCL(o), law of V1, law of E1 (by hand).
    # Row scaling shrinks E1's row by 2⁻²⁰, which leaves V(o)'s column at
    # 10⁻³: the column scaling matters here.
    els = [
        ("V1", "voltage_source", ("x", "gnd"), "1 V"),
        ("E1", "vcvs", ("o", "gnd"), "1e6", {"control": '["x", "gnd"]'}),
        ("RL", "resistor", ("o", "gnd"), "1 kohm"),
    ]
    A = np.array([[0, 0, 1, 0], [0, 1e-3, 0, 1], [1, 0, 0, 0], [-1e6, 1, 0, 0]], dtype=float)
    limits = {"EXACT_LIMIT": 0} | ({"DENSE_LIMIT": 0} if path == "sparse" else {})
    r = case(els, monkeypatch, **limits)
    want = equilibrated_condition(A)
    if path == "dense":
        assert r.solution.condition == pytest.approx(want, rel=1e-12, abs=0)
    else:
        assert want / 3 <= r.solution.condition <= want * (1 + 1e-12)
    assert r.solution.x.tolist() == pytest.approx([1.0, 1e6, 0.0, -1e3], rel=1e-15, abs=0)


@pytest.mark.parametrize("path", ["dense", "sparse"])
def test_one_unknown_on_the_float_paths(monkeypatch, path):
    # 2 mA into node a through 1.5 kΩ: V(a) = I·R = 3 V, the only unknown (Ohm's law).
    limits = {"EXACT_LIMIT": 0} | ({"DENSE_LIMIT": 0} if path == "sparse" else {})
    r = case(
        [
            ("I1", "current_source", ("gnd", "a"), "2 mA"),
            ("R1", "resistor", ("a", "gnd"), "1.5 kohm"),
        ],
        monkeypatch,
        **limits,
    )
    assert r.solution.method == f"{path} LU"
    assert r.solution.x.tolist() == [pytest.approx(3.0, rel=1e-15, abs=0)]
    assert r.solution.residual < 1e-15 and r.solution.warnings == ()


@pytest.mark.parametrize("path", ["dense", "sparse"])
def test_unexcited_circuit_solves_to_zero_with_zero_residual(monkeypatch, path):
    # A 0 V source drives nothing: x = 0 exactly, so A·x − z = 0 and the relative
    # residual ‖A·x − z‖/(‖A‖·‖x‖ + ‖z‖) is 0/0, reported as 0 (no error at all).
    limits = {"EXACT_LIMIT": 0} | ({"DENSE_LIMIT": 0} if path == "sparse" else {})
    r = case([("V1", "voltage_source", ("a", "gnd"), "0 V"), *DIVIDER[1:]], monkeypatch, **limits)
    assert r.solution.x.tolist() == [0.0, 0.0, 0.0]
    assert r.solution.residual == 0.0 and r.solution.error_estimate == 0.0
