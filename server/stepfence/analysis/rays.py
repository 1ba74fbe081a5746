"""Where a ray t*d (t > 0) crosses the boundary of the stability region, exactly.

A crossing is a real t at which pi(., t d) has a root on |zeta| = 1. Writing
A(w) = pi(w, t d) and its reciprocal conjugate B(w) = w^k conj(A)(1/w) (t real), such a root is
a common root of A and B, so the crossings are among the real roots of the resultant
Res_w(A, B)(t). We never expand that resultant: its Sylvester matrix is a matrix polynomial in
t, whose eigenvalues come from a companion linearisation (a generalized eigenvalue problem,
Gohberg, Lancaster & Rodman, Matrix Polynomials, 1982, ch. 1). Spurious roots (pairs of roots
w1 conj(w2) = 1 off the circle) only split an interval more finely; each interval between
candidates is then classified by one root-modulus test at an interior point. Candidates are
polished by Newton's method on (t, theta) in pi(e^{i theta}, t d) = 0.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.linalg
import scipy.optimize

from ..schemes.stability import StabilityPolynomial

STABLE_TOL = 1e-12       # |zeta| <= 1 + tol at interval interiors (far from the boundary)
BOUNDARY_TOL = 1e-7      # at a crossing point itself
REAL_TOL = 1e-5          # |Im t| / |t| accepted as a real eigenvalue before polishing


@dataclass(frozen=True)
class RayWindows:
    """Stable parameter set {t > 0 : t d in S} along one direction d, as intervals."""

    direction: complex
    crossings: np.ndarray      # polished candidates where the status may change
    windows: tuple             # ((lo, hi or inf), ...)
    degenerate: bool           # the ray runs along the boundary locus (roots stay on |zeta|=1)

    @property
    def first_exit(self) -> float:
        """h_max for |lambda| = 1: end of the window starting at 0, 0 if none, inf if unbounded."""
        if self.windows and self.windows[0][0] == 0.0:
            return self.windows[0][1]
        return 0.0


def ray_coefficients(pi: StabilityPolynomial, d: complex) -> np.ndarray:
    """Return C[i, j] with pi(w, t d) = sum_ij C[i, j] w^i t^j."""
    P = pi.numeric
    powers = d ** np.arange(P.shape[1])
    return P * powers[None, :]


def _sylvester_slices(C: np.ndarray, Cb: np.ndarray) -> list[np.ndarray]:
    """Return S_j with Sylvester(A, B)(t) = sum_j S_j t^j, A, B of degree k in w."""
    k = C.shape[0] - 1
    m = C.shape[1] - 1
    n = 2 * k
    out = []
    for j in range(m + 1):
        S = np.zeros((n, n), dtype=complex)
        a = C[::-1, j]   # descending powers of w
        b = Cb[::-1, j]
        for r in range(k):
            S[r, r:r + k + 1] = a
            S[k + r, r:r + k + 1] = b
        out.append(S)
    return out


def _matrix_poly_eigs(slices: list[np.ndarray]) -> np.ndarray:
    """Return the finite eigenvalues t of det(sum_j S_j t^j) = 0."""
    m = len(slices) - 1
    n = slices[0].shape[0]
    if m == 0:
        return np.array([], dtype=complex)
    N = n * m
    Aa = np.zeros((N, N), dtype=complex)
    Bb = np.eye(N, dtype=complex)
    for blk in range(m - 1):
        Aa[blk * n:(blk + 1) * n, (blk + 1) * n:(blk + 2) * n] = np.eye(n)
    for j in range(m):
        Aa[(m - 1) * n:, j * n:(j + 1) * n] = -slices[j]
    Bb[(m - 1) * n:, (m - 1) * n:] = slices[m]
    w = scipy.linalg.eigvals(Aa, Bb, homogeneous_eigvals=True)
    alpha, beta = w[0], w[1]
    finite = np.abs(beta) > 1e-13 * np.abs(alpha) + 1e-300
    return alpha[finite] / beta[finite]


def _is_singular_pencil(slices, rng) -> bool:
    """Return True when det(sum S_j t^j) vanishes identically (numerically)."""
    for t in rng.uniform(0.3, 3.0, size=3):
        S = sum(s * t**j for j, s in enumerate(slices))
        sv = np.linalg.svd(S, compute_uv=False)
        if sv[-1] > 1e-10 * max(sv[0], 1e-300):
            return False
    return True


def _reflect(C: np.ndarray) -> np.ndarray:
    # B(w) = w^k conj(A(1/conj(w)))... for t real: coefficient i of B is conj(coeff k-i of A)
    return np.conj(C[::-1, :])


def stability_margin(pi: StabilityPolynomial, z: complex, tol: float = STABLE_TOL) -> bool:
    """Return True when every root of pi(., z) has |zeta| <= 1 + tol, those near 1 simple."""
    c = pi.zeta_coefficients(np.asarray(z))
    scale = np.max(np.abs(c))
    if scale == 0:
        return False
    if abs(c[-1]) <= 1e-13 * scale:
        return False  # a root at infinity
    r = np.roots(c[::-1])
    mod = np.abs(r)
    if np.any(mod > 1 + tol):
        return False
    near = r[np.abs(mod - 1) <= max(tol, 1e-7)]
    if near.size > 1:
        # simple roots on the circle: separated by more than the perturbation of a double root
        dist = np.abs(near[:, None] - near[None, :]) + np.eye(near.size) * 10
        if np.min(dist) < 1e3 * np.sqrt(tol):
            return False
    return True


def polish_crossing(pi: StabilityPolynomial, d: complex, t0: float, theta0: float,
                    iters: int = 8):
    """Return (t, theta, converged) refining pi(e^{i theta}, t d) = 0 by Newton's method."""
    t, th = float(t0), float(theta0)
    for _ in range(iters):
        w = np.exp(1j * th)
        f, fw, fz = pi.evaluate(w, t * d)
        f, fw, fz = complex(f), complex(fw), complex(fz)
        # d/dt = fz * d; d/dtheta = fw * i w: real 2x2 system
        jt = fz * d
        jth = fw * 1j * w
        J = np.array([[jt.real, jth.real], [jt.imag, jth.imag]])
        try:
            step = np.linalg.solve(J, [-f.real, -f.imag])
        except np.linalg.LinAlgError:
            return t, th, False
        t += step[0]
        th += step[1]
        if abs(step[0]) <= 1e-16 * max(abs(t), 1e-300) and abs(step[1]) <= 1e-15:
            break
    w = np.exp(1j * th)
    f, fw, fz = pi.evaluate(w, t * d)
    scale = float(pi.residual_scale(abs(t * d)))
    return t, th, bool(abs(complex(f)) <= 1e-11 * max(scale, 1e-300))


def _t_scale(C: np.ndarray) -> float:
    # balance the matrix polynomial (t = T tau) so ||S_0|| ~ ||S_m|| T^m: without it the
    # coefficients of high-degree stability polynomials span 40 orders of magnitude
    norms = np.linalg.norm(C, axis=0)
    j = np.nonzero(norms > 0)[0]
    if j.size < 2 or norms[0] == 0:
        return 1.0
    top = j[-1]
    return float((norms[0] / norms[top]) ** (1.0 / top))


def _sampled_candidates(pi: StabilityPolynomial, d: complex) -> np.ndarray:
    """Return crossings of a one-step scheme with a stable evaluator, by bracketing.

    g(t) = |P(t d)|^2 - 1 is sampled on [0, bound] (bound from the evaluator: no stable point
    lies beyond it) finely enough to separate the s oscillations of a degree-s polynomial,
    and each sign change is refined by Brent's method on the stable evaluation.
    """
    ev = pi.evaluator
    n = 64 * ev.s + 2000
    t = np.linspace(0.0, ev.bound, n)
    g = np.abs(ev.rows(t * d)[0][:, 0]) ** 2 - 1.0
    sign = np.sign(g)
    idx = np.nonzero(sign[:-1] * sign[1:] < 0)[0]
    out = []
    f = lambda x: float(np.abs(ev.rows(np.array([x * d]))[0][0, 0]) ** 2 - 1.0)
    for i in idx:
        if t[i] == 0:
            continue
        out.append(scipy.optimize.brentq(f, t[i], t[i + 1], xtol=1e-300, rtol=1e-15, maxiter=200))
    return np.array(out)


def _candidates(pi: StabilityPolynomial, d: complex, rng) -> tuple[np.ndarray, bool]:
    if pi.evaluator is not None and hasattr(pi.evaluator, "bound"):
        t = _sampled_candidates(pi, d)
        return t[t > 1e-6], False
    T = _t_scale(ray_coefficients(pi, d))
    cands, degenerate = _scaled_candidates(pi, d * T, rng)
    return cands * T, degenerate


def _scaled_candidates(pi: StabilityPolynomial, d: complex, rng) -> tuple[np.ndarray, bool]:
    C = ray_coefficients(pi, d)
    k = C.shape[0] - 1
    if k == 0:
        return np.array([]), False
    slices = _sylvester_slices(C, _reflect(C))
    degenerate = _is_singular_pencil(slices, rng)
    if degenerate:
        # the ray runs along the locus: the status changes only where roots on the circle
        # collide (or leave it), i.e. at real roots of the discriminant Res_w(A, A')
        dC = C[1:, :] * np.arange(1, k + 1)[:, None]
        dC = np.vstack([dC, np.zeros((1, C.shape[1]))])
        # Sylvester of A (deg k) and A' (deg k-1) embedded as degree k with zero lead
        slices = _sylvester_slices(C, dC)
        if _is_singular_pencil(slices, rng):
            return np.array([]), True
    ev = _matrix_poly_eigs(slices)
    keep = (np.abs(ev.imag) <= REAL_TOL * np.maximum(np.abs(ev), 1e-300)) & (ev.real > 0)
    t = np.sort(ev.real[keep])
    # a candidate at t ~ 0 is the consistency root zeta = 1 itself (the resultant has a
    # multiple root at 0 that rounding splits), not a crossing; genuine first exits below 1e-6
    # occur only for directions within ~1e-18 rad of grazing, below the resolution of arg
    t = t[t > 1e-6]
    return t, degenerate


def _polish_all(pi, d, cands, degenerate):
    out = []
    for t0 in cands:
        if degenerate:
            out.append(t0)
            continue
        roots = pi.roots_at(t0 * d)
        if roots.size == 0:
            out.append(t0)
            continue
        i = int(np.argmin(np.abs(np.abs(roots) - 1)))
        t, th, ok = polish_crossing(pi, d, t0, float(np.angle(roots[i])))
        if ok and t > 0 and abs(t - t0) <= 1e-6 * max(t0, 1e-300):
            out.append(t)
        else:
            out.append(t0)
    out = np.array(sorted(out))
    if out.size > 1:
        # merge candidates that coincide to rounding (double roots of the resultant)
        keep = np.concatenate([[True], np.diff(out) > 1e-13 * out[1:]])
        out = out[keep]
    return out


def ray_windows(pi: StabilityPolynomial, d: complex, rng=None) -> RayWindows:
    """Return the stable windows of t > 0 along direction d (|d| = 1 not required)."""
    d = complex(d)
    if d == 0:
        raise ValueError("direction must be non-zero")
    rng = rng or np.random.default_rng(12345)
    cands, degenerate = _candidates(pi, d, rng)
    cands = _polish_all(pi, d, cands, degenerate)
    tol = 1e-7 if degenerate else STABLE_TOL
    # classify intervals (0, c1), (c1, c2), ..., (cn, inf)
    edges = np.concatenate([[0.0], cands, [np.inf]])
    status = []
    for lo, hi in zip(edges[:-1], edges[1:]):
        if np.isinf(hi):
            probe = 2.0 * lo + 1.0 if lo > 0 else 1.0
            probe = max(probe, 2.0 * lo)
        elif lo == 0:
            probe = hi / 2
        else:
            probe = np.sqrt(lo * hi) if hi / lo > 4 else (lo + hi) / 2
        status.append(stability_margin(pi, probe * d, tol))
    point_ok = [stability_margin(pi, c * d, BOUNDARY_TOL) for c in cands]
    windows = []
    cur = None
    for i, st in enumerate(status):
        lo, hi = edges[i], edges[i + 1]
        if st:
            if cur is None:
                cur = [lo, hi]
            else:
                cur[1] = hi
        if i < len(cands):
            # the point cands[i] joins two stable intervals only if it is itself stable
            joins = st and status[i + 1] and point_ok[i]
            if cur is not None and not joins:
                windows.append((float(cur[0]), float(cur[1])))
                cur = None
    if cur is not None:
        windows.append((float(cur[0]), float(cur[1])))
    return RayWindows(direction=d, crossings=cands, windows=tuple(windows), degenerate=degenerate)
