"""Lemke's method against closed forms and an exhaustive search written here."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from calcdoc.mna.lcp import lemke


def brute_force(q: np.ndarray, M: np.ndarray) -> list[np.ndarray]:
    """Every solution of the LCP (q, M): try each set S of positive z (independent check)."""
    K = len(q)
    out = []
    for bits in itertools.product((False, True), repeat=K):
        S = np.flatnonzero(bits)
        z = np.zeros(K)
        if len(S):
            if np.linalg.cond(M[np.ix_(S, S)]) > 1e10:  # singular: no solution with this S
                continue
            z[S] = np.linalg.solve(M[np.ix_(S, S)], -q[S])
        w = q + M @ z
        scale = 1e-9 * (1 + np.abs(q).max() + np.abs(M).max() * np.abs(z).max())
        complementary = np.all(np.abs(w[S]) <= scale)
        if complementary and z.min() >= -scale and w.min() >= -scale:
            out.append(z)
    return out


def test_two_by_two_closed_form():
    # Hand solution: both z positive, so w = 0: 2·z1 + z2 = 5 and z1 + 2·z2 = 6,
    # giving z1 = 4/3, z2 = 7/3 (common practice, no source).
    r = lemke(np.array([-5.0, -6.0]), np.array([[2.0, 1.0], [1.0, 2.0]]))
    assert r.solved
    assert r.z == pytest.approx([4 / 3, 7 / 3], rel=1e-12)
    assert r.w == pytest.approx([0.0, 0.0], abs=1e-12)


def test_nonnegative_q_needs_no_pivot():
    r = lemke(np.array([1.0, 0.0]), np.array([[1.0, -3.0], [2.0, 1.0]]))
    assert r.solved and r.pivots == 0 and not r.z.any()


def test_infeasible_problem_ends_on_a_ray():
    # w = −1 + 0·z can never be nonnegative: no solution exists.
    r = lemke(np.array([-1.0]), np.array([[0.0]]))
    assert not r.solved and r.ray.tolist() == [True]


@settings(deadline=None, max_examples=150)
@given(
    st.integers(1, 7),
    st.integers(0, 2**32 - 1),
    st.sampled_from(["positive definite", "semidefinite", "P non-symmetric"]),
)
def test_lemke_agrees_with_exhaustive_search(K, seed, kind):
    rng = np.random.default_rng(seed)
    B = rng.normal(size=(K, K))
    if kind == "positive definite":
        M = B @ B.T + np.diag(rng.uniform(0.1, 2, K))
    elif kind == "semidefinite":
        C = rng.normal(size=(K, max(1, K - 2)))
        M = C @ C.T
    else:  # positive definite symmetric part: a P-matrix
        M = B @ B.T + np.diag(rng.uniform(0.5, 2, K)) + (B - B.T)
    q = rng.normal(size=K)
    r = lemke(q, M)
    found = brute_force(q, M)
    if not r.solved:
        # every M here is copositive-plus: a ray proves there is no solution
        assert not found
        return
    w = q + M @ r.z
    scale = 1 + np.abs(q).max() + np.abs(M).max() * np.abs(r.z).max()
    assert r.z.min() >= -1e-9 * scale and w.min() >= -1e-9 * scale
    assert abs(r.z @ w) <= 1e-9 * scale * (1 + np.abs(r.z).max())
    if kind != "semidefinite":  # a P-matrix: the solution exists and is unique
        assert len(found) == 1
        assert r.z == pytest.approx(found[0], rel=1e-7, abs=1e-9)
