"""Thin adapters between request models and the numerical core: no numerics here.

They turn request fields into core objects (a Scheme, an eigenvalue array), core results into
JSON-ready values (complex -> [re, im], inf/nan -> null), and keep small caches so a
practitioner typing into the page does not pay for the same scheme twice.
"""
from __future__ import annotations

import json
import math
import threading
from collections import OrderedDict
from typing import Any

import numpy as np

from ..errors import InputError, LimitExceeded
from ..report import CAUTIONS
from ..specs import scheme_from_spec
from .schemas import SchemeSpec

_SCHEME_CACHE_SIZE = 256
_scheme_cache: "OrderedDict[str, Any]" = OrderedDict()
_scheme_lock = threading.Lock()


def spec_of(scheme_input) -> Any:
    """Return the plain spec (name string or dict) of a request's scheme field."""
    if isinstance(scheme_input, SchemeSpec):
        return scheme_input.to_spec()
    return scheme_input


def scheme_for(scheme_input, field: str = "scheme"):
    """Return the Scheme of a request field, reusing the object for an identical spec.

    Reusing the object matters: the core caches describe() per Scheme object.
    """
    spec = spec_of(scheme_input)
    key = json.dumps(spec, sort_keys=True, default=str)
    with _scheme_lock:
        hit = _scheme_cache.get(key)
        if hit is not None:
            _scheme_cache.move_to_end(key)
            return hit
    scheme = scheme_from_spec(spec, field)
    with _scheme_lock:
        _scheme_cache[key] = scheme
        while len(_scheme_cache) > _SCHEME_CACHE_SIZE:
            _scheme_cache.popitem(last=False)
    return scheme


def jsonable(x):
    """Return x with complex -> [re, im], numpy scalars -> Python, non-finite -> None."""
    if x is None or isinstance(x, (bool, str)):
        return x
    if isinstance(x, (complex, np.complexfloating)):
        re_, im_ = float(np.real(x)), float(np.imag(x))
        return [finite_or_none(re_), finite_or_none(im_)]
    if isinstance(x, (int, np.integer)):
        return int(x)
    if isinstance(x, (float, np.floating)):
        return finite_or_none(float(x))
    if isinstance(x, dict):
        return {str(k): jsonable(v) for k, v in x.items()}
    if isinstance(x, np.ndarray):
        return [jsonable(v) for v in x.tolist()]
    if isinstance(x, (list, tuple, set)):
        return [jsonable(v) for v in x]
    if hasattr(x, "__dataclass_fields__"):
        return {k: jsonable(getattr(x, k)) for k in x.__dataclass_fields__}
    return str(x)


def finite_or_none(v: float):
    return v if math.isfinite(v) else None


def eigenvalues_from(value, field: str, max_count: int):
    """Return (complex ndarray, Spectrum or None) from [[re, im], ...] or text."""
    if isinstance(value, str):
        from ..spectra import parse_spectrum_text
        spec = parse_spectrum_text(value, field)
        lam = np.asarray(spec.values, dtype=complex).ravel()
    else:
        spec = None
        if len(value) == 0:
            raise InputError(field, "no eigenvalues given")
        arr = np.asarray(value, dtype=float).reshape(-1, 2)
        lam = arr[:, 0] + 1j * arr[:, 1]
    if lam.size > max_count:
        raise LimitExceeded(field, f"{lam.size} eigenvalues; at most {max_count}")
    return lam, spec


def spectrum_payload(spec) -> dict:
    """Return the JSON of a Spectrum: values [[re, im]], count, extremes, notes, source."""
    vals = np.asarray(spec.values, dtype=complex).ravel()
    extremes = spec.extremes() if hasattr(spec, "extremes") else {}
    if not isinstance(extremes, dict):
        extremes = {"values": extremes}
    return {
        "values": np.column_stack([vals.real, vals.imag]).tolist(),
        "count": int(vals.size),
        "extremes": jsonable(extremes),
        "notes": [str(n) for n in getattr(spec, "notes", ())],
        "source": str(getattr(spec, "source", "")),
        "partial": bool(getattr(spec, "partial", False)),
    }


# --- cautions -------------------------------------------------------------------------

def _caution(word: str) -> str:
    """Return the core's caution text that mentions word (the texts live in report.CAUTIONS)."""
    for text in CAUTIONS:
        if word in text:
            return text
    raise LookupError(word)  # a renamed caution must fail loudly, not vanish from the page


def cautions_for(scheme, report: dict, spectrum=None) -> list[dict]:
    """Return the plain-word cautions that apply to this scheme, spectrum and limit."""
    out = []
    if not report.get("zero_stable", True):
        out.append({"key": "root-condition", "text": (
            "This scheme fails the root condition: errors grow even for h near 0, whatever the "
            "eigenvalues. Do not use it for stepping.")})
    if report.get("growing_eigenvalues"):
        out.append({"key": "growing", "text": (
            f"{report['growing_eigenvalues']} eigenvalue(s) have Re(lambda) > 0: the true solution "
            "grows there. A 'stable' step for them only means the scheme damps what the problem "
            "amplifies; that is not accuracy, and it can hide real behaviour.")})
    if spectrum is not None and getattr(spectrum, "partial", False):
        out.append({"key": "partial", "text": (
            "Only part of the spectrum was computed. An eigenvalue that was not found can bind "
            "a smaller step than the one shown.")})
    out.append({"key": "non-normal", "text": _caution("non-normal")})
    out.append({"key": "nonlinear", "text": _caution("nonlinear")})
    if scheme.kind in ("multistep", "predictor-corrector") and scheme.steps > 1:
        out.append({"key": "constant-step", "text": _caution("constant step")})
    out.append({"key": "accuracy", "text": _caution("accurate")})
    out.append({"key": "verify", "text": (
        "The step shown holds for the linear test problem u' = lambda u with exactly these "
        "eigenvalues. Confirm it on your own problem: run the stepping check here and a short "
        "run of your real code at the chosen step.")})
    return out


# --- semi-discretisation models -------------------------------------------------------

def _get(obj, key, default=None):
    if isinstance(obj, dict):
        return obj.get(key, default)
    return getattr(obj, key, default)


def models_listing() -> list[dict]:
    """Return spectra.MODELS as [{kind, description, params: [{name, default, description}]}]."""
    from ..spectra import MODELS
    out = []
    for kind, entry in MODELS.items():
        params = _get(entry, "params", {}) or {}
        rows = []
        items = params.items() if isinstance(params, dict) else (
            (_get(p, "name"), p) for p in params)
        for name, p in items:
            if name == "n":
                continue
            if isinstance(p, dict) or hasattr(p, "default"):
                rows.append({"name": str(name), "default": jsonable(_get(p, "default")),
                             "description": str(_get(p, "description", "") or ""),
                             "choices": [str(c) for c in (_get(p, "choices", ()) or ())]})
            else:
                rows.append({"name": str(name), "default": jsonable(p), "description": "",
                             "choices": []})
        n_default = _get(entry, "n_default", None)
        if n_default is None and isinstance(params, dict) and "n" in params:
            p = params["n"]
            n_default = _get(p, "default") if (isinstance(p, dict) or hasattr(p, "default")) else p
        out.append({"kind": str(kind),
                    "description": str(_get(entry, "description", "") or kind),
                    "params": rows, "n_default": n_default})
    return out


def stencil_info(scheme) -> dict:
    """Return what the page's stencil view needs beyond describe(): stage times c as numbers
    (to place the stage dots) and, for a predictor-corrector pair, both methods' coefficients."""
    from ..report import describe
    out: dict = {"c_values": None, "parts": []}
    tab = scheme.tableau
    if tab is not None and getattr(tab, "c", None) is not None:
        out["c_values"] = [finite_or_none(float(x)) for x in tab.c]
    for part in scheme.parts:
        d = describe(part)
        out["parts"].append({k: d.get(k) for k in ("name", "label", "alpha", "beta", "explicit", "order", "steps")})
    return out
