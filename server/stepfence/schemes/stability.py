"""The one representation every scheme reduces to: the stability polynomial pi(zeta, z).

On the test equation y' = lambda y with z = h lambda, a linear multistep method gives
pi(zeta; z) = rho(zeta) - z sigma(zeta), a Runge-Kutta method gives zeta Q(z) - P(z) with
R = P/Q, and a predictor-corrector pair gives its own polynomial (see predictor_corrector).
Region, root condition and step limits are computed from this object alone.

Conventions follow Hairer & Wanner, Solving Ordinary Differential Equations II, 2nd ed.,
Springer 1996, sections V.1 (multistep) and IV.2-IV.3 (one-step).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
import sympy as sp

ZETA = sp.Symbol("zeta")
Z = sp.Symbol("z")


def exact_coefficient_matrix(expr: sp.Expr) -> list[list[sp.Expr]]:
    """Return P[i][j], the coefficient of zeta^i z^j of a polynomial expression."""
    poly = sp.Poly(sp.expand(expr), ZETA, Z)
    k = poly.degree(ZETA)
    m = poly.degree(Z)
    k = max(k, 0)
    m = max(m, 0)
    mat = [[sp.Integer(0)] * (m + 1) for _ in range(k + 1)]
    for (i, j), c in poly.terms():
        mat[i][j] = sp.nsimplify(c) if c.is_Float else c
    return mat


def _to_complex(c: sp.Expr) -> complex:
    return complex(sp.N(c, 30))


@dataclass(frozen=True, eq=False)
class StabilityPolynomial:
    """pi(zeta, z) = sum_{i,j} coeffs[i][j] zeta^i z^j, exact and in floating point.

    Parameters
    ----------
    exact : tuple of tuples of sympy.Expr, shape (k + 1, m + 1)
        Row i holds the coefficients of zeta^i, column j those of z^j.
    """

    exact: tuple
    numeric: np.ndarray = field(init=False, repr=False)
    evaluator: object = field(default=None, repr=False, compare=False)

    def __post_init__(self):
        rows = [tuple(sp.sympify(c, strict=True) for c in row) for row in self.exact]
        if not rows or not rows[0]:
            raise ValueError("empty stability polynomial")
        width = max(len(r) for r in rows)
        rows = [r + (sp.Integer(0),) * (width - len(r)) for r in rows]
        # strip zero top rows (degree in zeta) and zero right columns (degree in z)
        while len(rows) > 1 and all(c == 0 for c in rows[-1]):
            rows.pop()
        while width > 1 and all(r[-1] == 0 for r in rows):
            rows = [r[:-1] for r in rows]
            width -= 1
        object.__setattr__(self, "exact", tuple(rows))
        num = np.array([[_to_complex(c) for c in r] for r in rows], dtype=complex)
        object.__setattr__(self, "numeric", num)

    @classmethod
    def from_expr(cls, expr: sp.Expr, evaluator=None) -> "StabilityPolynomial":
        """Build from a sympy expression in ZETA and Z.

        evaluator : object, optional
            A numerically stable form of the same polynomial (e.g. a Chebyshev form) with
            ``rows(z) -> (C, dC)``, the zeta-coefficients and their z-derivatives; used for
            every floating-point evaluation instead of the monomial coefficients.
        """
        return cls(tuple(tuple(r) for r in exact_coefficient_matrix(expr)), evaluator=evaluator)

    # --- shape -----------------------------------------------------------------------------
    @property
    def degree_zeta(self) -> int:
        """k: the number of roots zeta for a generic z."""
        return self.numeric.shape[0] - 1

    @property
    def degree_z(self) -> int:
        """m: the degree in z."""
        return self.numeric.shape[1] - 1

    @cached_property
    def is_real(self) -> bool:
        """True when all coefficients are real (region symmetric about the real axis)."""
        return bool(np.all(np.abs(self.numeric.imag) <= 1e-300))

    # --- exact views -----------------------------------------------------------------------
    def expr(self) -> sp.Expr:
        """Return pi as a sympy expression in ZETA and Z."""
        return sp.Add(*[c * ZETA**i * Z**j for i, r in enumerate(self.exact)
                        for j, c in enumerate(r)])

    def zeta_poly_at(self, z0) -> list:
        """Return the exact coefficients (ascending in zeta) of pi(., z0) for exact z0."""
        return [sp.expand(sum(c * z0**j for j, c in enumerate(r))) for r in self.exact]

    def z_poly_rows(self) -> list:
        """Return for each power of z the exact zeta-coefficients (ascending)."""
        return [[self.exact[i][j] for i in range(len(self.exact))]
                for j in range(len(self.exact[0]))]

    # --- numeric evaluation ----------------------------------------------------------------
    def zeta_coefficients(self, z) -> np.ndarray:
        """Return coefficients of pi(., z) ascending in zeta, shape z.shape + (k + 1,)."""
        z = np.asarray(z, dtype=complex)
        if self.evaluator is not None:
            return self.evaluator.rows(z)[0]
        P = self.numeric
        out = np.zeros(z.shape + (P.shape[0],), dtype=complex)
        # Horner in z for every zeta-power at once
        for j in range(P.shape[1] - 1, -1, -1):
            out = out * z[..., None] + P[:, j]
        return out

    def z_coefficients(self, zeta) -> np.ndarray:
        """Return coefficients of pi(zeta, .) ascending in z, shape zeta.shape + (m + 1,)."""
        zeta = np.asarray(zeta, dtype=complex)
        P = self.numeric
        out = np.zeros(zeta.shape + (P.shape[1],), dtype=complex)
        for i in range(P.shape[0] - 1, -1, -1):
            out = out * zeta[..., None] + P[i, :]
        return out

    def evaluate(self, zeta, z):
        """Return pi(zeta, z) and its partial derivatives d/dzeta, d/dz (broadcast)."""
        zeta = np.asarray(zeta, dtype=complex)
        z = np.asarray(z, dtype=complex)
        if self.evaluator is not None:
            zeta, z = np.broadcast_arrays(zeta, z)
            C, dC = self.evaluator.rows(z)
            val = np.zeros(z.shape, dtype=complex)
            dzeta = np.zeros(z.shape, dtype=complex)
            dz = np.zeros(z.shape, dtype=complex)
            for i in range(C.shape[-1] - 1, -1, -1):
                dzeta = dzeta * zeta + val
                val = val * zeta + C[..., i]
                dz = dz * zeta + dC[..., i]
            return val, dzeta, dz
        P = self.numeric
        k, m = P.shape[0] - 1, P.shape[1] - 1
        # q_i(z) = sum_j P[i,j] z^j and derivative, then Horner in zeta
        shape = np.broadcast(zeta, z).shape
        val = np.zeros(shape, dtype=complex)
        dzeta = np.zeros(shape, dtype=complex)
        dz = np.zeros(shape, dtype=complex)
        for i in range(k, -1, -1):
            qi = np.zeros(z.shape, dtype=complex)
            dqi = np.zeros(z.shape, dtype=complex)
            for j in range(m, -1, -1):
                dqi = dqi * z + qi
                qi = qi * z + P[i, j]
            dzeta = dzeta * zeta + val
            val = val * zeta + qi
            dz = dz * zeta + dqi
        return val, dzeta, dz

    def residual_scale(self, zabs) -> np.ndarray:
        """Return the size of the terms of pi at |z| = zabs (to judge a residual)."""
        zabs = np.asarray(zabs, dtype=float)
        if self.evaluator is not None:
            # a stable form is evaluated near |zeta| = 1, |P| ~ 1: no cancellation to allow for
            return np.full(zabs.shape, 4.0)
        P = np.abs(self.numeric).sum(axis=0)
        out = np.zeros(zabs.shape)
        for j in range(P.size - 1, -1, -1):
            out = out * zabs + P[j]
        return out

    def roots_at(self, z0: complex) -> np.ndarray:
        """Return the roots zeta of pi(., z0) (fewer than k when the leading term vanishes)."""
        c = self.zeta_coefficients(np.asarray(z0))
        return polynomial_roots(c)

    def max_root_modulus(self, z) -> np.ndarray:
        """Return max |zeta| over the roots of pi(., z) for an array of z (inf at a pole)."""
        z = np.atleast_1d(np.asarray(z, dtype=complex))
        coeffs = self.zeta_coefficients(z)
        return batched_max_root_modulus(coeffs)


def polynomial_roots(c_ascending) -> np.ndarray:
    """Return the roots of sum c_i x^i; leading zeros drop the degree (roots at infinity)."""
    c = np.asarray(c_ascending, dtype=complex)
    scale = np.max(np.abs(c)) if c.size else 0.0
    if scale == 0:
        return np.array([], dtype=complex)
    nz = np.nonzero(np.abs(c) > 1e-14 * scale)[0]
    top = nz[-1]
    c = c[: top + 1]
    if top == 0:
        return np.array([], dtype=complex)
    return np.roots(c[::-1])


def batched_max_root_modulus(coeffs: np.ndarray) -> np.ndarray:
    """Return max root modulus for each row of ascending coefficients, shape (N, k+1).

    A leading coefficient that vanishes (relative 1e-14) means a root at infinity: inf.
    """
    coeffs = np.asarray(coeffs, dtype=complex)
    n, kp1 = coeffs.shape
    k = kp1 - 1
    if k == 0:
        return np.zeros(n)
    lead = coeffs[:, -1]
    scale = np.max(np.abs(coeffs), axis=1)
    out = np.full(n, np.inf)
    ok = np.abs(lead) > 1e-14 * scale
    if not np.any(ok):
        return out
    c = coeffs[ok] / lead[ok, None]
    if k == 1:
        out[ok] = np.abs(c[:, 0])
        return out
    comp = np.zeros((c.shape[0], k, k), dtype=complex)
    comp[:, 0, :] = -c[:, :-1][:, ::-1]
    idx = np.arange(k - 1)
    comp[:, idx + 1, idx] = 1.0
    ev = np.linalg.eigvals(comp)
    out[ok] = np.max(np.abs(ev), axis=1)
    return out
