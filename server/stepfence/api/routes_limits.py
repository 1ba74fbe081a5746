"""Step limits: the largest stable step of a scheme for a spectrum."""
from __future__ import annotations

import time

from fastapi import APIRouter, Depends

from ..report import limit_report
from .adapters import cautions_for, eigenvalues_from, scheme_for
from .deps import get_settings
from .schemas import LimitRequest, LimitResponse
from .settings import Settings

router = APIRouter(prefix="/api", tags=["limits"])


@router.post("/limit", response_model=LimitResponse)
def compute_limit(req: LimitRequest, settings: Settings = Depends(get_settings)) -> dict:
    """Give h_max, the binding eigenvalue, every stable window and (optionally) each
    eigenvalue's own limit, plus the cautions that apply."""
    t0 = time.perf_counter()
    scheme = scheme_for(req.scheme)
    lam, spectrum = eigenvalues_from(req.eigenvalues, "eigenvalues", settings.max_eigenvalues)
    rep = limit_report(scheme, lam, safety=req.safety, per_eigenvalue=req.per_eigenvalue)
    rep["cautions"] = cautions_for(scheme, rep, spectrum)
    rep["elapsed_ms"] = round(1000 * (time.perf_counter() - t0), 2)
    return rep
