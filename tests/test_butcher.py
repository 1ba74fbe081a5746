"""Butcher tableaux: catalogue properties, stability functions, JSON input and its refusals.

References named beside the checks:
- Hairer & Wanner, Solving Ordinary Differential Equations II, 2nd ed., Springer 1996,
  section IV.3 (R(z) = 1 + z b^T (I - zA)^{-1} 1, Proposition IV.3.2) and IV.5 (Gauss methods
  give the diagonal Pade approximants, Radau IIA the (s-1, s), Lobatto IIIC the (s-2, s)
  subdiagonal ones; stiffly accurate methods with invertible A have R(inf) = 0,
  Proposition IV.3.8) -- theorem statements from memory; the Pade approximants themselves are
  computed here independently.
- Hairer, Norsett & Wanner, Solving ODEs I, 2nd ed., section II.1: an explicit method with
  s = p <= 4 has R(z) equal to the degree-s Taylor polynomial of e^z (from memory; the
  polynomial is taken from sympy.series).
"""
from __future__ import annotations

import mpmath
import numpy as np
import pytest
import sympy as sp
from hypothesis import given, settings, strategies as st

from stepfence import limits
from stepfence.errors import InputError, LimitExceeded
from stepfence.schemes.butcher import ButcherTableau, catalogue_names, catalogue_tableau
from stepfence.schemes.rk_tableaux import TABLEAUX
from stepfence.schemes.stability import Z

NAMES = list(TABLEAUX)
R = sp.Rational


def pade_exp(num_deg: int, den_deg: int):
    """Pade approximant of e^z of type (num_deg, den_deg), from its defining linear system."""
    a = [R(1, sp.factorial(k)) for k in range(num_deg + den_deg + 1)]
    q = sp.symbols(f"q1:{den_deg + 1}")
    qs = (sp.Integer(1),) + q
    # Q e^z - P = O(z^(num_deg + den_deg + 1)): coefficients num_deg+1 .. num_deg+den_deg vanish
    eqs = [sum(qs[j] * a[k - j] for j in range(den_deg + 1) if k - j >= 0)
           for k in range(num_deg + 1, num_deg + den_deg + 1)]
    sol = sp.solve(eqs, q, dict=True)[0] if eqs else {}
    qv = [sp.Integer(1)] + [sol[x] for x in q]
    pv = [sum(qv[j] * a[k - j] for j in range(min(k, den_deg) + 1)) for k in range(num_deg + 1)]
    return (sp.Add(*[c * Z**k for k, c in enumerate(pv)]),
            sp.Add(*[c * Z**k for k, c in enumerate(qv)]))


def same_rational_function(P1, Q1, P2, Q2) -> bool:
    return sp.expand(sp.radsimp(sp.expand(P1 * Q2 - P2 * Q1))) == 0


# --- the whole catalogue -------------------------------------------------------------------

def test_catalogue_has_the_required_names():
    # the stable names of DESIGN.md plus the brief's list
    required = {"euler", "heun", "midpoint", "ralston", "kutta3", "ssprk3", "rk4", "rk38", "bs3",
                "dopri5", "gauss2", "gauss4", "gauss6", "radau3", "radau5", "lobatto3c2",
                "lobatto3c4", "sdirk2", "sdirk3"}
    assert required <= set(catalogue_names())
    for name in NAMES:
        spec = TABLEAUX[name]
        assert spec["family"] in ("explicit RK", "implicit RK")
        assert spec["source"] and spec["label"] and isinstance(spec["order"], int)


@pytest.mark.parametrize("name", NAMES)
def test_row_sums_of_A_equal_c(name):
    # c is tabulated explicitly for every entry, so the check is not the derivation itself
    assert "c" in TABLEAUX[name]
    t = catalogue_tableau(name)
    for i in range(t.stages):
        assert sp.simplify(sum(t.A.row(i)) - t.c[i]) == 0, (name, i)
    A, b, c = t.numeric()
    assert A.shape == (t.stages, t.stages) and b.shape == c.shape == (t.stages,)
    np.testing.assert_allclose(A.sum(axis=1), c, rtol=0, atol=1e-15)


@pytest.mark.parametrize("name", NAMES)
def test_structure_flags_follow_the_family(name):
    t = catalogue_tableau(name)
    assert t.explicit == (TABLEAUX[name]["family"] == "explicit RK")
    A = np.array(t.numeric()[0])
    assert t.explicit == bool(np.all(np.triu(A) == 0))
    if t.singly_diagonally_implicit:
        assert t.diagonally_implicit and len(set(np.diag(A))) == 1
    assert t.stiffly_accurate == bool(np.allclose(A[-1], t.numeric()[1], rtol=0, atol=1e-15))


def test_structure_flags_of_named_methods():
    # Alexander 1977 and Norsett 1974 / Crouzeix 1975 methods are SDIRK; Radau IIA and Lobatto
    # IIIC are stiffly accurate (Hairer & Wanner II, section IV.5); Gauss is neither
    for name in ("sdirk2", "sdirk3", "gauss2"):
        assert catalogue_tableau(name).singly_diagonally_implicit
    for name in ("gauss4", "gauss6", "radau5", "lobatto3c4"):
        t = catalogue_tableau(name)
        assert not t.explicit and not t.diagonally_implicit
    for name in ("radau3", "radau5", "lobatto3c2", "lobatto3c4", "sdirk2"):
        assert catalogue_tableau(name).stiffly_accurate
    for name in ("gauss4", "gauss6", "sdirk3", "rk4"):
        assert not catalogue_tableau(name).stiffly_accurate


def test_evaluations_per_step():
    # Bogacki & Shampine 1989: 4 stages, FSAL, 3 evaluations per step; Dormand & Prince 1980:
    # 7 stages, FSAL, 6 evaluations per step
    bs3, dp = catalogue_tableau("bs3"), catalogue_tableau("dopri5")
    assert (bs3.stages, bs3.fsal, bs3.evaluations_per_step) == (4, True, 3)
    assert (dp.stages, dp.fsal, dp.evaluations_per_step) == (7, True, 6)
    for name in NAMES:
        t = catalogue_tableau(name)
        if not t.fsal:
            assert t.evaluations_per_step == t.stages


# --- stability functions -------------------------------------------------------------------

def _resolvent_mp(t: ButcherTableau, z):
    """R(z) = 1 + z b^T (I - zA)^{-1} 1 by a linear solve in mpmath (no determinants)."""
    s = t.stages
    with mpmath.workdps(50):
        A = mpmath.matrix([[mpmath.mpf(sp.N(t.A[i, j], 60)) for j in range(s)]
                           for i in range(s)])
        b = [mpmath.mpf(sp.N(x, 60)) for x in t.b]
        zz = z
        M = mpmath.eye(s) - zz * A
        k = mpmath.lu_solve(M, mpmath.matrix([1] * s))
        return 1 + zz * sum(b[i] * k[i] for i in range(s))


@pytest.mark.parametrize("name", NAMES)
def test_stability_function_matches_the_resolvent_form(name):
    # independent route: Hairer & Wanner II, Proposition IV.3.2, evaluated by a linear solve
    t = catalogue_tableau(name)
    P, Q = t.stability_function()
    assert Q.subs(Z, 0) == 1
    for re, im in ((-7, 3), (4, -11), (-25, 0), (13, 20)):
        z = R(re, 10) + sp.I * R(im, 10)
        with mpmath.workdps(50):
            ours = mpmath.mpc(sp.N(P.subs(Z, z), 50)) / mpmath.mpc(sp.N(Q.subs(Z, z), 50))
            ref = _resolvent_mp(t, mpmath.mpc(mpmath.mpf(re) / 10, mpmath.mpf(im) / 10))
            assert abs(ours - ref) < mpmath.mpf(10) ** -40, (name, z)


@pytest.mark.parametrize("name", ["euler", "heun", "midpoint", "ralston", "kutta3", "ssprk3",
                                  "rk4", "rk38"])
def test_explicit_s_equals_p_gives_the_taylor_polynomial(name):
    t = catalogue_tableau(name)
    P, Q = t.stability_function()
    taylor = sp.series(sp.exp(Z), Z, 0, t.stages + 1).removeO()
    assert Q == 1
    assert sp.expand(P - taylor) == 0


@pytest.mark.parametrize("name, s", [("gauss2", 1), ("gauss4", 2), ("gauss6", 3)])
def test_gauss_gives_the_diagonal_pade_approximant(name, s):
    P, Q = catalogue_tableau(name).stability_function()
    Pp, Qp = pade_exp(s, s)
    assert sp.expand(P - Pp) == 0 and sp.expand(Q - Qp) == 0
    # and against mpmath's own Pade routine at 50 digits
    with mpmath.workdps(50):
        a = [1 / mpmath.factorial(k) for k in range(2 * s + 1)]
        p_ref, q_ref = mpmath.pade(a, s, s)
        for k in range(s + 1):
            assert abs(sp.N(sp.Poly(P, Z).coeff_monomial(Z**k), 50) - p_ref[k]) < 1e-40
            assert abs(sp.N(sp.Poly(Q, Z).coeff_monomial(Z**k), 50) - q_ref[k]) < 1e-40


def test_gauss4_stability_function_is_exact():
    # the brief's statement, also Hairer & Wanner II, section IV.3 (from memory)
    P, Q = catalogue_tableau("gauss4").stability_function()
    assert P == 1 + Z / 2 + Z**2 / 12
    assert Q == 1 - Z / 2 + Z**2 / 12


@pytest.mark.parametrize("name, num_deg, den_deg", [("radau3", 1, 2), ("radau5", 2, 3),
                                                    ("lobatto3c2", 0, 2), ("lobatto3c4", 1, 3)])
def test_radau_and_lobatto_give_subdiagonal_pade(name, num_deg, den_deg):
    P, Q = catalogue_tableau(name).stability_function()
    Pp, Qp = pade_exp(num_deg, den_deg)
    assert sp.expand(P - Pp) == 0 and sp.expand(Q - Qp) == 0


@pytest.mark.parametrize("name", ["radau3", "radau5", "lobatto3c2", "lobatto3c4", "sdirk2"])
def test_stiffly_accurate_with_invertible_A_is_L_stable_at_infinity(name):
    # Hairer & Wanner II, Proposition IV.3.8 (from memory): R(inf) = 1 - b^T A^{-1} 1 = 0
    t = catalogue_tableau(name)
    P, Q = t.stability_function()
    assert sp.degree(P, Z) < sp.degree(Q, Z)
    with mpmath.workdps(50):
        A = mpmath.matrix([[mpmath.mpf(sp.N(x, 60)) for x in t.A.row(i)] for i in range(t.stages)])
        y = mpmath.lu_solve(A, mpmath.matrix([1] * t.stages))
        r_inf = 1 - sum(mpmath.mpf(sp.N(t.b[i], 60)) * y[i] for i in range(t.stages))
        assert abs(r_inf) < 1e-40


def test_sdirk_stability_functions_closed_form():
    # for a 2-stage SDIRK, Q = (1 - gamma z)^2 (Hairer & Wanner II, section IV.6, from memory);
    # the numerators from the resolvent worked out by sympy on the symbolic tableau
    g = sp.Symbol("g")
    for name, gamma, a21, b in [("sdirk2", 1 - sp.sqrt(2) / 2, sp.sqrt(2) / 2,
                                 (sp.sqrt(2) / 2, 1 - sp.sqrt(2) / 2)),
                                ("sdirk3", (3 + sp.sqrt(3)) / 6, -sp.sqrt(3) / 3, (R(1, 2), R(1, 2)))]:
        A = sp.Matrix([[g, 0], [a21, g]])
        ref = sp.cancel((1 + Z * (sp.Matrix([b]) * (sp.eye(2) - Z * A).inv() * sp.ones(2, 1))[0])
                        .subs(g, gamma))
        Pr, Qr = sp.fraction(sp.together(ref))
        P, Q = catalogue_tableau(name).stability_function()
        assert same_rational_function(P, Q, Pr, Qr)
        assert sp.expand(Q - sp.expand((1 - gamma * Z) ** 2)) == 0


def test_common_factors_are_cancelled():
    # the second stage has weight 0 and the first does not use it, so the method is the
    # implicit midpoint rule (R = (1 + z/2)/(1 - z/2)) whatever a_22 is -- by inspection
    for a22 in (R(1, 3), sp.sqrt(2) / 3):
        t = ButcherTableau([[R(1, 2), 0], [0, a22]], [1, 0])
        P, Q = t.stability_function()
        assert sp.expand(P - (1 + Z / 2)) == 0 and sp.expand(Q - (1 - Z / 2)) == 0


@settings(max_examples=25, deadline=None)
@given(st.integers(1, 4).flatmap(lambda s: st.tuples(
    st.just(s),
    st.lists(st.fractions(-3, 3, max_denominator=7), min_size=s * s, max_size=s * s),
    st.lists(st.fractions(-3, 3, max_denominator=7), min_size=s, max_size=s))))
def test_stability_function_of_random_rational_tableaux(data):
    # independent route: sympy's own matrix inverse of I - zA, cancelled
    s, a, b = data
    A = [[a[i * s + j] for j in range(s)] for i in range(s)]
    t = ButcherTableau(A, b)
    P, Q = t.stability_function()
    Am = sp.Matrix(s, s, lambda i, j: sp.Rational(a[i * s + j].numerator, a[i * s + j].denominator))
    bm = sp.Matrix([[sp.Rational(x.numerator, x.denominator) for x in b]])
    ref = sp.cancel(1 + Z * (bm * (sp.eye(s) - Z * Am).inv() * sp.ones(s, 1))[0])
    Pr, Qr = sp.fraction(ref)
    assert same_rational_function(P, Q, Pr, Qr)
    assert Q.subs(Z, 0) == 1
    # cancelled: numerator and denominator have no common factor left
    assert sp.degree(sp.gcd(sp.Poly(P, Z), sp.Poly(Q, Z))) == 0


# --- JSON in and out -----------------------------------------------------------------------

def test_from_json_reads_fraction_and_sqrt_strings():
    t = ButcherTableau.from_json({
        "A": [["1/4", "1/4 - sqrt(3)/6"], ["1/4 + sqrt(3)/6", "1/4"]],
        "b": ["1/2", 0.5],
        "c": ["(3 - sqrt(3))/6", "1/2 + sqrt(3)/6"],
        "name": "my-gauss",
    })
    assert t.name == "my-gauss" and t.stages == 2 and not t.explicit
    assert t.b == (R(1, 2), R(1, 2))
    assert sp.simplify(t.A[0, 1] - (R(1, 4) - sp.sqrt(3) / 6)) == 0
    assert sp.simplify(t.c[0] - (R(1, 2) - sp.sqrt(3) / 6)) == 0


def test_from_json_null_means_not_given():
    t = ButcherTableau.from_json({"A": [[0]], "b": [1], "c": None, "b_embedded": None,
                                  "fsal": None, "name": None})
    assert (t.c, t.b_embedded, t.fsal, t.name) == ((0,), None, False, "custom")


def test_from_json_floats_are_the_decimal_as_written():
    t = ButcherTableau.from_json({"A": [[0, 0], [0.1, 0]], "b": [0.9, 0.1]})
    assert t.A[1, 0] == R(1, 10) and t.b == (R(9, 10), R(1, 10))
    assert t.c == (0, R(1, 10))  # derived from the row sums when not given


@pytest.mark.parametrize("name", NAMES)
def test_to_json_round_trips(name):
    t = catalogue_tableau(name)
    obj = t.to_json()
    assert all(isinstance(x, str) for row in obj["A"] for x in row)
    back = ButcherTableau.from_json(obj)
    assert back.name == name and back.fsal == t.fsal
    assert all(sp.expand(x - y) == 0 for x, y in zip(back.A, t.A))
    assert all(sp.expand(x - y) == 0 for x, y in zip(back.b + back.c, t.b + t.c))
    assert (back.b_embedded is None) == (t.b_embedded is None)


def _refusal(obj, field="tableau"):
    with pytest.raises(InputError) as info:
        ButcherTableau.from_json(obj, field=field)
    assert info.value.field == field
    return info.value


def test_refuses_non_square_A():
    err = _refusal({"A": [[0, 0], [1]], "b": [1, 0]})
    assert "not square" in err.message and "A[1]" in err.message


def test_refuses_wrong_b_length():
    err = _refusal({"A": [[0, 0], [1, 0]], "b": [1, 0, 0]})
    assert "b has 3 entries" in err.message and "2 stages" in err.message


def test_refuses_row_sum_mismatch():
    err = _refusal({"A": [[0, 0], [1, 0]], "b": ["1/2", "1/2"], "c": [0, "1/2"]})
    assert err.message.startswith("row 1 of A sums to 1 but c[1] = 1/2")


def test_refuses_algebraic_row_sum_mismatch():
    err = _refusal({"A": [["1/4", "1/4 - sqrt(3)/6"], ["1/4 + sqrt(3)/6", "1/4"]],
                    "b": ["1/2", "1/2"], "c": ["1/2 + sqrt(3)/6", "1/2 - sqrt(3)/6"]})
    assert "row 0 of A" in err.message


def test_refuses_more_than_max_stages():
    s = limits.MAX_STAGES + 1
    with pytest.raises(LimitExceeded) as info:
        ButcherTableau.from_json({"A": [[0] * s for _ in range(s)], "b": [0] * s})
    assert "17 stages" in info.value.message and f"at most {limits.MAX_STAGES}" in info.value.message
    # the bound itself is allowed
    s = limits.MAX_STAGES
    t = ButcherTableau.from_json({"A": [[0] * s for _ in range(s)], "b": [1] + [0] * (s - 1)})
    assert t.stages == s


@pytest.mark.parametrize("obj, where", [
    ({"A": [[0, 0], ["1/2 +", 0]], "b": [1, 0]}, "A[1][0]"),
    ({"A": [[0, 0], [1, 0]], "b": [1, "x"]}, "b[1]"),
    ({"A": [[0, 0], [True, 0]], "b": [1, 0]}, "A[1][0]"),
    ({"A": [[0, 0], [None, 0]], "b": [1, 0]}, "A[1][0]"),
    ({"A": [[0, 0], ["sqrt(-2)", 0]], "b": [1, 0]}, "A[1][0]"),
    ({"A": [[0, 0], [1, 0]], "b": [1, 0], "c": [0, [1]]}, "c[1]"),
    ({"A": [[0, 0], [1, 0]], "b": [1, 0], "b_embedded": [1, "1/0"]}, "b_embedded[1]"),
])
def test_bad_entries_are_named(obj, where):
    err = _refusal(obj)
    assert err.message.startswith(where + ": ")
    assert str(err).startswith(f"tableau: {where}: ")


@pytest.mark.parametrize("obj, words", [
    ([[0]], "expected an object"),
    ({"b": [1]}, "missing A"),
    ({"A": [[0]]}, "missing b"),
    ({"A": [[0]], "b": [1], "weights": [1]}, "unknown key 'weights'"),
    ({"A": 3, "b": [1]}, "A must be a square list"),
    ({"A": [], "b": []}, "at least one stage"),
    ({"A": [3], "b": [1]}, "A[0] must be a list"),
    ({"A": [[0]], "b": "1"}, "b must be a list"),
    ({"A": [[0, 0], [1, 0]], "b": [1, 0], "c": [0]}, "c has 1 entry"),
    ({"A": [[0, 0], [1, 0]], "b": ["1/2", "1/2"], "fsal": True}, "fsal is set"),
    ({"A": [[0, 0], [1, 0]], "b": [1, 0], "fsal": "yes"}, "fsal must be true or false"),
    ({"A": [[0]], "b": [1], "name": ""}, "name must be"),
])
def test_malformed_objects_are_refused(obj, words):
    assert words in _refusal(obj, field="scheme.tableau").message


def test_constructor_refuses_symbols_and_inexact_expressions():
    with pytest.raises(InputError, match=r"A\[0\]\[0\]: .* not a number"):
        ButcherTableau([[sp.Symbol("a")]], [1])
    with pytest.raises(InputError, match="floating-point"):
        ButcherTableau([[sp.Float(0.5) * sp.sqrt(2)]], [1])
    with pytest.raises(InputError, match="algebraic"):
        ButcherTableau([[sp.pi]], [1])
    with pytest.raises(InputError, match="finite"):
        ButcherTableau([[float("nan")]], [1])


def test_constructor_accepts_matrices_and_numpy():
    t = ButcherTableau(sp.ImmutableMatrix([[0, 0], [R(2, 3), 0]]),
                       sp.ImmutableMatrix([[R(1, 4), R(3, 4)]]))
    u = ButcherTableau(np.array([[0, 0], [2, 0]]), np.array([0.75, 0.25]))
    assert t.c == (0, R(2, 3)) and u.b == (R(3, 4), R(1, 4)) and u.A[1, 0] == 2
    with pytest.raises(InputError, match="shape"):
        ButcherTableau([[0, 0], [1, 0]], np.ones((2, 2)))


def test_unknown_catalogue_name():
    with pytest.raises(InputError) as info:
        catalogue_tableau("rk5-typo")
    assert info.value.field == "scheme" and "rk5-typo" in info.value.message
