"""Spectra: eigenvalues from pasted text, a standard semi-discretisation, or an uploaded file.

An uploaded list is parsed at once; an uploaded matrix becomes a background job (see
routes_jobs) because a dense eigenvalue problem of a few thousand unknowns takes seconds.
"""
from __future__ import annotations

from typing import Literal

from fastapi import APIRouter, Depends, File, Form, UploadFile
from fastapi.responses import JSONResponse

from ..errors import InputError, LimitExceeded
from .adapters import models_listing, spectrum_payload
from .deps import get_jobs, get_settings
from .jobs import JobManager
from .schemas import (JobResponse, ModelsResponse, SpectrumModelRequest, SpectrumParseRequest,
                      SpectrumResponse)
from .settings import Settings

router = APIRouter(prefix="/api/spectrum", tags=["spectra"])


def _bounded(payload: dict, settings: Settings, field: str) -> dict:
    if payload["count"] > settings.max_eigenvalues:
        raise LimitExceeded(field, f"{payload['count']} eigenvalues; at most {settings.max_eigenvalues}")
    return payload


@router.post("/parse", response_model=SpectrumResponse)
def parse_spectrum(req: SpectrumParseRequest, settings: Settings = Depends(get_settings)) -> dict:
    """Read eigenvalues from text ('-1', '-2+3i', '(-1, 2)', one per line or comma separated)."""
    from ..spectra import parse_spectrum_text
    return _bounded(spectrum_payload(parse_spectrum_text(req.text, "text")), settings, "text")


@router.get("/models", response_model=ModelsResponse)
def list_models() -> dict:
    """List the standard semi-discretisations and their parameters with defaults."""
    return {"models": models_listing()}


@router.post("/model", response_model=SpectrumResponse)
def generate_spectrum(req: SpectrumModelRequest, settings: Settings = Depends(get_settings)) -> dict:
    """Generate the spectrum of a standard semi-discretisation (diffusion, advection ...)."""
    from ..spectra import semidiscretisation
    if req.n > settings.max_eigenvalues:
        raise LimitExceeded("n", f"{req.n} unknowns; at most {settings.max_eigenvalues}")
    spec = semidiscretisation(req.kind, req.n, **req.params)
    return _bounded(spectrum_payload(spec), settings, "n")


@router.post("/upload", response_model=SpectrumResponse | JobResponse,
             responses={202: {"model": JobResponse, "description": "matrix: a job was started"}})
def upload_spectrum(file: UploadFile = File(..., description="eigenvalue list (text, csv, npy) "
                                            "or matrix (MatrixMarket .mtx, csv, npy)"),
                    kind: Literal["list", "matrix"] = Form("list"),
                    settings: Settings = Depends(get_settings),
                    jobs: JobManager = Depends(get_jobs)):
    """Read an uploaded eigenvalue list at once, or start a matrix job (202) whose state,
    progress and eigenvalues GET /api/jobs/{id} reports."""
    data = file.file.read(settings.max_upload_bytes + 1)
    name = file.filename or "upload"
    if len(data) > settings.max_upload_bytes:
        raise LimitExceeded("file", f"over the upload limit of {settings.max_upload_bytes} bytes")
    if not data:
        raise InputError("file", f"{name} is empty")
    if kind == "list":
        from ..spectra import read_spectrum_bytes
        return _bounded(spectrum_payload(read_spectrum_bytes(data, name, field="file")), settings,
                        "file")
    job = jobs.submit(data, name, field="file")
    return JSONResponse(JobResponse(**job.snapshot()).model_dump(), status_code=202)
