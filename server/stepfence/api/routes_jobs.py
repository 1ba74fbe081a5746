"""Matrix jobs: state, progress and result; cancel stops the solver process."""
from __future__ import annotations

from fastapi import APIRouter, Depends, HTTPException

from .deps import get_jobs
from .jobs import JobManager
from .schemas import JobResponse

router = APIRouter(prefix="/api/jobs", tags=["jobs"])


@router.get("/{job_id}", response_model=JobResponse)
def read_job(job_id: str, jobs: JobManager = Depends(get_jobs)) -> dict:
    """Report a matrix job: queued | reading | solving | done | failed | cancelled | timed-out."""
    job = jobs.get(job_id)
    if job is None:
        raise HTTPException(404, f"no job {job_id!r} (finished jobs are forgotten after a while)")
    return job.snapshot()


@router.delete("/{job_id}", response_model=JobResponse)
def cancel_job(job_id: str, jobs: JobManager = Depends(get_jobs)) -> dict:
    """Cancel a matrix job: its solver process is terminated."""
    job = jobs.cancel(job_id)
    if job is None:
        raise HTTPException(404, f"no job {job_id!r}")
    return job.snapshot()
