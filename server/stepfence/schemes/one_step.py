"""One-step schemes given by their stability function R(z) = P(z)/Q(z).

pi(zeta, z) = Q(z) zeta - P(z) (Hairer & Wanner, Solving ODEs II, 2nd ed., section IV.2).
Runge-Kutta tableaux reach here through ButcherTableau.stability_function(); the
Runge-Kutta-Chebyshev polynomials are built from their closed forms.
"""
from __future__ import annotations

from functools import lru_cache

import numpy as np
import sympy as sp

from .. import limits
from ..errors import InputError
from .base import Scheme
from .stability import StabilityPolynomial, ZETA, Z

# Verwer, Hundsdorfer & Sommeijer, Numer. Math. 57 (1990), and Sommeijer, Shampine & Verwer,
# J. Comput. Appl. Math. 88 (1998): damping eps = 2/13 for the second-order family; 0.05 is
# common practice for the first-order damped Chebyshev polynomial (no single source).
RKC1_DEFAULT_DAMPING = sp.Rational(1, 20)
RKC2_DEFAULT_DAMPING = sp.Rational(2, 13)


def _coeffs(expr):
    poly = sp.Poly(sp.expand(expr), Z)
    return list(reversed(poly.all_coeffs()))


class ChebyshevForm:
    """P(z) = a + b T_s(w0 + w1 z), evaluated by the three-term recurrence.

    The monomial coefficients of T_s grow like 2^(s-1), so evaluating them in floating point
    loses about s * 0.3 digits; the recurrence is stable on and near [-1, 1] (Gautschi,
    Numerical Analysis, 2nd ed., Birkhauser 2012, section 1.3). pi(zeta, z) = zeta - P(z).
    """

    def __init__(self, s, a, b, w0, w1):
        self.s = int(s)
        self.a, self.b, self.w0, self.w1 = (float(a), float(b), float(w0), float(w1))
        # region bound: outside the Bernstein ellipse E_rho, |T_s(x)| >= (rho^s - rho^-s)/2,
        # so |P| <= 1 forces rho^s - rho^-s <= 2 C with C = (1 + |a|)/|b|
        C = (1 + abs(self.a)) / abs(self.b)
        rho = (C + np.sqrt(C * C + 1)) ** (1.0 / self.s)
        x_max = 0.5 * (rho + 1 / rho)
        self.bound = (x_max + abs(self.w0)) / abs(self.w1) * 1.001

    def rows(self, z):
        """Return ([-P, 1], [-P', 0]) as arrays z.shape + (2,)."""
        x = self.w0 + self.w1 * np.asarray(z, dtype=complex)
        t_prev, t_cur = np.ones_like(x), x
        u_prev, u_cur = np.ones_like(x), 2 * x   # U_0, U_1 (T_n' = n U_{n-1})
        if self.s == 0:
            T, dT = t_prev, np.zeros_like(x)
        else:
            u_sm1 = u_prev  # U_{s-1} for s = 1
            for n in range(1, self.s):
                t_prev, t_cur = t_cur, 2 * x * t_cur - t_prev
                u_sm1 = u_cur
                u_prev, u_cur = u_cur, 2 * x * u_cur - u_prev
            T = t_cur
            dT = self.s * u_sm1
        P = self.a + self.b * T
        dP = self.b * self.w1 * dT
        C = np.stack([-P, np.ones_like(P)], axis=-1)
        dC = np.stack([-dP, np.zeros_like(dP)], axis=-1)
        return C, dC

    def locus(self, w):
        """Return the s roots z of P(z) = w for each w, shape w.shape + (s,)."""
        c = (np.asarray(w, dtype=complex) - self.a) / self.b
        alpha = np.arccos(c.astype(complex))
        k = np.arange(self.s)
        x = np.cos((alpha[..., None] + 2 * np.pi * k) / self.s)
        return (x - self.w0) / self.w1


def from_stability_function(P, Q=1, name="custom", label="custom stability function R(z)",
                            family="stability function", stages=None, explicit=None,
                            kind="stability-function", tableau=None, evaluations=None,
                            source="", details=None, evaluator=None) -> Scheme:
    """Return the one-step Scheme with R(z) = P(z)/Q(z) (sympy expressions in Z)."""
    P = sp.expand(sp.sympify(P, strict=True))
    Q = sp.expand(sp.sympify(Q, strict=True))
    if Q == 0:
        raise InputError("stability", "the denominator Q(z) is identically zero")
    R = sp.cancel(P / Q)
    P, Q = sp.fraction(R)
    P, Q = sp.expand(P), sp.expand(Q)
    q0 = Q.subs(Z, 0)
    if q0 == 0:
        raise InputError("stability", "R(z) has a pole at z = 0; a consistent scheme has R(0) = 1")
    P, Q = sp.expand(P / q0), sp.expand(Q / q0)
    degP = sp.degree(P, Z) if P != 0 else 0
    degQ = sp.degree(Q, Z)
    if max(degP, degQ) > limits.MAX_POLY_DEGREE and kind != "rkc":
        raise InputError("stability", f"degree {max(degP, degQ)} exceeds {limits.MAX_POLY_DEGREE}")
    pi = StabilityPolynomial.from_expr(Q * ZETA - P, evaluator=evaluator)
    if explicit is None:
        explicit = degQ == 0
    if stages is None:
        stages = max(degP, degQ, 1)
    if evaluations is None:
        evaluations = stages
    return Scheme(name=name, label=label, kind="runge-kutta" if tableau is not None else "stability-function",
                  pi=pi, steps=1, stages=int(stages), explicit=bool(explicit),
                  evaluations_per_step=int(evaluations), family=family, tableau=tableau,
                  stability_function=(P, Q), source=source, details=dict(details or {}))


def from_tableau(tableau, name="custom", label=None, family=None, source="") -> Scheme:
    """Return the Runge-Kutta Scheme of a ButcherTableau."""
    P, Q = tableau.stability_function()
    return from_stability_function(
        P, Q, name=name, label=label or f"Runge-Kutta ({tableau.stages} stages)",
        family=family or ("explicit RK" if tableau.explicit else "implicit RK"),
        stages=tableau.stages, explicit=tableau.explicit, tableau=tableau,
        evaluations=tableau.evaluations_per_step, source=source,
        details={"fsal": bool(getattr(tableau, "fsal", False))})


def _chebyshev_T(s):
    x = sp.Symbol("x")
    return sp.chebyshevt_poly(s, x), x


EXACT_RKC_STAGES = 20  # above this the exact rational coefficients run to thousands of digits


def _shifted_chebyshev(s, a, b, w0, w1, order):
    """Return a + b T_s(w0 + w1 z) as a sympy polynomial in Z.

    Exact rationals up to EXACT_RKC_STAGES stages; beyond, the exact coefficients have ~s^2
    digits (22,000 at s = 50), so they are rounded to 50 significant digits, except the
    first order + 1 Taylor coefficients, which are exactly 1/j! by construction.
    """
    x = sp.Symbol("x")
    if s <= EXACT_RKC_STAGES:
        T = sp.Poly(sp.chebyshevt_poly(s, x), x)
        P = T.compose(sp.Poly(w0 + w1 * Z, Z))
        return sp.expand(a + b * P.as_expr())
    import mpmath
    mp = mpmath.MPContext()  # private: the global precision is shared between threads
    mp.dps = 70
    if True:
        W0, W1 = mp.mpf(sp.Rational(w0).p) / sp.Rational(w0).q, mp.mpf(sp.Rational(w1).p) / sp.Rational(w1).q
        A, B = mp.mpf(sp.Rational(a).p) / sp.Rational(a).q, mp.mpf(sp.Rational(b).p) / sp.Rational(b).q
        t_prev, t_cur = [mp.mpf(1)], [W0, W1]
        for _ in range(1, s):
            nxt = [mp.mpf(0)] * (len(t_cur) + 1)
            for i, c in enumerate(t_cur):
                nxt[i] += 2 * W0 * c
                nxt[i + 1] += 2 * W1 * c
            for i, c in enumerate(t_prev):
                nxt[i] -= c
            t_prev, t_cur = t_cur, nxt
        coeffs = [B * c for c in t_cur]
        coeffs[0] += A
        out = []
        for j, c in enumerate(coeffs):
            out.append(sp.Rational(1, sp.factorial(j)) if j <= order else sp.Float(mp.nstr(c, 50), 50))
    return sum(c * Z**j for j, c in enumerate(out))


def _check_stages(s):
    if not isinstance(s, int) or s < 1 or s > limits.MAX_RKC_STAGES:
        raise InputError("stages", f"Runge-Kutta-Chebyshev stage count must be 1..{limits.MAX_RKC_STAGES}, got {s!r}")


@lru_cache(maxsize=None)
def rkc1(s: int, damping=RKC1_DEFAULT_DAMPING) -> Scheme:
    """Return the first-order damped Chebyshev polynomial R(z) = T_s(w0 + w1 z) / T_s(w0).

    w0 = 1 + eps / s^2, w1 = T_s(w0) / T_s'(w0) (van der Houwen & Sommeijer, ZAMM 60, 1980;
    Hundsdorfer & Verwer, Numerical Solution of Time-Dependent Advection-Diffusion-Reaction
    Equations, Springer 2003, section V.1).
    """
    _check_stages(s)
    eps = sp.Rational(damping)
    if eps < 0:
        raise InputError("damping", f"must be >= 0, got {eps}")
    T, x = _chebyshev_T(s)
    w0 = 1 + eps / s**2
    T0 = T.subs(x, w0)
    w1 = T0 / sp.diff(T, x).subs(x, w0)
    P = _shifted_chebyshev(s, 0, 1 / T0, w0, w1, order=1)
    form = ChebyshevForm(s, 0, 1 / T0, w0, w1)
    return from_stability_function(
        P, 1, name=f"rkc{s}" if eps == RKC1_DEFAULT_DAMPING else f"rkc{s}@{eps}",
        label=f"Runge-Kutta-Chebyshev, first order, s = {s}, damping {eps}",
        family="Runge-Kutta-Chebyshev", stages=s, explicit=True, kind="rkc",
        source="van der Houwen & Sommeijer 1980 (damped Chebyshev polynomial)",
        details={"damping": str(eps), "order": 1}, evaluator=form)


@lru_cache(maxsize=None)
def rkc2(s: int, damping=RKC2_DEFAULT_DAMPING) -> Scheme:
    """Return the second-order Chebyshev polynomial R(z) = a_s + b_s T_s(w0 + w1 z).

    b_s = T_s''(w0) / T_s'(w0)^2, a_s = 1 - b_s T_s(w0), w1 = T_s'(w0) / T_s''(w0),
    w0 = 1 + eps / s^2 (Sommeijer, Shampine & Verwer, J. Comput. Appl. Math. 88, 1998).
    """
    _check_stages(s)
    if s < 2:
        raise InputError("stages", "the second-order Chebyshev family needs s >= 2")
    eps = sp.Rational(damping)
    T, x = _chebyshev_T(s)
    w0 = 1 + eps / s**2
    d1 = sp.diff(T, x).subs(x, w0)
    d2 = sp.diff(T, x, 2).subs(x, w0)
    w1 = d1 / d2
    b = d2 / d1**2
    a = 1 - b * T.subs(x, w0)
    P = _shifted_chebyshev(s, a, b, w0, w1, order=2)
    form = ChebyshevForm(s, a, b, w0, w1)
    return from_stability_function(
        P, 1, name=f"rkc2-{s}" if eps == RKC2_DEFAULT_DAMPING else f"rkc2-{s}@{eps}",
        label=f"Runge-Kutta-Chebyshev, second order, s = {s}, damping {eps}",
        family="Runge-Kutta-Chebyshev", stages=s, explicit=True, kind="rkc",
        source="Sommeijer, Shampine & Verwer 1998 (second-order RKC)",
        details={"damping": str(eps), "order": 2}, evaluator=form)
