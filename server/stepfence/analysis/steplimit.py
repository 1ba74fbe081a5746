"""The largest stable step of a spectrum, and every stable window, vectorised.

h_max(lambda) = sup{h >= 0 : t lambda in S for all 0 < t <= h} = r(arg lambda) / |lambda|,
where r(phi) is the first exit along direction phi. For a spectrum the limit is the minimum
over its non-zero eigenvalues; the stable windows are the intersection over eigenvalues of
their stable sets {h : h lambda in S}.

Exactness: along each distinct direction the crossings are computed as polynomial roots
(analysis.rays). For large spectra a table of the exact window structure at N directions is
built once per scheme; an eigenvalue between two table directions with the same structure gets
each window end by Newton's method on pi(e^{i theta}, t e^{i phi}) = 0 started from the
interpolated table values (quadratic convergence from ~1e-7), and any eigenvalue in a cell
where the structure changes, or where Newton does not confirm, gets the exact per-direction
computation.
"""
from __future__ import annotations

import math
import threading
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from ..errors import InputError
from ..schemes.base import Scheme
from ..schemes.stability import StabilityPolynomial
from .rays import ray_windows
from .roots import root_condition

EXACT_DIRECTION_LIMIT = 256   # at most this many distinct directions: exact for each
TABLE_SIZE = 2048             # directions in the table over [0, 2 pi) (or [0, pi] if real)
NEWTON_ITERATIONS = 3


@dataclass(frozen=True)
class StepLimit:
    """Step limit of a spectrum for one scheme."""

    h_max: float | None                 # None when unbounded
    unbounded: bool
    binding_eigenvalue: complex | None
    binding_index: int | None
    windows: tuple                      # ((lo, hi or None), ...) in h
    per_eigenvalue: np.ndarray          # h_max of each eigenvalue (inf unbounded, nan for 0)
    evaluations_per_step: int
    h_max_per_evaluation: float | None
    zero_eigenvalues: int
    growing_eigenvalues: int
    zero_stable: bool
    count: int
    exact_directions: int               # eigenvalue directions solved exactly (not by table)
    messages: tuple = field(default_factory=tuple)
    safety: float | None = None

    @property
    def h_safe(self) -> float | None:
        if self.safety is None or self.h_max is None:
            return None
        return self.h_max * self.safety


# --- per-direction structure ------------------------------------------------------------------
def _theta_at(pi: StabilityPolynomial, d: complex, t: float) -> float:
    roots = pi.roots_at(t * d)
    if roots.size == 0:
        return 0.0
    i = int(np.argmin(np.abs(np.abs(roots) - 1)))
    return float(np.angle(roots[i]))


@dataclass(frozen=True)
class _Structure:
    """Window pattern along one direction: ends (finite, >0) with their root angles."""

    windows: tuple
    ends: np.ndarray       # all finite positive window ends, in order
    thetas: np.ndarray     # angle of the unit-circle root at each end
    pattern: tuple         # (starts_at_zero, n_windows, last_unbounded)


def _structure(pi: StabilityPolynomial, phi: float) -> _Structure:
    d = complex(math.cos(phi), math.sin(phi))
    rw = ray_windows(pi, d)
    ends = []
    for lo, hi in rw.windows:
        if lo > 0:
            ends.append(lo)
        if math.isfinite(hi):
            ends.append(hi)
    ends = np.array(ends)
    thetas = np.array([_theta_at(pi, d, t) for t in ends])
    w = rw.windows
    pattern = (bool(w) and w[0][0] == 0.0, len(w), bool(w) and math.isinf(w[-1][1]), rw.degenerate)
    return _Structure(windows=w, ends=ends, thetas=thetas, pattern=pattern)


REFINE_DEPTH = 14
REFINE_WIDTH = 1e-7


def _similar(a: "_Structure", b: "_Structure") -> bool:
    """Return True when two neighbouring directions share one window structure."""
    if a.pattern != b.pattern or a.ends.size != b.ends.size or a.pattern[3]:
        return False
    if a.ends.size:
        rel = np.abs(a.ends - b.ends) / np.maximum(a.ends, b.ends)
        dth = np.abs(np.angle(np.exp(1j * (a.thetas - b.thetas))))
        if np.any(rel > 0.05) or np.any(dth > 0.2):
            return False
    return True


class _Table:
    """Exact window structures at table directions, for interpolation."""

    def __init__(self, pi: StabilityPolynomial, n: int = TABLE_SIZE):
        self.pi = pi
        self.real = pi.is_real
        if self.real:
            self.phi = np.linspace(0.0, np.pi, n // 2 + 1)
        else:
            self.phi = np.linspace(-np.pi, np.pi, n + 1)
        phis = list(self.phi)
        structs = [_structure(pi, p) for p in phis]
        if not self.real:
            structs[-1] = structs[0]
        # refine where the window structure changes (a ray grazing the boundary): bisect the
        # cell until both ends agree or the cell is narrower than REFINE_WIDTH
        for _ in range(REFINE_DEPTH):
            new_phis, new_structs, changed = [phis[0]], [structs[0]], False
            for i in range(len(phis) - 1):
                if not _similar(structs[i], structs[i + 1]) and phis[i + 1] - phis[i] > REFINE_WIDTH:
                    mid = 0.5 * (phis[i] + phis[i + 1])
                    new_phis.append(mid)
                    new_structs.append(_structure(pi, mid))
                    changed = True
                new_phis.append(phis[i + 1])
                new_structs.append(structs[i + 1])
            phis, structs = new_phis, new_structs
            if not changed:
                break
        self.phi = np.array(phis)
        self.structs = structs
        n_nodes = len(self.phi)
        self.smooth = np.array([_similar(structs[i], structs[i + 1]) for i in range(n_nodes - 1)])
        # one id per distinct window pattern (which ends open/close which windows)
        shapes = {}
        self.pattern_ids = np.zeros(n_nodes, dtype=np.int64)
        self.pattern_rep = []
        for i, st in enumerate(self.structs):
            key = tuple((lo > 0, math.isfinite(hi)) for lo, hi in st.windows)
            if key not in shapes:
                shapes[key] = len(self.pattern_rep)
                self.pattern_rep.append(i)
            self.pattern_ids[i] = shapes[key]
        width = max(s.ends.size for s in self.structs)
        self.width = width
        self.ends = np.full((n_nodes, max(width, 1)), np.nan)
        self.thetas = np.full((n_nodes, max(width, 1)), np.nan)
        for i, s in enumerate(self.structs):
            self.ends[i, : s.ends.size] = s.ends
            self.thetas[i, : s.ends.size] = s.thetas


FINE_PER_CELL = 32       # fine nodes per coarse table cell for the Hermite interpolant
FINE_TOL = 2e-15         # accepted relative interpolation error, checked at every fine midpoint



def _exit_derivative(pi, phi, t, th):
    """Return dt/dphi along F(t, theta; phi) = pi(e^{i theta}, t e^{i phi}) = 0."""
    d = np.exp(1j * phi)
    w = np.exp(1j * th)
    _, fw, fz = pi.evaluate(w, t * d)
    a = fz * d             # dF/dt
    b = fw * 1j * w        # dF/dtheta
    c = fz * 1j * t * d    # dF/dphi
    det = a.real * b.imag - b.real * a.imag
    return (-c.real * b.imag + b.real * c.imag) / det


class _FineExit:
    """Window ends r_e(phi) as verified piecewise cubic Hermite interpolants.

    On a uniform grid FINE_PER_CELL times finer than the coarse table, every window end and
    its derivative d r_e / d phi are computed by Newton's method and implicit differentiation
    of pi(e^{i theta}, t e^{i phi}) = 0. A fine cell is used only when both nodes and its
    midpoint lie in smooth coarse cells of one window pattern and the interpolant matches a
    Newton solve at the midpoint to FINE_TOL for every end; elsewhere the caller falls back to
    per-eigenvalue Newton or the exact route.
    """

    def __init__(self, tab: "_Table"):
        self.tab = tab
        lo, hi = (0.0, np.pi) if tab.real else (-np.pi, np.pi)
        n_cells = (TABLE_SIZE // 2 if tab.real else TABLE_SIZE) * FINE_PER_CELL
        self.lo, self.h, self.n = lo, (hi - lo) / n_cells, n_cells
        self.width = max(tab.width, 1)
        phi = lo + self.h * np.arange(n_cells + 1)
        self.pid, self.r, self.dr = self._nodes(phi)
        mid = phi[:-1] + 0.5 * self.h
        pmid, rmid, _ = self._nodes(mid)
        ok = (self.pid[:-1] == self.pid[1:]) & (pmid == self.pid[:-1]) & (self.pid[:-1] >= 0)
        j = np.arange(n_cells)
        with np.errstate(invalid="ignore"):
            interp = self._hermite(j, np.full(n_cells, 0.5))
            used = np.isfinite(rmid)
            err = np.where(used, np.abs(interp - rmid) / np.where(used, np.abs(rmid), 1.0), 0.0)
            bad = np.any(err > FINE_TOL, axis=1) | np.any(np.isfinite(rmid) != np.isfinite(interp), axis=1)
        self.cell_ok = ok & ~bad

    def _nodes(self, phi):
        """Return (pattern id or -1, ends (n, W) with nan padding, derivatives) at phi."""
        tab = self.tab
        cell = np.clip(np.searchsorted(tab.phi, phi, side="right") - 1, 0, len(tab.phi) - 2)
        pid = np.where(tab.smooth[cell], tab.pattern_ids[cell], -1)
        n_ends = np.array([st.ends.size for st in tab.structs])[cell]
        r = np.full((phi.size, self.width), np.nan)
        dr = np.full((phi.size, self.width), np.nan)
        frac = (phi - tab.phi[cell]) / (tab.phi[cell + 1] - tab.phi[cell])
        d = np.exp(1j * phi)
        for e in range(tab.width):
            sel = (pid >= 0) & (n_ends > e)
            if not np.any(sel):
                continue
            c, f = cell[sel], frac[sel]
            t0 = tab.ends[c, e] * (1 - f) + tab.ends[c + 1, e] * f
            dth = np.angle(np.exp(1j * (tab.thetas[c + 1, e] - tab.thetas[c, e])))
            th0 = tab.thetas[c, e] + f * dth
            t, th, ok = _newton_refine(tab.pi, d[sel], t0, th0, iterations=6)
            ok &= np.abs(t - t0) <= 0.05 * t0
            r[sel, e] = np.where(ok, t, np.nan)
            dr[sel, e] = np.where(ok, _exit_derivative(tab.pi, phi[sel], t, th), np.nan)
            failed = np.nonzero(sel)[0][~ok]
            pid[failed] = -1
        return pid, r, dr

    def _hermite(self, j, u):
        r0, r1 = self.r[j], self.r[j + 1]
        m0, m1 = self.dr[j] * self.h, self.dr[j + 1] * self.h
        u = u[:, None]
        u2 = u * u
        u3 = u2 * u
        return ((2 * u3 - 3 * u2 + 1) * r0 + (u3 - 2 * u2 + u) * m0 +
                (-2 * u3 + 3 * u2) * r1 + (u3 - u2) * m1)

    def lookup(self, phi):
        """Return (ok, pattern id, ends) with ends shape (ok.sum(), W) for the usable ones."""
        x = (phi - self.lo) / self.h
        j = np.clip(x.astype(np.int64), 0, self.n - 1)
        ok = self.cell_ok[j]
        jo = j[ok]
        if self.width == 1 and not np.any(np.isfinite(self.r)):
            ends = np.full((jo.size, 1), np.nan)
        else:
            ends = self._hermite(jo, x[ok] - jo)
        return ok, self.pid[jo], ends


# hardening fix: lru_cache lets concurrent first calls with one key all build the table
# (about a second of CPU each); under 32 concurrent clients on a cold server that multiplied
# into 40 s answers. One lock per key stripe makes the others wait for the first build.
_BUILD_LOCKS = tuple(threading.RLock() for _ in range(64))


def _single_flight(cached):
    """Wrap a one-key cached builder so concurrent first calls with one key build it once."""
    def build(key):
        with _BUILD_LOCKS[hash(key) % len(_BUILD_LOCKS)]:
            return cached(key)
    build.cache_clear = cached.cache_clear
    return build


@_single_flight
@lru_cache(maxsize=16)
def _fine_for(key) -> _FineExit:
    return _FineExit(_table_for(key))


@_single_flight
@lru_cache(maxsize=16)
def _table_for(key) -> _Table:
    pi = _PI_REGISTRY[key]
    return _Table(pi)


_PI_REGISTRY: dict = {}


def _pi_key(pi: StabilityPolynomial):
    key = tuple(tuple(str(c) for c in row) for row in pi.exact)
    _PI_REGISTRY[key] = pi
    return key


def _newton_refine(pi: StabilityPolynomial, d: np.ndarray, t: np.ndarray, th: np.ndarray,
                   iterations: int = NEWTON_ITERATIONS):
    """Return (t, theta, ok) after Newton on pi(e^{i theta}, t d) = 0, vectorised."""
    for _ in range(iterations):
        w = np.exp(1j * th)
        f, fw, fz = pi.evaluate(w, t * d)
        a = fz * d           # dF/dt
        b = fw * 1j * w      # dF/dtheta
        det = a.real * b.imag - b.real * a.imag
        with np.errstate(divide="ignore", invalid="ignore"):
            dt = (-f.real * b.imag + b.real * f.imag) / det
            dth = (-a.real * f.imag + a.imag * f.real) / det
        t = t + dt
        th = th + dth
    w = np.exp(1j * th)
    f, fw, fz = pi.evaluate(w, t * d)
    scale = pi.residual_scale(np.abs(t))
    ok = np.isfinite(t) & (np.abs(f) <= 1e-10 * np.maximum(scale, 1e-300)) & (t > 0)
    return t, th, ok


# --- main entry -------------------------------------------------------------------------------
def _direction_windows_exact(pi, phis):
    """Return list of window tuples (in radius units) for each direction in phis."""
    out = {}
    for p in np.unique(phis):
        out[float(p)] = _structure(pi, float(p)).windows
    return out


def step_limit(scheme: Scheme, eigenvalues, safety: float | None = None,
               table: bool | None = None) -> StepLimit:
    """Return the StepLimit of a spectrum for a scheme.

    Parameters
    ----------
    scheme : Scheme
    eigenvalues : array_like of complex, shape (n,)
    safety : float, optional
        A factor in (0, 1] shown beside the limit (h_safe = safety * h_max); never applied
        silently.
    table : bool, optional
        Force (True) or forbid (False) the interpolation table; default by size.
    """
    lam = np.asarray(eigenvalues, dtype=complex).ravel()
    if lam.size == 0:
        raise InputError("eigenvalues", "no eigenvalues given")
    if not np.all(np.isfinite(lam)):
        bad = int(np.nonzero(~np.isfinite(lam))[0][0])
        raise InputError("eigenvalues", f"entry {bad} is not finite (NaN or Inf)")
    if safety is not None and not (0 < safety <= 1):
        raise InputError("safety", f"must lie in (0, 1], got {safety}")
    pi = scheme.pi
    rc = root_condition(scheme)
    messages = []
    zero = lam == 0
    n_zero = int(zero.sum())
    if n_zero:
        messages.append(f"{n_zero} zero eigenvalue(s): they only need the root condition "
                        f"({'satisfied' if rc.zero_stable else 'NOT satisfied'})")
    growing = int(np.sum(lam.real > 0))
    if growing:
        messages.append(f"{growing} eigenvalue(s) with Re(lambda) > 0: the exact solution grows; "
                        "a stable window there is stability of the scheme, not accuracy")
    nz = ~zero
    lam_nz = lam[nz]
    radius = np.abs(lam_nz)
    phi = np.angle(lam_nz)
    if pi.is_real:
        phi = np.abs(phi)
    # per-eigenvalue window ends in units of t = h |lambda|
    exact_count = 0
    if lam_nz.size == 0:
        windows_t = []
        per, windows_h = np.array([]), ((0.0, None),)
    else:
        uniq = None
        if table is not True:
            uniq = np.unique(phi) if lam_nz.size <= 4 * EXACT_DIRECTION_LIMIT else None
            if uniq is None:
                # cheap check for few distinct directions (e.g. a purely real spectrum)
                first = phi[0]
                if np.all(phi == first):
                    uniq = np.array([first])
        if table is False or (uniq is not None and uniq.size <= EXACT_DIRECTION_LIMIT):
            if uniq is None:
                uniq = np.unique(phi)
            wins = _direction_windows_exact(pi, uniq)
            exact_count = len(wins)
            idx = np.searchsorted(uniq, phi)
            windows_t = ("by-direction", uniq, [wins[float(u)] for u in uniq], idx)
        else:
            windows_t = None
            per, windows_h, exact_count = _fine_route(pi, phi, radius)
    if windows_t is not None:
        per, windows_h = _combine(windows_t, radius, lam_nz.size)
    per_full = np.full(lam.size, np.nan)
    per_full[nz] = per
    if not rc.zero_stable:
        messages.append("the scheme fails the root condition: no step is stable near h = 0 "
                        f"(h_max = 0); {rc.verdict}")
        h = 0.0
    elif lam_nz.size == 0:
        h = math.inf
    else:
        h = float(np.min(per)) if per.size else math.inf
    binding = None
    bidx = None
    if lam_nz.size and math.isfinite(h) and rc.zero_stable:
        j = int(np.argmin(per))
        bidx = int(np.nonzero(nz)[0][j])
        binding = complex(lam[bidx])
    unbounded = math.isinf(h)
    if unbounded:
        messages.append("every positive step is stable for this spectrum (unbounded)")
    elif h == 0.0 and rc.zero_stable:
        messages.append("no positive step is stable for the binding eigenvalue (h_max = 0)")
    evals = scheme.evaluations_per_step
    per_eval = None if unbounded else h / evals
    if not rc.zero_stable:
        # windows away from 0 may exist but never start at 0
        windows_h = tuple(w for w in windows_h if w[0] > 0)
    return StepLimit(
        h_max=None if unbounded else h, unbounded=unbounded, binding_eigenvalue=binding,
        binding_index=bidx, windows=windows_h, per_eigenvalue=per_full,
        evaluations_per_step=evals, h_max_per_evaluation=per_eval, zero_eigenvalues=n_zero,
        growing_eigenvalues=growing, zero_stable=rc.zero_stable, count=int(lam.size),
        exact_directions=exact_count, messages=tuple(messages), safety=safety)


def _clip_windows(windows, top):
    """Return windows intersected with (0, top] (top may be inf)."""
    out = []
    for lo, hi in windows:
        hi_v = math.inf if hi is None else hi
        if lo >= top:
            continue
        h = min(hi_v, top)
        out.append((lo, None if math.isinf(h) else h))
    return tuple(w for w in out if w[1] is None or w[1] > w[0])


def _intersect_lists(a, b):
    """Return the intersection of two window lists ((lo, hi or None), ...)."""
    out = []
    for lo1, hi1 in a:
        for lo2, hi2 in b:
            lo = max(lo1, lo2)
            h1 = math.inf if hi1 is None else hi1
            h2 = math.inf if hi2 is None else hi2
            hi = min(h1, h2)
            if hi > lo or (math.isinf(hi)):
                out.append((lo, None if math.isinf(hi) else hi))
    return tuple(sorted(out))


def _fine_route(pi, phi, radius):
    """Return (per-eigenvalue h_max, windows, exact count) via the verified interpolants."""
    key = _pi_key(pi)
    fine = _fine_for(key)
    tab = fine.tab
    ok, pid, ends = fine.lookup(phi)
    per = np.empty(phi.size)
    rad_ok = radius[ok]
    per_ok = np.zeros(pid.size)
    windows = ((0.0, None),)
    groups = []
    for p in np.unique(pid):
        sel = pid == p
        st = tab.structs[tab.pattern_rep[p]]
        w = st.windows
        if not w:
            windows = ()  # some eigenvalue is stable for no h at all (h_max 0 for it)
            continue
        if w[0][0] == 0.0:
            per_ok[sel] = np.inf if math.isinf(w[0][1]) else ends[sel, 0] / rad_ok[sel]
        if len(w) == 1 and w[0][0] == 0.0:
            top = float(np.min(per_ok[sel]))
            windows = _intersect_lists(windows, ((0.0, None if math.isinf(top) else top),))
        else:
            groups.append((("cell", st, ends[sel]), rad_ok[sel]))
    per[ok] = per_ok
    if groups:
        windows = _intersect_lists(windows, _intersect(groups))
    exact_count = 0
    rest = ~ok
    if np.any(rest):
        sub, exact_count = _table_windows(pi, phi[rest])
        per_r, win_r = _combine(sub, radius[rest], int(rest.sum()))
        per[rest] = per_r
        windows = _intersect_lists(windows, win_r)
    return per, windows, exact_count


def _table_windows(pi: StabilityPolynomial, phi: np.ndarray):
    """Return ("by-eigenvalue", first_exit_t, extra_windows, ...) using the table."""
    tab = _table_for(_pi_key(pi))
    nodes = tab.phi
    cell = np.clip(np.searchsorted(nodes, phi, side="right") - 1, 0, len(nodes) - 2)
    smooth = tab.smooth[cell]
    n = phi.size
    # window ends per eigenvalue, in t units, with the node pattern
    ends = np.full((n, max(tab.width, 1)), np.nan)
    ok_all = smooth.copy()
    if tab.width:
        frac = (phi - nodes[cell]) / (nodes[cell + 1] - nodes[cell])
        d = np.exp(1j * phi)
        for e in range(tab.width):
            t0 = tab.ends[cell, e] * (1 - frac) + tab.ends[cell + 1, e] * frac
            th_a = tab.thetas[cell, e]
            th_b = tab.thetas[cell + 1, e]
            dth = np.angle(np.exp(1j * (th_b - th_a)))
            th0 = th_a + frac * dth
            have = smooth & np.isfinite(t0)
            if not np.any(have):
                continue
            t, th, ok = _newton_refine(pi, d[have], t0[have], th0[have])
            good = ok & (np.abs(t - t0[have]) <= 0.05 * t0[have])
            col = np.full(have.sum(), np.nan)
            col[good] = t[good]
            ends[have, e] = col
            bad = np.zeros(n, dtype=bool)
            bad[np.nonzero(have)[0][~good]] = True
            ok_all &= ~bad
    # eigenvalues needing the exact route
    need = ~ok_all
    exact = {}
    if np.any(need):
        for p in np.unique(phi[need]):
            exact[float(p)] = _structure(pi, float(p)).windows
    return ("by-eigenvalue", tab, cell, ends, need, exact, phi), len(exact)


def _windows_of(pattern_windows):
    return pattern_windows


def _combine(windows_t, radius: np.ndarray, n: int):
    """Return (per-eigenvalue h_max, spectrum windows in h)."""
    kind = windows_t[0] if windows_t else None
    if kind is None:
        return np.array([]), ((0.0, None),)
    if kind == "by-direction":
        _, uniq, wins, idx = windows_t
        first = np.array([w[0][1] if (w and w[0][0] == 0.0) else 0.0 for w in wins])
        per = first[idx] / radius
        groups = [(wins[g], radius[idx == g]) for g in range(len(uniq))]
    else:
        _, tab, cell, ends, need, exact, phi = windows_t
        per = np.empty(n)
        groups = []
        # smooth ones: reconstruct windows from the node pattern and refined ends
        pat_first = np.array([s.pattern[0] for s in tab.structs])[cell]
        pat_last_inf = np.array([s.pattern[2] for s in tab.structs])[cell]
        n_win = np.array([s.pattern[1] for s in tab.structs])[cell]
        sm = ~need
        # first window end
        first_t = np.where(pat_first & (n_win > 0),
                           np.where((n_win == 1) & pat_last_inf, np.inf, ends[:, 0]), 0.0)
        per[sm] = first_t[sm] / radius[sm]
        for p, w in exact.items():
            sel = need & (phi == p)
            f = w[0][1] if (w and w[0][0] == 0.0) else 0.0
            per[sel] = f / radius[sel]
            groups.append((w, radius[sel]))
        # group smooth eigenvalues by window pattern for the intersection
        pat_id = tab.pattern_ids[cell]
        for pid in np.unique(pat_id[sm]):
            sel = sm & (pat_id == pid)
            s = tab.structs[tab.pattern_rep[pid]]
            groups.append((("cell", s, ends[sel]), radius[sel]))
    return per, _intersect(groups)


def _intersect(groups) -> tuple:
    """Return the intersection over all eigenvalues of their stable h-sets."""
    los, his = [], []
    total = 0
    for wins, r in groups:
        if r.size == 0:
            continue
        total += r.size
        if isinstance(wins, tuple) and len(wins) == 3 and wins[0] == "cell":
            _, s, ends = wins
            # rebuild each eigenvalue's windows from pattern and its refined ends
            k = 0
            for lo, hi in s.windows:
                if lo > 0:
                    lo_v = ends[:, k]
                    k += 1
                else:
                    lo_v = np.zeros(r.size)
                if math.isfinite(hi):
                    hi_v = ends[:, k]
                    k += 1
                else:
                    hi_v = np.full(r.size, np.inf)
                los.append(lo_v / r)
                his.append(hi_v / r)
        else:
            for lo, hi in wins:
                los.append(np.full(r.size, lo) / r)
                his.append(np.full(r.size, hi) / r)
    if total == 0:
        return ((0.0, None),)
    if not los:
        return ()
    lo = np.concatenate(los)
    hi = np.concatenate(his)
    if lo.size == total and not np.any(lo > 0):
        # every eigenvalue has the single window (0, h_j]: the intersection is (0, min h_j]
        top = float(np.min(hi))
        return ((0.0, None if math.isinf(top) else top),)
    # sweep: h is stable when the number of eigenvalues covering it equals total
    ev_pos = np.concatenate([lo, hi])
    ev_val = np.concatenate([np.ones(lo.size, dtype=np.int64), -np.ones(hi.size, dtype=np.int64)])
    order = np.lexsort((-ev_val, ev_pos))  # at equal h, open before close (closed windows)
    pos = ev_pos[order]
    cnt = np.cumsum(ev_val[order])
    out = []
    start = None
    for i in np.nonzero((cnt == total) | (np.concatenate([[0], cnt[:-1]]) == total))[0]:
        if cnt[i] == total and start is None:
            start = pos[i]
        elif cnt[i] != total and start is not None:
            out.append((float(start), float(pos[i])))
            start = None
    if start is not None:
        out.append((float(start), None))
    # drop degenerate single points
    out = [(a, b) for a, b in out if b is None or b > a]
    return tuple((a, (None if (b is None or math.isinf(b)) else b)) for a, b in out)


# --- enclosures -------------------------------------------------------------------------------
@dataclass(frozen=True)
class EnclosureLimit:
    """Largest h with h * E inside the region for every h' <= h, E a compact set."""

    h_max: float | None
    unbounded: bool
    binding_point: complex | None
    samples: int
    messages: tuple = field(default_factory=tuple)


def enclosure_limit(scheme: Scheme, enclosure, samples: int = 4096) -> EnclosureLimit:
    """Return the step limit of a whole enclosure (disk, interval, segment, ellipse).

    For every lambda in E the ray t lambda stays in S up to r(arg lambda)/|lambda|, smallest
    for the outermost point in each direction, so the limit of E is the minimum over its
    boundary. The boundary is sampled (extreme points included) with the exact step limit
    of each sample; the minimum is then refined on the boundary parameter by bounded scalar
    minimisation of the exact per-direction limit.
    """
    import scipy.optimize

    pts = np.asarray(enclosure.boundary(samples), dtype=complex)
    messages = []
    if np.any(pts == 0):
        messages.append("the enclosure contains lambda = 0: it only needs the root condition")
    res = step_limit(scheme, pts)
    per = res.per_eigenvalue
    finite = np.where(np.isnan(per), np.inf, per)
    if not res.zero_stable:
        return EnclosureLimit(0.0, False, None, pts.size, res.messages)
    j = int(np.argmin(finite))
    best = float(finite[j])
    if math.isinf(best):
        return EnclosureLimit(None, True, None, pts.size,
                              tuple(messages) + ("every positive step keeps the sampled boundary of "
                                                 "the enclosure inside the region",))
    binding = complex(pts[j])
    if best > 0 and hasattr(enclosure, "point"):
        params = np.linspace(0.0, 1.0, samples, endpoint=False)
        s0 = params[j] if j < params.size else 0.0
        step = 1.0 / samples

        def h_of(s):
            lam = complex(enclosure.point(np.array([s % 1.0]))[0])
            if lam == 0:
                return math.inf
            return float(step_limit(scheme, [lam], table=False).per_eigenvalue[0])

        r = scipy.optimize.minimize_scalar(h_of, bounds=(s0 - step, s0 + step), method="bounded",
                                           options={"xatol": 1e-12})
        if r.success and r.fun < best:
            best = float(r.fun)
            binding = complex(enclosure.point(np.array([r.x % 1.0]))[0])
    return EnclosureLimit(best, False, binding, pts.size, tuple(messages))
