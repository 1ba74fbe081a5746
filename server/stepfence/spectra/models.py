"""Standard method-of-lines semi-discretisations: analytic eigenvalues and assembled matrices.

Formulas: LeVeque, Finite Difference Methods for Ordinary and Partial Differential Equations,
SIAM 2007, sections 2.10 (Dirichlet Laplacian) and 10.x / appendix on periodic (circulant) matrices.
"""
from __future__ import annotations

import numpy as np
import scipy.sparse

from .. import limits
from ..errors import InputError
from .spectrum import Spectrum

MODELS = {
    "diffusion-1d": {"description": "u_t = nu u_xx, central differences",
                     "params": {"n": 50, "length": 1.0, "nu": 1.0, "bc": "dirichlet"}},
    "diffusion-2d": {"description": "u_t = nu (u_xx + u_yy) on a square, 5-point stencil",
                     "params": {"n": 30, "length": 1.0, "nu": 1.0, "bc": "dirichlet"}},
    "advection-upwind": {"description": "u_t + a u_x = 0, first-order upwind, periodic",
                         "params": {"n": 50, "length": 1.0, "a": 1.0}},
    "advection-centred": {"description": "u_t + a u_x = 0, centred differences, periodic",
                          "params": {"n": 50, "length": 1.0, "a": 1.0}},
    "advection-diffusion": {"description": "u_t + a u_x = nu u_xx, centred, periodic",
                            "params": {"n": 50, "length": 1.0, "a": 1.0, "nu": 0.01}},
}


def _params(kind, n, p):
    if kind not in MODELS:
        raise InputError("kind", f"unknown model {kind!r}; one of {', '.join(MODELS)}")
    full = dict(MODELS[kind]["params"])
    for k, v in p.items():
        if k not in full:
            raise InputError(k, f"is not a parameter of {kind} (parameters: {', '.join(full)})")
        full[k] = v
    if not isinstance(n, int) or isinstance(n, bool) or n < 2:
        raise InputError("n", "must be an integer >= 2")
    cap = int(np.sqrt(limits.MAX_EIGENVALUES)) if kind == "diffusion-2d" else limits.MAX_EIGENVALUES
    if n > cap:
        raise InputError("n", f"must be <= {cap} for {kind}")
    for k in ("length", "nu", "a"):
        if k in full:
            try:
                full[k] = float(full[k])
            except (TypeError, ValueError):
                raise InputError(k, "must be a number") from None
            if not np.isfinite(full[k]):
                raise InputError(k, "must be finite")
    if full["length"] <= 0:
        raise InputError("length", "must be positive")
    if full.get("nu", 0) < 0:
        raise InputError("nu", "must be >= 0")
    if "bc" in full and full["bc"] not in ("dirichlet", "periodic"):
        raise InputError("bc", "must be dirichlet or periodic")
    return full


def _diff1d(n, L, nu, bc):
    if bc == "dirichlet":
        dx = L / (n + 1)
        j = np.arange(1, n + 1)
        return -4 * nu / dx**2 * np.sin(j * np.pi / (2 * (n + 1))) ** 2
    dx = L / n
    j = np.arange(n)
    return -4 * nu / dx**2 * np.sin(np.pi * j / n) ** 2


def semidiscretisation(kind: str, n: int, **params) -> Spectrum:
    """Return the analytic spectrum of a standard semi-discretisation."""
    p = _params(kind, n, params)
    L = p["length"]
    notes = ()
    if kind == "diffusion-1d":
        ev = _diff1d(n, L, p["nu"], p["bc"])
    elif kind == "diffusion-2d":
        e1 = _diff1d(n, L, p["nu"], p["bc"])
        ev = (e1[:, None] + e1[None, :]).ravel()
    else:
        dx = L / n
        th = 2 * np.pi * np.arange(n) / n
        a = p["a"]
        if kind == "advection-upwind":
            ev = -(abs(a) / dx) * (1 - np.exp(-1j * th))
        elif kind == "advection-centred":
            ev = -1j * (a / dx) * np.sin(th)
        else:
            ev = -1j * (a / dx) * np.sin(th) - 4 * p["nu"] / dx**2 * np.sin(th / 2) ** 2
    desc = ", ".join(f"{k}={v}" for k, v in p.items())
    return Spectrum(np.asarray(ev, dtype=complex), source=f"{kind} (n={n}, {desc})", notes=notes)


def assemble(kind: str, n: int, **params):
    """Return the sparse matrix of the semi-discretisation (for checks and stepping)."""
    p = _params(kind, n, params)
    L = p["length"]
    if kind in ("diffusion-1d", "diffusion-2d"):
        bc = p["bc"]
        dx = L / (n + 1) if bc == "dirichlet" else L / n
        T = scipy.sparse.diags([np.ones(n - 1), -2 * np.ones(n), np.ones(n - 1)], [-1, 0, 1], format="lil")
        if bc == "periodic":
            T[0, n - 1] = 1
            T[n - 1, 0] = 1
        T = p["nu"] / dx**2 * scipy.sparse.csr_matrix(T)
        if kind == "diffusion-1d":
            return T
        I = scipy.sparse.identity(n)
        return scipy.sparse.csr_matrix(scipy.sparse.kron(T, I) + scipy.sparse.kron(I, T))
    dx = L / n
    a = p["a"]
    S = scipy.sparse.lil_matrix((n, n))
    for i in range(n):
        if kind == "advection-upwind":
            S[i, i] += -abs(a) / dx
            S[i, (i - 1) % n] += abs(a) / dx
        else:
            S[i, (i + 1) % n] += -a / (2 * dx)
            S[i, (i - 1) % n] += a / (2 * dx)
            if kind == "advection-diffusion":
                nu = p["nu"]
                S[i, i] += -2 * nu / dx**2
                S[i, (i + 1) % n] += nu / dx**2
                S[i, (i - 1) % n] += nu / dx**2
    return scipy.sparse.csr_matrix(S)
