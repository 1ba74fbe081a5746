"""Builds the stepfence app: settings, middleware, error handlers, routers, the page."""
from __future__ import annotations

from contextlib import asynccontextmanager

from fastapi import FastAPI

from .. import __version__, limits
from . import catalogue_index
from . import (routes_accuracy, routes_health, routes_jobs, routes_limits, routes_schemes,
               routes_spectra, routes_static, routes_verify)
from .errors import install_error_handlers
from .jobs import JobManager
from .middleware import BodyLimitMiddleware
from .settings import Settings

DESCRIPTION = f"""
Absolute-stability regions and exact step limits, served on loopback for the stepfence page.

Bounds (stepfence.limits): request body {limits.MAX_BODY_BYTES} bytes, one upload
{limits.MAX_UPLOAD_BYTES} bytes, {limits.MAX_EIGENVALUES} eigenvalues, raster {limits.MAX_GRID}
cells per side, dense matrices of order {limits.MAX_DENSE_N}, matrix jobs stopped after
{limits.MAX_JOB_SECONDS} s, verification {limits.MAX_VERIFY_STEPS} steps of at most
{limits.MAX_VERIFY_N} unknowns. Errors are JSON {{"error": {{field, message, position, line,
column, detail}}}}: 422 for bad input, 413 over a bound, 404 for an unknown job or path.
"""


def create_app(settings: Settings | None = None, warm_catalogue: bool = True) -> FastAPI:
    """Return the FastAPI app; tests pass their own Settings."""
    settings = settings or Settings()
    jobs = JobManager(settings.max_jobs, settings.max_running_jobs, settings.max_job_seconds,
                      settings.job_ttl_seconds)

    @asynccontextmanager
    async def lifespan(app: FastAPI):
        if warm_catalogue:
            catalogue_index.start_warmup()
        yield
        jobs.shutdown()
        if warm_catalogue:
            catalogue_index.stop_warmup()

    app = FastAPI(title="stepfence", version=__version__, description=DESCRIPTION,
                  lifespan=lifespan, docs_url=None, redoc_url=None)
    app.state.settings = settings
    app.state.jobs = jobs
    install_error_handlers(app)
    for module in (routes_health, routes_schemes, routes_limits, routes_spectra, routes_jobs,
                   routes_verify, routes_accuracy, routes_static):
        app.include_router(module.router)
    routes_static.mount_page(app, settings)
    app.add_middleware(BodyLimitMiddleware, max_bytes=settings.max_body_bytes)
    app.add_middleware(routes_static.SecurityHeadersMiddleware)
    return app
