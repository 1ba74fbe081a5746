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
from ..schemes.stability import ZETA, Z

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
        out.append(sp.nsimplify(sp.simplify(a - b)))
    return out


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
    norm = sp.nsimplify(cp1 / s1) if s1 != 0 else None
    return Accuracy(order=p, consistent=bool(consistent), error_constant=cp1,
                    error_constant_normalised=norm,
                    convention="C_{p+1} with alpha_k = 1; normalised: C_{p+1}/sigma(1)",
                    linear_order=p)


def stability_function_accuracy(P, Q, max_order=MAX_ORDER_SEARCH):
    """Return (p, C) with R(z) - e^z = C z^{p+1} + O(z^{p+2}), R = P/Q, exactly."""
    R = P / Q
    n = max_order + 2
    series = sp.series(R - sp.exp(Z), Z, 0, n).removeO()
    poly = sp.Poly(sp.expand(series), Z)
    coeffs = {m[0]: c for m, c in zip(poly.monoms(), poly.coeffs())}
    for q in range(n):
        c = sp.nsimplify(sp.simplify(coeffs.get(q, 0)))
        if c != 0:
            return q - 1, c
    return max_order, sp.Integer(0)


def pi_accuracy(scheme: Scheme, max_order=MAX_ORDER_SEARCH):
    """Return (p, c, c_root) from pi(e^z, z) = c z^{p+1} + ...; c_root is the principal-root error."""
    expr = scheme.pi.expr()
    e = sp.series(expr.subs(ZETA, sp.exp(Z)), Z, 0, max_order + 2).removeO()
    poly = sp.Poly(sp.expand(e), Z)
    coeffs = {m[0]: c for m, c in zip(poly.monoms(), poly.coeffs())}
    dzeta = sp.diff(expr, ZETA).subs({ZETA: 1, Z: 0})
    for q in range(max_order + 2):
        c = sp.nsimplify(sp.simplify(coeffs.get(q, 0)))
        if c != 0:
            p = q - 1
            c_root = sp.nsimplify(-c / dzeta) if dzeta != 0 else None
            return p, c, c_root
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
