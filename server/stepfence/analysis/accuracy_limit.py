"""The accuracy-limited step beside the stability-limited one, and work at equal accuracy.

For one eigenvalue lambda the local relative error of a step h is
e(h) = |zeta(h lambda) - e^{h lambda}| / |e^{h lambda}|, zeta the principal root
(analysis.dispersion). Its accuracy limit is the first crossing

    h_acc(lambda) = sup{h > 0 : e(t) <= tol * w(t) for all 0 < t <= h},

with w(t) = 1 ("per step") or w(t) = t ("per unit time", error per step over the step). Of a
spectrum it is the minimum over its eigenvalues, like the stability limit of analysis.steplimit;
lambda = 0 sets none (a consistent scheme is exact for constants).

The search starts from the small-h asymptotics e(h) ~ |C'| |h lambda|^{p+1} (C' the
principal-root error constant), scans a geometric grid of steps 2^(1/8) apart from 2^-10 times
that estimate upward along the ray (one continuation per eigenvalue, sampled at every grid
step), and refines the first bracket with a vectorised Illinois (regula falsi) iteration on
log e - log(tol w) in log h, to 1e-13 relative. An excursion above tol narrower than one grid
ratio could be missed; below 2^-10 of the estimate the asymptotics hold.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError, LimitExceeded
from ..schemes.base import Scheme
from .dispersion import (continue_roots, along_spectrum, distinct_points, imaginary_axis_curves,
                         principal_error_constant, principal_root, relative_step_error,
                         scheme_accuracy, validated_eigenvalues)

PERS = ("step", "unit-time")
MIN_TOL = 1e-12               # below this the local error is at the rounding level
ROUNDING = 4e-16              # absolute rounding error of a measured local error
MAX_TOL = 0.5                 # per step: beyond this "accurate" means nothing
SCAN_PER_OCTAVE = 8
SCAN_BELOW = 10               # octaves below the asymptotic estimate where the scan starts
SCAN_TOPS = (3, 16, 29, 42)   # octaves above it where successive scan chunks end
REFINE_WIDTH = 1e-13          # relative bracket width in h at which refinement stops
REFINE_ITERATIONS = 100
STIFF_RATIO = 1e3             # common practice, no source: "stiff" above this ratio
TABLE_LIMIT = 5000            # rows of the along-spectrum table in a report


@dataclass(frozen=True)
class AccuracyLimit:
    """The accuracy-limited step of a spectrum for one scheme.

    Attributes
    ----------
    h_max : float or None
        The largest step meeting the tolerance for every eigenvalue; None when none limits it.
    unbounded : bool
    binding_eigenvalue : complex or None
    binding_index : int or None
        Position of the binding eigenvalue in the input.
    per_eigenvalue : ndarray, shape (n,)
        h_acc of each eigenvalue (inf: not limited within the scanned range, or lambda = 0).
    asymptotic : ndarray, shape (n,)
        The small-h estimate from |C'| |h lambda|^{p+1} (inf for lambda = 0).
    tol : float
    per : str
        "step" or "unit-time".
    order : int
        The linear order p seen by the principal root.
    error_constant : sympy number
        C' with zeta(z) - e^z ~ C' z^{p+1}.
    count : int
    messages : tuple of str
    """

    h_max: float | None
    unbounded: bool
    binding_eigenvalue: complex | None
    binding_index: int | None
    per_eigenvalue: np.ndarray
    asymptotic: np.ndarray
    tol: float
    per: str
    order: int
    error_constant: object
    count: int
    messages: tuple = field(default_factory=tuple)


# per unit time, eigenvalue magnitudes accepted (see accuracy_limited_step)
UNIT_TIME_MAGNITUDE = 1e50


def _validated_tol(tol, per) -> float:
    if per not in PERS:
        raise InputError("per", f"must be one of {PERS}, got {per!r}")
    try:
        t = float(tol)
    except (TypeError, ValueError):
        raise InputError("tol", f"must be a number, got {tol!r}") from None
    if per == "step" and not (MIN_TOL <= t <= MAX_TOL):
        raise InputError("tol", f"per step must lie in [{MIN_TOL:g}, {MAX_TOL:g}], got {tol}")
    if per == "unit-time" and not (math.isfinite(t) and t > 0):
        raise InputError("tol", f"per unit time must be a positive finite rate, got {tol}")
    return t


@dataclass(frozen=True)
class _Criterion:
    """What "accurate" means: tol, per step or per unit time, and the leading error term."""

    tol: float
    per: str
    lead: float     # |C'|
    order: int      # p


def _log_excess(zeta, arg, z, h, crit: _Criterion, bad) -> np.ndarray:
    """Return log e(h) - log(tol w(h)); +inf where the principal root is not determined.

    A measured error near the target T = tol w(h) carries a rounding error of about
    ROUNDING / T relatively; the leading term |C'| |z|^{p+1} is off by about |z|. Where the
    leading term is the better of the two (tiny targets at tiny |z|) it stands in.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        amp = np.log(np.abs(zeta)) - z.real
        e = relative_step_error(amp, arg - z.imag)
        log_target = math.log(crit.tol) + (np.log(h) if crit.per == "unit-time" else 0.0)
        g = np.log(e) - log_target
        modz = np.abs(z)
        use_lead = np.log(modz) < math.log(ROUNDING) - log_target
        if np.any(use_lead):
            lead = math.log(crit.lead) + (crit.order + 1) * np.log(modz) - log_target
            g = np.where(use_lead, lead, g)
            bad = bad & ~use_lead
    return np.where(bad | np.isnan(g), np.inf, g)


def limit_precision(h, lam, crit: _Criterion) -> np.ndarray:
    """Return the estimated relative accuracy of accuracy limits h (see _log_excess)."""
    target = crit.tol * (h if crit.per == "unit-time" else 1.0)
    return np.minimum(ROUNDING / target, np.abs(h * lam)) / (crit.order + 1)


def _fresh_excess(poly, lam, h, crit):
    """Return (g, zeta, arg, undetermined) from principal roots computed from 0 (cuts resolved)."""
    z = lam * h
    root = principal_root(poly, z)
    bad = root.ambiguous | np.isnan(root.value)
    return _log_excess(root.value, root.argument, z, h, crit, bad), root.value, \
        root.argument, bad


def _scan(poly, lam, h0, crit):
    """Return the first bracket of a crossing for every eigenvalue (see the module docstring)."""
    n = lam.size
    lo = np.zeros(n)
    hi = np.full(n, np.inf)
    g_lo = np.full(n, -np.inf)
    g_hi = np.full(n, np.inf)
    zeta_lo = np.ones(n, dtype=complex)
    arg_lo = np.zeros(n)
    state = np.zeros(n, dtype=np.int8)  # 0 scanning, 1 bracketed, 2 below the scan
    start_oct = None
    j_first = -SCAN_BELOW * SCAN_PER_OCTAVE
    for top in SCAN_TOPS:
        rows = np.nonzero(state == 0)[0]
        if rows.size == 0:
            break
        j = np.arange(j_first, top * SCAN_PER_OCTAVE + 1)
        mult = 2.0 ** (j / SCAN_PER_OCTAVE)
        base = 0.0 if start_oct is None else 2.0 ** start_oct
        stops = (mult - base) / (2.0 ** top - base)
        lr, hr = lam[rows], h0[rows]
        h_grid = hr[:, None] * mult[None, :]
        z_grid = lr[:, None] * h_grid
        tr = continue_roots(poly, lr * hr * base, lr * hr * 2.0 ** top, zeta_lo[rows],
                             arg_lo[rows], stops)
        raw_bad = tr.collided | tr.failed | np.isnan(tr.zeta)
        g = _log_excess(tr.zeta, tr.argument, z_grid, h_grid, crit, raw_bad)
        zeta, arg = tr.zeta.copy(), tr.argument.copy()
        # after a root collision the raw continuation is not trusted: recompute that sample
        # from 0 with the cut resolved, then continue from it (the collision is behind)
        for _ in range(g.shape[1]):
            clean_over = (g > 0) & ~raw_bad
            first_bad = np.where(raw_bad.any(axis=1), raw_bad.argmax(axis=1), g.shape[1])
            first_over = np.where(clean_over.any(axis=1), clean_over.argmax(axis=1), g.shape[1])
            redo = np.nonzero(first_bad < first_over)[0]
            if redo.size == 0:
                break
            cb = first_bad[redo]
            g2, z2, a2, b2 = _fresh_excess(poly, lr[redo], h_grid[redo, cb], crit)
            g[redo, cb], zeta[redo, cb], arg[redo, cb] = g2, z2, a2
            raw_bad[redo, cb] = False
            for c in np.unique(cb):
                grp = redo[(cb == c) & ~b2 & (g2 <= 0)]
                if grp.size == 0 or c + 1 >= g.shape[1]:
                    continue
                seg = (mult[c + 1:] - mult[c]) / (mult[-1] - mult[c])
                t2 = continue_roots(poly, z_grid[grp, c], z_grid[grp, -1], zeta[grp, c],
                                     arg[grp, c], seg)
                bad2 = t2.collided | t2.failed | np.isnan(t2.zeta)
                g[grp, c + 1:] = _log_excess(t2.zeta, t2.argument, z_grid[grp, c + 1:],
                                             h_grid[grp, c + 1:], crit, bad2)
                zeta[grp, c + 1:], arg[grp, c + 1:] = t2.zeta, t2.argument
                raw_bad[grp, c + 1:] = bad2
        over = g > 0
        has = over.any(axis=1)
        first = np.where(has, over.argmax(axis=1), -1)
        for local, row in enumerate(rows):
            i = first[local]
            if i < 0:
                continue
            if i == 0 and start_oct is None:
                state[row] = 2
                hi[row] = h_grid[local, 0]
                continue
            state[row] = 1
            hi[row], g_hi[row] = h_grid[local, i], g[local, i]
            if i > 0:
                lo[row], g_lo[row] = h_grid[local, i - 1], g[local, i - 1]
                zeta_lo[row], arg_lo[row] = zeta[local, i - 1], arg[local, i - 1]
            # i == 0 in a later chunk: the bracket's low end is the previous chunk's last step,
            # already stored below
        cont = rows[~has]
        last = ~has
        lo[cont] = h_grid[last, -1]
        g_lo[cont] = g[last, -1]
        zeta_lo[cont] = zeta[last, -1]
        arg_lo[cont] = arg[last, -1]
        start_oct = top
        j_first = top * SCAN_PER_OCTAVE + 1
    return lo, hi, g_lo, g_hi, zeta_lo, arg_lo, state


def _refine(poly, lam, lo, hi, g_lo, g_hi, zeta_lo, arg_lo, crit):
    """Return the low ends of the brackets narrowed to REFINE_WIDTH (Illinois in log h)."""
    xa, xb = np.log(lo), np.log(hi)
    ga, gb = g_lo.copy(), g_hi.copy()
    side = np.zeros(lam.size, dtype=np.int8)
    for _ in range(REFINE_ITERATIONS):
        # an end where the root is undetermined is a boundary of the data, not a crossing:
        # located to 1e-9, which is all the side paths around the collision resolve anyway
        width = np.where(np.isinf(gb), 1e-9, REFINE_WIDTH)
        act = np.nonzero(xb - xa > width)[0]
        if act.size == 0:
            break
        a_, b_ = xa[act], xb[act]
        fa, fb = ga[act], gb[act]
        with np.errstate(invalid="ignore", divide="ignore"):
            xc = b_ - fb * (b_ - a_) / (fb - fa)
        secant_ok = np.isfinite(fa) & np.isfinite(fb) & (fb > fa)
        inner = (xc > a_ + 1e-3 * (b_ - a_)) & (xc < b_ - 1e-3 * (b_ - a_))
        xc = np.where(secant_ok & inner, xc, 0.5 * (a_ + b_))
        hc, ha = np.exp(xc), np.exp(a_)
        la = lam[act]
        tr = continue_roots(poly, la * ha, la * hc, zeta_lo[act], arg_lo[act], np.array([1.0]))
        zc, argc = tr.zeta[:, 0], tr.argument[:, 0]
        bad = tr.collided[:, 0] | tr.failed[:, 0] | np.isnan(zc)
        gc = _log_excess(zc, argc, la * hc, hc, crit, bad)
        if np.any(bad):
            k = np.nonzero(bad)[0]
            g2, z2, a2, _ = _fresh_excess(poly, la[k], hc[k], crit)
            gc[k], zc[k], argc[k] = g2, z2, a2
        left = gc <= 0
        la_idx, rb_idx = act[left], act[~left]
        xa[la_idx], ga[la_idx] = xc[left], gc[left]
        zeta_lo[la_idx], arg_lo[la_idx] = zc[left], argc[left]
        # Illinois: when one end is kept twice running, halve its value
        gb[la_idx] = np.where(side[la_idx] == -1, 0.5 * gb[la_idx], gb[la_idx])
        side[la_idx] = -1
        xb[rb_idx], gb[rb_idx] = xc[~left], gc[~left]
        ga[rb_idx] = np.where(side[rb_idx] == 1, 0.5 * ga[rb_idx], ga[rb_idx])
        side[rb_idx] = 1
    return np.exp(xa), gb


def accuracy_limited_step(scheme: Scheme, eigenvalues, tol: float, per: str = "step") -> AccuracyLimit:
    """Return the AccuracyLimit: the largest h meeting the local-error tolerance for every eigenvalue.

    Parameters
    ----------
    scheme : Scheme
    eigenvalues : array_like of complex, shape (n,)
    tol : float
        per="step": the bound on |zeta - e^z| / |e^z| for one step, in [1e-12, 0.5].
        per="unit-time": the bound on that error divided by h (a rate, > 0).
    per : {"step", "unit-time"}

    Examples
    --------
    >>> from stepfence.schemes.catalogue import get_scheme
    >>> lim = accuracy_limited_step(get_scheme("am2"), [-1.0], 1e-6)
    >>> round(lim.h_max, 4)   # e ~ h^3 / 12 for the trapezoidal rule
    0.0229
    """
    lam = validated_eigenvalues(eigenvalues)
    tol = _validated_tol(tol, per)
    poly = scheme.pi
    p, c_exact = principal_error_constant(scheme)
    if p < 1:
        raise InputError("scheme", "is not consistent (order < 1): no accuracy limit exists")
    c = abs(complex(c_exact))
    nz = lam != 0
    # Per step the criterion depends on z = h lambda alone, so h_acc(lambda) =
    # h_acc(lambda/|lambda|) / |lambda|: the search runs on unit eigenvalues and the steps are
    # scaled back. (hardening fix: without it |lambda| = 1e100 overflowed the scan into "no
    # limit" and 1e-100 into an error; found by fuzzing.) Per unit time the tolerance itself
    # scales with |lambda|, so magnitudes are bounded there instead.
    scale = np.ones(int(nz.sum()))
    if per == "step":
        scale = np.abs(lam[nz])
        work = lam[nz] / scale
    else:
        mags = np.abs(lam[nz])
        if mags.size and (mags.max() > UNIT_TIME_MAGNITUDE or mags.min() < 1 / UNIT_TIME_MAGNITUDE):
            raise LimitExceeded("eigenvalues", f"per unit time the accuracy analysis takes "
                                               f"|lambda| from {1 / UNIT_TIME_MAGNITUDE:g} to "
                                               f"{UNIT_TIME_MAGNITUDE:g} (here {mags.min():.3g} "
                                               f"to {mags.max():.3g}); rescale time, or use "
                                               "the per-step tolerance, which takes any size")
        work = lam[nz]
    distinct, inverse, _ = distinct_points(poly, work)
    mod = np.abs(distinct)
    a = (c if c > 0 else 1.0) * mod ** (p + 1)
    h0 = (tol / a) ** (1.0 / (p + 1)) if per == "step" else (tol / a) ** (1.0 / p)
    crit = _Criterion(tol=tol, per=per, lead=c if c > 0 else 1.0, order=p)
    messages = []
    per_distinct = np.full(distinct.size, np.inf)
    if distinct.size:
        lo, hi, g_lo, g_hi, z_lo, a_lo, state = _scan(poly, distinct, h0, crit)
        undet = np.zeros(distinct.size, dtype=bool)
        br = state == 1
        if np.any(br):
            per_distinct[br], g_end = _refine(poly, distinct[br], lo[br], hi[br], g_lo[br],
                                              g_hi[br], z_lo[br], a_lo[br], crit)
            # the limit is a measured crossing unless the bracket still ends where the
            # principal root is undetermined
            undet[np.nonzero(br)[0]] = np.isinf(g_end)
        below = state == 2
        per_distinct[below] = hi[below]
        if np.any(below):
            messages.append(f"{int(below.sum())} eigenvalue(s) exceed the tolerance already at "
                            "the smallest step scanned; their limit is at most that step")
        if np.any(undet):
            messages.append(f"for {int(undet.sum())} eigenvalue(s) the principal root is not "
                            "determined beyond the limit found (roots collide): the limit is "
                            "where the error can no longer be measured, not a measured crossing")
        never = state == 0
        if np.any(never):
            messages.append(f"{int(never.sum())} eigenvalue(s) stay within the tolerance over "
                            f"the whole scan (to 2^{SCAN_TOPS[-1]} times the small-step "
                            "estimate): no accuracy limit found for them")
    finite = np.isfinite(per_distinct)
    if np.any(finite):
        prec = np.max(limit_precision(per_distinct[finite], distinct[finite], crit))
        if prec > 1e-8:
            messages.append(f"the local errors at the limit are so small that double precision "
                            f"fixes the limit only to about {prec:.1g} relative (measured or "
                            "from the leading error term |C'| |h lambda|^(p+1), whichever is "
                            "closer)")
    per_all = np.full(lam.size, np.inf)
    per_all[nz] = per_distinct[inverse] / scale
    asym = np.full(lam.size, np.inf)
    asym[nz] = h0[inverse] / scale
    n_zero = int((~nz).sum())
    if n_zero:
        messages.append(f"{n_zero} zero eigenvalue(s): no accuracy restriction (a consistent "
                        "scheme is exact for constants)")
    h = float(np.min(per_all))
    unbounded = math.isinf(h)
    bidx = None if unbounded else int(np.argmin(per_all))
    return AccuracyLimit(
        h_max=None if unbounded else h, unbounded=unbounded,
        binding_eigenvalue=None if bidx is None else complex(lam[bidx]), binding_index=bidx,
        per_eigenvalue=per_all, asymptotic=asym, tol=tol, per=per, order=p,
        error_constant=c_exact, count=int(lam.size), messages=tuple(messages))


def stiffness_ratio(eigenvalues) -> float | None:
    """Return max |Re lambda| / min |Re lambda| over the eigenvalues with Re lambda < 0.

    The ratio of the fastest to the slowest decay rate among the decaying modes (Lambert,
    Computational Methods in Ordinary Differential Equations, Wiley 1973, section 8.2 -- from
    memory). None when no eigenvalue decays. A crude measure: it ignores oscillatory modes
    (Re lambda = 0), growing ones, and how long the integration runs.
    """
    lam = validated_eigenvalues(eigenvalues)
    rate = -lam.real[lam.real < 0]
    if rate.size == 0:
        return None
    return float(rate.max() / rate.min())


def binding_limit(h_stability, h_accuracy):
    """Return (h, which): the smaller of two limits (None = unbounded) and which one binds.

    which is "stability", "accuracy", "both" (equal to 1e-12 relative) or "neither".
    """
    s = math.inf if h_stability is None else float(h_stability)
    a = math.inf if h_accuracy is None else float(h_accuracy)
    if math.isinf(s) and math.isinf(a):
        return None, "neither"
    if math.isfinite(s) and math.isfinite(a) and abs(s - a) <= 1e-12 * max(s, a):
        return s, "both"
    return (s, "stability") if s < a else (a, "accuracy")


def _fmt(h) -> str:
    return "unbounded" if h is None or math.isinf(h) else f"{h:.6g}"


def verdict(h_stability, h_accuracy, tol: float | None = None, per: str = "step") -> str:
    """Return one plain sentence saying whether stability or accuracy binds, with both numbers."""
    h, which = binding_limit(h_stability, h_accuracy)
    what = "" if tol is None else f" (tol {tol:g} {'per step' if per == 'step' else 'per unit time'})"
    both = f"stability h <= {_fmt(h_stability)}, accuracy{what} h <= {_fmt(h_accuracy)}"
    if which == "neither":
        return f"neither binds: every step is stable and within the tolerance ({both})"
    if which == "stability" and h == 0:
        return f"stability binds: no positive step is stable ({both})"
    if which == "both":
        return f"stability and accuracy bind together at h = {_fmt(h)} ({both})"
    return f"{which} binds at h = {_fmt(h)}: {both}"


@dataclass(frozen=True)
class SchemeWork:
    """Steps and work per unit time of one scheme at a tolerance."""

    name: str
    label: str
    evaluations_per_step: int
    explicit: bool
    h_accuracy: float | None
    h_stability: float | None
    h: float | None                    # the binding one; None when neither limits
    binding: str
    h_per_evaluation: float | None
    evaluations_per_unit_time: float | None   # evaluations_per_step / h


@dataclass(frozen=True)
class EfficiencyComparison:
    """Two schemes at the same tolerance: which needs fewer evaluations per unit time."""

    first: SchemeWork
    second: SchemeWork
    work_ratio: float | None   # first's evaluations per unit time over second's (inf, 0 if
                               # one has no admissible step; None if undefined)
    tol: float
    per: str
    text: str
    messages: tuple = field(default_factory=tuple)


def scheme_work(scheme: Scheme, eigenvalues, tol: float, per: str = "unit-time") -> SchemeWork:
    """Return the SchemeWork of one scheme: both limits, the binding step and its cost."""
    from .steplimit import step_limit
    acc = accuracy_limited_step(scheme, eigenvalues, tol, per)
    stab = step_limit(scheme, eigenvalues)
    h, which = binding_limit(stab.h_max, acc.h_max)
    evals = int(scheme.evaluations_per_step)
    per_eval = None if h is None else h / evals
    work = None if h is None else (math.inf if h == 0 else evals / h)
    return SchemeWork(name=scheme.name, label=scheme.label, evaluations_per_step=evals,
                      explicit=bool(scheme.explicit), h_accuracy=acc.h_max,
                      h_stability=stab.h_max, h=h, binding=which, h_per_evaluation=per_eval,
                      evaluations_per_unit_time=work)


def efficiency_at_equal_accuracy(scheme_a: Scheme, scheme_b: Scheme, eigenvalues, tol: float,
                                 per: str = "unit-time") -> EfficiencyComparison:
    """Return the EfficiencyComparison of two schemes held to the same tolerance.

    Each scheme takes the largest step that is both stable and accurate (its binding limit);
    its work per unit time is evaluations_per_step / h. Per unit time (the default) holds the
    error committed per unit of time equal, the fair basis over a fixed interval; per step
    holds each step's error equal, which favours the scheme taking more, smaller steps less
    than it seems.
    """
    wa = scheme_work(scheme_a, eigenvalues, tol, per)
    wb = scheme_work(scheme_b, eigenvalues, tol, per)
    ra, rb = wa.evaluations_per_unit_time, wb.evaluations_per_unit_time
    na = wa.name if wa.name != "custom" else wa.label
    nb = wb.name if wb.name != "custom" else wb.label
    if na == nb:
        na, nb = f"{na} (first)", f"{nb} (second)"
    messages = []
    if ra is None or rb is None:
        ratio = None
        text = "no ratio: at least one scheme is limited neither by stability nor by accuracy here"
    elif math.isinf(ra) and math.isinf(rb):
        ratio = None
        text = "no ratio: neither scheme has a positive admissible step"
    elif math.isinf(ra) or math.isinf(rb):
        ratio = math.inf if math.isinf(ra) else 0.0
        stuck, other = (na, nb) if math.isinf(ra) else (nb, na)
        text = (f"{stuck} has no positive step that is stable for this spectrum; {other} "
                "does")
    else:
        ratio = ra / rb
        if ratio == 1:
            text = f"{na} and {nb} need the same evaluations per unit time"
        elif ratio > 1:
            text = (f"{nb} needs {ratio:.3g} times fewer evaluations per unit time than "
                    f"{na} ({rb:.4g} against {ra:.4g})")
        else:
            text = (f"{na} needs {1 / ratio:.3g} times fewer evaluations per unit time than "
                    f"{nb} ({ra:.4g} against {rb:.4g})")
    if not (wa.explicit and wb.explicit):
        messages.append("an implicit scheme also solves a (non)linear system every step; those "
                        "solves are not counted in the evaluations compared here")
    return EfficiencyComparison(first=wa, second=wb, work_ratio=ratio, tol=tol, per=per,
                                text=text, messages=tuple(messages))


# --- JSON-ready report ------------------------------------------------------------------------
def _num(x):
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _nums(a) -> list:
    return [_num(v) for v in np.asarray(a, dtype=float).ravel()]


def _pair(c):
    return None if c is None else [float(np.real(c)), float(np.imag(c))]


def _work_dict(w: SchemeWork) -> dict:
    return {"name": w.name, "label": w.label, "evaluations_per_step": w.evaluations_per_step,
            "explicit": w.explicit, "h_accuracy": _num(w.h_accuracy),
            "h_stability": _num(w.h_stability), "h": _num(w.h), "binding": w.binding,
            "h_per_evaluation": _num(w.h_per_evaluation),
            "evaluations_per_unit_time": _num(w.evaluations_per_unit_time)}


def _stable_at(windows, h) -> bool:
    return any(lo <= h and (hi is None or h <= hi) for lo, hi in windows)


def _cautions(scheme, acc_order, acc_general, table, stable, which, binding_lambda, ratio,
              per, growing, ambiguous_axis) -> list:
    out = [
        "Accuracy here is the local error of one step on y' = lambda y, mode by mode: the "
        "amplitude and phase of the principal root against e^(h lambda). Global error, "
        "nonlinear terms and start-up errors are not measured.",
        "Eigenvalues describe the modes only for a normal (or nearly normal) Jacobian; with "
        "strong non-normality (advection, boundary layers) transient growth can make both the "
        "stability and the accuracy verdict optimistic.",
        "For a nonlinear problem the Jacobian changes along the solution; limits computed from "
        "one frozen Jacobian hold only while it is representative.",
    ]
    if scheme.steps > 1 or scheme.pi.degree_zeta > 1:
        out.append("A multistep scheme's error also depends on its starting values and on its "
                   "spurious roots; only the principal root is measured, at a constant step.")
    if acc_general is not None and acc_general < acc_order:
        out.append(f"The order on y' = lambda y ({acc_order}) exceeds the order for general "
                   f"ODEs ({acc_general}): for nonlinear problems these accuracy numbers are "
                   "optimistic.")
    if which in ("accuracy", "both") and binding_lambda is not None and ratio is not None \
            and ratio >= STIFF_RATIO and binding_lambda.real < 0:
        out.append("The accuracy limit asks every mode to be resolved. In a stiff problem the "
                   "fast modes decay after a short transient and then only need damping "
                   "(stability): the accuracy limit set by a fast mode can be far stricter "
                   "than needed. Check which eigenvalue binds.")
    if not scheme.explicit:
        out.append("Evaluations per step count right-hand-side evaluations only; an implicit "
                   "scheme also solves a (non)linear system every step.")
    if per == "step":
        out.append("An equal tolerance per step is not equal accuracy over an interval: more, "
                   "smaller steps add up more local errors (per='unit-time' compares error per "
                   "unit time).")
    if growing:
        out.append(f"{growing} eigenvalue(s) have Re(lambda) > 0: errors are relative to a "
                   "growing exact solution.")
    if not stable:
        out.append(f"At h = {table.h:.6g} the scheme is not stable for this spectrum: errors "
                   "grow whatever the per-step accuracy.")
    n_par = int(np.sum(table.parasitic))
    if n_par:
        out.append(f"At h = {table.h:.6g}, {n_par} mode(s) have a spurious root larger than the "
                   "principal root: the computed solution of those modes is dominated by a "
                   "parasitic component.")
    n_amb = int(np.sum(table.ambiguous)) + int(ambiguous_axis)
    if n_amb:
        out.append(f"At {n_amb} point(s) the principal root is not determined (roots collide on "
                   "the way from 0): shown as null.")
    if np.any(table.on_cut):
        out.append("Some points lie on a branch cut of the principal root (a conjugate pair of "
                   "equal modulus); their phase error is given for one side, its sign is a "
                   "convention.")
    return out


def accuracy_report(scheme: Scheme, eigenvalues, h: float | None = None, tol: float = 1e-6,
                    per: str = "step", other_scheme: Scheme | None = None,
                    omega_h_max: float | None = None, n: int = 256,
                    table_limit: int = TABLE_LIMIT) -> dict:
    """Return the accuracy analysis of a spectrum as a JSON-ready dict.

    Parameters
    ----------
    scheme : Scheme
    eigenvalues : array_like of complex, shape (m,)
    h : float, optional
        The step for the along-spectrum table; by default the binding limit.
    tol : float
        Local-error tolerance (see accuracy_limited_step).
    per : {"step", "unit-time"}
    other_scheme : Scheme, optional
        A second scheme for the work comparison at the same tolerance.
    omega_h_max : float, optional
        End of the imaginary-axis curves; by default max(pi, 1.25 max |Im(h lambda)|), at
        most 100.
    n : int
        Samples of the imaginary-axis curves.
    table_limit : int
        At most this many table rows; beyond it the rows with the largest relative error.

    Returns
    -------
    dict
        Numbers and lists of numbers only (null for undefined or unbounded values): keys
        scheme, conventions, tol, per, stability_limit, accuracy_limit, binding, h_binding,
        verdict, stiffness_ratio, h, h_source, at_h, spectrum, imaginary_axis, comparison,
        messages, cautions.
    """
    from .steplimit import step_limit
    lam = validated_eigenvalues(eigenvalues)
    acc = accuracy_limited_step(scheme, lam, tol, per)
    stab = step_limit(scheme, lam)
    h_bind, which = binding_limit(stab.h_max, acc.h_max)
    if h is None:
        if h_bind is not None and h_bind > 0:
            h_used, source = h_bind, "binding limit"
        elif acc.h_max is not None:
            # no positive stable step (e.g. growing modes): still show the accurate one
            h_used, source = acc.h_max, "accuracy limit"
        else:
            raise InputError("h", "no positive limiting step to default to; give a step h")
    else:
        h_used, source = h, "given"
    table = along_spectrum(scheme, lam, h_used)
    h_used = table.h
    if omega_h_max is None:
        omega_h_max = min(100.0, max(math.pi, 1.25 * float(np.max(np.abs(lam.imag))) * h_used))
    axis = imaginary_axis_curves(scheme, omega_h_max, n)
    ratio = stiffness_ratio(lam)
    a = scheme_accuracy(scheme)
    general = a.order if a.linear_order is not None and a.order != a.linear_order else None
    stable = _stable_at(stab.windows, h_used) and stab.zero_stable
    rows = np.arange(lam.size)
    truncated = lam.size > table_limit
    if truncated:
        err = np.nan_to_num(table.relative_error, nan=np.inf)
        rows = np.sort(np.argsort(-err, kind="stable")[:table_limit])
    rel = table.relative_error
    with np.errstate(invalid="ignore"):
        worst = float(np.nanmax(rel)) if np.any(np.isfinite(rel)) else None
    target = tol if per == "step" else tol * h_used
    comparison = None
    messages = list(acc.messages) + list(stab.messages)
    if other_scheme is not None:
        comp = efficiency_at_equal_accuracy(scheme, other_scheme, lam, tol, per)
        comparison = {"first": _work_dict(comp.first), "second": _work_dict(comp.second),
                      "work_ratio": _num(comp.work_ratio), "text": comp.text,
                      "messages": list(comp.messages)}
    c = acc.error_constant
    return {
        "scheme": {"name": scheme.name, "label": scheme.label, "kind": scheme.kind,
                   "explicit": bool(scheme.explicit),
                   "evaluations_per_step": int(scheme.evaluations_per_step),
                   "linear_order": acc.order, "principal_error_constant": str(c),
                   "principal_error_constant_value": _num(complex(c).real)},
        "conventions": {
            "principal_root": "zeta(z), the root of pi(zeta, z) = 0 with zeta(0) = 1, continued "
                              "along the segment from 0 to z = h lambda",
            "error_constant": "zeta(z) - e^z = C' z^(p+1) + O(z^(p+2))",
            "amplification_ratio": "|zeta| / |e^z| (above 1: damped less than the exact solution)",
            "phase_error": "arg zeta - Im z in radians per step, arg continued along the path "
                           "(negative: the numerical mode lags)",
            "relative_error": "|zeta - e^z| / |e^z| for one step",
            "accuracy_limit": "largest h with relative_error <= tol (per step) or <= tol * h "
                              "(per unit time) for every eigenvalue and every smaller step",
        },
        "tol": tol, "per": per,
        "stability_limit": {"h_max": _num(stab.h_max), "unbounded": stab.unbounded,
                            "binding_eigenvalue": _pair(stab.binding_eigenvalue),
                            "binding_index": stab.binding_index},
        "accuracy_limit": {"h_max": _num(acc.h_max), "unbounded": acc.unbounded,
                           "binding_eigenvalue": _pair(acc.binding_eigenvalue),
                           "binding_index": acc.binding_index,
                           "asymptotic_h_max": _num(np.min(acc.asymptotic))},
        "binding": which, "h_binding": _num(h_bind),
        "verdict": verdict(stab.h_max, acc.h_max, tol, per),
        "stiffness_ratio": _num(ratio),
        "h": h_used, "h_source": source,
        "at_h": {"stable": bool(stable), "max_relative_error": _num(worst),
                 "tolerance": target, "meets_tolerance": bool(worst is not None and worst <= target),
                 "parasitic_count": int(np.sum(table.parasitic)),
                 "undetermined_count": int(np.sum(table.ambiguous))},
        "spectrum": {
            "count": int(lam.size), "shown": int(rows.size), "truncated": bool(truncated),
            "eigenvalue": [_pair(v) for v in lam[rows]],
            "z": [_pair(v) for v in table.z[rows]],
            "amplification": _nums(table.amplification[rows]),
            "amplification_ratio": _nums(table.amplification_ratio[rows]),
            "log10_amplification_ratio": _nums(table.log10_amplification_ratio[rows]),
            "phase_error": _nums(table.phase_error[rows]),
            "relative_error": _nums(table.relative_error[rows]),
            "spurious_max": _nums(table.spurious_max[rows]),
            "undetermined": [bool(v) for v in table.ambiguous[rows]],
            "on_cut": [bool(v) for v in table.on_cut[rows]],
            "parasitic": [bool(v) for v in table.parasitic[rows]],
            "accuracy_h_max": _nums(acc.per_eigenvalue[rows]),
            "stability_h_max": _nums(stab.per_eigenvalue[rows]),
        },
        "imaginary_axis": {
            "omega_h": _nums(axis.omega_h), "amplification": _nums(axis.amplification),
            "amplitude_error": _nums(axis.amplitude_error),
            "phase_error": _nums(axis.phase_error), "phase_ratio": _nums(axis.phase_ratio),
            "relative_error": _nums(axis.relative_error),
            "spurious_max": _nums(axis.spurious_max),
            "undetermined": [bool(v) for v in axis.ambiguous],
        },
        "comparison": comparison,
        "messages": messages,
        "cautions": _cautions(scheme, acc.order, general, table, stable, which,
                              acc.binding_eigenvalue if which != "stability" else None, ratio,
                              per, int(np.sum(lam.real > 0)), int(np.sum(axis.ambiguous))),
    }


def accuracy_report_text(report: dict) -> str:
    """Return the plain-text summary of an accuracy_report dict, for the command line."""
    s = report["scheme"]
    acc, stab = report["accuracy_limit"], report["stability_limit"]
    lines = [
        f"{s['label']} ({s['name']}): linear order {s['linear_order']}, "
        f"principal-root error constant C' = {s['principal_error_constant']}",
        f"stability limit: h <= {_fmt(stab['h_max'])}",
        f"accuracy limit:  h <= {_fmt(acc['h_max'])} (tol {report['tol']:g} "
        f"{'per step' if report['per'] == 'step' else 'per unit time'})",
        report["verdict"],
    ]
    if report["stiffness_ratio"] is not None:
        lines.append(f"stiffness ratio: {report['stiffness_ratio']:.4g}")
    at = report["at_h"]
    worst = at["max_relative_error"]
    lines.append(f"at h = {report['h']:.6g} ({report['h_source']}): "
                 f"{'stable' if at['stable'] else 'NOT stable'}, largest local relative error "
                 f"{'undetermined' if worst is None else f'{worst:.3g}'}")
    if report["comparison"] is not None:
        lines.append(report["comparison"]["text"])
    lines += [f"note: {m}" for m in report["messages"]]
    lines += [f"caution: {c}" for c in report["cautions"]]
    return "\n".join(lines)
