"""Linear multistep methods: sum alpha_j u_{n+j} = h sum beta_j f_{n+j}, j = 0..k.

Families are derived exactly from their interpolation definitions (Hairer, Norsett & Wanner,
Solving Ordinary Differential Equations I, 2nd ed., Springer 1993, sections III.1 and III.2):
Adams methods integrate the polynomial interpolating f, BDF differentiate the polynomial
interpolating u, Nystrom and Milne-Simpson integrate over two steps.
"""
from __future__ import annotations

from functools import lru_cache

import sympy as sp

from .. import limits
from ..errors import InputError
from .base import Scheme
from .stability import StabilityPolynomial, ZETA, Z

S = sp.Symbol("s")

# Shampine & Reichelt, "The MATLAB ODE suite", SIAM J. Sci. Comput. 18(1), 1997, Table 1:
# the kappa of the numerical differentiation formulas of orders 1..5, as published (4 digits).
NDF_KAPPA = {1: sp.Rational(-1850, 10000), 2: sp.Rational(-1, 9), 3: sp.Rational(-823, 10000),
             4: sp.Rational(-415, 10000), 5: sp.Integer(0)}


# --- interpolation kernels --------------------------------------------------------------------
def _lagrange_basis(nodes):
    basis = []
    for j, xj in enumerate(nodes):
        L = sp.Integer(1)
        for i, xi in enumerate(nodes):
            if i != j:
                L *= (S - xi) / sp.Integer(xj - xi)
        basis.append(sp.expand(L))
    return basis


def _integrated_weights(nodes, lo, hi):
    return [sp.integrate(L, (S, lo, hi)) for L in _lagrange_basis(nodes)]


def _differentiated_weights(nodes, at):
    return [sp.diff(L, S).subs(S, at) for L in _lagrange_basis(nodes)]


# --- construction and validation --------------------------------------------------------------
def _strip_common_zeta_power(alpha, beta):
    # rho and sigma both divisible by zeta^q: the method is a shifted copy of a shorter one
    while len(alpha) > 1 and alpha[0] == 0 and beta[0] == 0:
        alpha, beta = alpha[1:], beta[1:]
    return alpha, beta


def common_factor(alpha, beta):
    """Return gcd(rho, sigma) as a sympy expression in ZETA (1 when irreducible)."""
    # hardening fix: coefficients with radicals need the algebraic field; in sympy's default
    # expression domain the gcd of a 12-step sigma with sqrt(2) and sqrt(3) ran for minutes
    rational = all(sp.sympify(c, strict=True).is_Rational for c in list(alpha) + list(beta))
    opts = {} if rational else {"extension": True}
    rho = sp.Poly(list(reversed(alpha)), ZETA, **opts)
    sigma = sp.Poly(list(reversed(beta)), ZETA, **opts)
    if sigma.is_zero:
        return rho.as_expr()
    g = sp.gcd(rho, sigma)
    return g.monic().as_expr() if g.degree() > 0 else sp.Integer(1)


def multistep(alpha, beta, name="custom", label="custom multistep method",
              family="custom", source="", details=None) -> Scheme:
    """Return the Scheme of a linear multistep method from ascending alpha, beta.

    Parameters
    ----------
    alpha, beta : sequence of exact numbers, length k + 1
        Coefficients of u_{n+j} and h f_{n+j}, j = 0..k. Shorter beta is padded with zeros
        at the top (an explicit method may omit beta_k).
    """
    # strict: a string here would be parsed by sympy, which evaluates it (DESIGN.md: text goes
    # through polytext only)
    alpha = [sp.nsimplify(sp.sympify(a, strict=True)) if isinstance(a, float)
             else sp.sympify(a, strict=True) for a in alpha]
    beta = [sp.nsimplify(sp.sympify(b, strict=True)) if isinstance(b, float)
            else sp.sympify(b, strict=True) for b in beta]
    if not alpha:
        raise InputError("alpha", "is empty", expected="k + 1 coefficients alpha_0..alpha_k")
    if len(beta) > len(alpha):
        if all(b == 0 for b in beta[len(alpha):]):
            beta = beta[: len(alpha)]
        else:
            raise InputError("beta", f"has {len(beta)} coefficients but alpha has {len(alpha)}",
                             expected="beta_0..beta_k, the same count as alpha")
    beta = beta + [sp.Integer(0)] * (len(alpha) - len(beta))
    while len(alpha) > 1 and alpha[-1] == 0 and beta[-1] == 0:
        alpha, beta = alpha[:-1], beta[:-1]
    if alpha[-1] == 0:
        raise InputError("alpha", "alpha_k (the coefficient of the newest value) is zero",
                         expected="alpha_k != 0")
    alpha, beta = _strip_common_zeta_power(alpha, beta)
    k = len(alpha) - 1
    if k < 1:
        raise InputError("alpha", "a method needs at least one step (k >= 1)")
    if k > limits.MAX_STEPS:
        raise InputError("alpha", f"has {k} steps; at most {limits.MAX_STEPS} are supported")
    lead = alpha[-1]
    # hardening fix: nsimplify only numbers holding floats. On an exact irrational it guesses
    # a "simpler" number and can return a different one: sqrt(2)/12 - sqrt(3)/15 + 1/13 became
    # 216*2**(37/49)*3**(25/49)*5**(31/49)*7**(8/49)/30625 (5.8e-18 away)
    alpha = [sp.nsimplify(a / lead) if (a / lead).has(sp.Float) else sp.radsimp(a / lead)
             for a in alpha]
    beta = [sp.nsimplify(b / lead) if (b / lead).has(sp.Float) else sp.radsimp(b / lead)
            for b in beta]
    rho = sum(a * ZETA**j for j, a in enumerate(alpha))
    sigma = sum(b * ZETA**j for j, b in enumerate(beta))
    pi = StabilityPolynomial.from_expr(rho - Z * sigma)
    det = dict(details or {})
    g = common_factor(alpha, beta)
    if g != 1:
        det["reducible"] = True
        det["common_factor"] = str(g).replace("**", "^")
    explicit = beta[-1] == 0
    return Scheme(name=name, label=label, kind="multistep", pi=pi, steps=k, stages=1,
                  explicit=bool(explicit), evaluations_per_step=1, family=family,
                  rho=tuple(alpha), sigma=tuple(beta), details=det, source=source)


def _check_order_arg(p, lo, hi, what):
    if not isinstance(p, int) or p < lo or p > hi:
        raise InputError("scheme", f"{what} must be an integer from {lo} to {hi}, got {p!r}")


# --- the families -----------------------------------------------------------------------------
@lru_cache(maxsize=None)
def adams_bashforth(p: int) -> Scheme:
    """Return the explicit Adams method of order p (k = p steps)."""
    _check_order_arg(p, 1, limits.MAX_STEPS, "Adams-Bashforth order")
    k = p
    beta = _integrated_weights(list(range(k)), k - 1, k) + [sp.Integer(0)]
    alpha = [0] * (k - 1) + [-1, 1]
    return multistep(alpha, beta, name=f"ab{p}", label=f"Adams-Bashforth {k}-step (AB{p})",
                     family="Adams-Bashforth",
                     source="derived: integrate the interpolant of f at t_n..t_{n+k-1} over the last step")


@lru_cache(maxsize=None)
def adams_moulton(p: int) -> Scheme:
    """Return the implicit Adams method of order p (am1 backward Euler, am2 trapezoid)."""
    _check_order_arg(p, 1, limits.MAX_STEPS, "Adams-Moulton order")
    if p == 1:
        k, nodes = 1, [1]
    else:
        k = p - 1
        nodes = list(range(k + 1))
    weights = _integrated_weights(nodes, k - 1, k)
    beta = [sp.Integer(0)] * (k + 1)
    for node, w in zip(nodes, weights):
        beta[node] = w
    alpha = [0] * (k - 1) + [-1, 1]
    names = {1: "backward Euler (AM1)", 2: "trapezoid (AM2)"}
    label = names.get(p, f"Adams-Moulton {k}-step (AM{p})")
    return multistep(alpha, beta, name=f"am{p}", label=label, family="Adams-Moulton",
                     source="derived: integrate the interpolant of f at t_n..t_{n+k} over the last step")


@lru_cache(maxsize=None)
def bdf(k: int) -> Scheme:
    """Return the k-step backward differentiation formula (order k)."""
    _check_order_arg(k, 1, limits.MAX_STEPS, "BDF step count")
    alpha = _differentiated_weights(list(range(k + 1)), k)
    beta = [sp.Integer(0)] * k + [sp.Integer(1)]
    return multistep(alpha, beta, name=f"bdf{k}", label=f"BDF{k}", family="BDF",
                     source="derived: differentiate the interpolant of u at t_n..t_{n+k} at t_{n+k}")


@lru_cache(maxsize=None)
def nystrom(k: int) -> Scheme:
    """Return the explicit k-step Nystrom method (order k; nystrom2 is leapfrog)."""
    _check_order_arg(k, 2, limits.MAX_STEPS, "Nystrom step count")
    beta = _integrated_weights(list(range(k)), k - 2, k) + [sp.Integer(0)]
    alpha = [0] * (k - 2) + [-1, 0, 1]
    return multistep(alpha, beta, name=f"nystrom{k}", label=f"Nystrom {k}-step",
                     family="Nystrom / Milne-Simpson",
                     source="derived: integrate the interpolant of f at t_n..t_{n+k-1} over the last two steps")


@lru_cache(maxsize=None)
def milne_simpson(k: int) -> Scheme:
    """Return the implicit k-step Milne-Simpson method (k = 2: Simpson's rule, order 4)."""
    _check_order_arg(k, 2, limits.MAX_STEPS, "Milne-Simpson step count")
    beta = _integrated_weights(list(range(k + 1)), k - 2, k)
    alpha = [0] * (k - 2) + [-1, 0, 1]
    name = "milne-simpson" if k == 2 else f"ms{k}"
    return multistep(alpha, beta, name=name, label=f"Milne-Simpson {k}-step",
                     family="Nystrom / Milne-Simpson",
                     source="derived: integrate the interpolant of f at t_n..t_{n+k} over the last two steps")


def theta_method(theta) -> Scheme:
    """Return u_{n+1} - u_n = h (theta f_{n+1} + (1 - theta) f_n)."""
    theta = sp.sympify(theta, strict=True)
    if not theta.is_real or theta < 0 or theta > 1:
        raise InputError("theta", f"must lie in [0, 1], got {theta}")
    return multistep([-1, 1], [1 - theta, theta], name=f"theta:{theta}",
                     label=f"theta method, theta = {theta}", family="theta family",
                     source="one-step theta family", details={"theta": str(theta)})


@lru_cache(maxsize=None)
def ndf(k: int) -> Scheme:
    """Return the numerical differentiation formula NDF k (Shampine & Reichelt 1997).

    sum_{m=1..k} (1/m) nabla^m u_{n+1} - kappa gamma_k nabla^{k+1} u_{n+1} = h f_{n+1},
    gamma_k = sum_{j=1..k} 1/j, kappa from NDF_KAPPA.
    """
    _check_order_arg(k, 1, 5, "NDF order")
    kappa = NDF_KAPPA[k]
    gamma = sum(sp.Rational(1, j) for j in range(1, k + 1))
    w = 1 - 1 / ZETA  # the backward difference nabla acting on zeta^n
    lhs = sum(sp.Rational(1, m) * w**m for m in range(1, k + 1)) - kappa * gamma * w**(k + 1)
    rho_poly = sp.Poly(sp.expand(lhs * ZETA**(k + 1)), ZETA)
    alpha = list(reversed(rho_poly.all_coeffs()))
    alpha = alpha + [sp.Integer(0)] * (k + 2 - len(alpha))
    beta = [sp.Integer(0)] * (k + 1) + [sp.Integer(1)]
    return multistep(alpha, beta, name=f"ndf{k}", label=f"NDF{k}", family="NDF",
                     source="Shampine & Reichelt, SIAM J. Sci. Comput. 18(1) 1997, Table 1 (kappa)",
                     details={"kappa": str(kappa)})
