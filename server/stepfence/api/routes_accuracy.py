"""Accuracy beside stability: per-mode amplitude and phase error, and the accuracy-limited step."""
from __future__ import annotations

import threading
import time

import numpy as np

from fastapi import APIRouter, Depends

from ..analysis.accuracy_limit import TABLE_LIMIT, accuracy_report
from ..errors import InputError
from .adapters import eigenvalues_from, scheme_for
from .deps import get_settings
from .schemas import AccuracyRequest, AccuracyResponse
from .settings import Settings

router = APIRouter(prefix="/api", tags=["accuracy"])

# One report at a time: the root condition inside the core (analysis.roots) sets mpmath's
# global working precision, which is not thread-safe, and a page dragging the h slider would
# otherwise pile up reports side by side.
_one_at_a_time = threading.Lock()
MAX_Z = 1e12    # the same bound as the region view's; far beyond it the core's root finder fails


def _other_scheme(spec):
    # the core names the fields of a scheme as if it were the only one (``scheme``, ``rho``);
    # here they belong to ``other``, and the answer must say so
    try:
        return scheme_for(spec, "other")
    except InputError as e:
        field = "other" if e.field == "scheme" else f"other.{e.field}"
        raise InputError(field, e.message, position=e.position, expected=e.expected,
                         line=e.line, column=e.column) from None


@router.post("/accuracy", response_model=AccuracyResponse)
def compute_accuracy(req: AccuracyRequest, settings: Settings = Depends(get_settings)) -> dict:
    """Give the accuracy- and stability-limited steps, which binds, each mode's local error at h,
    the imaginary-axis error curves, the optional work comparison and the cautions."""
    t0 = time.perf_counter()
    scheme = scheme_for(req.scheme)
    other = _other_scheme(req.other) if req.other is not None else None
    lam, _ = eigenvalues_from(req.eigenvalues, "eigenvalues", settings.max_eigenvalues)
    if req.h is not None and req.h * float(np.max(np.abs(lam))) > MAX_Z:
        raise InputError("h", f"puts h*lambda beyond |z| = {MAX_Z:g} for the largest eigenvalue; "
                              "give a smaller step")
    with _one_at_a_time:
        rep = accuracy_report(scheme, lam, h=req.h, tol=req.tol, per=req.per, other_scheme=other,
                              table_limit=TABLE_LIMIT)
    rep["elapsed_ms"] = round(1000 * (time.perf_counter() - t0), 2)
    return rep
