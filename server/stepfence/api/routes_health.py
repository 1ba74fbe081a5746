"""GET /health."""
from __future__ import annotations

from fastapi import APIRouter

from .. import __version__
from . import catalogue_index
from .schemas import HealthResponse

router = APIRouter(tags=["health"])


@router.get("/health", response_model=HealthResponse)
def read_health() -> dict:
    """Say the server is up, its version, and whether the catalogue orders are all derived."""
    return {"status": "ok", "version": __version__, "catalogue_ready": catalogue_index.is_ready()}
