"""Amplitude and phase error of the principal root, along the spectrum and the imaginary axis.

On the test equation y' = lambda y one step multiplies the exact solution by e^z, z = h lambda,
while the scheme's dominant mode is multiplied by the principal root zeta(z) of pi(zeta, z) = 0:
the branch with zeta(0) = 1, continued from z = 0 along the segment [0, z] (Hairer, Norsett &
Wanner, Solving ODEs I, 2nd ed., section III.3; Hairer & Wanner, Solving ODEs II, 2nd ed.,
section V.4 for the Riemann surface of zeta(z)). Writing

    log(zeta e^{-z}) = log|zeta| - Re z  +  i (arg zeta - Im z)
                     =  amplitude part   +  i  phase error,

with arg zeta continuous along the path, the local relative error of one step is
|zeta e^{-z} - 1| = |expm1(amplitude part + i phase error)|. For a scheme of linear order p
the principal root satisfies zeta(z) = e^z + C' z^{p+1} + O(z^{p+2}), so
log(zeta e^{-z}) = C' z^{p+1} + O(z^{p+2}): on the imaginary axis z = i y the amplitude part
is Re(C' (i y)^{p+1}) and the phase error Im(C' (i y)^{p+1}) to leading order; for real C'
one of the two vanishes at order p + 1 and starts one order later.

The continuation is a predictor-corrector path tracker (Euler predictor, Newton corrector)
vectorised over many paths. It works in two charts, zeta and 1/zeta, so the principal root
may pass through infinity (where the leading coefficient in zeta vanishes) and come back.
A step is accepted only when Newton converges from the predictor, the root moved less than
half the distance to the nearest other root (a Fujiwara lower bound), and its argument turned
less than MAX_TURN. Where the roots collide (a branch point on the path) no such step exists
and the path stops there. The point is then reached along the two paths turned by
+-CUT_ROTATION: if both sides agree in |zeta| and in the error (a conjugate pair on the real
axis) the value is kept and marked on_cut; otherwise it is marked ambiguous, because which
branch is "principal" beyond the collision is a choice, not a fact.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
import sympy as sp

from ..errors import InputError
from ..schemes.base import Scheme
from ..schemes.stability import StabilityPolynomial, polynomial_roots

NEWTON_ITERATIONS = 6
MAX_TURN = 0.6            # radians the root's argument may turn in one accepted step
MIN_STEP = 1e-12          # step in z (relative to max(1, |z|)) below which a step is forced
MAX_PASSES = 6000         # tracker loop passes before the remaining paths are given up
CHART_SWITCH = 2.0        # |u| above which the tracker moves to the other chart
COLLISION_SEPARATION = 1e-7  # roots closer than this (chart units) count as collided
MAX_OMEGA_H = 1e4         # end of the imaginary-axis curves (phase advance per step)
_EPS = np.finfo(float).eps


# --- small kernels ----------------------------------------------------------------------------
def as_stability_polynomial(obj) -> StabilityPolynomial:
    if isinstance(obj, Scheme):
        return obj.pi
    if isinstance(obj, StabilityPolynomial):
        return obj
    raise InputError("scheme", "must be a Scheme or a StabilityPolynomial")


def _coefficients(P: np.ndarray, z: np.ndarray, derivative: bool = True):
    """Return c_i(z) and dc_i/dz (None unless derivative), ascending in zeta, z.shape + (k+1,)."""
    zz = z[..., None]
    m = P.shape[1] - 1
    c = np.empty(z.shape + (P.shape[0],), dtype=complex)
    c[...] = P[:, m]
    dc = np.zeros_like(c) if derivative else None
    for j in range(m - 1, -1, -1):
        if derivative:
            dc *= zz
            dc += c
        c *= zz
        c += P[:, j]
    return c, dc


def _in_chart(c: np.ndarray, flip: np.ndarray) -> np.ndarray:
    """Return the coefficients in the tracker's chart: reversed (u = 1/zeta) where flip."""
    if not np.any(flip):
        return c
    out = c.copy()
    out[flip] = c[flip, ::-1]
    return out


def _horner(c: np.ndarray, u: np.ndarray):
    """Return sum c_i u^i and its u-derivative for rows of ascending coefficients."""
    val = c[..., -1].copy()
    der = np.zeros_like(val)
    for i in range(c.shape[-1] - 2, -1, -1):
        der = der * u + val
        val = val * u + c[..., i]
    return val, der


def _separation_bound(c: np.ndarray, u: np.ndarray) -> np.ndarray:
    """Return a lower bound on the distance from the root u to the other roots of sum c_i x^i.

    With F(u + w) = sum a_j w^j (a_0 ~ 0), the other roots solve a_1 + a_2 w + ... = 0, and
    Fujiwara's bound on the reciprocal polynomial gives |w| >= 1 / (2 max_j |a_{j+1}/a_1|^{1/j}).
    """
    n = c.shape[-1] - 1
    if n <= 1:
        return np.full(u.shape, np.inf)
    a = c.copy()
    for j in range(n):  # Taylor shift: a[j] becomes F^(j)(u) / j!
        for i in range(n - 1, j - 1, -1):
            a[..., i] = a[..., i] + u * a[..., i + 1]
    a1 = np.abs(a[..., 1])
    worst = np.zeros(u.shape)
    with np.errstate(divide="ignore", invalid="ignore"):
        for j in range(1, n):
            worst = np.maximum(worst, (np.abs(a[..., j + 1]) / a1) ** (1.0 / j))
        sep = 0.5 / worst
    sep[a1 == 0] = 0.0
    return np.where(np.isnan(sep), 0.0, sep)


@dataclass(frozen=True)
class RootTrack:
    """Roots continued along segments, sampled at shared path fractions."""

    zeta: np.ndarray        # (N, M) complex
    argument: np.ndarray    # (N, M) continuous arg zeta along the path
    separation: np.ndarray  # (N, M) smallest separation bound met so far
    collided: np.ndarray    # (N, M) bool: stopped at, or passed within 1e-7 of, a collision
    turned: np.ndarray      # (N, M) bool: a forced step through zeta = 0 or infinity
    failed: np.ndarray      # (N, M) bool: gave up (tracker budget or non-finite values)


def continue_roots(pi: StabilityPolynomial, z0, z1, zeta0, arg0, stops) -> RootTrack:
    """Return the root of pi continued from (z0, zeta0) along [z0, z1], sampled at stops.

    Parameters
    ----------
    z0, z1, zeta0 : ndarray of complex, shape (N,)
        Segment ends and the root at z0 (inf allowed).
    arg0 : ndarray of float, shape (N,)
        The continuous argument of zeta0.
    stops : ndarray of float, shape (M,)
        Increasing path fractions in (0, 1] at which the root is recorded.
    """
    P = pi.numeric
    z0 = np.asarray(z0, dtype=complex).ravel()
    z1 = np.asarray(z1, dtype=complex).ravel()
    stops = np.asarray(stops, dtype=float).ravel()
    N, M = z0.size, stops.size
    out_zeta = np.full((N, M), np.nan + 0j)
    out_arg = np.full((N, M), np.nan)
    out_sep = np.full((N, M), np.nan)
    out_col = np.zeros((N, M), dtype=bool)
    out_turn = np.zeros((N, M), dtype=bool)
    out_fail = np.zeros((N, M), dtype=bool)

    zeta0 = np.asarray(zeta0, dtype=complex).ravel()
    chart = ~(np.abs(zeta0) <= CHART_SWITCH)          # True: u = 1 / zeta
    with np.errstate(divide="ignore", invalid="ignore"):
        u = np.where(chart, np.where(np.isinf(zeta0), 0.0, 1.0 / zeta0), zeta0)
    arg = np.asarray(arg0, dtype=float).ravel().copy()
    s = np.zeros(N)
    dz = z1 - z0
    size = np.abs(dz)
    ds = np.where(size > 0, np.minimum(0.5, 0.05 / np.maximum(size, 1e-300)), 1.0)
    nxt = np.zeros(N, dtype=np.int64)
    sep_min = np.full(N, np.inf)
    turned = np.zeros(N, dtype=bool)

    # coefficients (zeta chart), their z-derivative and the separation at the current points
    c_cur, dc_cur = _coefficients(P, z0)
    sep_cur = _separation_bound(_in_chart(c_cur, chart), u)

    # a zero-length segment has the start root at every stop
    still = size == 0
    if np.any(still):
        out_zeta[still] = zeta0[still, None]
        out_arg[still] = arg[still, None]
        nxt[still] = M
    active = np.nonzero(nxt < M)[0]
    for _ in range(MAX_PASSES):
        if active.size == 0:
            break
        a = active
        ua, ch, sa = u[a], chart[a], s[a]
        target = stops[nxt[a]]
        s_new = np.minimum(sa + ds[a], target)
        hit = s_new >= target
        s_new = np.where(hit, target, s_new)
        # Euler predictor along the tangent du/ds = -F_z dz / F_u
        _, fu = _horner(_in_chart(c_cur[a], ch), ua)
        fz, _ = _horner(_in_chart(dc_cur[a], ch), ua)
        with np.errstate(divide="ignore", invalid="ignore"):
            slope = -fz * dz[a] / fu
        slope = np.where(np.isfinite(slope), slope, 0.0)
        u_pred = ua + (s_new - sa) * slope
        # Newton corrector at the new point
        c_raw, dc_raw = _coefficients(P, z0[a] + s_new * dz[a])
        c_new = _in_chart(c_raw, ch)
        uu = u_pred.copy()
        first = second = last = None
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            for it in range(NEWTON_ITERATIONS):
                f, fp = _horner(c_new, uu)
                step = -f / fp
                uu = uu + step
                mag = np.abs(step)
                if it == 0:
                    first = mag
                elif it == 1:
                    second = mag
                last = mag
            f, _ = _horner(c_new, uu)
            scale = _horner(np.abs(c_new), np.abs(uu))[0]
        finite = np.isfinite(uu)
        converged = finite & ((last <= 1e-13 * np.maximum(1.0, np.abs(uu)))
                              | (np.abs(f) <= 64 * _EPS * scale))
        contracting = (second <= 0.5 * first) | (first <= 1e-12)
        sep_new = _separation_bound(c_new, np.where(finite, uu, 0.0))
        moved = np.abs(uu - ua)
        near = (moved <= 0.5 * np.minimum(sep_new, sep_cur[a])) & \
               (np.abs(uu - u_pred) <= 0.1 * sep_new)
        in_chart = np.abs(uu) <= 2 * CHART_SWITCH
        with np.errstate(divide="ignore", invalid="ignore"):
            turn = np.angle(uu / ua)
        turn = np.where(np.isfinite(turn), turn, np.pi)
        gentle = np.abs(turn) <= MAX_TURN
        good = finite & converged & contracting & near & in_chart
        accept = good & gentle
        # the floor is in z units (a branch point passed at distance d needs steps ~ d), and
        # never below what the float path fraction can resolve
        floor = np.maximum(MIN_STEP * np.maximum(1.0, np.abs(z0[a] + sa * dz[a])) / size[a],
                           8 * _EPS * np.maximum(sa, 1e-300))
        forced = ~accept & (ds[a] <= floor)
        # forced through a turn of the argument (zeta passing 0 or infinity): take the step;
        # forced by a root collision: stop, the branch beyond is not this path's to choose
        # (a real Newton iteration cannot even leave the real axis there)
        take = accept | (forced & good)
        dead = forced & ~good
        # bookkeeping for accepted (and forced) steps
        idx = a[take]
        if idx.size:
            tk = take
            turned[idx] |= forced[tk] & ~gentle[tk]
            sign = np.where(ch[tk], -1.0, 1.0)
            arg[idx] = arg[idx] + sign * turn[tk]
            u[idx] = uu[tk]
            s[idx] = s_new[tk]
            c_cur[idx] = c_raw[tk]
            dc_cur[idx] = dc_raw[tk]
            sep_cur[idx] = sep_new[tk]
            sep_min[idx] = np.minimum(sep_min[idx], sep_new[tk])
            # grow after forced steps too, so the path leaves a collision quickly
            ds[idx] = np.minimum(2.0 * ds[idx], 1.0)
            # change chart when the root leaves the comfortable disc
            flip = np.abs(u[idx]) > CHART_SWITCH
            if np.any(flip):
                fi = idx[flip]
                u[fi] = 1.0 / u[fi]
                chart[fi] = ~chart[fi]
                sep_cur[fi] = _separation_bound(_in_chart(c_cur[fi], chart[fi]), u[fi])
            rec = idx[hit[tk]]
            if rec.size:
                col = nxt[rec]
                with np.errstate(divide="ignore", invalid="ignore"):
                    val = np.where(chart[rec], np.where(u[rec] == 0, np.inf + 0j, 1.0 / u[rec]),
                                   u[rec])
                out_zeta[rec, col] = val
                out_arg[rec, col] = arg[rec]
                out_sep[rec, col] = sep_min[rec]
                out_col[rec, col] = sep_min[rec] < COLLISION_SEPARATION
                out_turn[rec, col] = turned[rec]
                nxt[rec] += 1
        rej = a[~take & ~dead]
        ds[rej] = ds[rej] * 0.25
        if np.any(dead):
            gone = a[dead]
            lost = ~finite[dead]
            for g, l in zip(gone, lost):
                out_col[g, nxt[g]:] = True
                out_fail[g, nxt[g]:] = l
                out_sep[g, nxt[g]:] = 0.0
            nxt[gone] = M
        active = a[nxt[a] < M]
    for g in active:  # budget exhausted
        out_fail[g, nxt[g]:] = True
    return RootTrack(zeta=out_zeta, argument=out_arg, separation=out_sep, collided=out_col,
                  turned=out_turn, failed=out_fail)


def _check_principal_start(pi: StabilityPolynomial) -> None:
    rho = [row[0] for row in pi.exact]
    if sp.simplify(sum(rho)) != 0:
        raise InputError("scheme", "pi(1, 0) != 0 (rho(1) != 0): the scheme is not consistent, "
                                   "so no root branch starts at zeta(0) = 1")
    if sp.simplify(sum(i * c for i, c in enumerate(rho))) == 0:
        raise InputError("scheme", "zeta = 1 is a multiple root of pi(., 0): the principal root "
                                   "is not defined")


# --- public API -------------------------------------------------------------------------------
@dataclass(frozen=True)
class PrincipalRoot:
    """The principal root zeta(z) at an array of points, with what can be trusted about it.

    Attributes
    ----------
    z : ndarray of complex
    value : ndarray of complex, same shape
        zeta(z); inf where the branch sits at infinity, nan where it is not determined.
    argument : ndarray of float, same shape
        arg zeta continued from 0 along [0, z] (not reduced to (-pi, pi]).
    ambiguous : ndarray of bool, same shape
        The path meets a root collision and the branches continued past it on either side
        differ in modulus, or z is itself (within 1e-7) a collision: the principal root is
        not determined there (value nan).
    on_cut : ndarray of bool, same shape
        The path meets a root collision but both sides agree in |zeta| and in the relative
        error (e.g. a conjugate pair on the real axis): value and argument are the limit from
        the side of larger Im z (for imaginary z: from Re z < 0), and the sign of the phase
        error is a convention.
    through_zero : ndarray of bool, same shape
        The root passed through 0 or infinity on the path, so the argument jumped by a
        principal value there.
    separation : ndarray of float, same shape
        The smallest lower bound met along the path on the distance to another root (in the
        tracker's chart units, where |zeta| or |1/zeta| is at most 2); inf for one-step schemes.
    """

    z: np.ndarray
    value: np.ndarray
    argument: np.ndarray
    ambiguous: np.ndarray
    on_cut: np.ndarray
    through_zero: np.ndarray
    separation: np.ndarray


CUT_ROTATION = 1e-6  # radians: the two sides of a path through a branch point


def _side_limits(poly, z, sign):
    """Return the RootTrack of zeta at z reached along the ray rotated by sign * CUT_ROTATION."""
    n = z.size
    bent = z * np.exp(1j * sign * CUT_ROTATION)
    first = continue_roots(poly, np.zeros(n, dtype=complex), bent, np.ones(n, dtype=complex),
                            np.zeros(n), np.array([1.0]))
    start = np.where(first.failed[:, 0], 1.0 + 0j, first.zeta[:, 0])
    second = continue_roots(poly, bent, z, start, np.nan_to_num(first.argument[:, 0]),
                             np.array([1.0]))
    bad = first.collided[:, 0] | first.failed[:, 0] | second.collided[:, 0] | second.failed[:, 0]
    return second.zeta[:, 0], second.argument[:, 0], bad, first.turned[:, 0] | second.turned[:, 0]


def principal_root(pi, z, with_argument: bool = True) -> PrincipalRoot:
    """Return the PrincipalRoot of pi at every point of z, continued from zeta(0) = 1.

    Parameters
    ----------
    pi : StabilityPolynomial or Scheme
    z : array_like of complex, any shape
        Points h*lambda; each is reached along the straight segment from 0. Where that
        segment runs through a branch point, the two paths turned by +-CUT_ROTATION decide
        (see PrincipalRoot.on_cut and .ambiguous).
    with_argument : bool
        For a one-step scheme the root is R(z) in closed form; its continuous argument still
        needs the path, which with_argument=False skips (the argument is then the principal
        value and through_zero is False).

    Examples
    --------
    >>> from stepfence.schemes.catalogue import get_scheme
    >>> r = principal_root(get_scheme("bdf2"), [0.1j])
    >>> bool(abs(r.value[0] - (2 + (1 + 0.2j) ** 0.5) / (3 - 0.2j)) < 1e-14)
    True
    """
    poly = as_stability_polynomial(pi)
    _check_principal_start(poly)
    z = np.asarray(z, dtype=complex)
    shape = z.shape
    flat = z.ravel()
    if not np.all(np.isfinite(flat)):
        raise InputError("z", "contains a non-finite value (NaN or Inf)")
    none = np.zeros(flat.size, dtype=bool)
    if poly.degree_zeta == 1 and not with_argument:
        c, _ = _coefficients(poly.numeric, flat, derivative=False)
        with np.errstate(divide="ignore", invalid="ignore"):
            val = np.where(c[:, 1] == 0, np.inf + 0j, -c[:, 0] / c[:, 1])
        return PrincipalRoot(z=z, value=val.reshape(shape), argument=np.angle(val).reshape(shape),
                             ambiguous=none.reshape(shape), on_cut=none.reshape(shape),
                             through_zero=none.reshape(shape), separation=np.full(shape, np.inf))
    n = flat.size
    tr = continue_roots(poly, np.zeros(n, dtype=complex), flat, np.ones(n, dtype=complex),
                         np.zeros(n), np.array([1.0]))
    value = tr.zeta[:, 0].copy()
    arg = tr.argument[:, 0].copy()
    ambiguous = tr.collided[:, 0] | tr.failed[:, 0]
    turned = tr.turned[:, 0].copy()
    on_cut = none.copy()
    hard = np.nonzero(ambiguous)[0]
    if hard.size:
        zh = flat[hard]
        # the reported side: larger Im z (for real z, the limit from the upper half-plane);
        # for imaginary z the side with Re z < 0
        side = np.where(zh.real != 0, np.sign(zh.real), np.sign(zh.imag))
        zp, ap, badp, tp = _side_limits(poly, zh, side)
        zm, am, badm, tm = _side_limits(poly, zh, -side)
        with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
            mod_p, mod_m = np.abs(zp), np.abs(zm)
            big = np.maximum(np.maximum(mod_p, mod_m), 1e-300)
            amp_p, amp_m = np.log(mod_p) - zh.real, np.log(mod_m) - zh.real
            err_p = relative_step_error(amp_p, ap - zh.imag)
            err_m = relative_step_error(amp_m, am - zh.imag)
            same = (np.abs(mod_p - mod_m) <= 1e-9 * big) & \
                   ((err_p == err_m) | (np.abs(err_p - err_m) <= 1e-9 * np.maximum(err_p, 1e-300)))
        same = same & ~badp & ~badm
        value[hard] = np.where(same, zp, np.nan)
        arg[hard] = np.where(same, ap, np.nan)
        ambiguous[hard] = ~same
        on_cut[hard] = same
        turned[hard] = np.where(same, tp | tm, turned[hard])
    value = np.where(ambiguous, np.nan + 0j, value)
    arg = np.where(ambiguous, np.nan, arg)
    return PrincipalRoot(z=z, value=value.reshape(shape), argument=arg.reshape(shape),
                         ambiguous=ambiguous.reshape(shape), on_cut=on_cut.reshape(shape),
                         through_zero=turned.reshape(shape),
                         separation=tr.separation[:, 0].reshape(shape))


def all_roots(pi, z) -> np.ndarray:
    """Return every root of pi(., z), shape z.shape + (k,), inf for roots at infinity."""
    poly = as_stability_polynomial(pi)
    z = np.asarray(z, dtype=complex)
    k = poly.degree_zeta
    coeffs = poly.zeta_coefficients(z.ravel())
    n = coeffs.shape[0]
    out = np.full((n, k), np.inf + 0j)
    if k == 0 or n == 0:
        return out.reshape(z.shape + (k,))
    lead = coeffs[:, -1]
    scale = np.max(np.abs(coeffs), axis=1)
    ok = np.abs(lead) > 1e-14 * scale
    if np.any(ok):
        c = coeffs[ok] / lead[ok, None]
        if k == 1:
            out[ok, 0] = -c[:, 0]
        else:
            comp = np.zeros((c.shape[0], k, k), dtype=complex)
            comp[:, 0, :] = -c[:, :-1][:, ::-1]
            idx = np.arange(k - 1)
            comp[:, idx + 1, idx] = 1.0
            out[ok] = np.linalg.eigvals(comp)
    for i in np.nonzero(~ok)[0]:  # leading coefficient vanishes: fewer finite roots
        r = polynomial_roots(coeffs[i])
        out[i, : r.size] = r
    return out.reshape(z.shape + (k,))


def spurious_roots(pi, z, principal=None) -> np.ndarray:
    """Return the roots other than the principal one, shape z.shape + (k - 1,).

    Sorted by decreasing modulus (take np.abs for the moduli); inf marks a root at infinity.
    The principal root is removed as the root nearest the continued principal branch.

    Parameters
    ----------
    pi : StabilityPolynomial or Scheme
    z : array_like of complex
    principal : ndarray of complex, optional
        zeta(z) if already computed (PrincipalRoot.value).
    """
    poly = as_stability_polynomial(pi)
    z = np.asarray(z, dtype=complex)
    if principal is None:
        principal = principal_root(poly, z, with_argument=False).value
    roots = all_roots(poly, z).reshape(-1, poly.degree_zeta)
    p = np.asarray(principal, dtype=complex).ravel()
    n, k = roots.shape
    if k <= 1:
        return np.zeros(z.shape + (0,), dtype=complex)
    unknown = np.isnan(p)
    p = np.where(unknown, 0.0, p)
    with np.errstate(invalid="ignore"):
        dist = np.abs(roots - p[:, None])
    both_inf = np.isinf(roots) & np.isinf(p)[:, None]
    dist = np.where(both_inf, -1.0, np.where(np.isnan(dist), np.inf, dist))
    drop = np.argmin(dist, axis=1)
    keep = np.ones((n, k), dtype=bool)
    keep[np.arange(n), drop] = False
    rest = roots[keep].reshape(n, k - 1)
    order = np.argsort(-np.abs(rest), axis=1, kind="stable")
    rest = np.take_along_axis(rest, order, axis=1)
    rest[unknown] = np.nan  # which root is spurious is unknown where the principal one is
    return rest.reshape(z.shape + (k - 1,))


@lru_cache(maxsize=256)
def scheme_accuracy(scheme: Scheme):
    """Return analysis.accuracy.accuracy(scheme), computed once per scheme (it is exact, slow)."""
    from .accuracy import accuracy
    return accuracy(scheme)


def principal_error_constant(scheme: Scheme):
    """Return (p, C') with zeta(z) - e^z = C' z^{p+1} + O(z^{p+2}), C' an exact sympy number.

    The families report their constants in their own conventions (analysis.accuracy):
    multistep C_{p+1}/sigma(1) with zeta - e^z ~ -C_{p+1}/sigma(1) z^{p+1}; one-step C of
    R(z) - e^z; predictor-corrector the principal-root constant itself. p is the linear order
    (the order on y' = lambda y), which is what the principal root sees.
    """
    acc = scheme_accuracy(scheme)
    p = acc.linear_order if acc.linear_order is not None else acc.order
    c = acc.error_constant_normalised
    if c is None:
        raise InputError("scheme", "has no principal-root error constant (not consistent)")
    if scheme.kind == "multistep":
        c = -c
    # hardening fix: nsimplify only floats (it can change an exact irrational; see multistep)
    c = sp.sympify(c, strict=True)
    return int(p), (sp.nsimplify(c) if c.has(sp.Float) else c)


def distinct_points(pi, z):
    """Return (distinct, inverse, mirrored): the points to solve for z, shape (n,).

    With real coefficients zeta(conj z) = conj zeta(z) (paths mirror too), so each conjugate
    pair is solved once: z.ravel() equals distinct[inverse], conjugated where mirrored.
    """
    poly = as_stability_polynomial(pi)
    z = np.asarray(z, dtype=complex).ravel()
    if poly.is_real:
        key = z.real + 1j * np.abs(z.imag)
        mirrored = z.imag < 0
    else:
        key = z
        mirrored = np.zeros(z.size, dtype=bool)
    distinct, inverse = np.unique(key, return_inverse=True)
    return distinct, inverse.ravel(), mirrored


def _validated_step(h, field="h") -> float:
    try:
        h = float(h)
    except (TypeError, ValueError):
        raise InputError(field, f"must be a number, got {h!r}") from None
    if not (math.isfinite(h) and h > 0):
        raise InputError(field, f"must be a positive finite step, got {h}")
    return h


def validated_eigenvalues(eigenvalues) -> np.ndarray:
    """Return the eigenvalues as a flat complex array; InputError when empty or not finite."""
    from .. import limits
    from ..errors import LimitExceeded
    if isinstance(eigenvalues, (str, bytes)):
        raise InputError("eigenvalues", "must be a list or array of numbers, not text")
    try:
        lam = np.asarray(eigenvalues, dtype=complex).ravel()
    except (TypeError, ValueError):
        raise InputError("eigenvalues", "must be a list of (complex) numbers") from None
    if lam.size == 0:
        raise InputError("eigenvalues", "no eigenvalues given")
    if lam.size > limits.MAX_EIGENVALUES:
        raise LimitExceeded("eigenvalues", f"{lam.size} values exceed the limit of "
                                           f"{limits.MAX_EIGENVALUES}")
    if not np.all(np.isfinite(lam)):
        bad = int(np.nonzero(~np.isfinite(lam))[0][0])
        raise InputError("eigenvalues", f"entry {bad} is not finite (NaN or Inf)")
    return lam


def log_error_parts(root: PrincipalRoot):
    """Return (amplitude part log|zeta| - Re z, phase error arg zeta - Im z) elementwise."""
    with np.errstate(divide="ignore", invalid="ignore"):
        amp = np.log(np.abs(root.value)) - root.z.real
    phase = root.argument - root.z.imag
    bad = root.ambiguous | ~np.isfinite(root.value)
    amp = np.where(root.ambiguous, np.nan, amp)
    phase = np.where(bad | (np.abs(root.value) == 0), np.nan, phase)
    return amp, phase


def relative_step_error(amp, phase) -> np.ndarray:
    """Return |zeta e^{-z} - 1| = |expm1(amp + i phase)| without cancellation."""
    amp = np.asarray(amp, dtype=float)
    phase = np.asarray(phase, dtype=float)
    with np.errstate(over="ignore", invalid="ignore"):
        em = np.expm1(amp)
        re = em * np.cos(phase) - 2.0 * np.sin(phase / 2) ** 2
        im = np.exp(amp) * np.sin(phase)
        out = np.hypot(re, im)
    # zeta = 0 (amp = -inf): the step returns nothing of the mode, error exactly 1
    return np.where(np.isneginf(amp), 1.0, out)


@dataclass(frozen=True)
class AmplificationPhase:
    """Per-step amplitude and phase behaviour of the principal root at points z.

    Attributes (all arrays of the shape of z)
    ----------
    z : complex
    zeta : complex
        The principal root.
    amplification : float
        |zeta|, the factor the computed mode is multiplied by per step.
    amplification_ratio : float
        |zeta| / |e^z|: above 1 the scheme damps the mode less than the exact solution does.
    log10_amplification_ratio : float
        The same, as a base-10 logarithm (finite where the ratio itself overflows).
    amplitude_error : float
        amplification_ratio - 1.
    phase_error : float
        arg zeta - Im z, radians per step, with arg zeta continuous along [0, z].
    relative_error : float
        |zeta - e^z| / |e^z|, the local relative error of one step.
    spurious : float, shape z.shape + (k - 1,)
        Moduli of the other roots, largest first.
    spurious_max : float
        Their maximum; nan for a one-step scheme (it has none).
    ambiguous : bool
        The principal root is not determined (root collision on the path); values are nan.
    on_cut : bool
        The path runs through a root collision whose two sides agree in modulus and error;
        the phase error is that of one side (PrincipalRoot.on_cut; its sign is a convention).
    through_zero : bool
        The root passed through 0 or infinity on the path; the phase is a principal value.
    """

    z: np.ndarray
    zeta: np.ndarray
    amplification: np.ndarray
    amplification_ratio: np.ndarray
    log10_amplification_ratio: np.ndarray
    amplitude_error: np.ndarray
    phase_error: np.ndarray
    relative_error: np.ndarray
    spurious: np.ndarray
    spurious_max: np.ndarray
    ambiguous: np.ndarray
    on_cut: np.ndarray
    through_zero: np.ndarray


def amplification_and_phase(scheme, z) -> AmplificationPhase:
    """Return the AmplificationPhase of the scheme's principal root at the points z.

    Parameters
    ----------
    scheme : Scheme or StabilityPolynomial
    z : array_like of complex, any shape
    """
    poly = as_stability_polynomial(scheme)
    root = principal_root(poly, z)
    amp, phase = log_error_parts(root)
    spur = np.abs(spurious_roots(poly, root.z, principal=root.value))
    if spur.shape[-1]:
        spur_max = np.max(spur, axis=-1)
    else:
        spur_max = np.full(root.z.shape, np.nan)
    with np.errstate(over="ignore"):
        ratio = np.exp(amp)
        amp_err = np.expm1(amp)
    zeta = np.where(root.ambiguous, np.nan + 0j, root.value)
    return AmplificationPhase(
        z=root.z, zeta=zeta, amplification=np.abs(zeta), amplification_ratio=ratio,
        log10_amplification_ratio=amp / math.log(10), amplitude_error=amp_err,
        phase_error=phase, relative_error=np.where(root.ambiguous, np.nan,
                                                   relative_step_error(amp, phase)),
        spurious=spur, spurious_max=spur_max, ambiguous=root.ambiguous, on_cut=root.on_cut,
        through_zero=root.through_zero)


@dataclass(frozen=True)
class ImaginaryAxisCurves:
    """Dispersion curves of a scheme on z = i*h*omega, arrays of shape (n,).

    Attributes
    ----------
    omega_h : float
        h*omega, the phase advance of the exact solution per step.
    amplification : float
        |zeta(i h omega)|; the exact value is 1.
    amplitude_error : float
        |zeta| - 1 (negative: numerical damping; positive: growth).
    phase_error : float
        arg zeta - h omega (negative: the numerical wave lags).
    phase_ratio : float
        arg zeta / (h omega), numerical over exact phase speed; its limit 1 at h omega = 0.
    relative_error : float
        |zeta - e^{i h omega}|.
    spurious_max : float
        Largest modulus of the other roots (nan for one-step schemes).
    ambiguous : bool
        Beyond a root collision on the axis (the principal root is not determined).
    """

    omega_h: np.ndarray
    amplification: np.ndarray
    amplitude_error: np.ndarray
    phase_error: np.ndarray
    phase_ratio: np.ndarray
    relative_error: np.ndarray
    spurious_max: np.ndarray
    ambiguous: np.ndarray


def imaginary_axis_curves(scheme, omega_h_max: float, n: int = 256,
                          omega_h_min: float | None = None) -> ImaginaryAxisCurves:
    """Return ImaginaryAxisCurves sampled at n points of h*omega in [omega_h_min, omega_h_max].

    Parameters
    ----------
    scheme : Scheme or StabilityPolynomial
    omega_h_max : float
        Upper end of h*omega (> 0).
    n : int
        Number of samples, 2 to limits.MAX_LOCUS_POINTS.
    omega_h_min : float, optional
        Lower end; 0 by default for real coefficients (zeta(-iy) is the conjugate of zeta(iy),
        so the amplitude is even and the phase error odd), -omega_h_max otherwise.
    """
    from .. import limits
    poly = as_stability_polynomial(scheme)
    top = _validated_step(omega_h_max, "omega_h_max")
    if top > MAX_OMEGA_H:
        raise InputError("omega_h_max", f"must be at most {MAX_OMEGA_H:g}, got {omega_h_max}")
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or not 2 <= n <= limits.MAX_LOCUS_POINTS:
        raise InputError("n", f"must be an integer from 2 to {limits.MAX_LOCUS_POINTS}, got {n!r}")
    if omega_h_min is None:
        omega_h_min = 0.0 if poly.is_real else -top
    lo = float(omega_h_min)
    if not (math.isfinite(lo) and lo < top):
        raise InputError("omega_h_min", f"must be finite and below omega_h_max, got {omega_h_min}")
    y = np.linspace(lo, top, int(n))
    ap = amplification_and_phase(poly, 1j * y)
    arg = ap.phase_error + y
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(y != 0, arg / np.where(y != 0, y, 1.0), 1.0)
    ratio = np.where(ap.ambiguous, np.nan, ratio)
    return ImaginaryAxisCurves(omega_h=y, amplification=ap.amplification,
                               amplitude_error=ap.amplitude_error, phase_error=ap.phase_error,
                               phase_ratio=ratio, relative_error=ap.relative_error,
                               spurious_max=ap.spurious_max, ambiguous=ap.ambiguous)


@dataclass(frozen=True)
class SpectrumAccuracy:
    """How much each mode is damped or shifted per step at one step h (arrays of shape (n,)).

    Attributes
    ----------
    h : float
    eigenvalues, z : complex
        lambda and z = h lambda.
    amplification, amplification_ratio, log10_amplification_ratio, phase_error,
    relative_error, spurious_max, ambiguous, on_cut, through_zero :
        As in AmplificationPhase.
    parasitic : bool
        A spurious root is larger in modulus than the principal root: the computed solution
        of that mode is eventually dominated by a parasitic (non-physical) component.
    """

    h: float
    eigenvalues: np.ndarray
    z: np.ndarray
    amplification: np.ndarray
    amplification_ratio: np.ndarray
    log10_amplification_ratio: np.ndarray
    phase_error: np.ndarray
    relative_error: np.ndarray
    spurious_max: np.ndarray
    ambiguous: np.ndarray
    on_cut: np.ndarray
    through_zero: np.ndarray
    parasitic: np.ndarray


def along_spectrum(scheme, eigenvalues, h: float) -> SpectrumAccuracy:
    """Return the SpectrumAccuracy of every eigenvalue at the step h.

    Parameters
    ----------
    scheme : Scheme or StabilityPolynomial
    eigenvalues : array_like of complex, shape (n,)
    h : float
        The step (> 0).
    """
    lam = validated_eigenvalues(eigenvalues)
    h = _validated_step(h)
    z = h * lam
    poly = as_stability_polynomial(scheme)
    uniq, inv, flip = distinct_points(poly, z)
    ap = amplification_and_phase(poly, uniq)
    sign = np.where(flip, -1.0, 1.0)
    spur = ap.spurious_max[inv]
    with np.errstate(invalid="ignore"):
        parasitic = np.where(np.isnan(spur), False, spur > ap.amplification[inv])
    return SpectrumAccuracy(
        h=h, eigenvalues=lam, z=z, amplification=ap.amplification[inv],
        amplification_ratio=ap.amplification_ratio[inv],
        log10_amplification_ratio=ap.log10_amplification_ratio[inv],
        phase_error=sign * ap.phase_error[inv], relative_error=ap.relative_error[inv],
        spurious_max=spur, ambiguous=ap.ambiguous[inv], on_cut=ap.on_cut[inv],
        through_zero=ap.through_zero[inv], parasitic=parasitic)
