"""What a scheme is, whatever its family: a name, its stability polynomial and its costs."""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import sympy as sp

from .stability import StabilityPolynomial

KINDS = ("multistep", "runge-kutta", "stability-function", "predictor-corrector")


@dataclass(frozen=True, eq=False)
class Scheme:
    """A time-stepping scheme reduced to what stability analysis needs.

    Attributes
    ----------
    name : str
        Catalogue name (``bdf4``) or ``custom``.
    label : str
        Human name (``BDF4``, ``Classical Runge-Kutta (RK4)``).
    kind : str
        One of KINDS.
    pi : StabilityPolynomial
        pi(zeta, z); see stepfence.schemes.stability.
    steps : int
        k, the number of past values used (1 for one-step methods).
    stages : int
        Runge-Kutta stages; 1 for multistep; m + 1 (or m) evaluations for P(EC)^m pairs.
    explicit : bool
    evaluations_per_step : int
        Right-hand-side evaluations per step (FSAL counted once); for implicit schemes the
        solves are extra and not counted.
    family : str
        Catalogue group shown on the page (``Adams-Bashforth``, ``BDF``, ``explicit RK``...).
    rho, sigma : tuple of sympy.Rational or None
        Multistep generating polynomials, ascending powers, alpha_k = 1.
    tableau : ButcherTableau or None
    stability_function : tuple (P, Q) of sympy.Expr in Z or None
        R(z) = P/Q for one-step schemes.
    details : dict
        Family-specific facts for display (predictor, corrector, mode, kappa, damping...).
    source : str
        Where the coefficients come from (derivation or publication).
    parts : tuple of Scheme
        The predictor and corrector of a pair; empty otherwise.
    """

    name: str
    label: str
    kind: str
    pi: StabilityPolynomial
    steps: int
    stages: int
    explicit: bool
    evaluations_per_step: int
    family: str = "custom"
    rho: tuple | None = None
    sigma: tuple | None = None
    tableau: Any = None
    stability_function: tuple | None = None
    details: dict = field(default_factory=dict)
    source: str = ""
    parts: tuple = ()

    def __post_init__(self):
        if self.kind not in KINDS:
            raise ValueError(f"kind must be one of {KINDS}, got {self.kind!r}")

    @property
    def is_one_step(self) -> bool:
        return self.kind in ("runge-kutta", "stability-function")

    def rho_text(self) -> str | None:
        return None if self.rho is None else poly_text(self.rho, "zeta")

    def sigma_text(self) -> str | None:
        return None if self.sigma is None else poly_text(self.sigma, "zeta")


def poly_text(coeffs_ascending, var: str = "zeta") -> str:
    """Return readable text of a polynomial from ascending exact coefficients."""
    x = sp.Symbol(var)
    expr = sp.Add(*[sp.sympify(c, strict=True) * x**i for i, c in enumerate(coeffs_ascending)])
    if expr == 0:
        return "0"
    return str(sp.expand(expr)).replace("**", "^")
