"""Rooted trees, order conditions and linear order, checked against outside sources.

Sources named beside the checks:
- OEIS A000081 (number of rooted trees with n nodes), terms typed from the entry (from memory),
  and Polya's counting recurrence computed here independently.
- Cayley's formula: n^(n-1) labelled rooted trees on n vertices; (n-1)! increasing (recursive)
  labellings, i.e. sum over trees of alpha(t) = n!/(sigma(t) gamma(t)) (Hairer, Norsett & Wanner,
  Solving ODEs I, 2nd ed., section II.2 -- from memory).
- Published orders of the catalogue methods (the publications named in rk_tableaux).
- sympy.series for R(z) - e^z; an empirical order measured by stepping a nonlinear system with
  an exact solution (Jacobi elliptic functions, scipy.special.ellipj).
"""
from __future__ import annotations

import time
from fractions import Fraction
from math import factorial

import mpmath
import numpy as np
import pytest
import sympy as sp
from hypothesis import given, settings, strategies as st
from scipy.special import ellipj

from stepfence.analysis.rk_order import (MAX_TREE_ORDER, all_trees, elementary_weights,
                                         linear_order, order_conditions, trees_of_order)
from stepfence.errors import InputError
from stepfence.schemes.butcher import ButcherTableau, catalogue_tableau
from stepfence.schemes.rk_tableaux import TABLEAUX
from stepfence.schemes.stability import Z

R = sp.Rational

# Orders as published by the sources cited in rk_tableaux.py (propagated, embedded).
PUBLISHED_ORDER = {
    "euler": 1, "heun": 2, "midpoint": 2, "ralston": 2, "kutta3": 3, "ssprk3": 3, "bs3": 3,
    "rk4": 4, "rk38": 4, "dopri5": 5, "gauss2": 2, "gauss4": 4, "gauss6": 6, "radau3": 3,
    "radau5": 5, "lobatto3c2": 2, "lobatto3c4": 4, "sdirk2": 2, "sdirk3": 3,
}
PUBLISHED_EMBEDDED_ORDER = {"bs3": 2, "dopri5": 4}  # Bogacki & Shampine 1989; Dormand & Prince 1980

# A 3-stage explicit method with b = (1/4, 1/2, 1/4), c = (0, 1/2, 1): b.1 = 1, b.c = 1/2 and
# b.A.c = 1/6 hold, so R(z) is the cubic Taylor polynomial of e^z, but b.c^2 = 3/8 != 1/3.
LINEAR_ONLY = ButcherTableau([[0, 0, 0], [R(1, 2), 0, 0], [R(-1, 3), R(4, 3), 0]],
                             [R(1, 4), R(1, 2), R(1, 4)], name="linear-order-3")


# --- trees ---------------------------------------------------------------------------------

def test_tree_counts_match_oeis_a000081():
    # OEIS A000081, a(1..10) (from memory of the entry)
    oeis = [1, 1, 2, 4, 9, 20, 48, 115, 286, 719]
    assert [len(trees_of_order(n)) for n in range(1, MAX_TREE_ORDER + 1)] == oeis


def test_tree_counts_match_polyas_recurrence():
    # a(n+1) = (1/n) sum_{k=1..n} (sum_{d | k} d a(d)) a(n-k+1), a(1) = 1 (Polya 1937)
    a = {1: 1}
    for n in range(1, MAX_TREE_ORDER):
        total = sum(sum(d * a[d] for d in range(1, k + 1) if k % d == 0) * a[n - k + 1]
                    for k in range(1, n + 1))
        assert total % n == 0
        a[n + 1] = total // n
    assert [len(trees_of_order(n)) for n in range(1, MAX_TREE_ORDER + 1)] == \
        [a[n] for n in range(1, MAX_TREE_ORDER + 1)]


@pytest.mark.parametrize("n", range(1, MAX_TREE_ORDER + 1))
def test_symmetry_and_density_counting_identities(n):
    trees = trees_of_order(n)
    # Cayley: labelled rooted trees on n vertices
    assert sum(Fraction(factorial(n), t.sigma) for t in trees) == n ** (n - 1)
    # increasing labellings: recursive trees on n vertices
    assert sum(Fraction(factorial(n), t.sigma * t.gamma) for t in trees) == factorial(n - 1)
    assert len({t.shape for t in trees}) == len(trees)


def test_small_trees_have_the_tabulated_density_and_symmetry():
    # Hairer, Norsett & Wanner, Solving ODEs I, 2nd ed., Table II.2.2 (from memory)
    table = {(t.text()): (t.gamma, t.sigma) for t in all_trees(4)}
    assert table == {"t": (1, 1), "[t]": (2, 1), "[t, t]": (3, 2), "[[t]]": (6, 1),
                     "[t, t, t]": (4, 6), "[t, [t]]": (8, 1), "[[t, t]]": (12, 2),
                     "[[[t]]]": (24, 1)}
    assert sorted(t.gamma for t in trees_of_order(5)) == [5, 10, 15, 20, 20, 30, 40, 60, 120]


def test_all_trees_is_ordered_with_subtrees_first():
    trees = all_trees(8)
    assert len(trees) == 200 and all_trees(6) == trees[:len(all_trees(6))]
    for t in trees:
        assert t.index == trees.index(t)
        assert all(k < t.index for k in t.children)
        assert t.order == 1 + sum(trees[k].order for k in t.children)


# --- elementary weights and order ----------------------------------------------------------

def _direct_weights(t: ButcherTableau) -> dict:
    """Phi(t) for the trees of order <= 4 by their textbook formulas, in sympy matrices."""
    A = sp.Matrix(t.A)
    b = sp.Matrix([list(t.b)])
    c = sp.Matrix(list(t.c))
    cc = c.multiply_elementwise(c)
    one = sp.ones(t.stages, 1)
    return {"t": (b * one)[0], "[t]": (b * c)[0], "[t, t]": (b * cc)[0],
            "[[t]]": (b * A * c)[0], "[t, t, t]": (b * cc.multiply_elementwise(c))[0],
            "[t, [t]]": (b * c.multiply_elementwise(A * c))[0], "[[t, t]]": (b * A * cc)[0],
            "[[[t]]]": (b * A * A * c)[0]}


@pytest.mark.parametrize("name", list(TABLEAUX))
def test_elementary_weights_match_textbook_formulas(name):
    # Hairer, Norsett & Wanner I, Table II.2.2 lists Phi(t) for |t| <= 4 as b.c^k, b.A c ...
    t = catalogue_tableau(name)
    phi, _ = elementary_weights(t, 4)
    direct = _direct_weights(t)
    with mpmath.workdps(50):
        for tree in all_trees(4):
            ref = mpmath.mpf(sp.N(direct[tree.text()], 60))
            assert abs(_mp(phi[tree.index]) - ref) < mpmath.mpf(10) ** -40, tree.text()


def _mp(x):
    """An elementary weight (Fraction or mpmath number) as an mpmath mpf."""
    if isinstance(x, Fraction):
        return mpmath.mpf(x.numerator) / x.denominator
    return mpmath.mpf(x)


@pytest.mark.parametrize("name", list(TABLEAUX))
def test_catalogue_has_its_published_order(name):
    result = order_conditions(catalogue_tableau(name), max_order=8)
    p = PUBLISHED_ORDER[name]
    assert TABLEAUX[name]["order"] == p
    assert result["order"] == p and not result["capped"] and result["error_order"] == p + 1
    assert result["failed_trees"]
    assert result["trees_checked"] == {q: len(trees_of_order(q)) for q in range(1, p + 2)}
    assert result["principal_error_norm"] > 0


@pytest.mark.parametrize("name", sorted(PUBLISHED_EMBEDDED_ORDER))
def test_embedded_solutions_have_their_published_order(name):
    t = catalogue_tableau(name)
    assert order_conditions(t, embedded=True)["order"] == PUBLISHED_EMBEDDED_ORDER[name]
    assert TABLEAUX[name]["order_embedded"] == PUBLISHED_EMBEDDED_ORDER[name]


def test_principal_error_norms():
    # Euler: the one tree of order 2 has sigma 1, gamma 2, Phi = b.c = 0, so A^(2) = 1/2 (by hand)
    euler = order_conditions(catalogue_tableau("euler"))
    assert euler["principal_error_norm_exact"] == "1/2"
    # Dormand-Prince 5(4): A^(6) = 3.99e-4 (Dormand & Prince 1980; Dormand 1996, from memory)
    dp = order_conditions(catalogue_tableau("dopri5"))
    assert dp["principal_error_norm"] == pytest.approx(3.99e-4, rel=3e-3)
    # classical RK4: A^(5) = 1.45e-2 (Dormand 1996, from memory)
    rk4 = order_conditions(catalogue_tableau("rk4"))
    assert rk4["principal_error_norm"] == pytest.approx(1.45e-2, rel=4e-3)
    # exact text and float agree
    assert sp.N(sp.sympify(dp["principal_error_norm_exact"])) == pytest.approx(
        dp["principal_error_norm"], rel=1e-14)


def test_max_order_caps_the_reported_order():
    result = order_conditions(catalogue_tableau("rk4"), max_order=3)
    assert result["order"] == 3 and result["capped"] and result["error_order"] is None
    assert result["principal_error_norm"] is None and result["failed_trees"] == []
    assert result["trees_checked"] == {1: 1, 2: 1, 3: 2}


@pytest.mark.parametrize("bad", [0, MAX_TREE_ORDER + 1, 2.5, True, "8"])
def test_max_order_is_validated(bad):
    with pytest.raises(InputError) as info:
        order_conditions(catalogue_tableau("rk4"), max_order=bad)
    assert info.value.field == "max_order"


def test_embedded_without_weights_is_refused():
    with pytest.raises(InputError, match="b_embedded"):
        order_conditions(catalogue_tableau("rk4"), embedded=True)


def test_algebraic_tolerance_does_not_hide_a_small_defect():
    # gauss4 with b_1 moved by 1e-30: the first condition now fails by 1e-30 >> 1e-45
    g = catalogue_tableau("gauss4")
    moved = ButcherTableau(g.A, (g.b[0] + R(1, 10**30), g.b[1]), g.c)
    assert order_conditions(moved)["order"] == 0
    assert order_conditions(g)["arithmetic"].startswith("mpmath")


@settings(max_examples=40, deadline=None)
@given(st.fractions(-2, 2, max_denominator=6), st.fractions(-2, 2, max_denominator=6),
       st.fractions(-2, 2, max_denominator=6))
def test_two_stage_explicit_order_two_conditions(c2, b1, b2):
    # order 2 iff b1 + b2 = 1 and b2 c2 = 1/2 (Hairer, Norsett & Wanner I, section II.1)
    t = ButcherTableau([[0, 0], [c2, 0]], [b1, b2])
    order = order_conditions(t, max_order=3)["order"]
    holds1 = b1 + b2 == 1
    holds2 = holds1 and b2 * c2 == Fraction(1, 2)
    assert (order >= 1) == holds1 and (order >= 2) == holds2


def test_order_conditions_are_fast():
    # the brief: dopri5 through order 8 well under 2 s; also a dense 16-stage implicit tableau
    start = time.perf_counter()
    order_conditions(catalogue_tableau("dopri5"), max_order=8)
    elementary_weights(catalogue_tableau("dopri5"), 8)
    assert time.perf_counter() - start < 2.0
    s = 16
    dense = ButcherTableau([[R((i * 7 + j * 3) % 11 - 5, 13) for j in range(s)] for i in range(s)],
                           [R(1, s)] * s)
    start = time.perf_counter()
    elementary_weights(dense, 8)
    assert time.perf_counter() - start < 2.0


# --- linear order --------------------------------------------------------------------------

def _series_order(P, Q, up_to=14):
    """First nonzero Taylor coefficient of P/Q - e^z by sympy.series: (p, C)."""
    ser = sp.series(P / Q - sp.exp(Z), Z, 0, up_to).removeO()
    poly = sp.Poly(sp.expand(ser), Z)
    for k in range(up_to):
        ck = sp.nsimplify(sp.radsimp(poly.coeff_monomial(Z**k)))
        if sp.simplify(ck) != 0:
            return k - 1, ck
    return None


@pytest.mark.parametrize("name", list(TABLEAUX))
def test_linear_order_equals_tree_order_and_sympy_series(name):
    t = catalogue_tableau(name)
    P, Q = t.stability_function()
    p, C = linear_order(P, Q)
    p_ref, C_ref = _series_order(P, Q, up_to=PUBLISHED_ORDER[name] + 3)
    assert p == p_ref == PUBLISHED_ORDER[name]
    assert sp.simplify(C - C_ref) == 0
    # on y' = lambda y only the tall tree [[...[t]]] counts: C = Phi(tall) - 1/(p+1)!
    phi, _ = elementary_weights(t, p + 1)
    tall = next(x for x in trees_of_order(p + 1) if x.gamma == factorial(p + 1))
    with mpmath.workdps(50):
        residual = _mp(phi[tall.index]) - mpmath.mpf(1) / factorial(p + 1)
        assert abs(mpmath.mpf(sp.N(C, 60)) - residual) < mpmath.mpf(10) ** -40


def test_linear_order_of_simple_functions():
    # by hand: e^z - (1 + z) = z^2/2 + ..., so R = 1 + z has p = 1, C = -1/2
    assert linear_order(1 + Z, sp.Integer(1)) == (1, R(-1, 2))
    # R(0) != 1 is order -1; a pole at 0 is refused
    assert linear_order(2 + Z, sp.Integer(1))[0] == -1
    with pytest.raises(InputError, match="pole"):
        linear_order(sp.Integer(1), Z)
    # the (3,3) Pade approximant matches beyond max_order=4: reported as (4, None)
    P, Q = catalogue_tableau("gauss6").stability_function()
    assert linear_order(P, Q, max_order=4) == (4, None)


def test_linear_order_can_exceed_the_nonlinear_order():
    P, Q = LINEAR_ONLY.stability_function()
    assert Q == 1 and sp.expand(P - sp.series(sp.exp(Z), Z, 0, 4).removeO()) == 0
    assert linear_order(P, Q)[0] == 3 == _series_order(P, Q)[0]
    result = order_conditions(LINEAR_ONLY)
    assert result["order"] == 2 and result["failed_trees"] == ["[t, t]"]


# --- empirical order by stepping (independent of the tree machinery) -----------------------

M_PARAM = 0.5  # Jacobi elliptic parameter m


def _rhs(y):
    # (sn, cn, dn)' = (cn dn, -sn dn, -m sn cn): a nonlinear system with a known solution
    return np.array([y[1] * y[2], -y[0] * y[2], -M_PARAM * y[0] * y[1]])


def _exact(t):
    sn, cn, dn, _ = ellipj(t, M_PARAM)
    return np.array([sn, cn, dn])


def _step_error(A, b, T, n, rhs=_rhs, exact=_exact):
    h, y, s = T / n, exact(0.0), len(b)
    explicit = not np.any(np.triu(A))
    for _ in range(n):
        K = np.zeros((s, y.size))
        if explicit:
            for i in range(s):
                K[i] = rhs(y + h * (A[i, :i] @ K[:i]))
        else:  # fixed-point iteration: h ||A|| ||J|| < 1/3 for these steps
            K[:] = rhs(y)
            for _ in range(400):
                new = np.array([rhs(y + h * (A[i] @ K)) for i in range(s)])
                done = np.max(np.abs(new - K)) < 1e-16
                K = new
                if done:
                    break
        y = y + h * (b @ K)
    return np.max(np.abs(y - exact(T)))


def _observed_order(tableau, rhs=_rhs, exact=_exact, n=16):
    A, b, _ = tableau.numeric()
    e1, e2 = _step_error(A, b, 2.0, n, rhs, exact), _step_error(A, b, 2.0, 2 * n, rhs, exact)
    return np.log2(e1 / e2)


@pytest.mark.parametrize("name", list(TABLEAUX))
def test_observed_order_on_a_nonlinear_system(name):
    # diffrax-style: halve the step, regress the error; the slope is the order
    assert abs(_observed_order(catalogue_tableau(name)) - PUBLISHED_ORDER[name]) < 0.45


def test_linear_only_method_shows_order_two_on_nonlinear_and_three_on_linear():
    assert abs(_observed_order(LINEAR_ONLY) - 2) < 0.3
    linear = _observed_order(LINEAR_ONLY, rhs=lambda y: -y, exact=lambda t: np.exp(-np.atleast_1d(t)))
    assert abs(linear - 3) < 0.3
