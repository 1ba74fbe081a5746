"""The absolute-stability region: boundary locus, filled raster, membership and metrics.

Region S = {z : every root of pi(., z) has |zeta| <= 1, those on |zeta| = 1 simple}
(Hairer & Wanner, Solving ODEs II, 2nd ed., section V.1). The boundary locus is
{z : pi(e^{i theta}, z) = 0}, one branch per root in z; where the top coefficient in z
vanishes on the circle (sigma(e^{i theta}) = 0 for a multistep method) the branch passes
through infinity and is split there.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.optimize

from ..schemes.base import Scheme
from ..schemes.stability import StabilityPolynomial, polynomial_roots
from .rays import RayWindows, ray_windows, stability_margin
from .roots import exact_roots

LOCUS_POINTS = 4096
FAR = 1e8  # |z| beyond this on a branch is drawn as a break (the locus through infinity)


# --- boundary locus ---------------------------------------------------------------------------
def boundary_locus(pi: StabilityPolynomial, n: int = LOCUS_POINTS):
    """Return (theta, branches): branches is a list of complex arrays (nan = break).

    For each theta on [0, 2 pi] the roots z of pi(e^{i theta}, z) are found (closed form when
    pi is linear in z) and followed from one theta to the next by nearest matching.
    """
    m = pi.degree_z
    if m > 8:
        n = max(256, (n * 8) // m)  # keep the drawing payload bounded for many branches
    theta = np.linspace(0.0, 2 * np.pi, n)
    w = np.exp(1j * theta)
    ev = pi.evaluator
    if ev is not None and hasattr(ev, "locus"):
        roots = ev.locus(w)
        # the closed form numbers the roots consistently except across arccos's cut; the
        # large-jump rule below breaks the lines there
        return theta, _branches(roots)
    cz = pi.z_coefficients(w)  # (n, m+1) ascending in z
    if m == 0:
        return theta, []
    if m == 1:
        with np.errstate(divide="ignore", invalid="ignore"):
            z = -cz[:, 0] / cz[:, 1]
        roots = z[:, None]
    else:
        roots = _batched_roots(cz)
        roots = _track(roots)
    return theta, _branches(roots)


def _batched_roots(c: np.ndarray) -> np.ndarray:
    """Return the m roots of each row of ascending coefficients (nan where the degree drops)."""
    n, mp1 = c.shape
    m = mp1 - 1
    lead = c[:, -1]
    scale = np.max(np.abs(c), axis=1)
    ok = np.abs(lead) > 1e-12 * scale
    out = np.full((n, m), np.nan + 1j * np.nan)
    if np.any(ok):
        cc = c[ok] / lead[ok, None]
        comp = np.zeros((cc.shape[0], m, m), dtype=complex)
        comp[:, 0, :] = -cc[:, :-1][:, ::-1]
        idx = np.arange(m - 1)
        comp[:, idx + 1, idx] = 1.0
        out[ok] = np.linalg.eigvals(comp)
    for i in np.nonzero(~ok)[0]:  # a root passes through infinity here: solve the lower degree
        r = polynomial_roots(c[i])
        out[i, : r.size] = r
    return out


def _branches(roots):
    branches = []
    for b in range(roots.shape[1]):
        z = roots[:, b].copy()
        z[~np.isfinite(z) | (np.abs(z) > FAR)] = np.nan
        # a jump through infinity shows as a huge step between neighbours: break there
        step = np.abs(np.diff(z))
        scale = np.nanmedian(np.abs(z)) if np.any(np.isfinite(z)) else 1.0
        jump = np.nonzero(step > 50 * max(scale, 1e-12))[0]
        z[jump] = np.nan
        branches.append(z)
    return branches


def _track(roots: np.ndarray) -> np.ndarray:
    """Reorder roots row by row so each column follows one continuous branch."""
    import itertools
    out = roots.copy()
    m = roots.shape[1]
    if m <= 1:
        return out
    perms = np.array(list(itertools.permutations(range(m)))) if m <= 5 else None
    for i in range(1, roots.shape[0]):
        prev = out[i - 1]
        cur = roots[i]
        cost = np.abs(prev[:, None] - cur[None, :])
        cost[~np.isfinite(cost)] = 1e300
        if perms is not None:
            # all m! matchings at once: cheaper than an assignment solver for small m
            tot = cost[np.arange(m)[None, :], perms].sum(axis=1)
            out[i] = cur[perms[int(np.argmin(tot))]]
        else:
            r, c = scipy.optimize.linear_sum_assignment(cost)
            out[i, r] = cur[c]
    return out


# --- filled region (raster) -------------------------------------------------------------------
def schur_cohn_stable(coeffs: np.ndarray) -> np.ndarray:
    """Return True where every root of sum c_i zeta^i lies strictly inside |zeta| < 1.

    Vectorised Schur-Cohn recursion (Henrici, Applied and Computational Complex Analysis I,
    Wiley 1974, section 6.8): p is Schur stable iff |p_0| < |p_k| and the reduced polynomial
    (conj(p_k) p - p_0 p*) / zeta is Schur stable.
    coeffs : ndarray, shape (N, k + 1), ascending.
    """
    c = np.array(coeffs, dtype=complex)
    n = c.shape[0]
    ok = np.ones(n, dtype=bool)
    while c.shape[1] > 1:
        a0 = c[:, 0]
        ak = c[:, -1]
        good = np.abs(ak) > np.abs(a0) * (1 + 1e-13)
        ok &= good
        rev = np.conj(c[:, ::-1])
        reduced = np.conj(ak)[:, None] * c - a0[:, None] * rev
        c = reduced[:, 1:]
        scale = np.max(np.abs(c), axis=1)
        scale[scale == 0] = 1.0
        c = c / scale[:, None]
    return ok


@dataclass(frozen=True)
class Raster:
    x: np.ndarray
    y: np.ndarray
    stable: np.ndarray  # shape (len(y), len(x)) bool


def region_raster(pi: StabilityPolynomial, xlim, ylim, nx: int = 300, ny: int = 300) -> Raster:
    """Return the filled region on a grid: True where all roots are strictly inside."""
    x = np.linspace(xlim[0], xlim[1], nx)
    y = np.linspace(ylim[0], ylim[1], ny)
    Zg = x[None, :] + 1j * y[:, None]
    coeffs = pi.zeta_coefficients(Zg.ravel())
    stable = schur_cohn_stable(coeffs).reshape(Zg.shape)
    return Raster(x=x, y=y, stable=stable)


# --- metrics ----------------------------------------------------------------------------------
@dataclass(frozen=True)
class RegionMetrics:
    """What the region does along the axes, in sectors and at infinity."""

    real_windows: tuple        # windows of x < 0 as (lo, hi) in z with lo <= hi <= 0
    real_windows_positive: tuple
    real_interval: tuple       # the interval containing 0: (lo or None, hi or None)
    imag_windows: tuple
    imag_interval: tuple
    a0_stable: bool
    a_stable: bool
    a_alpha_deg: float | None  # None when not even A(0)
    min_real_on_locus: float | None
    infinity_roots: tuple      # roots zeta as z -> infinity (complex), inf for escaping roots
    infinity_max_modulus: float
    stiff_decay: bool
    l_stable: bool
    bounded: bool
    empty_interior: bool
    notes: tuple = field(default_factory=tuple)


def _interval_from(neg: RayWindows, pos: RayWindows):
    lo = neg.first_exit
    hi = pos.first_exit
    return (None if math.isinf(lo) else (-lo if lo else 0.0), None if math.isinf(hi) else hi)


def _to_z(windows, d):
    out = []
    for lo, hi in windows:
        a, b = lo * d, (hi * d if math.isfinite(hi) else None)
        out.append((a, b))
    return tuple(out)


def _angle_deficit(z: np.ndarray) -> np.ndarray:
    # angle between -z and the negative real axis... i.e. |arg(-z)| in radians
    return np.abs(np.angle(-z))


def a_alpha(pi: StabilityPolynomial, a0: bool, n: int = 8192):
    """Return (alpha in degrees or None, min Re z over the locus)."""
    theta, branches = boundary_locus(pi, n)
    pts = [b[np.isfinite(b)] for b in branches]
    pts = np.concatenate(pts) if pts else np.array([], dtype=complex)
    if pts.size == 0:
        return (90.0 if a0 else None), None
    min_re = float(np.min(pts.real)) if pts.size else None
    if not a0:
        return None, min_re
    left = pts[pts.real < -1e-12 * np.maximum(1.0, np.abs(pts))]
    if left.size == 0:
        return 90.0, min_re
    # refine the smallest angle: locally minimise over the parameter theta on each branch
    best = float(np.min(_angle_deficit(left)))
    for b in branches:
        ok = np.isfinite(b) & (b.real < 0)
        if not np.any(ok):
            continue
        ang = np.where(ok, _angle_deficit(np.where(ok, b, -1)), np.inf)
        i = int(np.argmin(ang))
        if not np.isfinite(ang[i]) or i == 0 or i == len(b) - 1:
            continue
        z_guess = b[i]

        def f(th, z_guess=z_guess):
            z = _locus_point(pi, th, z_guess)
            return _angle_deficit(np.array([z]))[0] if z.real < 0 else np.pi

        res = scipy.optimize.minimize_scalar(f, bounds=(theta[i - 1], theta[i + 1]), method="bounded",
                                             options={"xatol": 1e-13})
        if res.success and res.fun < best + 1e-6:
            best = min(best, float(res.fun))
    return math.degrees(best), min_re


def _locus_point(pi: StabilityPolynomial, th: float, z0: complex) -> complex:
    """Return the root z of pi(e^{i th}, z) nearest z0 (Newton from z0)."""
    w = np.exp(1j * th)
    z = complex(z0)
    for _ in range(30):
        f, _, fz = pi.evaluate(w, z)
        f, fz = complex(f), complex(fz)
        if fz == 0:
            break
        dz = f / fz
        z -= dz
        if abs(dz) <= 1e-16 * max(1.0, abs(z)):
            break
    return z


def infinity_behaviour(pi: StabilityPolynomial):
    """Return (roots, max modulus) of the limit of the roots of pi(., z) as |z| -> infinity."""
    top = [row[-1] for row in pi.exact]  # coefficient of z^m, ascending in zeta
    deg = max((i for i, c in enumerate(top) if c != 0), default=0)
    k = pi.degree_zeta
    mult = []
    for r in exact_roots(top[: deg + 1]) if deg > 0 else []:
        mult.extend([r.value] * r.multiplicity)
    escaping = k - deg
    vals = tuple(mult) + (complex(np.inf),) * escaping
    mx = float(max([abs(v) for v in vals], default=0.0))
    return vals, mx


def region_metrics(scheme: Scheme) -> RegionMetrics:
    """Return the RegionMetrics of a scheme from exact ray crossings."""
    pi = scheme.pi
    neg = ray_windows(pi, -1.0)
    pos = ray_windows(pi, 1.0)
    up = ray_windows(pi, 1j)
    down = ray_windows(pi, -1j) if not pi.is_real else RayWindows(-1j, up.crossings, up.windows, up.degenerate)
    real_interval = _interval_from(neg, pos)
    imag_interval = _interval_from(down, up)
    a0 = bool(neg.windows) and math.isinf(neg.windows[-1][1]) and neg.windows[-1][0] == 0.0
    alpha, min_re = a_alpha(pi, a0)
    imag_all = all(w.windows and w.windows[0][0] == 0.0 and math.isinf(w.windows[0][1])
                   for w in (up, down))
    a_stable = bool(a0 and imag_all and (min_re is None or min_re >= -1e-10))
    if a_stable:
        alpha = 90.0
    inf_roots, inf_max = infinity_behaviour(pi)
    stiff = inf_max == 0.0
    if inf_max > 1 + 1e-12:
        bounded = True
    elif inf_max < 1 - 1e-12:
        bounded = False
    else:
        # roots tend to the circle: sample directions for a window reaching infinity
        dirs = np.exp(1j * np.linspace(0, 2 * np.pi, 48, endpoint=False))
        reach = (ray_windows(pi, d).windows for d in dirs)
        bounded = not any(w and math.isinf(w[-1][1]) for w in reach)
    xlim, ylim = view_box(pi)
    raster = region_raster(pi, xlim, ylim, 81, 81)
    empty_interior = not bool(np.any(raster.stable))
    notes = []
    if up.degenerate or neg.degenerate:
        notes.append("part of an axis lies on the boundary locus (roots stay on |zeta| = 1): "
                     "stable there only in the weak sense")
    return RegionMetrics(
        real_windows=_to_z(neg.windows, -1.0), real_windows_positive=_to_z(pos.windows, 1.0),
        real_interval=real_interval, imag_windows=_to_z(up.windows, 1j), imag_interval=imag_interval,
        a0_stable=a0, a_stable=a_stable, a_alpha_deg=alpha, min_real_on_locus=min_re,
        infinity_roots=inf_roots, infinity_max_modulus=inf_max, stiff_decay=bool(stiff),
        l_stable=bool(a_stable and stiff), bounded=bool(bounded), empty_interior=empty_interior,
        notes=tuple(notes))


def view_box(pi: StabilityPolynomial, n: int = 1024):
    """Return (xlim, ylim): a window around the finite part of the boundary locus."""
    _, branches = boundary_locus(pi, n)
    pts = np.concatenate([b[np.isfinite(b)] for b in branches]) if branches else np.array([])
    if pts.size == 0:
        return (-3.0, 1.0), (-2.0, 2.0)
    # ignore the far tails of branches through infinity
    r = np.abs(pts)
    cap = np.quantile(r, 0.95) * 3 if pts.size > 20 else r.max()
    pts = pts[r <= max(cap, 1e-9)]
    x0, x1 = float(pts.real.min()), float(pts.real.max())
    y0, y1 = float(pts.imag.min()), float(pts.imag.max())
    span = max(x1 - x0, y1 - y0, 1e-6)
    pad = 0.15 * span
    x0, x1 = min(x0, -0.1 * span) - pad, max(x1, 0.1 * span) + pad
    y0, y1 = min(y0, -0.1 * span) - pad, max(y1, 0.1 * span) + pad
    return (x0, x1), (y0, y1)


def is_in_region(pi: StabilityPolynomial, z: complex, tol: float = 1e-9) -> bool:
    """Return True when z lies in the closed stability region (numerical tolerance tol)."""
    return stability_margin(pi, z, tol)
