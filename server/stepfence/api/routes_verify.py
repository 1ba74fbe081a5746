"""Verification: step the linear system at a chosen h and report the norm history."""
from __future__ import annotations

import time

import numpy as np
from fastapi import APIRouter, Depends

from ..errors import InputError, LimitExceeded
from .adapters import eigenvalues_from, finite_or_none, scheme_for
from .deps import get_jobs, get_settings
from .jobs import JobManager
from .schemas import VerifyRequest, VerifyResponse
from .settings import Settings

router = APIRouter(prefix="/api", tags=["verify"])


def _opt(x):
    return None if x is None else finite_or_none(float(x))


@router.post("/verify", response_model=VerifyResponse)
def verify_step(req: VerifyRequest, settings: Settings = Depends(get_settings),
                jobs: JobManager = Depends(get_jobs)) -> dict:
    """Step u' = J u (the uploaded matrix of a finished job, or the diagonal of the eigenvalues)
    at step h and compare the observed growth per step with the predicted one."""
    from ..analysis.verify import verify
    t0 = time.perf_counter()
    if req.steps > settings.max_verify_steps:
        raise LimitExceeded("steps", f"{req.steps}; at most {settings.max_verify_steps}")
    scheme = scheme_for(req.scheme)
    if req.job is not None:
        job = jobs.get(req.job)
        if job is None or job.state != "done" or not job.data:
            raise InputError("job", "no finished matrix job with this id; upload the matrix again")
        from .. import spectra
        mat = spectra.read_matrix_bytes(job.data, job.filename, field="job")
        res = verify(scheme, req.h, matrix=mat, steps=req.steps)
        source = "matrix"
    elif req.eigenvalues is not None:
        lam, _ = eigenvalues_from(req.eigenvalues, "eigenvalues", settings.max_eigenvalues)
        res = verify(scheme, req.h, eigenvalues=lam, steps=req.steps)
        source = "eigenvalues"
    else:
        raise InputError("eigenvalues", "give eigenvalues or a finished matrix job to step")
    norms = [finite_or_none(float(x)) for x in np.asarray(res.norms, dtype=float).ravel()]
    return {"h": float(res.h), "steps": int(res.steps), "norms": norms,
            "observed_growth_per_step": _opt(res.observed_growth_per_step),
            "predicted_growth": _opt(res.predicted_growth), "verdict": str(res.verdict),
            "max_transient": _opt(res.max_transient), "notes": [str(n) for n in res.notes],
            "source": source, "elapsed_ms": round(1000 * (time.perf_counter() - t0), 2)}
