"""Analyses as plain JSON-ready dicts: what the CLI prints and the HTTP API returns.

The key names of `describe` and `limit_report` are the stable contract of DESIGN.md.
"""
from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
import sympy as sp

from . import polytext
from .analysis.accuracy import accuracy
from .analysis.region import boundary_locus, region_metrics, region_raster, view_box
from .analysis.roots import root_condition
from .analysis.steplimit import StepLimit, enclosure_limit, step_limit
from .schemes.base import Scheme

CAUTIONS = (
    "Eigenvalues decide linear stability only for normal Jacobians; a non-normal Jacobian "
    "(advection, upwinding, boundary layers) can grow transiently at a step the eigenvalues call "
    "stable: check the pseudospectra or verify by stepping.",
    "For a nonlinear problem the Jacobian changes along the solution; a limit computed from one "
    "frozen Jacobian holds only while that Jacobian is representative.",
    "Multistep results assume a constant step; changing the step changes the method.",
    "A stable step is not an accurate step: stability only bounds the growth of errors.",
)


def _num(x):
    if x is None:
        return None
    x = float(x)
    return None if math.isinf(x) or math.isnan(x) else x


def _exact_text(x) -> str | None:
    if x is None:
        return None
    x = sp.sympify(x, strict=True)
    if x.atoms(sp.Float):
        return f"{float(x):.15g} (from coefficients rounded to 50 digits)"
    try:
        return polytext.format_exact(x)
    except Exception:  # noqa: BLE001 - display only; fall back to sympy's own text
        return str(x).replace("**", "^")


def _complex_pair(c):
    return None if c is None else [float(np.real(c)), float(np.imag(c))]


@lru_cache(maxsize=128)
def _describe_cached(scheme: Scheme) -> dict:
    acc = accuracy(scheme)
    rc = root_condition(scheme)
    met = region_metrics(scheme)
    inf_roots = [None if not np.isfinite(abs(r)) else _complex_pair(r) for r in met.infinity_roots]
    out = {
        "name": scheme.name,
        "label": scheme.label,
        "kind": scheme.kind,
        "family": scheme.family,
        "steps": scheme.steps,
        "stages": scheme.stages,
        "explicit": scheme.explicit,
        "evaluations_per_step": scheme.evaluations_per_step,
        "order": acc.order,
        "linear_order": acc.linear_order,
        "tree_order": acc.tree_order,
        "consistent": acc.consistent,
        "error_constant": _exact_text(acc.error_constant),
        "error_constant_value": _num(sp.N(acc.error_constant)) if acc.error_constant is not None else None,
        "error_constant_normalised": _exact_text(acc.error_constant_normalised),
        "error_constant_normalised_value": (_num(sp.N(acc.error_constant_normalised))
                                            if acc.error_constant_normalised is not None else None),
        "error_constant_convention": acc.convention,
        "zero_stable": rc.zero_stable,
        "strongly_stable": rc.strongly_stable,
        "root_condition": rc.verdict,
        "rho_roots": [{"value": _complex_pair(r.value), "modulus": r.modulus,
                       "multiplicity": r.multiplicity, "on_circle": r.on_circle} for r in rc.roots],
        "real_interval": [_num(met.real_interval[0]), _num(met.real_interval[1])],
        "imag_interval": [_num(met.imag_interval[0]), _num(met.imag_interval[1])],
        "real_windows": [[_num(a.real), _num(b.real) if b is not None else None] for a, b in met.real_windows],
        "imag_windows": [[_num(a.imag), _num(b.imag) if b is not None else None] for a, b in met.imag_windows],
        "a_stable": met.a_stable,
        "a0_stable": met.a0_stable,
        "a_alpha_deg": _num(met.a_alpha_deg),
        "l_stable": met.l_stable,
        "stiff_decay": met.stiff_decay,
        "infinity_max_modulus": _num(met.infinity_max_modulus) if np.isfinite(met.infinity_max_modulus) else None,
        "infinity_roots": inf_roots,
        "bounded": met.bounded,
        "empty_interior": met.empty_interior,
        "notes": list(met.notes) + list(acc.notes) + _reducible_note(scheme),
        "rho": scheme.rho_text(),
        "sigma": scheme.sigma_text(),
        "alpha": [_exact_text(a) for a in scheme.rho] if scheme.rho else None,
        "beta": [_exact_text(b) for b in scheme.sigma] if scheme.sigma else None,
        "stability_function": (None if scheme.stability_function is None else
                               {"P": str(sp.expand(scheme.stability_function[0])).replace("**", "^"),
                                "Q": str(sp.expand(scheme.stability_function[1])).replace("**", "^")}),
        "details": {k: v for k, v in scheme.details.items()},
        "source": scheme.source,
        "pi": str(scheme.pi.expr()).replace("**", "^"),
        "reducible": bool(scheme.details.get("reducible", False)),
    }
    if scheme.tableau is not None and hasattr(scheme.tableau, "to_json"):
        out["tableau"] = scheme.tableau.to_json()
    return out


def _reducible_note(scheme: Scheme) -> list:
    # hardening: the flag alone (describe["reducible"]) was never said in words
    factor = scheme.details.get("common_factor")
    if not scheme.details.get("reducible"):
        return []
    return [f"rho and sigma share the factor {factor}: the method is reducible (a method with "
            "fewer steps in disguise); the factor's roots are roots of pi(., z) for every z, so "
            "they count in the root condition and in the region"]


def describe(scheme: Scheme) -> dict:
    """Return the properties of a scheme as a JSON-ready dict (DESIGN.md key names)."""
    return dict(_describe_cached(scheme))


def limit_report(scheme: Scheme, eigenvalues, safety: float | None = None,
                 per_eigenvalue: bool = False) -> dict:
    """Return the step limit of a spectrum as a JSON-ready dict (DESIGN.md key names)."""
    res: StepLimit = step_limit(scheme, eigenvalues, safety=safety)
    out = {
        "scheme": scheme.name,
        "h_max": _num(res.h_max),
        "unbounded": res.unbounded,
        "binding_eigenvalue": _complex_pair(res.binding_eigenvalue),
        "binding_index": res.binding_index,
        "windows": [[_num(a), _num(b)] for a, b in res.windows],
        "evaluations_per_step": res.evaluations_per_step,
        "h_max_per_evaluation": _num(res.h_max_per_evaluation),
        "safety": res.safety,
        "h_safe": _num(res.h_safe),
        "count": res.count,
        "zero_eigenvalues": res.zero_eigenvalues,
        "growing_eigenvalues": res.growing_eigenvalues,
        "zero_stable": res.zero_stable,
        "messages": list(res.messages),
        "summary": summary_line(scheme, res),
    }
    if per_eigenvalue:
        out["per_eigenvalue"] = [_num(v) if not np.isinf(v) else None for v in res.per_eigenvalue]
    return out


def enclosure_report(scheme: Scheme, enclosure, safety: float | None = None) -> dict:
    """Return the step limit of a whole enclosure as a JSON-ready dict."""
    res = enclosure_limit(scheme, enclosure)
    evals = scheme.evaluations_per_step
    desc = enclosure.describe() if hasattr(enclosure, "describe") else "enclosure"
    if res.unbounded:
        summary = f"{scheme.name}: every positive step keeps {desc} inside the region."
    elif res.h_max == 0:
        summary = (f"{scheme.name}: no positive step keeps {desc} inside the region"
                   + (" (it reaches into Re(lambda) > 0 or past an unstable part near 0)." ))
    else:
        summary = (f"{scheme.name}: h_max = {res.h_max:.12g} for {desc}, set at "
                   f"{_fmt_c(res.binding_point)}; h_max per evaluation = {res.h_max / evals:.6g}.")
    from .spectra import ENCLOSURE_CAUTION
    return {
        "scheme": scheme.name, "enclosure": desc, "h_max": _num(res.h_max), "unbounded": res.unbounded,
        "binding_eigenvalue": _complex_pair(res.binding_point), "evaluations_per_step": evals,
        "h_max_per_evaluation": None if res.h_max is None else res.h_max / evals,
        "safety": safety, "h_safe": None if (safety is None or res.h_max is None) else res.h_max * safety,
        "boundary_samples": res.samples, "messages": list(res.messages) + [ENCLOSURE_CAUTION],
        "summary": summary,
    }


def summary_line(scheme: Scheme, res: StepLimit) -> str:
    """Return one sentence stating the limit in words."""
    if not res.zero_stable:
        return f"{scheme.name}: fails the root condition, so no step near 0 is stable (h_max = 0)."
    if res.unbounded:
        return f"{scheme.name}: every positive step is stable for these {res.count} eigenvalues."
    if res.h_max == 0:
        b = res.binding_eigenvalue
        return (f"{scheme.name}: no positive step is stable; eigenvalue {_fmt_c(b)} lies outside "
                "the region for every small h.")
    b = res.binding_eigenvalue
    return (f"{scheme.name}: h_max = {res.h_max:.12g}, set by eigenvalue {_fmt_c(b)}; "
            f"{res.evaluations_per_step} evaluation(s) per step, "
            f"h_max per evaluation = {res.h_max_per_evaluation:.6g}.")


def _fmt_c(c) -> str:
    if c is None:
        return "-"
    if abs(c.imag) == 0:
        return f"{c.real:.8g}"
    return f"{c.real:.8g}{c.imag:+.8g}i"


def _drawn(values, span: float) -> list:
    """Return values rounded far below a pixel (1e-7 of the span), None for breaks."""
    v = np.asarray(values, dtype=float)
    decimals = int(max(0, min(15, 7 - np.floor(np.log10(max(span, 1e-300))))))
    out = np.round(v, decimals).tolist()
    if not np.all(np.isfinite(v)):
        out = [None if not math.isfinite(x) else x for x in out]
    return out


@lru_cache(maxsize=64)
def _locus_cached(scheme: Scheme, n: int):
    _, branches = boundary_locus(scheme.pi, n)
    pts = [b[np.isfinite(b)] for b in branches]
    pts = np.concatenate(pts) if pts else np.zeros(1)
    span = float(np.max(np.abs(pts))) if pts.size else 1.0
    return [{"x": _drawn(b.real, span), "y": _drawn(b.imag, span)} for b in branches]


def region_payload(scheme: Scheme, xlim=None, ylim=None, grid: int = 240,
                   locus_points: int = 2048) -> dict:
    """Return boundary-locus branches and a filled raster for drawing."""
    key = (scheme, None if xlim is None else tuple(xlim), None if ylim is None else tuple(ylim),
           grid, locus_points)
    return dict(_region_cached(*key))


@lru_cache(maxsize=64)
def _region_cached(scheme: Scheme, xlim, ylim, grid, locus_points) -> dict:
    pi = scheme.pi
    if xlim is None or ylim is None:
        bx, by = view_box(pi)
        xlim = xlim or bx
        ylim = ylim or by
    out_br = _locus_cached(scheme, locus_points)
    aspect = (ylim[1] - ylim[0]) / max(xlim[1] - xlim[0], 1e-300)
    nx = grid
    ny = max(16, min(int(round(grid * aspect)), 2 * grid))
    r = region_raster(pi, xlim, ylim, nx, ny)
    return {
        "xlim": [float(xlim[0]), float(xlim[1])],
        "ylim": [float(ylim[0]), float(ylim[1])],
        "branches": out_br,
        "raster": {"x": _drawn(r.x, xlim[1] - xlim[0]), "y": _drawn(r.y, ylim[1] - ylim[0]),
                   "stable": r.stable.astype(np.uint8).tolist()},
    }
