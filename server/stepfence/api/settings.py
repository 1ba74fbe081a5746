"""The one settings object of the HTTP layer: bounds, paths and job limits, overridable in tests."""
from __future__ import annotations

from pathlib import Path

from pydantic import BaseModel, ConfigDict, Field, field_validator

from .. import limits


def default_web_dir() -> Path:
    """Return the folder of the static page: inside the package (wheel) or the repo's web/."""
    import stepfence
    here = Path(stepfence.__file__).resolve().parent
    packaged = here / "web"
    if (packaged / "index.html").is_file():
        return packaged
    return here.parent.parent / "web"


def default_plotly_js() -> Path:
    """Return the path of plotly.min.js shipped inside the installed plotly package."""
    import plotly
    return Path(plotly.__file__).resolve().parent / "package_data" / "plotly.min.js"


class Settings(BaseModel):
    """Validated settings of one app instance (see docs/page.md for what each bound means)."""

    model_config = ConfigDict(frozen=True, extra="forbid")

    web_dir: Path = Field(default_factory=default_web_dir)
    plotly_js: Path = Field(default_factory=default_plotly_js)
    max_body_bytes: int = Field(limits.MAX_BODY_BYTES, gt=0)
    max_upload_bytes: int = Field(limits.MAX_UPLOAD_BYTES, gt=0)
    max_eigenvalues: int = Field(limits.MAX_EIGENVALUES, gt=0)
    max_grid: int = Field(limits.MAX_GRID, ge=16)
    max_verify_steps: int = Field(limits.MAX_VERIFY_STEPS, gt=0)
    max_job_seconds: float = Field(limits.MAX_JOB_SECONDS, gt=0)
    max_jobs: int = Field(4, ge=1, description="matrix jobs kept (running or finished) at once")
    max_running_jobs: int = Field(1, ge=1, description="matrix jobs solving at the same time")
    job_ttl_seconds: float = Field(900, gt=0, description="finished jobs are forgotten after this")

    @field_validator("web_dir")
    @classmethod
    def _web_dir_exists(cls, v: Path) -> Path:
        if not v.is_dir():
            raise ValueError(f"web_dir {v} is not a folder")
        return v.resolve()
