"""Schemes: the catalogue listing and the analysis of one scheme (properties + region)."""
from __future__ import annotations

import time

from fastapi import APIRouter, Depends

from ..errors import InputError, LimitExceeded
from ..report import CAUTIONS, describe, region_payload
from . import catalogue_index
from .adapters import scheme_for, stencil_info
from .deps import get_settings
from .schemas import AnalyseRequest, AnalyseResponse, CatalogueResponse
from .settings import Settings

router = APIRouter(prefix="/api", tags=["schemes"])


@router.get("/catalogue", response_model=CatalogueResponse)
def list_catalogue() -> dict:
    """List catalogue schemes grouped by family, with order, steps, stages and explicitness."""
    out = catalogue_index.listing()
    out["cautions"] = list(CAUTIONS)
    return out


def _check_view(view, settings: Settings):
    for name in ("xlim", "ylim"):
        lo, hi = getattr(view, name)
        if not lo < hi:
            raise InputError(f"view.{name}", f"must be [low, high] with low < high, got [{lo}, {hi}]")
        if hi - lo < 1e-12 * max(1.0, abs(lo), abs(hi)):
            raise InputError(f"view.{name}", f"is too narrow to draw: width {hi - lo:.3g}; at "
                                             "least 1e-12 times max(1, |low|, |high|)")
        if max(abs(lo), abs(hi)) > 1e12:
            raise InputError(f"view.{name}", "reaches beyond |z| = 1e12")


@router.post("/analyse", response_model=AnalyseResponse)
def analyse_scheme(req: AnalyseRequest, settings: Settings = Depends(get_settings)) -> dict:
    """Describe a scheme (order, error constant, root condition, intervals, angle) and draw its
    region: boundary-locus branches and a stable/unstable raster of `grid` cells per row."""
    t0 = time.perf_counter()
    if req.grid > settings.max_grid:
        raise LimitExceeded("grid", f"{req.grid} cells; at most {settings.max_grid}")
    scheme = scheme_for(req.scheme)
    out = {"describe": None, "region": None, "stencil": None}
    if "region" in req.parts:
        xlim = ylim = None
        if req.view is not None:
            _check_view(req.view, settings)
            xlim, ylim = list(req.view.xlim), list(req.view.ylim)
        out["region"] = region_payload(scheme, xlim=xlim, ylim=ylim, grid=req.grid)
    if "describe" in req.parts:
        out["describe"] = describe(scheme)
        out["stencil"] = stencil_info(scheme)
    out["elapsed_ms"] = round(1000 * (time.perf_counter() - t0), 2)
    return out
