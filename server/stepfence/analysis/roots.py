"""Root condition (zero-stability) of pi(., 0), decided exactly.

Multiplicities come from an exact square-free factorisation over the rationals (or the
algebraic field of the coefficients); each square-free factor is then solved with mpmath at
50 digits, so "on the unit circle" is decided far below any floating-point doubt
(Hairer, Norsett & Wanner, Solving ODEs I, 2nd ed., section III.3, Definition 3.2).
"""
from __future__ import annotations

from dataclasses import dataclass

import mpmath
import sympy as sp

from ..errors import InputError
from ..schemes.base import Scheme
from ..schemes.stability import ZETA

DIGITS = 50
ON_CIRCLE_TOL = mpmath.mpf(10) ** (-35)


def _context():
    # a private context per call: mpmath.workdps changes the global precision, which races
    # between server threads (seen as NoConvergence in concurrent requests)
    ctx = mpmath.MPContext()
    ctx.dps = DIGITS
    return ctx


@dataclass(frozen=True)
class Root:
    value: complex
    multiplicity: int
    modulus: float
    on_circle: bool
    outside: bool


@dataclass(frozen=True)
class RootCondition:
    """Roots of rho (pi at z = 0) and the verdict."""

    roots: tuple
    zero_stable: bool
    strongly_stable: bool
    verdict: str
    offending: tuple  # roots violating the root condition

    @property
    def weakly_stable(self) -> bool:
        return self.zero_stable and not self.strongly_stable


def exact_roots(coeffs_ascending) -> list[Root]:
    """Return the roots of sum c_i zeta^i with exact multiplicities."""
    expr = sum(sp.sympify(c, strict=True) * ZETA**i for i, c in enumerate(coeffs_ascending))
    poly = sp.Poly(sp.expand(expr), ZETA, extension=True) if expr.free_symbols else None
    if poly is None or poly.degree() < 1:
        return []
    _, factors = poly.sqf_list()
    out = []
    mp = _context()
    for fac, mult in factors:
        cs = [mp.mpmathify(sp.N(c, DIGITS + 10)) for c in fac.all_coeffs()]
        if fac.degree() == 1:
            rts = [-cs[1] / cs[0]]
        else:
            rts = _polyroots(mp, cs)
        for r in rts:
            mod = abs(r)
            on = abs(mod - 1) < ON_CIRCLE_TOL
            out.append(Root(value=complex(r), multiplicity=int(mult), modulus=float(mod),
                            on_circle=bool(on), outside=bool(mod > 1 and not on)))
    out.sort(key=lambda r: (-r.modulus, r.value.real, r.value.imag))
    return out


def _polyroots(mp, cs):
    """mpmath's polyroots, retried with more steps and precision before giving up.

    hardening fix: rho = -1e-99 zeta^2 + 3 zeta + 1 (roots -1/3 and 3e99) did not converge
    in 400 steps at the default extra precision (found by fuzzing; a 500 through the API).
    """
    spread = max(abs(mp.log10(abs(c))) for c in cs if c != 0)
    for steps, extra in ((400, 4 * DIGITS), (4000, 4 * DIGITS + 8 * int(spread) + 50)):
        try:
            return mp.polyroots(cs, maxsteps=steps, extraprec=extra)
        except mp.NoConvergence:
            continue
    raise InputError("rho", "its roots could not be resolved to the working precision (the "
                            "coefficients span too many orders of magnitude)")


def root_condition(scheme: Scheme) -> RootCondition:
    """Return the root condition of the scheme (roots of pi(zeta, 0), i.e. rho)."""
    rho0 = [row[0] for row in scheme.pi.exact]
    roots = exact_roots(rho0)
    offending = tuple(r for r in roots if r.outside or (r.on_circle and r.multiplicity > 1))
    zero_stable = not offending
    on_circle = [r for r in roots if r.on_circle]
    strongly = zero_stable and all(abs(r.value - 1) < 1e-12 for r in on_circle) and \
        sum(r.multiplicity for r in on_circle) <= 1
    if not zero_stable:
        parts = []
        for r in offending:
            if r.outside:
                parts.append(f"root {_fmt(r.value)} has modulus {r.modulus:.6g} > 1")
            else:
                parts.append(f"root {_fmt(r.value)} on the unit circle has multiplicity {r.multiplicity}")
        verdict = "not zero-stable: " + "; ".join(parts)
    elif strongly:
        verdict = ("zero-stable, strongly stable (zeta = 1 is the only root on the unit circle)"
                   if on_circle else
                   "zero-stable: every root of rho lies inside the unit circle (zeta = 1 is not "
                   "a root: rho(1) != 0, so the method is not consistent)")
    else:
        others = [r for r in on_circle if abs(r.value - 1) >= 1e-12]
        verdict = ("zero-stable, weakly stable: further simple roots on the unit circle at "
                   + ", ".join(_fmt(r.value) for r in others))
    return RootCondition(roots=tuple(roots), zero_stable=zero_stable, strongly_stable=bool(strongly),
                         verdict=verdict, offending=offending)


def _fmt(c: complex) -> str:
    if abs(c.imag) < 1e-14:
        return f"{c.real:.12g}"
    return f"{c.real:.12g}{c.imag:+.12g}i"
