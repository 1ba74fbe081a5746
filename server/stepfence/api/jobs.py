"""Background matrix jobs: eigenvalues of an uploaded matrix, off the event loop.

Each job runs in its own child process (multiprocessing, spawn), so DELETE /api/jobs/{id} and
the time limit really stop the work: the child is terminated, not asked to stop. A monitor
thread per job relays the child's stage messages (reading -> solving -> done) over a pipe.
Progress is by stage; a dense eigenvalue solve reports no finer steps, so the page shows the
stage and the elapsed time against the limit rather than an invented percentage.
"""
from __future__ import annotations

import multiprocessing as mp
import threading
import time
import uuid
from dataclasses import dataclass, field

from ..errors import InputError, LimitExceeded

FINISHED = ("done", "failed", "cancelled", "timed-out")
PROGRESS = {"queued": 0.0, "reading": 0.1, "solving": 0.3, "done": 1.0}
POLL_SECONDS = 0.1


def _child(conn, data: bytes, filename: str, field: str) -> None:
    """Child process: read the matrix, compute its eigenvalues, send the JSON back."""
    try:
        conn.send(("stage", "reading", f"reading {filename}"))
        from .. import spectra
        from .adapters import spectrum_payload
        mat = spectra.read_matrix_bytes(data, filename, field=field)
        n = mat.shape[0]
        conn.send(("stage", "solving", f"solving the eigenvalue problem, n = {n}"))
        spec = spectra.eigenvalues_of(mat, field=field)
        payload = spectrum_payload(spec)
        payload["matrix_order"] = int(n)
        conn.send(("done", payload, ""))
    except InputError as e:
        conn.send(("failed", {**e.to_dict(), "status": 413 if isinstance(e, LimitExceeded) else 422}, ""))
    except MemoryError:
        conn.send(("failed", {"field": field, "message": "out of memory solving this matrix",
                              "detail": f"{field}: out of memory", "status": 413}, ""))
    except Exception as e:  # noqa: BLE001 - report, never hang the parent
        conn.send(("failed", {"field": field, "message": f"could not solve: {type(e).__name__}: {e}",
                              "detail": f"{field}: solver error", "status": 500}, ""))
    finally:
        conn.close()


@dataclass
class Job:
    id: str
    filename: str
    data: bytes
    time_limit: float
    state: str = "queued"
    message: str = "waiting for a free solver"
    created: float = field(default_factory=time.monotonic)
    started: float | None = None
    finished: float | None = None
    result: dict | None = None
    error: dict | None = None
    cancel: threading.Event = field(default_factory=threading.Event)

    def snapshot(self) -> dict:
        end = self.finished or time.monotonic()
        elapsed = 0.0 if self.started is None else end - self.started
        # stage-based: the solver reports no fraction of its own, so none is invented
        progress = PROGRESS.get(self.state, 1.0 if self.state in FINISHED else 0.0)
        return {"id": self.id, "state": self.state, "progress": progress, "message": self.message,
                "elapsed_seconds": round(elapsed, 3), "time_limit_seconds": self.time_limit,
                "filename": self.filename, "result": self.result, "error": self.error}


class JobManager:
    """Keeps at most max_jobs jobs; runs at most max_running of them at once."""

    def __init__(self, max_jobs: int, max_running: int, time_limit: float, ttl: float):
        self.max_jobs = max_jobs
        self.time_limit = time_limit
        self.ttl = ttl
        self._jobs: dict[str, Job] = {}
        self._lock = threading.Lock()
        self._slots = threading.Semaphore(max_running)
        self._ctx = mp.get_context("spawn")
        self._procs: dict[str, mp.Process] = {}

    def submit(self, data: bytes, filename: str, field: str = "file") -> Job:
        """Queue a matrix job and return it; 429-style InputError when the store is full."""
        with self._lock:
            self._evict()
            if len(self._jobs) >= self.max_jobs:
                raise InputError(field, f"{self.max_jobs} matrix jobs are already kept; cancel or "
                                        "wait for one (finished jobs are forgotten after "
                                        f"{int(self.ttl)} s)")
            job = Job(id=uuid.uuid4().hex[:16], filename=filename, data=data,
                      time_limit=self.time_limit)
            self._jobs[job.id] = job
        threading.Thread(target=self._run, args=(job, field), name=f"job-{job.id}",
                         daemon=True).start()
        return job

    def get(self, job_id: str) -> Job | None:
        with self._lock:
            return self._jobs.get(job_id)

    def cancel(self, job_id: str) -> Job | None:
        job = self.get(job_id)
        if job is None:
            return None
        job.cancel.set()
        if job.state == "queued":
            self._finish(job, "cancelled", "cancelled before it started")
        proc = self._procs.get(job_id)
        if proc is not None and proc.is_alive():
            proc.terminate()
        return job

    def shutdown(self) -> None:
        for job_id in list(self._jobs):
            self.cancel(job_id)

    def _evict(self):
        now = time.monotonic()
        for jid, job in list(self._jobs.items()):
            if job.state in FINISHED and job.finished is not None and now - job.finished > self.ttl:
                del self._jobs[jid]
        if len(self._jobs) >= self.max_jobs:
            done = sorted((j for j in self._jobs.values() if j.state in FINISHED),
                          key=lambda j: j.finished or 0)
            for j in done[: len(self._jobs) - self.max_jobs + 1]:
                del self._jobs[j.id]

    def _finish(self, job: Job, state: str, message: str, result=None, error=None):
        if job.state in FINISHED:
            return
        job.state, job.message, job.result, job.error = state, message, result, error
        job.finished = time.monotonic()
        if state != "done":
            job.data = b""  # nothing left to verify against

    def _run(self, job: Job, field: str):
        with self._slots:
            if job.cancel.is_set() or job.state in FINISHED:
                return
            parent, child = self._ctx.Pipe(duplex=False)
            proc = self._ctx.Process(target=_child, args=(child, job.data, job.filename, field),
                                     daemon=True)
            job.started = time.monotonic()
            job.state, job.message = "reading", "starting the solver process"
            try:
                proc.start()
            except Exception as e:  # noqa: BLE001 - no process, no hang: the job says why
                child.close()
                parent.close()
                self._finish(job, "failed", "the solver process could not start",
                             error={"field": field, "message": "the solver process could not "
                                    f"start ({type(e).__name__})", "detail": f"{field}: no "
                                    "solver process", "status": 500})
                return
            child.close()
            self._procs[job.id] = proc
            try:
                self._watch(job, proc, parent)
            finally:
                if proc.is_alive():
                    proc.terminate()
                proc.join(timeout=5)
                if proc.is_alive():
                    proc.kill()
                    proc.join(timeout=5)
                parent.close()
                self._procs.pop(job.id, None)

    def _watch(self, job: Job, proc, conn):
        deadline = job.started + job.time_limit
        while True:
            if job.cancel.is_set():
                proc.terminate()
                self._finish(job, "cancelled", "cancelled; the solver process was stopped")
                return
            if time.monotonic() > deadline:
                proc.terminate()
                self._finish(job, "timed-out", f"stopped after the time limit of "
                                               f"{job.time_limit:g} s")
                return
            try:
                ready = conn.poll(POLL_SECONDS)
            except (EOFError, OSError):
                ready = False
            if not ready:
                if not proc.is_alive() and not conn.poll(0):
                    self._finish(job, "failed", "the solver process ended unexpectedly",
                                 error={"field": "file", "message": "the solver process ended "
                                        f"unexpectedly (exit code {proc.exitcode})",
                                        "detail": "file: solver crashed", "status": 500})
                    return
                continue
            try:
                kind, a, b = conn.recv()
            except (EOFError, OSError):
                continue
            if kind == "stage":
                job.state, job.message = a, b
            elif kind == "done":
                self._finish(job, "done", f"{a['count']} eigenvalues", result=a)
                return
            else:
                self._finish(job, "failed", a.get("message", "failed"), error=a)
                return
