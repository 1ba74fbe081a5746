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
from .errors import InputError
from .schemes import multistep as ms
from .schemes import one_step
from .schemes.base import Scheme
from .schemes.catalogue import get_scheme
from .schemes.predictor_corrector import predictor_corrector
from .schemes.stability import Z

POLY_ALIASES = ("z", "x", "w", "ζ", "xi")


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
        return ms.multistep(list(rho) + [0] * (n - len(rho)), list(sigma) + [0] * (n - len(sigma)),
                            label="custom multistep (rho, sigma)")
    if "alpha" in keys or "beta" in keys:
        if "alpha" not in keys or "beta" not in keys:
            missing = "alpha" if "alpha" not in keys else "beta"
            raise InputError(missing, "is empty; a multistep method needs alpha and beta")
        alpha = _numbers(spec["alpha"], "alpha")
        beta = _numbers(spec["beta"], "beta")
        return ms.multistep(alpha, beta, label="custom multistep (alpha, beta)")
    if "tableau" in keys:
        from .schemes.butcher import ButcherTableau
        tab = ButcherTableau.from_json(spec["tableau"], field="tableau")
        return one_step.from_tableau(tab, name="custom", label="custom Runge-Kutta tableau")
    if "stability" in keys:
        num, den = polytext.parse_rational_function(str(spec["stability"]), "stability", "z")
        P = sum(c * Z**i for i, c in enumerate(num))
        Q = sum(c * Z**i for i, c in enumerate(den))
        stages = spec.get("stages")
        if stages is not None:
            if not isinstance(stages, int) or isinstance(stages, bool) or stages < 1 or stages > 64:
                raise InputError("stages", "must be an integer from 1 to 64")
        return one_step.from_stability_function(P, Q, stages=stages)
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
        return predictor_corrector(pred, corr, m, mode)
    raise InputError(field, "gives no scheme: use a catalogue name, rho/sigma, alpha/beta, "
                            "a tableau, a stability function or a predictor/corrector pair")
