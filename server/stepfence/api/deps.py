"""Request dependencies: the app's settings and job manager, read from app.state."""
from __future__ import annotations

from fastapi import Request

from .jobs import JobManager
from .settings import Settings


def get_settings(request: Request) -> Settings:
    return request.app.state.settings


def get_jobs(request: Request) -> JobManager:
    return request.app.state.jobs
