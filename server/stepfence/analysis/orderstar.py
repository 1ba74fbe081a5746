"""Order stars: where the scheme's mode outgrows the exact solution, and the star at z = 0.

The order star of a one-step scheme is A = {z : |R(z)| > |e^z|} = {z : |R(z) e^{-z}| > 1}
(Wanner, Hairer & Norsett, BIT 18 (1978) 475-489; Hairer & Wanner, Solving ODEs II, 2nd ed.,
section IV.4). For a multistep method R is replaced by the algebraic function zeta(z) of
pi(zeta, z) = 0, whose order star lives on its Riemann surface (Hairer & Wanner II, section
V.4). A flat picture must choose: here either the principal sheet (the branch continued from
zeta(0) = 1 along rays from 0, see analysis.dispersion) or the union over all sheets
(max_j |zeta_j(z)| > |e^z|).

Near the origin zeta(z) e^{-z} = 1 + C' z^{p+1} + O(z^{p+2}) with C' != 0 the principal-root
error constant, so log|zeta e^{-z}| = Re(C' z^{p+1}) + O(|z|^{p+2}) changes sign 2(p+1) times
on a small circle: p+1 sectors of A alternate with p+1 sectors of its complement, each of
opening pi/(p+1), bisected by the rays where Re(C' z^{p+1}) is extreme (Hairer & Wanner II,
section IV.4, the lemma on the order star near the origin; its number there is not checked).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import limits
from ..errors import InputError
from .dispersion import as_stability_polynomial, distinct_points, principal_root

VARIANTS = ("principal", "all-roots")


@dataclass(frozen=True)
class OrderStarRaster:
    """A sampled order star.

    Attributes
    ----------
    x : ndarray, shape (nx,)
        Re z of the columns.
    y : ndarray, shape (ny,)
        Im z of the rows.
    inside : ndarray of bool, shape (ny, nx)
        True where the chosen modulus exceeds |e^z| (the set A).
    log_ratio : ndarray of float, shape (ny, nx)
        log(|zeta| / |e^z|), for contouring the boundary at 0; nan where undefined.
    undefined : ndarray of bool, shape (ny, nx)
        The principal root is not determined there (a root collision on the ray from 0).
    variant : str
        "principal" or "all-roots".
    """

    x: np.ndarray
    y: np.ndarray
    inside: np.ndarray
    log_ratio: np.ndarray
    undefined: np.ndarray
    variant: str


def _limits(pair, field):
    try:
        lo, hi = (float(v) for v in pair)
    except (TypeError, ValueError):
        raise InputError(field, "must be a pair of numbers [low, high]") from None
    if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
        raise InputError(field, f"must be finite with low < high, got [{lo}, {hi}]")
    return lo, hi


def _count(n, field):
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or not 2 <= n <= limits.MAX_GRID:
        raise InputError(field, f"must be an integer from 2 to {limits.MAX_GRID}, got {n!r}")
    return int(n)


def order_star_raster(pi, xlim, ylim, nx: int = 161, ny: int = 161,
                      variant: str = "principal") -> OrderStarRaster:
    """Return the OrderStarRaster of pi on an nx-by-ny grid over xlim x ylim.

    Parameters
    ----------
    pi : StabilityPolynomial or Scheme
    xlim, ylim : pair of float
        Ranges of Re z and Im z.
    nx, ny : int
        Grid points per side (2 to limits.MAX_GRID).
    variant : {"principal", "all-roots"}
        "principal": A = {z : |zeta_principal(z)| > |e^z|} with the principal branch continued
        along the ray from 0 to z (for a one-step scheme zeta = R(z), the classical order
        star; for a multistep method one sheet of the Riemann-surface star, with cuts along
        rays beyond branch points, and points behind a collision marked undefined).
        "all-roots": {z : max_j |zeta_j(z)| > |e^z|}, the projection of every sheet onto the
        plane, which never needs a branch choice.
    """
    if variant not in VARIANTS:
        raise InputError("variant", f"must be one of {VARIANTS}, got {variant!r}")
    poly = as_stability_polynomial(pi)
    x0, x1 = _limits(xlim, "xlim")
    y0, y1 = _limits(ylim, "ylim")
    nx = _count(nx, "nx")
    ny = _count(ny, "ny")
    x = np.linspace(x0, x1, nx)
    y = np.linspace(y0, y1, ny)
    Z = x[None, :] + 1j * y[:, None]
    distinct, inverse, _ = distinct_points(poly, Z)
    if variant == "principal":
        root = principal_root(poly, distinct, with_argument=False)
        with np.errstate(divide="ignore", invalid="ignore"):
            log_ratio = np.log(np.abs(root.value)) - distinct.real
        undefined = root.ambiguous
    else:
        with np.errstate(divide="ignore"):
            log_ratio = np.log(poly.max_root_modulus(distinct)) - distinct.real
        undefined = np.zeros(distinct.size, dtype=bool)
    log_ratio = np.where(undefined, np.nan, log_ratio)[inverse].reshape(Z.shape)
    undefined = undefined[inverse].reshape(Z.shape)
    with np.errstate(invalid="ignore"):
        inside = np.where(undefined, False, log_ratio > 0)
    return OrderStarRaster(x=x, y=y, inside=inside, log_ratio=log_ratio, undefined=undefined,
                           variant=variant)


@dataclass(frozen=True)
class OriginSectors:
    """Sign changes of |zeta e^{-z}| - 1 on a small circle around z = 0.

    Attributes
    ----------
    count : int
        Number of sign changes around the circle, 2(p+1) for order p with C' != 0.
    radius : float
    crossings : ndarray, shape (count,)
        Angles (radians, in [0, 2 pi)) where the sign changes, to half a sample.
    peak : float
        max over the circle of |log|zeta e^{-z}||, the size of the signal being signed.
    reliable : bool
        peak is far above rounding (1e-11), no sample was undefined and every sector holds
        several samples; otherwise the count says more about the radius than the scheme.
    """

    count: int
    radius: float
    crossings: np.ndarray
    peak: float
    reliable: bool


def sectors_at_origin(pi, radius: float, n: int = 2048) -> OriginSectors:
    """Return the OriginSectors of the principal root on the circle |z| = radius.

    Parameters
    ----------
    pi : StabilityPolynomial or Scheme
    radius : float
        Small enough that the leading term C' z^{p+1} dominates the next one, large enough
        that |C'| radius^{p+1} stands well above rounding (1e-8 is comfortable).
    n : int
        Samples on the circle; each of the 2(p+1) sectors needs several.
    """
    try:
        r = float(radius)
    except (TypeError, ValueError):
        raise InputError("radius", f"must be a number, got {radius!r}") from None
    if not (math.isfinite(r) and 0 < r <= 10):
        raise InputError("radius", f"must lie in (0, 10], got {radius}")
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or not 16 <= n <= limits.MAX_LOCUS_POINTS:
        raise InputError("n", f"must be an integer from 16 to {limits.MAX_LOCUS_POINTS}, got {n!r}")
    theta = 2 * np.pi * np.arange(n) / n
    z = r * np.exp(1j * theta)
    root = principal_root(as_stability_polynomial(pi), z, with_argument=False)
    with np.errstate(divide="ignore", invalid="ignore"):
        f = np.log(np.abs(root.value)) - z.real
    ok = np.isfinite(f) & ~root.ambiguous
    positive = f > 0
    change = positive != np.roll(positive, -1)
    where = np.nonzero(change)[0]
    crossings = (theta[where] + np.pi / n) % (2 * np.pi)
    peak = float(np.max(np.abs(f[ok]))) if np.any(ok) else 0.0
    # every sector should hold several samples, or neighbouring changes may cancel unseen
    roomy = where.size == 0 or n >= 8 * where.size
    return OriginSectors(count=int(where.size), radius=r, crossings=crossings, peak=peak,
                         reliable=bool(np.all(ok) and peak > 1e-11 and roomy))
