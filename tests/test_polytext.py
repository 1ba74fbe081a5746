"""Tests of the strict text parser (stepfence.polytext).

References used here, none of them computed by stepfence:
- Python's fractions.Fraction(str) reads decimal literals exactly (an independent decimal reader);
- sympy builds the same expressions from trees (never from our text) and expands them with its
  own polynomial arithmetic (sympy.Poly, sympy.cancel, sympy.gcd);
- mpmath at 60 digits evaluates irrational and complex values;
- sympy's printer (through stepfence.schemes.base.poly_text) writes text we must read back.
"""
from __future__ import annotations

import builtins
import doctest
import inspect
import re
import sys
from fractions import Fraction

import mpmath
import pytest
import sympy as sp
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

import stepfence.polytext as polytext
from stepfence.errors import InputError, LimitExceeded
from stepfence.limits import MAX_POLY_DEGREE, MAX_TEXT_CHARS
from stepfence.polytext import (format_exact, parse_number, parse_numbers, parse_polynomial,
                                parse_rational_function)
from stepfence.schemes.base import poly_text

Z = sp.Symbol("z")
ZETA = sp.Symbol("zeta")
FUZZ = settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def sympy_coefficients(expr, x=Z):
    """Ascending coefficients of a polynomial expression, by sympy's own Poly."""
    expr = sp.expand(expr)
    if expr == 0:
        return (sp.Integer(0),)
    return tuple(sp.Poly(expr, x).all_coeffs()[::-1])


def close(a, b, digits=60):
    """True when two exact numbers agree to about `digits` digits (sympy's evalf, on mpmath)."""
    with mpmath.workdps(digits + 10):
        diff = abs(complex(sp.N(sp.sympify(a) - sp.sympify(b), digits)))
        scale = max(1.0, abs(complex(sp.N(b, digits))))
    return diff <= 10.0 ** (5 - digits) * scale


# --- numbers ----------------------------------------------------------------------------------

decimal_literals = st.builds(
    lambda whole, frac, point, exp: whole + ("." + frac if point else "") + exp,
    st.text("0123456789", min_size=1, max_size=12),
    st.text("0123456789", max_size=12),
    st.booleans(),
    st.one_of(st.just(""), st.builds(lambda e, s, d: e + s + d, st.sampled_from("eE"),
                                     st.sampled_from(["", "+", "-"]),
                                     st.text("0123456789", min_size=1, max_size=3))))


@FUZZ
@given(decimal_literals)
def test_decimal_literals_are_exact_like_fraction(text):
    # reference: fractions.Fraction(str), the standard library's exact decimal reader
    assert parse_number(text, "x") == sp.Rational(Fraction(text).numerator,
                                                  Fraction(text).denominator)


@pytest.mark.parametrize("text, reference", [
    (".5", "0.5"), ("5.", "5"), ("1.e2", "100"), ("0.1", "1/10"), ("1E-3", "1/1000"),
    ("-4/3", "-4/3"), ("2^-4", "1/16"), ("2**3", "8"), ("(1/2)^-2", "4"), ("−3", "-3"),
    ("1.5e-3", "0.0015"), ("007", "7"),
])
def test_number_forms(text, reference):
    # reference: Fraction of the equivalent plain literal
    assert parse_number(text, "x") == sp.Rational(Fraction(reference).numerator,
                                                  Fraction(reference).denominator)


def test_numbers_are_sympy_rationals_not_floats():
    values = [parse_number(t, "x") for t in ("0.1", "3", "1e-3", "2/7")]
    assert all(isinstance(v, sp.Rational) for v in values)
    assert not any(v.has(sp.Float) for v in values)
    assert isinstance(parse_number("3", "x"), sp.Integer)


# --- polynomials against sympy ------------------------------------------------------------------
# A tree is rendered twice: as text in our syntax (random spellings and spacing) and as a sympy
# expression built directly, so sympy never parses anything.

@st.composite
def leaves(draw, variable_weight=2, surds=False, imaginary=False):
    kinds = ["int"] * 3 + ["frac", "dec"] + ["var"] * variable_weight
    if surds:
        kinds += ["sqrt"] * 2
    if imaginary:
        kinds += ["i"]
    kind = draw(st.sampled_from(kinds))
    if kind == "int":
        n = draw(st.integers(0, 30))
        return ("leaf", str(n), sp.Integer(n), 0, True)
    if kind == "frac":
        a, b = draw(st.integers(0, 30)), draw(st.integers(1, 12))
        return ("leaf", f"{a}/{b}", sp.Rational(a, b), 0, True)
    if kind == "dec":
        a, k = draw(st.integers(0, 9999)), draw(st.integers(0, 4))
        text = f"{a / 10 ** k:.{k}f}" if k else str(a)
        return ("leaf", text, sp.Rational(Fraction(text).numerator, Fraction(text).denominator),
                0, True)
    if kind == "sqrt":
        q = draw(st.sampled_from([2, 3, 5, 6, 8, 12, Fraction(1, 2), Fraction(2, 3), 50]))
        q = Fraction(q)
        text = f"sqrt({q})"
        return ("leaf", text, sp.sqrt(sp.Rational(q.numerator, q.denominator)), 0, False)
    if kind == "i":
        return ("leaf", draw(st.sampled_from(["i", "j", "I"])), sp.I, 0, False)
    return ("leaf", "VAR", None, 1, False)


def trees(variable_weight=2, surds=False, imaginary=False, divide_by_polynomials=False,
          max_leaves=7):
    def extend(children):
        binary = st.tuples(st.sampled_from(["+", "-", "*", "/"]), children, children)
        power = st.tuples(st.just("^"), children, st.integers(1, 3))
        neg = st.tuples(st.just("neg"), children)
        return st.one_of(binary, binary, power, neg)
    return st.recursive(leaves(variable_weight, surds, imaginary), extend,
                        max_leaves=max_leaves).filter(
        lambda t: _valid(t, divide_by_polynomials))


def _sympy_of(t, x):
    if t[0] == "leaf":
        return x if t[2] is None else t[2]
    if t[0] == "neg":
        return -_sympy_of(t[1], x)
    if t[0] == "^":
        return _sympy_of(t[1], x) ** t[2]
    a, b = _sympy_of(t[1], x), _sympy_of(t[2], x)
    return {"+": a + b, "-": a - b, "*": a * b, "/": a / b}[t[0]]


def _degree_bound(t):
    """An upper bound of every intermediate degree (numerator or denominator)."""
    if t[0] == "leaf":
        return t[3]
    if t[0] == "neg":
        return _degree_bound(t[1])
    if t[0] == "^":
        return _degree_bound(t[1]) * t[2]
    return 2 * max(_degree_bound(t[1]), _degree_bound(t[2])) + \
        min(_degree_bound(t[1]), _degree_bound(t[2]))


def _valid(t, divide_by_polynomials):
    """Divisors must be nonzero (and constant for polynomials); 0 must not be raised to 0."""
    if t[0] == "leaf":
        return True
    if t[0] == "neg":
        return _valid(t[1], divide_by_polynomials)
    if t[0] == "^":
        return _valid(t[1], divide_by_polynomials)
    if not (_valid(t[1], divide_by_polynomials) and _valid(t[2], divide_by_polynomials)):
        return False
    if t[0] == "/":
        d = sp.cancel(_sympy_of(t[2], Z))
        if d == 0:
            return False
        if not divide_by_polynomials and d.has(Z):
            return False
    return _degree_bound(t) <= MAX_POLY_DEGREE


PRECEDENCE = {"+": 1, "-": 1, "*": 2, "/": 2, "neg": 0, "^": 3, "leaf": 4}


@st.composite
def rendered(draw, tree_strategy, variable="z"):
    """Return (text, tree) with minimal parentheses and random spellings of the operators."""
    tree = draw(tree_strategy)
    spaced = draw(st.booleans())

    def sp_(s):
        return f" {s} " if spaced else s

    def leaf_is_fraction(t):
        return t[0] == "leaf" and "/" in t[1]

    def prec(t):
        if leaf_is_fraction(t):
            return 2
        return PRECEDENCE[t[0]]

    def render(t):
        kind = t[0]
        if kind == "leaf":
            return variable if t[1] == "VAR" else t[1]
        if kind == "neg":
            return f"(-{wrap(t[1], 2)})"
        if kind == "^":
            base = wrap(t[1], 4)
            style = draw(st.sampled_from(["^", "**", "sup"]))
            if style == "sup":
                return base + "⁰¹²³"[t[2]]
            return f"{base}{style}{t[2]}"
        left_min = 1 if kind in "+-" else 2
        right_min = 2 if kind in "+-" else 3
        if kind == "+":
            right_min = 1
        if kind == "*":
            right_min = 2
        left, right = wrap(t[1], left_min), wrap(t[2], right_min)
        if kind == "*":
            # juxtaposition only where the grammar allows it without doubt
            implicit_ok = (right[0].isalpha() or right[0] == "(") and \
                not _ends_with_division(t[1])
            style = draw(st.sampled_from(["*", "·", "×"] + (["", " "] if implicit_ok else [])))
            if style == "" and left[-1].isalpha() and right[0].isalpha():
                style = " "     # "z i" is a product, "zi" an unknown name
            return f"{left}{style}{right}" if style in ("", " ") else f"{left}{sp_(style)}{right}"
        op = {"+": "+", "-": draw(st.sampled_from(["-", "−"])), "/": "/"}[kind]
        return f"{left}{sp_(op)}{right}"

    def wrap(t, minimum):
        s = render(t)
        return f"({s})" if prec(t) < minimum or s.startswith("-") else s

    return render(tree), tree


def _ends_with_division(t):
    """True when the unparenthesised rendering of t ends with a division, after which the
    grammar may refuse juxtaposition."""
    if t[0] == "/" or (t[0] == "leaf" and "/" in t[1]):
        return True
    if t[0] == "*":
        return t[2][0] in ("*", "/", "leaf") and _ends_with_division(t[2])
    return False


@FUZZ
@given(rendered(trees()))
def test_polynomials_match_sympy(case):
    text, tree = case
    # reference: sympy.Poly of the same tree built directly in sympy
    assert parse_polynomial(text, "p", "z") == sympy_coefficients(_sympy_of(tree, Z))


def _quotients():
    """Trees that certainly divide by a polynomial in z: (a / b) op c, with b non-constant."""
    poly = trees(max_leaves=5)
    divisor = poly.filter(lambda t: sp.cancel(_sympy_of(t, Z)).has(Z))
    quotient = st.tuples(st.just("/"), poly, divisor)
    return st.one_of(
        quotient,
        st.tuples(st.sampled_from(["+", "-", "*"]), quotient, trees(divide_by_polynomials=True,
                                                                     max_leaves=4)),
        trees(divide_by_polynomials=True),
    ).filter(lambda t: _valid(t, True))


@FUZZ
@given(rendered(_quotients(), variable="z"))
def test_rational_functions_match_sympy(case):
    text, tree = case
    P, Q = parse_rational_function(text, "R", "z")
    num = sp.Add(*[c * Z**k for k, c in enumerate(P)])
    den = sp.Add(*[c * Z**k for k, c in enumerate(Q)])
    reference = sp.cancel(_sympy_of(tree, Z))
    # reference: sympy.cancel; equal rational functions have equal cross products
    ref_num, ref_den = sp.fraction(reference)
    assert sp.expand(num * ref_den - den * ref_num) == 0
    # lowest terms (sympy.gcd) and the documented scaling of the denominator
    assert sp.degree(sp.gcd(num, den), Z) <= 0
    assert Q[0] == 1 or (Q[0] == 0 and Q[-1] == 1)
    assert P[-1] != 0 or P == (0,)
    assert Q[-1] != 0


@FUZZ
@given(rendered(trees(surds=True, imaginary=True, variable_weight=1, max_leaves=6)))
def test_irrational_and_complex_coefficients_match_mpmath(case):
    text, tree = case
    got = parse_polynomial(text, "p", "z", allow_complex=True)
    ref = sympy_coefficients(_sympy_of(tree, Z))
    # the degree is exact (our arithmetic is canonical); sympy's expand of radicals may keep
    # a zero it cannot see, so compare values with mpmath at 60 digits, padding with zeros
    width = max(len(got), len(ref))
    got_p = got + (0,) * (width - len(got))
    ref_p = ref + (0,) * (width - len(ref))
    assert all(close(a, b) for a, b in zip(got_p, ref_p))
    assert got[-1] != 0 or got == (0,)
    if len(got) > 1:
        assert abs(complex(sp.N(got[-1], 30))) > 1e-25


@FUZZ
@given(rendered(trees(surds=True, imaginary=True, variable_weight=0, max_leaves=6)))
def test_exact_numbers_match_mpmath(case):
    text, tree = case
    value = parse_number(text, "x", allow_complex=True)
    # reference: the same tree evaluated by sympy/mpmath at 60 digits
    assert close(value, _sympy_of(tree, Z))


@FUZZ
@given(rendered(trees(surds=True, imaginary=True, variable_weight=0, max_leaves=5)))
def test_canonical_form_makes_exact_identities_exact(case):
    # algebraic identities t * (1/t) = 1 and t - t = 0 must come out exactly, so a leading
    # coefficient that is "zero in disguise" never fakes a degree
    text, tree = case
    value = _sympy_of(tree, Z)
    assume(abs(complex(sp.N(value, 30))) > 1e-20)
    t = text
    assert parse_number(f"({t})*(1/({t}))", "x", allow_complex=True) == 1
    assert parse_polynomial(f"(({t}) - ({t}))z^3 + z", "p", "z", allow_complex=True) == (0, 1)
    assert parse_polynomial(f"(({t})/({t}) - 1)z^5 + 2", "p", "z", allow_complex=True) == (2,)


@pytest.mark.parametrize("a, b, ref_a, ref_b", [
    ("1/(1+sqrt(2))", "sqrt(2) - 1", 1 / (1 + sp.sqrt(2)), sp.sqrt(2) - 1),
    ("1/(sqrt(2)+sqrt(3))", "sqrt(3) - sqrt(2)", 1 / (sp.sqrt(2) + sp.sqrt(3)),
     sp.sqrt(3) - sp.sqrt(2)),
    ("1/(1+i)", "(1-i)/2", 1 / (1 + sp.I), (1 - sp.I) / 2),
    ("sqrt(8)", "2sqrt(2)", sp.sqrt(8), 2 * sp.sqrt(2)),
    ("sqrt(2)sqrt(3)", "sqrt(6)", sp.sqrt(2) * sp.sqrt(3), sp.sqrt(6)),
    ("sqrt(1/2)", "sqrt(2)/2", sp.sqrt(sp.Rational(1, 2)), sp.sqrt(2) / 2),
    ("sqrt(-3)", "i sqrt(3)", sp.sqrt(-3), sp.I * sp.sqrt(3)),
    ("(sqrt(2)+sqrt(3))^2", "5 + 2sqrt(6)", (sp.sqrt(2) + sp.sqrt(3))**2, 5 + 2 * sp.sqrt(6)),
    ("1/(sqrt(2)+sqrt(3)+sqrt(5))", "(2sqrt(3) + 3sqrt(2) - sqrt(30))/12",
     1 / (sp.sqrt(2) + sp.sqrt(3) + sp.sqrt(5)),
     (2 * sp.sqrt(3) + 3 * sp.sqrt(2) - sp.sqrt(30)) / 12),
])
def test_equal_irrational_numbers_cancel_exactly(a, b, ref_a, ref_b):
    # the identity itself is checked by sympy (radsimp) and by mpmath at 60 digits
    assert sp.expand(sp.radsimp(ref_a - ref_b)) == 0
    assert close(ref_a, ref_b)
    assert parse_polynomial(f"({a} - ({b})) zeta^3 + zeta", "rho", allow_complex=True) == (0, 1)
    assert parse_number(a, "x", allow_complex=True) == parse_number(b, "x", allow_complex=True)
    assert close(parse_number(a, "x", allow_complex=True), ref_a)


@pytest.mark.parametrize("text, reference", [
    ("1 + sqrt(2) + sqrt(3) + sqrt(5) + sqrt(7)",
     1 + sp.sqrt(2) + sp.sqrt(3) + sp.sqrt(5) + sp.sqrt(7)),
    ("sqrt(2) + i + sqrt(3) i", sp.sqrt(2) + sp.I + sp.sqrt(3) * sp.I),
    ("1 + sqrt(6) + sqrt(10) + sqrt(15)", 1 + sp.sqrt(6) + sp.sqrt(10) + sp.sqrt(15)),
    ("2 - sqrt(1/3) + 5 sqrt(7/2) i", 2 - sp.sqrt(sp.Rational(1, 3)) +
     5 * sp.sqrt(sp.Rational(7, 2)) * sp.I),
])
def test_division_by_irrational_numbers(text, reference):
    # several generators at once: the denominator must still be rationalised completely
    inverse = parse_number(f"1/({text})", "x", allow_complex=True)
    assert close(inverse, 1 / reference)
    assert all(sp.fraction(term)[1].is_Integer for term in sp.Add.make_args(inverse))
    assert parse_number(f"({text}) / ({text})", "x", allow_complex=True) == 1


# --- read back what sympy's printer writes ------------------------------------------------------

coefficient_values = st.one_of(
    st.fractions(max_denominator=50).filter(lambda f: abs(f) < 10**6).map(
        lambda f: sp.Rational(f.numerator, f.denominator)),
    st.tuples(st.integers(-9, 9), st.sampled_from([2, 3, 6])).map(lambda t: t[0] * sp.sqrt(t[1])),
    st.integers(-9, 9).map(lambda k: k * sp.I),
)


@FUZZ
@given(st.lists(coefficient_values, min_size=1, max_size=9))
def test_reads_back_sympy_printed_polynomials(coeffs):
    coeffs = list(coeffs)
    while len(coeffs) > 1 and coeffs[-1] == 0:
        coeffs.pop()
    # reference: sympy's printer (via poly_text) and sympy's own Poly of the same coefficients
    text = poly_text(coeffs, "zeta")
    expected = sympy_coefficients(sp.Add(*[c * ZETA**k for k, c in enumerate(coeffs)]), ZETA)
    assert parse_polynomial(text, "rho", allow_complex=True) == expected


# --- worked examples ---------------------------------------------------------------------------

def test_multistep_generating_polynomials_as_written_in_textbooks():
    # BDF2 rho and the trapezoid sigma as usually printed (from memory; the coefficients are
    # checked against sympy's expansion of the same formulas, not typed in)
    assert parse_polynomial("3/2 ζ² − 2ζ + 1/2", "rho") == sympy_coefficients(
        sp.Rational(3, 2) * ZETA**2 - 2 * ZETA + sp.Rational(1, 2), ZETA)
    assert parse_polynomial("(zeta + 1)/2", "sigma") == sympy_coefficients(
        (ZETA + 1) / 2, ZETA)
    assert parse_polynomial("zeta^3 - zeta^2", "rho") == sympy_coefficients(
        ZETA**3 - ZETA**2, ZETA)
    # 1/12 (23 zeta^2 - 16 zeta + 5): AB3 sigma, written with juxtaposition
    assert parse_polynomial("1/12 (23zeta^2 - 16zeta + 5)", "sigma") == sympy_coefficients(
        sp.Rational(1, 12) * (23 * ZETA**2 - 16 * ZETA + 5), ZETA)


def test_stability_functions_as_written_in_textbooks():
    # Pade (2,2) and RK4's truncated exponential, compared with sympy's expansions
    P, Q = parse_rational_function("(1 + z/2 + z^2/12)/(1 - z/2 + z^2/12)", "stability")
    assert P == sympy_coefficients(1 + Z / 2 + Z**2 / 12)
    assert Q == sympy_coefficients(1 - Z / 2 + Z**2 / 12)
    P, Q = parse_rational_function("1 + z + z^2/2 + z^3/6 + z^4/24", "stability")
    assert P == sympy_coefficients(sum(Z**k / sp.factorial(k) for k in range(5)))
    assert Q == (1,)
    # SDIRK-style constant with a square root: gamma = (3 + sqrt(3))/6
    gamma = parse_number("(3 + sqrt(3))/6", "gamma")
    assert sp.simplify(gamma - (3 + sp.sqrt(3)) / 6) == 0


def test_common_factors_cancel_and_denominator_is_normalised():
    P, Q = parse_rational_function("(1 - z^2)/(2 - 2z)", "R")
    assert (P, Q) == (sympy_coefficients((1 + Z) / 2), (1,))
    P, Q = parse_rational_function("z^-1 + 1", "R")
    assert (P, Q) == ((1, 1), (0, 1))
    P, Q = parse_rational_function("0/(1 - z)", "R")
    assert (P, Q) == ((0,), (1,))


def test_juxtaposition_reads_as_documented():
    # 1/2 z^2 is z^2/2 (left to right, same precedence as * and /)
    assert parse_polynomial("1/2 z^2", "p", "z") == sympy_coefficients(Z**2 / 2)
    assert parse_polynomial("2z(z+1)(z-1)", "p", "z") == sympy_coefficients(2 * Z * (Z**2 - 1))
    assert parse_polynomial("-z^2", "p", "z") == sympy_coefficients(-Z**2)
    assert parse_polynomial("z*-1", "p", "z") == sympy_coefficients(-Z)
    assert parse_polynomial("2^3z", "p", "z") == sympy_coefficients(8 * Z)
    assert parse_polynomial("z z", "p", "z") == sympy_coefficients(Z**2)
    assert parse_polynomial("ζ²·ζ", "rho") == sympy_coefficients(ZETA**3, ZETA)
    assert parse_polynomial("(zeta+1)²", "rho") == sympy_coefficients((ZETA + 1)**2, ZETA)


def test_variable_aliases():
    assert parse_polynomial("ζ - 1", "rho") == parse_polynomial("zeta - 1", "rho")
    assert parse_polynomial("x^2", "p", "zeta", aliases=["x"]) == (0, 0, 1)
    with pytest.raises(InputError):
        parse_polynomial("ζ", "rho", aliases=[])


def test_one_spelling_of_the_variable_per_text():
    aliases = ("z", "x", "ζ")
    assert parse_polynomial("z^2 - z", "rho", "zeta", aliases=aliases) == (0, -1, 1)
    with pytest.raises(InputError, match="both 'z' and 'x'") as info:
        parse_polynomial("z^2 - x", "rho", "zeta", aliases=aliases)
    assert info.value.position == 6


@pytest.mark.parametrize("text", ["inf", "-Infinity", "nan", "oo"])
def test_non_finite_words_are_refused_plainly(text):
    with pytest.raises(InputError, match="not a finite number"):
        parse_number(text, "x")


# --- writing exact numbers back as text -------------------------------------------------------

@pytest.mark.parametrize("value", [
    sp.Rational(-1, 12), sp.Integer(0), sp.Integer(7), sp.sqrt(2) / 4, (3 + sp.sqrt(3)) / 6,
    1 / (1 + sp.sqrt(2)), sp.Rational(3, 4) + sp.sqrt(2) * sp.I / 2, sp.I, -sp.I * sp.sqrt(6),
    sp.sqrt(sp.Rational(1, 2)) ** 3, 2 ** sp.Rational(3, 2), 1 / sp.sqrt(3), (1 + sp.I) ** -2,
    (4 - sp.sqrt(6)) / 10, (88 - 7 * sp.sqrt(6)) / 360,
])
def test_format_exact_reads_back(value):
    text = format_exact(value)
    back = parse_number(text, "x", allow_complex=True)
    # reference: sympy's own simplification, and mpmath at 60 digits
    assert sp.expand(sp.radsimp(back - value)) == 0
    assert close(back, value)
    assert format_exact(back) == text


@FUZZ
@given(rendered(trees(surds=True, imaginary=True, variable_weight=0, max_leaves=6)))
def test_format_exact_round_trip(case):
    value = parse_number(case[0], "x", allow_complex=True)
    assert parse_number(format_exact(value), "x", allow_complex=True) == value


@pytest.mark.parametrize("value", [sp.pi, sp.Float(0.1), sp.Symbol("x"),
                                   sp.sqrt(1 + sp.sqrt(2)), 2 ** sp.Rational(1, 3), True, 0.5])
def test_format_exact_refuses_inexact_values(value):
    with pytest.raises(ValueError):
        format_exact(value)


# --- refusals: field, place, message ----------------------------------------------------------

REFUSALS = [
    # text, field function, position, words in the message
    ("1 2", "poly", 2, "number cannot follow"),
    ("z 2", "poly", 2, "number cannot follow"),
    ("1+-z", "poly", 2, "two signs"),
    ("1 - -z", "poly", 4, "two signs"),
    ("z^2^3", "poly", 3, "chained powers"),
    ("z²^2", "poly", 2, "chained powers"),
    ("z^0.5", "poly", 2, "whole number"),
    ("z^(1/2)", "poly", 2, "whole number"),
    ("2^z", "poly", 2, "must not contain the variable"),
    ("z^(z)", "poly", 2, "must not contain the variable"),
    ("0^0", "poly", 1, "0^0"),
    ("1/0", "poly", 1, "division by zero"),
    ("z/(z-z)", "rational", 1, "division by zero"),
    ("0^-1", "poly", 1, "division by zero"),
    ("1/z", "poly", 1, "divide by numbers only"),
    ("z^-1", "poly", 1, "not a polynomial"),
    ("x^2 + 1", "poly", 0, "the variable here is 'z'"),
    ("z2 + 1", "poly", 0, "z^2"),
    ("exp(z)", "poly", 0, "unknown name 'exp'"),
    ("rho = z^2", "poly", 4, "'='"),
    ("1/(1-z)(1+z)", "rational", 7, "ambiguous product"),
    ("(1+z", "poly", 0, "not closed"),
    ("z)", "poly", 1, "no matching"),
    ("()", "poly", 1, "empty parentheses"),
    ("sqrt 2", "poly", 5, "sqrt needs parentheses"),
    ("sqrt(z)", "poly", 0, "rational number only"),
    ("sqrt(sqrt(2))", "poly", 0, "rational number only"),
    ("sqrt(-2)", "poly", 0, "not real"),
    ("2i", "poly", 1, "imaginary unit"),
    ("1e", "poly", 1, "no digits"),
    ("1.2.3", "poly", 3, "second decimal point"),
    ("z + $", "poly", 4, "unexpected character"),
    ("z +", "poly", 3, "ends too early"),
    ("z ⁻", "poly", 2, "superscript"),
    ("²", "poly", 0, "superscript"),
    ("1, 2", "poly", 1, "one expression"),
    ("[1]", "poly", 0, "unexpected '['"),
    ("1 -1", "number", 2, "ambiguous '-'"),
    ("z", "number", 0, "not a variable"),
]


def _call(kind, text):
    if kind == "poly":
        return parse_polynomial(text, "myfield", "z")
    if kind == "rational":
        return parse_rational_function(text, "myfield", "z")
    return parse_number(text, "myfield")


@pytest.mark.parametrize("text, kind, position, words", REFUSALS)
def test_refusals_name_field_place_and_problem(text, kind, position, words):
    with pytest.raises(InputError) as info:
        _call(kind, text)
    err = info.value
    assert err.field == "myfield"
    assert words in err.message
    assert err.position == position
    assert (err.line, err.column) == (1, position + 1)
    assert str(err).startswith("myfield: ")
    assert f"column {position + 1}" in str(err)
    assert err.to_dict()["position"] == position


def test_positions_on_later_lines():
    with pytest.raises(InputError) as info:
        parse_polynomial("zeta^2\n  - 2 zeta\n  + $", "rho")
    assert (info.value.line, info.value.column) == (3, 5)
    assert info.value.position == len("zeta^2\n  - 2 zeta\n  + ")


@pytest.mark.parametrize("bad", [None, 3, b"z", ["z"]])
def test_non_text_is_refused(bad):
    with pytest.raises(InputError, match="must be text"):
        parse_polynomial(bad, "rho")


@pytest.mark.parametrize("blank", ["", "   ", "\n\t"])
def test_empty_text_is_refused(blank):
    for parse in (parse_number, parse_numbers, parse_polynomial, parse_rational_function):
        with pytest.raises(InputError, match="is empty") as info:
            parse(blank, "f")
        assert info.value.field == "f"


# --- lists ---------------------------------------------------------------------------------------

@pytest.mark.parametrize("text", [
    "1, -4/3, 1/3", "[1, -4/3, 1/3]", "1; -4/3; 1/3", "1\n-4/3\n1/3", " [ 1 ;\n -4/3 ,\n1/3 ] \n",
    "1,\n-4/3,\n\n1/3\n", "1\n,-4/3\n,1/3", "1, -8/6, 0.333333333333333333e0 + 1/3 - 0.333333333333333333",
])
def test_number_lists(text):
    # reference: Fraction of each entry
    assert parse_numbers(text, "alpha") == (1, sp.Rational(-4, 3), sp.Rational(1, 3))


@pytest.mark.parametrize("text, position, words", [
    ("1,,2", 2, "entry 2 is empty"),
    (",1", 0, "entry 1 is empty"),
    ("1, 2,", 4, "entry 3, after the last separator, is empty"),
    ("[1, 2", 0, "'[' is not closed"),
    ("[1, 2] 3", 7, "nothing may follow"),
    ("1, [2]", 3, "unexpected '['"),
    ("[]", 1, "no entries"),
    ("1 -1", 2, "entry 1: ambiguous '-'"),
    ("1, 2 3", 5, "entry 2: a number cannot follow"),
    ("1, z", 3, "entry 2: unknown name 'z'"),
    ("1\n2/0", 3, "entry 2: division by zero"),
])
def test_list_refusals(text, position, words):
    with pytest.raises(InputError) as info:
        parse_numbers(text, "beta")
    assert info.value.field == "beta"
    assert words in info.value.message
    assert info.value.position == position


def test_list_max_count():
    assert parse_numbers("1, 2, 3", "c", max_count=3) == (1, 2, 3)
    with pytest.raises(LimitExceeded, match="at most 2"):
        parse_numbers("1, 2, 3", "c", max_count=2)


def test_complex_lists_only_when_allowed():
    assert parse_numbers("1 + 2i, -i", "eig", allow_complex=True) == (1 + 2 * sp.I, -sp.I)
    with pytest.raises(InputError, match="entry 1: the imaginary unit"):
        parse_numbers("1 + 2i, -i", "eig")


# --- bounds --------------------------------------------------------------------------------------

def test_degree_bound():
    assert len(parse_polynomial(f"z^{MAX_POLY_DEGREE}", "p", "z")) == MAX_POLY_DEGREE + 1
    assert len(parse_polynomial(f"(1+z)^{MAX_POLY_DEGREE}", "p", "z")) == MAX_POLY_DEGREE + 1
    for text in (f"z^{MAX_POLY_DEGREE + 1}", f"(1+z)^{MAX_POLY_DEGREE + 1}",
                 f"z^{MAX_POLY_DEGREE} * z", f"1/(1-z)^{MAX_POLY_DEGREE + 1}"):
        with pytest.raises(LimitExceeded, match="degree would exceed"):
            parse_rational_function(text, "p", "z")


def test_binomial_coefficients_at_the_degree_bound():
    # reference: sympy.binomial
    coeffs = parse_polynomial(f"(1 + z)^{MAX_POLY_DEGREE}", "p", "z")
    assert coeffs == tuple(sp.binomial(MAX_POLY_DEGREE, k) for k in range(MAX_POLY_DEGREE + 1))


def test_text_length_bound():
    ok = "1" + " " * (MAX_TEXT_CHARS - 1)
    assert parse_number(ok, "x") == 1
    with pytest.raises(LimitExceeded, match=str(MAX_TEXT_CHARS)):
        parse_number(ok + " ", "x")


def test_nesting_bound():
    n = polytext.MAX_NESTING
    assert parse_number("(" * n + "1" + ")" * n, "x") == 1
    with pytest.raises(LimitExceeded, match="nested"):
        parse_number("(" * (n + 1) + "1" + ")" * (n + 1), "x")


def test_number_size_bounds():
    digits = polytext.MAX_LITERAL_DIGITS
    assert parse_number("1." + "0" * (digits - 1), "x") == 1
    assert parse_number("0." + "3" * 1200, "x") == sp.Rational(int("3" * 1200), 10 ** 1200)
    with pytest.raises(LimitExceeded, match="digits"):
        parse_number("1." + "0" * digits, "x")
    # the largest integers within the bit bound are within the digit bound too
    assert len(str(2 ** polytext.MAX_NUMBER_BITS)) <= digits
    big = str(2 ** polytext.MAX_NUMBER_BITS - 1)
    assert parse_number(big, "x") == sp.Integer(int(big))
    bits = polytext.MAX_NUMBER_BITS
    assert parse_number(f"2^{bits - 1}", "x") == sp.Integer(2) ** (bits - 1)
    for text in (f"2^{bits}", f"(1/3)^{bits}", "1e1300", "1e-999999", f"2^{bits - 1} * 2",
                 "2^100000", "(1 + sqrt(2))^100000"):
        with pytest.raises(LimitExceeded):
            parse_number(text, "x")
    with pytest.raises(LimitExceeded, match="larger than"):
        parse_number("1^1000000", "x")
    with pytest.raises(LimitExceeded, match="sqrt takes"):
        parse_number("sqrt(10000000000000000000000000001)", "x")


def test_irrational_size_bound():
    many = " + ".join(f"sqrt({p})" for p in sp.primerange(2, 100))
    with pytest.raises(LimitExceeded, match="terms"):
        parse_number(many, "x")


def test_work_bound_refuses_heavy_arithmetic():
    heavy = " + ".join(["1/(1 - z)^64"] * 1000)
    assert len(heavy) <= MAX_TEXT_CHARS
    with pytest.raises(LimitExceeded, match="too much exact arithmetic"):
        parse_rational_function(heavy, "R")


def test_work_bound_leaves_room_for_large_honest_input():
    # a long but reasonable polynomial: 1400 rational terms, degree 59
    text = "+".join(f"{k}/{k + 1} z^{k % 60}" for k in range(1400))
    assert len(text) <= MAX_TEXT_CHARS
    got = parse_polynomial(text, "p", "z")
    # reference: sympy's sum of the same terms
    assert got == sympy_coefficients(sp.Add(*[sp.Rational(k, k + 1) * Z**(k % 60)
                                              for k in range(1400)]))


# --- robustness ----------------------------------------------------------------------------------

ALPHABET = "0123456789.+-*/^()[],; \nzeζeEijsqrt²⁻·×−=$_x"


@settings(max_examples=400, deadline=None)
@given(st.text(ALPHABET, max_size=30))
def test_any_text_either_parses_or_raises_input_error(text):
    for parse in (lambda t: parse_polynomial(t, "f", "z", allow_complex=True),
                  lambda t: parse_rational_function(t, "f", "z"),
                  lambda t: parse_number(t, "f"),
                  lambda t: parse_numbers(t, "f", allow_complex=True)):
        try:
            parse(text)
        except InputError as err:
            assert err.field == "f"
            assert err.position is None or 0 <= err.position <= len(text)


def test_parsing_never_evaluates_user_text(monkeypatch):
    seen = []

    def guard(name, real):
        def wrapper(arg, *args, **kwargs):
            if isinstance(arg, str):
                seen.append((name, arg))
                raise AssertionError(f"{name} called on text {arg!r}")
            return real(arg, *args, **kwargs)
        return wrapper

    monkeypatch.setattr(builtins, "eval", guard("eval", builtins.eval))
    monkeypatch.setattr(builtins, "exec", guard("exec", builtins.exec))
    monkeypatch.setattr(sp, "sympify", guard("sympify", sp.sympify))
    monkeypatch.setattr(sp, "parse_expr", guard("parse_expr", sp.parse_expr))
    module = sys.modules["sympy.core.sympify"]
    monkeypatch.setattr(module, "sympify", guard("sympify", module.sympify))
    assert parse_polynomial("3/2 zeta^2 - 2 zeta + 1/2", "rho") == \
        (sp.Rational(1, 2), -2, sp.Rational(3, 2))
    parse_rational_function("(1 + sqrt(2) z)/(1 - i z)", "R", allow_complex=True)
    with pytest.raises(InputError):
        parse_number("__import__('os').system('true')", "x")
    assert seen == []


def test_source_has_no_evaluation_of_text():
    source = inspect.getsource(polytext)
    code = "\n".join(line for line in source.splitlines()
                     if not line.lstrip().startswith("#"))
    code = re.sub(r'"""[\s\S]*?"""', "", code)
    for pattern in (r"\beval\(", r"\bexec\(", r"sympify\(", r"parse_expr\(", r"\bS\(",
                    r"\bcompile\("):
        assert not re.search(pattern, code), pattern


def test_docstring_examples():
    result = doctest.testmod(polytext, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert result.attempted >= 5
    assert result.failed == 0
