"""Order and error constants, exactly.

Multistep: C_q = sum j^q alpha_j / q! - sum j^(q-1) beta_j / (q-1)! (Hairer, Norsett & Wanner,
Solving ODEs I, 2nd ed., section III.2; Lambert 1991, section 3.5). The order p is the largest
q with C_0 = ... = C_p = 0; reported are C_{p+1} with alpha_k = 1 and C_{p+1} / sigma(1).

One-step: the linear order p and constant C of R(z) - e^z = C z^{p+1} + O(z^{p+2}); for a
Butcher tableau also the order from the rooted-tree conditions (analysis.rk_order).

Predictor-corrector pairs: the linear order from pi(e^z, z) = c z^{p+1} + ..., whose principal
root then satisfies zeta(z) - e^z = -c z^{p+1} / pi_zeta(1, 0) + ...; for general ODEs the pair
has order min(p_C, p_P + m) (Lambert 1991, section 4.2).
"""
from __future__ import annotations

from dataclasses import dataclass, field

import sympy as sp

from ..schemes.base import Scheme
from ..schemes.stability import Z

MAX_ORDER_SEARCH = 40


@dataclass(frozen=True)
class Accuracy:
    """Order and error constants of a scheme (exact sympy values, with labels)."""

    order: int
    consistent: bool
    error_constant: sp.Expr | None           # C_{p+1} with alpha_k = 1 (multistep) / C of R - e^z
    error_constant_normalised: sp.Expr | None  # C_{p+1} / sigma(1), the error of the principal root
    convention: str
    linear_order: int | None = None
    tree_order: int | None = None
    general_order: int | None = None
    notes: tuple = field(default_factory=tuple)


def multistep_constants(alpha, beta, qmax=MAX_ORDER_SEARCH):
    """Return [C_0, C_1, ..., C_qmax] exactly for ascending alpha, beta."""
    out = []
    for q in range(qmax + 1):
        a = sum(sp.Integer(j)**q * aj for j, aj in enumerate(alpha)) / sp.factorial(q)
        if q == 0:
            b = 0
        else:
            b = sum((sp.Integer(j)**(q - 1) if (j, q - 1) != (0, 0) else 1) * bj
                    for j, bj in enumerate(beta)) / sp.factorial(q - 1)
        out.append(_exact(sp.simplify(a - b)))
    return out


def _exact(x):
    # hardening fix: nsimplify only what holds floats; on an exact irrational it may return a
    # nearby but different number (see schemes.multistep.multistep)
    return sp.nsimplify(x) if x.has(sp.Float) else x


def multistep_accuracy(alpha, beta) -> Accuracy:
    """Return order and error constants of a multistep method from ascending alpha, beta."""
    C = multistep_constants(alpha, beta)
    p = -1
    for q, c in enumerate(C):
        if c != 0:
            break
        p = q
    p = max(p, 0)  # C_0 != 0 means not even consistent of order 0; report 0
    consistent = C[0] == 0 and C[1] == 0
    if C[0] != 0:
        return Accuracy(order=0, consistent=False, error_constant=C[0],
                        error_constant_normalised=None,
                        convention="C_0 = rho(1) != 0: not consistent", linear_order=0)
    cp1 = C[p + 1] if p + 1 < len(C) else sp.Integer(0)
    s1 = sum(beta)
    norm = _exact(sp.radsimp(cp1 / s1)) if s1 != 0 else None
    return Accuracy(order=p, consistent=bool(consistent), error_constant=cp1,
                    error_constant_normalised=norm,
                    convention="C_{p+1} with alpha_k = 1; normalised: C_{p+1}/sigma(1)",
                    linear_order=p)


def _is_zero(c) -> bool:
    """Exact zero test for rational or algebraic (sqrt) numbers.

    Rationals are compared exactly; an algebraic number is expanded and, when sympy cannot
    decide, evaluated at 60 digits and taken as zero below 1e-45 (its size otherwise).
    """
    c = sp.expand(c)
    if c.is_Rational or c.is_Float:
        return c == 0
    z = c.equals(0) if len(c.atoms(sp.Pow)) < 6 else None
    if z is not None:
        return bool(z)
    return abs(sp.N(c, 60)) < sp.Float("1e-45")


def _series_coefficients(num, den, n):
    """Return the first n power-series coefficients of num/den (ascending lists, den[0] != 0)."""
    out = []
    for q in range(n):
        acc = num[q] if q < len(num) else 0
        for j in range(1, min(q, len(den) - 1) + 1):
            acc -= den[j] * out[q - j]
        out.append(sp.expand(acc / den[0]))
    return out


def _poly_coeffs(expr):
    poly = sp.Poly(sp.expand(expr), Z)
    return list(reversed(poly.all_coeffs()))


def _tidy(c):
    c = sp.expand(c)
    if c.atoms(sp.Float):
        return sp.Float(c, 30)  # rounded input (e.g. RKC above 20 stages): stay a decimal
    return sp.radsimp(c)


def stability_function_accuracy(P, Q, max_order=MAX_ORDER_SEARCH):
    """Return (p, C) with R(z) - e^z = C z^{p+1} + O(z^{p+2}), R = P/Q, exactly."""
    num, den = _poly_coeffs(P), _poly_coeffs(Q)
    coeffs = _series_coefficients(num, den, max_order + 2)
    for q, c in enumerate(coeffs):
        d = c - sp.Rational(1, sp.factorial(q))
        if not _is_zero(d):
            return q - 1, _tidy(d)
    return max_order, sp.Integer(0)


def pi_accuracy(scheme: Scheme, max_order=MAX_ORDER_SEARCH):
    """Return (p, c, c_root) from pi(e^z, z) = c z^{p+1} + ...; c_root is the principal-root error."""
    P = scheme.pi.exact
    # coefficient of z^q in sum_ij P_ij e^{i z} z^j is sum_ij P_ij i^(q-j) / (q-j)!
    dzeta = sum(i * P[i][0] for i in range(len(P)))
    for q in range(max_order + 2):
        c = sum(P[i][j] * sp.Integer(i) ** (q - j) / sp.factorial(q - j)
                for i in range(len(P)) for j in range(len(P[i])) if j <= q)
        if not _is_zero(c):
            c = _tidy(c)
            c_root = _tidy(-c / dzeta) if dzeta != 0 else None
            return q - 1, c, c_root
    return max_order, sp.Integer(0), sp.Integer(0)


def accuracy(scheme: Scheme) -> Accuracy:
    """Return the Accuracy of any scheme, by its family."""
    if scheme.kind == "multistep":
        return multistep_accuracy(scheme.rho, scheme.sigma)
    if scheme.kind in ("runge-kutta", "stability-function"):
        P, Q = scheme.stability_function
        p, C = stability_function_accuracy(P, Q)
        tree = None
        notes = []
        if scheme.tableau is not None:
            try:
                from .rk_order import order_conditions
                tree = order_conditions(scheme.tableau)["order"]
            except ImportError:  # pragma: no cover - module lands separately
                tree = None
            if tree is not None and tree < p:
                notes.append(f"linear order {p} exceeds the order {tree} for general ODEs")
        order = tree if tree is not None else p
        return Accuracy(order=order, consistent=p >= 1, error_constant=C,
                        error_constant_normalised=C,
                        convention="C of R(z) - e^z = C z^{p+1} + ... (linear test equation)",
                        linear_order=p, tree_order=tree, notes=tuple(notes))
    # predictor-corrector
    p, c, c_root = pi_accuracy(scheme)
    notes = []
    general = None
    if len(scheme.parts) == 2:
        pred, corr = scheme.parts
        pp = multistep_accuracy(pred.rho, pred.sigma).order
        pc = multistep_accuracy(corr.rho, corr.sigma).order
        general = min(pc, pp + int(scheme.details.get("m", 1)))
        notes.append(f"predictor order {pp}, corrector order {pc}: order min(p_C, p_P + m) = {general}")
    return Accuracy(order=general if general is not None else p, consistent=p >= 1,
                    error_constant=c, error_constant_normalised=c_root,
                    convention="c of pi(e^z, z) = c z^{p+1} + ...; normalised: principal root "
                               "error zeta(z) - e^z = C z^{p+1} + ...",
                    linear_order=p, general_order=general, notes=tuple(notes))
