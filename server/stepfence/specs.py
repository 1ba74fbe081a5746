"""Scheme specifications: the one place user-facing scheme input becomes a Scheme.

A spec is a plain dict (JSON from the page, arguments from the CLI):
  {"name": "bdf4"}
  {"rho": "z^2 - z", "sigma": "3/2 z - 1/2"}            (any one variable: z, zeta, x, w)
  {"alpha": "-1, 1", "beta": "1/2, 1/2"}                (or JSON lists of numbers/strings)
  {"tableau": {"A": [[...]], "b": [...], "c": [...]}}
  {"stability": "(1 + z/2)/(1 - z/2)", "stages": 1}
  {"predictor": {...spec...}, "corrector": {...spec...}, "m": 1, "mode": "PECE"}
"""
from __future__ import annotations

from typing import Any

import sympy as sp

from . import polytext
from .errors import InputError, LimitExceeded
from .schemes import multistep as ms
from .schemes import one_step
from .schemes.base import Scheme
from .schemes.catalogue import get_scheme
from .schemes.predictor_corrector import predictor_corrector
from .schemes.stability import Z

POLY_ALIASES = ("z", "x", "w", "ζ", "xi")
# Hardening bound: the exact coefficients of one scheme live in QQ(sqrt(q1), sqrt(q2), ...),
# a field of degree 2^r, and exact algebra there grows fast with r: with r = 6 a 1-stage
# tableau or a 2-step sigma ran for minutes; with r = 2 the worst case allowed (16 dense stages)
# takes about 21 s on a 2-core machine. Every scheme of the catalogue needs r <= 1.
MAX_SQRT_RANK = 2


def _square_roots(values) -> set:
    """Return the radicands q of the square roots sqrt(q) in exact values (sympy keeps q
    square-free: sqrt(8) is 2*sqrt(2))."""
    return {p.base for v in values for p in sp.sympify(v, strict=True).atoms(sp.Pow)
            if p.exp.is_Rational and p.exp.q == 2}


def _sqrt_rank(radicands) -> int:
    """Return r, with 2^r the degree of QQ(sqrt(q) for q in radicands) (q square-free > 0).

    sqrt(6) lies in QQ(sqrt(2), sqrt(3)): r is the rank over GF(2) of the prime sets of q.
    """
    primes: dict = {}
    basis: list[int] = []
    for q in radicands:
        mask = 0
        for prime in sp.factorint(abs(sp.Integer(q))):
            mask |= 1 << primes.setdefault(prime, len(primes))
        if sp.Integer(q) < 0:
            mask |= 1 << primes.setdefault(-1, len(primes))
        for b in basis:
            mask = min(mask, mask ^ b)
        if mask:
            basis.append(mask)
    return len(basis)


def _bounded_radicals(values, field: str) -> None:
    """Refuse exact coefficients whose square roots span more than MAX_SQRT_RANK of them."""
    roots = _square_roots(values)
    if len(roots) > MAX_SQRT_RANK and _sqrt_rank(roots) > MAX_SQRT_RANK:
        shown = ", ".join(f"sqrt({q})" for q in sorted(roots, key=str)[:6])
        raise LimitExceeded(field, f"uses {len(roots)} independent square roots ({shown}); at "
                                   f"most {MAX_SQRT_RANK} per scheme (this bound keeps the exact "
                                   "analysis to seconds)")


# Hardening bound: the nonzero coefficients of a typed-in scheme's pi(zeta, z) may span at most
# this ratio in magnitude. The floating-point stages (ray resultants, raster, locus) square
# and multiply coefficients; rho = zeta + 1e300 overflowed them into an SVD failure (found by
# fuzzing). The Taylor polynomial of degree 64 spans 64! ~ 1.3e89 and passes; no published
# method comes near. Catalogue schemes are not checked (RKC's monomial form spans more, and
# it is evaluated in Chebyshev form).
MAX_COEFFICIENT_RANGE = 1e100


def _refuse_wide(mags, field: str) -> None:
    """Raise LimitExceeded on field when the magnitudes (nonzero) span more than the bound."""
    import numpy as np
    mags = np.asarray(mags, dtype=float)
    if mags.size and (not np.all(np.isfinite(mags))
                      or mags.max() > MAX_COEFFICIENT_RANGE * mags.min()):
        raise LimitExceeded(field, f"has coefficients from {mags.min():.3g} to {mags.max():.3g} "
                                   f"in magnitude; their ratio may be at most "
                                   f"{MAX_COEFFICIENT_RANGE:.0e} (rescale h instead)")


def _bounded_values(groups: dict) -> None:
    """Refuse typed coefficients ({field: values}) spanning more than MAX_COEFFICIENT_RANGE,
    before any exact algebra: sympy's field arithmetic with sqrt(2) beside 1e300 failed inside
    (found by fuzzing). The field named is the one holding the coefficient farther from 1 in
    magnitude."""
    import math
    mags = {f: [m for m in (abs(complex(sp.N(v, 20))) for v in values) if m != 0]
            for f, values in groups.items()}
    every = [m for ms in mags.values() for m in ms]
    if not every:
        return
    big, small = max(every), min(every)
    target = big if math.log(big) >= -math.log(small) else small
    _refuse_wide(every, next(f for f, ms in mags.items() if target in ms))


def _bounded_range(scheme: Scheme, field: str) -> Scheme:
    """Refuse a built scheme whose pi(zeta, z) coefficients span more than the bound (for a
    tableau or R(z) they are products and quotients of what was typed)."""
    import numpy as np
    grid = np.abs(np.asarray(scheme.pi.numeric, dtype=complex))
    _refuse_wide(grid[grid > 0], field)
    return scheme


def _renamed_multistep(alpha, beta, label):
    # the multistep builder names its own fields (alpha, beta); a user who typed rho and sigma
    # must see those names (a 13-step rho was reported as "alpha: has 13 steps")
    try:
        return ms.multistep(alpha, beta, label=label)
    except InputError as e:
        name = {"alpha": "rho", "beta": "sigma"}.get(e.field, e.field)
        raise type(e)(name, e.message, position=e.position, expected=e.expected, line=e.line,
                      column=e.column) from None


def _numbers(value, field) -> list:
    if isinstance(value, str):
        return list(polytext.parse_numbers(value, field))
    if isinstance(value, (list, tuple)):
        out = []
        for i, v in enumerate(value):
            if isinstance(v, bool):
                raise InputError(field, f"entry {i + 1} is a boolean, not a number")
            if isinstance(v, int):
                out.append(sp.Integer(v))
            elif isinstance(v, float):
                out.append(polytext.parse_number(repr(v), f"{field}[{i}]"))
            elif isinstance(v, str):
                out.append(polytext.parse_number(v, f"{field}[{i}]"))
            else:
                raise InputError(field, f"entry {i + 1} is not a number or text")
        return out
    raise InputError(field, "must be a list of numbers or text such as '1, -4/3, 1/3'")


def scheme_from_spec(spec: Any, field: str = "scheme") -> Scheme:
    """Return the Scheme a spec describes; InputError naming the field on bad input."""
    if isinstance(spec, str):
        return get_scheme(spec)
    if not isinstance(spec, dict):
        raise InputError(field, "must be a catalogue name or an object describing the scheme")
    keys = {k for k, v in spec.items() if v not in (None, "")}
    if "name" in keys and not (keys & {"rho", "alpha", "tableau", "stability", "predictor"}):
        return get_scheme(str(spec["name"]))
    if "rho" in keys or "sigma" in keys:
        if "rho" not in keys or "sigma" not in keys:
            missing = "rho" if "rho" not in keys else "sigma"
            raise InputError(missing, "is empty; a multistep method needs both rho and sigma")
        rho = polytext.parse_polynomial(str(spec["rho"]), "rho", "zeta", aliases=POLY_ALIASES)
        sigma = polytext.parse_polynomial(str(spec["sigma"]), "sigma", "zeta", aliases=POLY_ALIASES)
        n = max(len(rho), len(sigma))
        if len(sigma) > len(rho):
            raise InputError("sigma", f"has degree {len(sigma) - 1} above rho's degree {len(rho) - 1}",
                             expected="deg sigma <= deg rho")
        _bounded_values({"rho": rho, "sigma": sigma})
        _bounded_radicals(list(rho) + list(sigma),
                          "rho" if _sqrt_rank(_square_roots(rho)) > MAX_SQRT_RANK else "sigma")
        # rho and sigma are the columns of pi: the check above covers the built scheme
        return _renamed_multistep(list(rho) + [0] * (n - len(rho)),
                                  list(sigma) + [0] * (n - len(sigma)),
                                  "custom multistep (rho, sigma)")
    if "alpha" in keys or "beta" in keys:
        if "alpha" not in keys or "beta" not in keys:
            missing = "alpha" if "alpha" not in keys else "beta"
            raise InputError(missing, "is empty; a multistep method needs alpha and beta")
        alpha = _numbers(spec["alpha"], "alpha")
        beta = _numbers(spec["beta"], "beta")
        _bounded_values({"alpha": alpha, "beta": beta})
        _bounded_radicals(list(alpha) + list(beta), "beta")
        return ms.multistep(alpha, beta, label="custom multistep (alpha, beta)")
    if "tableau" in keys:
        from .schemes.butcher import ButcherTableau
        tab = ButcherTableau.from_json(spec["tableau"], field="tableau")
        entries = list(tab.A) + list(tab.b) + list(tab.c) + list(tab.b_embedded or ())
        _bounded_values({"tableau": entries})
        _bounded_radicals(entries, "tableau")
        return _bounded_range(one_step.from_tableau(tab, name="custom",
                                                    label="custom Runge-Kutta tableau"), "tableau")
    if "stability" in keys:
        num, den = polytext.parse_rational_function(str(spec["stability"]), "stability", "z")
        _bounded_values({"stability": list(num) + list(den)})
        _bounded_radicals(list(num) + list(den), "stability")
        P = sum(c * Z**i for i, c in enumerate(num))
        Q = sum(c * Z**i for i, c in enumerate(den))
        stages = spec.get("stages")
        if stages is not None:
            if not isinstance(stages, int) or isinstance(stages, bool) or stages < 1 or stages > 64:
                raise InputError("stages", "must be an integer from 1 to 64")
        return _bounded_range(one_step.from_stability_function(P, Q, stages=stages), "stability")
    if "predictor" in keys or "corrector" in keys:
        if "predictor" not in keys or "corrector" not in keys:
            raise InputError("predictor" if "predictor" not in keys else "corrector",
                             "a predictor-corrector pair needs both methods")
        pred = scheme_from_spec(spec["predictor"], "predictor")
        corr = scheme_from_spec(spec["corrector"], "corrector")
        m = spec.get("m", 1)
        if isinstance(m, str) and m.strip().isdigit():
            m = int(m)
        mode = str(spec.get("mode", "PECE"))
        _bounded_radicals([c for row in pred.pi.exact + corr.pi.exact for c in row], field)
        return predictor_corrector(pred, corr, m, mode)
    raise InputError(field, "gives no scheme: use a catalogue name, rho/sigma, alpha/beta, "
                            "a tableau, a stability function or a predictor/corrector pair")
