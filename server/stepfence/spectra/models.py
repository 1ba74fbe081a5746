"""Standard method-of-lines semi-discretisations: closed-form eigenvalues and assembled matrices.

Every model is a three-point stencil u_i' = s_- u_{i-1} + s_0 u_i + s_+ u_{i+1} on a uniform
grid (the 2-D diffusion model is the Kronecker sum of two 1-D ones). Its eigenvalues are
written out in closed form below, and its matrix is assembled separately from the stencil, so
the tests can compare one with the other's numerical eigenvalues.

Grids. "dirichlet": n interior points of (0, L), dx = L / (n + 1), both ends held at zero;
for upwind advection "dirichlet" means an inflow value held at zero on the upstream end and n
unknowns up to and including the downstream end, dx = L / n. "periodic": n points, dx = L / n,
theta_j = 2 pi j / n, j = 0..n-1.

References
----------
.. [1] R. J. LeVeque, "Finite Difference Methods for Ordinary and Partial Differential
   Equations", SIAM 2007, section 2.10 (eigenvalues of the Dirichlet second difference) and
   chapter 10 (von Neumann analysis: the periodic symbol); section numbers from memory.
.. [2] Eigenvalues of a tridiagonal Toeplitz matrix (s_-, s_0, s_+):
   s_0 + 2 sqrt(s_- s_+) cos(j pi / (n + 1)), j = 1..n; of a circulant one: its symbol
   s_- e^{-i theta} + s_0 + s_+ e^{i theta} at theta = theta_j (standard results).
"""
from __future__ import annotations

import numbers
from typing import NamedTuple

import numpy as np
import scipy.sparse

from .. import limits
from ..errors import InputError, LimitExceeded
from .spectrum import Spectrum


class ParamInfo(NamedTuple):
    """One model parameter: its default, a short description, and its allowed values if text."""

    default: object
    description: str
    choices: tuple = ()


class ModelInfo(NamedTuple):
    """One model: a description and its parameters (with defaults) by name."""

    description: str
    params: dict


_N = ParamInfo(100, "unknowns (grid points)")
_N2 = ParamInfo(30, "unknowns per side (n x n grid)")
_L = ParamInfo(1.0, "length of the interval (side of the square)")
_NU = ParamInfo(1.0, "diffusion coefficient nu >= 0")
_A = ParamInfo(1.0, "advection velocity a")
_BC = ParamInfo("dirichlet", "boundary conditions", ("dirichlet", "periodic"))
_BC_PERIODIC = _BC._replace(default="periodic")

MODELS = {
    "diffusion-1d": ModelInfo(
        "u_t = nu u_xx on (0, L), second-order central differences",
        {"n": _N, "L": _L, "nu": _NU, "bc": _BC}),
    "diffusion-2d": ModelInfo(
        "u_t = nu (u_xx + u_yy) on the square (0, L)^2, five-point stencil on an n x n grid",
        {"n": _N2, "L": _L, "nu": _NU, "bc": _BC}),
    "advection-upwind": ModelInfo(
        "u_t + a u_x = 0, first-order upwind differences",
        {"n": _N, "L": _L, "a": _A, "bc": _BC_PERIODIC}),
    "advection-centred": ModelInfo(
        "u_t + a u_x = 0, second-order centred differences",
        {"n": _N, "L": _L, "a": _A, "bc": _BC_PERIODIC}),
    "advection-diffusion": ModelInfo(
        "u_t + a u_x = nu u_xx, centred or upwind advection plus central diffusion",
        {"n": _N, "L": _L, "a": _A, "nu": ParamInfo(0.01, "diffusion coefficient nu >= 0"),
         "advection": ParamInfo("centred", "advection differences", ("centred", "upwind")),
         "bc": _BC_PERIODIC}),
}
_ALIASES = {"centered": "centred"}
NON_NORMAL_CONDITION = 1e3  # caution when the symmetrising scaling is worse conditioned

JORDAN_NOTE = (
    "upwind advection with an inflow boundary gives a bidiagonal matrix whose n eigenvalues all "
    "equal {value:.6g}: a single Jordan-like block, highly non-normal. Its eigenvalues mislead "
    "badly (a perturbation of relative size 1e-12 can move them by tens of percent), and a step "
    "that is stable for them can still let errors grow by large factors for many steps; the "
    "pseudospectra, not the eigenvalues, tell which steps are safe.")
SCALED_SYMMETRIC_NOTE = (
    "the matrix is non-normal: it is similar to a symmetric one only through a diagonal "
    "scaling of condition number {condition:.3g} (the cell Peclet number is {peclet:.3g}), so "
    "its eigenvalues can understate transient growth; check by stepping.")
OVERSPECIFIED_NOTE = (
    "both ends are held at zero, which over-specifies a hyperbolic problem: this is the "
    "textbook test matrix (skew-symmetric, so its eigenvalues are reliable), not a model of "
    "inflow and outflow.")


# --- parameters ------------------------------------------------------------------------

def _number(name: str, value) -> float:
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        shown = f"text {value!r}" if isinstance(value, str) else type(value).__name__
        raise InputError(name, f"must be a number, got {shown}")
    x = float(value)
    if not np.isfinite(x):
        raise InputError(name, "must be finite")
    return x


def _checked_params(kind: str, n, params: dict) -> dict:
    """Return the full parameter dict of a model, every value checked and defaults filled."""
    if kind not in MODELS:
        raise InputError("kind", f"unknown model {kind!r}", expected=", ".join(MODELS))
    info = MODELS[kind].params
    for name in params:
        if name not in info or name == "n":
            raise InputError(name, f"is not a parameter of {kind}",
                             expected=", ".join(p for p in info if p != "n"))
    if isinstance(n, bool) or not isinstance(n, numbers.Integral):
        raise InputError("n", f"must be an integer, got {type(n).__name__}")
    n = int(n)
    if n < 2:
        raise InputError("n", f"must be at least 2, got {n}")
    cap = int(np.sqrt(limits.MAX_EIGENVALUES)) if kind == "diffusion-2d" else \
        min(limits.MAX_EIGENVALUES, limits.MAX_SPARSE_N)
    if n > cap:
        raise LimitExceeded("n", f"{n} is over the limit of {cap} for {kind}")
    p = {"n": n}
    for name, meta in info.items():
        if name == "n":
            continue
        value = params.get(name, meta.default)
        if meta.choices:
            value = _ALIASES.get(value, value) if isinstance(value, str) else value
            if value not in meta.choices:
                raise InputError(name, f"unknown value {value!r}", expected=" or ".join(meta.choices))
            p[name] = value
        else:
            p[name] = _number(name, value)
    if p["L"] <= 0:
        raise InputError("L", f"must be positive, got {p['L']:g}")
    if p.get("nu", 0.0) < 0:
        raise InputError("nu", f"must be >= 0, got {p['nu']:g}")
    return p


def _dx(kind: str, p: dict) -> float:
    n, L = p["n"], p["L"]
    if p["bc"] == "periodic" or kind == "advection-upwind":
        return L / n
    return L / (n + 1)


def _stencil(kind: str, p: dict, dx: float) -> tuple[float, float, float]:
    """Return (s_-, s_0, s_+) of u_i' = s_- u_{i-1} + s_0 u_i + s_+ u_{i+1}."""
    nu, a = p.get("nu", 0.0), p.get("a", 0.0)
    s = np.zeros(3)
    if kind in ("diffusion-1d", "diffusion-2d", "advection-diffusion"):
        s += np.array([1.0, -2.0, 1.0]) * nu / dx ** 2
    scheme = {"advection-upwind": "upwind", "advection-centred": "centred"}.get(
        kind, p.get("advection"))
    if scheme == "upwind":
        # the difference looks upstream: backward for a > 0, forward for a < 0
        s += np.array([a, -a, 0.0]) / dx if a >= 0 else np.array([0.0, a, -a]) / dx
    elif scheme == "centred":
        s += np.array([a, 0.0, -a]) / (2 * dx)
    return float(s[0]), float(s[1]), float(s[2])


# --- closed forms ----------------------------------------------------------------------

def _diffusion_1d(n: int, nu: float, dx: float, bc: str) -> np.ndarray:
    """Eigenvalues of nu * D2 [1]_, written with sin^2 to keep the small ones accurate."""
    if bc == "dirichlet":
        j = np.arange(1, n + 1)
        return -4.0 * nu / dx ** 2 * np.sin(j * np.pi / (2 * (n + 1))) ** 2
    j = np.arange(n)
    return -4.0 * nu / dx ** 2 * np.sin(np.pi * j / n) ** 2


def _closed_form(kind: str, p: dict, dx: float) -> tuple[np.ndarray, list[str]]:
    n, bc = p["n"], p["bc"]
    nu, a = p.get("nu", 0.0), p.get("a", 0.0)
    theta = 2 * np.pi * np.arange(n) / n
    notes: list[str] = []
    if kind == "diffusion-1d":
        return _diffusion_1d(n, nu, dx, bc).astype(complex), notes
    if kind == "diffusion-2d":
        e1 = _diffusion_1d(n, nu, dx, bc)
        return (e1[:, None] + e1[None, :]).ravel().astype(complex), notes
    upwind = kind == "advection-upwind" or p.get("advection") == "upwind"
    if bc == "periodic":
        # symbols [1]_: upwind -(a/dx)(1 - e^{-i theta}) for a >= 0, (a/dx)(1 - e^{i theta})
        # for a < 0; centred -i (a/dx) sin theta; diffusion -4 nu/dx^2 sin^2(theta/2)
        if upwind:
            adv = -(a / dx) * (1 - np.exp(-1j * theta)) if a >= 0 else (a / dx) * (1 - np.exp(1j * theta))
        else:
            adv = -1j * (a / dx) * np.sin(theta)
        diff = -4.0 * nu / dx ** 2 * np.sin(theta / 2) ** 2
        return adv + diff, notes
    j = np.arange(1, n + 1)
    if kind == "advection-upwind":
        if a != 0:
            notes.append(JORDAN_NOTE.format(value=-abs(a) / dx))
        return np.full(n, -abs(a) / dx, dtype=complex), notes
    if kind == "advection-centred":
        if a != 0:
            notes.append(OVERSPECIFIED_NOTE)
        return -1j * (a / dx) * np.cos(j * np.pi / (n + 1)), notes
    # advection-diffusion, both ends at zero: tridiagonal Toeplitz [2]_
    lo, mid, hi = _stencil(kind, p, dx)
    values = mid + 2 * np.sqrt(complex(lo * hi)) * np.cos(j * np.pi / (n + 1))
    if lo * hi == 0 and lo != hi:
        notes.append(JORDAN_NOTE.format(value=mid))
    elif lo != hi:
        ratio = abs(lo / hi)
        log_condition = 0.5 * (n - 1) * abs(np.log(ratio))
        if log_condition > np.log(NON_NORMAL_CONDITION):
            peclet = abs(a) * dx / nu if nu > 0 else np.inf
            notes.append(SCALED_SYMMETRIC_NOTE.format(condition=np.exp(min(log_condition, 700.0)),
                                                      peclet=peclet))
    return values, notes


def _describe(kind: str, p: dict, dx: float) -> str:
    shown = ", ".join(f"{k}={v:g}" if isinstance(v, float) else f"{k}={v}" for k, v in p.items())
    return f"model {kind} ({shown}, dx={dx:.6g})"


def semidiscretisation(kind: str, n: int, **params) -> Spectrum:
    """Return the closed-form spectrum of a standard semi-discretisation.

    Parameters
    ----------
    kind : str
        A key of MODELS.
    n : int
        Unknowns (per side for diffusion-2d, whose spectrum has n * n eigenvalues).
    **params
        The model's parameters (see MODELS[kind].params): L, nu, a, bc, advection.

    Returns
    -------
    Spectrum
        Eigenvalues from the formulas in the module docstring, with cautions for the
        non-normal cases (upwind inflow, Dirichlet advection-diffusion at large Peclet).

    Raises
    ------
    InputError
        Unknown kind or parameter, a value of the wrong type or out of range.
    """
    p = _checked_params(kind, n, params)
    dx = _dx(kind, p)
    values, notes = _closed_form(kind, p, dx)
    return Spectrum(values, source=_describe(kind, p, dx) + ": closed-form eigenvalues",
                    notes=tuple(notes))


def _one_d_matrix(n: int, stencil: tuple[float, float, float], periodic: bool):
    lo, mid, hi = stencil
    offsets, bands = [-1, 0, 1], [np.full(n - 1, lo), np.full(n, mid), np.full(n - 1, hi)]
    if periodic:
        # wrap-around entries: u_{-1} is u_{n-1}, u_n is u_0
        offsets += [n - 1, -(n - 1)]
        bands += [np.full(1, lo), np.full(1, hi)]
    if n == 2 and periodic:
        # both neighbours of each point are the same point: add rather than overwrite
        return scipy.sparse.csr_matrix(np.array([[mid, lo + hi], [lo + hi, mid]]))
    return scipy.sparse.diags(bands, offsets, shape=(n, n), format="csr")


def assemble(kind: str, n: int, **params) -> scipy.sparse.csr_matrix:
    """Return the sparse matrix of a standard semi-discretisation, assembled from its stencil.

    Parameters
    ----------
    kind, n, **params
        As for semidiscretisation.

    Returns
    -------
    scipy.sparse.csr_matrix, shape (n, n), or (n * n, n * n) for diffusion-2d
        Row-major grid ordering for 2-D (index i * n + j).
    """
    p = _checked_params(kind, n, params)
    dx = _dx(kind, p)
    periodic = p["bc"] == "periodic"
    stencil = _stencil(kind, p, dx)
    T = _one_d_matrix(p["n"], stencil, periodic)
    if kind != "diffusion-2d":
        return T
    eye = scipy.sparse.identity(p["n"], format="csr")
    return scipy.sparse.csr_matrix(scipy.sparse.kron(T, eye) + scipy.sparse.kron(eye, T))
