"""Predictor-corrector pairs in P(EC)^m E and P(EC)^m modes, with their own pi(zeta, z).

The stability polynomial is derived here from the algorithm itself applied to y' = lambda y
(the approach of Lambert, Numerical Methods for Ordinary Differential Systems, Wiley 1991,
section 4.3): the predicted and corrected values are eliminated symbolically, which gives a
polynomial that is neither the predictor's nor the corrector's.
"""
from __future__ import annotations

import sympy as sp

from .. import limits
from ..errors import InputError
from .base import Scheme
from .stability import StabilityPolynomial, ZETA, Z

MODES = ("PECE", "PEC")  # P(EC)^m E and P(EC)^m


def _padded(coeffs, k):
    coeffs = list(coeffs)
    return [sp.Integer(0)] * (k + 1 - len(coeffs)) + coeffs


def _poly(coeffs):
    return sum(c * ZETA**j for j, c in enumerate(coeffs))


def pc_stability_expr(predictor: Scheme, corrector: Scheme, m: int, final_evaluation: bool):
    """Return pi(zeta, z) of the pair as a sympy expression (before normalisation).

    Derivation (alpha_k = 1 for both; past values u_{n+j}, j < k, and F_{n+j} = h f_{n+j}):
      u^[0] = A* U + S* F,   u^[nu+1] = A U + S F + q u^[nu],   q = z beta_k,
    with A = zeta^k - rho, S = sigma - beta_k zeta^k, A* = zeta^k - rho*, S* = sigma*, and the
    ansatz u_n = U zeta^n, F_n = Phi zeta^n. With a final evaluation F = z u, so Phi = z U;
    without it F_{n+k} = z u^[m-1].
    """
    k = max(predictor.steps, corrector.steps)
    a_p = _padded(predictor.rho, k)
    b_p = _padded(predictor.sigma, k)
    a_c = _padded(corrector.rho, k)
    b_c = _padded(corrector.sigma, k)
    beta_k = b_c[-1]
    q = Z * beta_k
    A = ZETA**k - _poly(a_c)
    Sc = _poly(b_c) - beta_k * ZETA**k
    As = ZETA**k - _poly(a_p)
    Ss = _poly(b_p)
    U, Phi = sp.symbols("U Phi")

    def corrected(nu):
        # u^[nu] after nu corrections, as a linear form in (U, Phi)
        g = sum(q**i for i in range(nu))
        return (A * U + Sc * Phi) * g + q**nu * (As * U + Ss * Phi)

    if final_evaluation:
        expr = ZETA**k - corrected(m).subs(Phi, Z).subs(U, 1)
    else:
        e1 = sp.expand(corrected(m) - ZETA**k * U)
        e2 = sp.expand(Z * corrected(m - 1) - ZETA**k * Phi)
        M = sp.Matrix([[e1.coeff(U), e1.coeff(Phi)], [e2.coeff(U), e2.coeff(Phi)]])
        expr = M.det()
    expr = sp.expand(expr)
    # remove factors zeta^j common to every term: zero roots, harmless and only clutter
    poly = sp.Poly(expr, ZETA, Z)
    low = min(mon[0] for mon in poly.monoms())
    expr = sp.expand(expr / ZETA**low)
    return expr


def predictor_corrector(predictor: Scheme, corrector: Scheme, m: int = 1,
                        mode: str = "PECE", name: str | None = None) -> Scheme:
    """Return the Scheme of the pair run as P(EC)^m E (mode PECE) or P(EC)^m (mode PEC)."""
    if predictor.kind != "multistep" or corrector.kind != "multistep":
        raise InputError("predictor", "predictor and corrector must both be linear multistep methods")
    if not predictor.explicit:
        raise InputError("predictor", f"{predictor.name} is implicit; a predictor must be explicit")
    if corrector.explicit:
        raise InputError("corrector", f"{corrector.name} is explicit; a corrector must be implicit")
    if not isinstance(m, int) or m < 1 or m > limits.MAX_CORRECTIONS:
        raise InputError("corrections", f"m must be an integer from 1 to {limits.MAX_CORRECTIONS}, got {m!r}")
    mode = mode.upper()
    if mode not in MODES:
        raise InputError("mode", f"must be one of {MODES}, got {mode!r}")
    final = mode == "PECE"
    expr = pc_stability_expr(predictor, corrector, m, final)
    pi = StabilityPolynomial.from_expr(expr)
    mode_text = ("P(EC)" + (f"^{m}" if m > 1 else "") + ("E" if final else ""))
    evals = m + 1 if final else m
    auto = f"{predictor.name}-{corrector.name}-" + ("pe" + "ce" * m if final else "p" + "ec" * m)
    return Scheme(
        name=name or auto,
        label=f"{predictor.label} predicting, {corrector.label} correcting, {mode_text}",
        kind="predictor-corrector", pi=pi, steps=max(predictor.steps, corrector.steps),
        stages=evals, explicit=True, evaluations_per_step=evals, family="predictor-corrector",
        rho=None, sigma=None,
        details={"predictor": predictor.name, "corrector": corrector.name, "m": m,
                 "mode": mode_text, "predictor_rho": predictor.rho_text(),
                 "predictor_sigma": predictor.sigma_text(), "corrector_rho": corrector.rho_text(),
                 "corrector_sigma": corrector.sigma_text()},
        source="stability polynomial derived symbolically from the P(EC)^m[E] algorithm",
        parts=(predictor, corrector),
    )
