#!/usr/bin/env python
"""Load on loopback: many light requests while a heavy matrix job solves, plus a cancel.

    .venv/bin/python scripts/loadtest.py [--duration 20] [--clients 32] [--heavy-n 1800]

Starts `uvicorn stepfence.api.main:create_app --factory` on 127.0.0.1 (a free port) in a child
process, then runs `clients` threads (httpx) for `duration` seconds, each sending light requests
in a loop: GET /health, GET /api/catalogue, POST /api/analyse of catalogue schemes, POST
/api/limit of 300 eigenvalues. At the start one heavy job is uploaded (a dense random N x N
.npy through /api/spectrum/upload, kind=matrix). Once it has finished (or at 60% of the run) a
second heavy job is uploaded and cancelled with DELETE /api/jobs/{id}; the time until its state
says "cancelled" is recorded. Prints p50/p99 latency per request kind, the error counts, what
became of both heavy jobs, and the server's job time limit.

Bounded in time and in count: every client stops at the deadline or after MAX_REQUESTS_PER_CLIENT
requests, whichever comes first, and every request has a timeout. Only 127.0.0.1 is contacted.
Timings are printed here, never asserted (tests/test_hardening_api.py::test_load_short asserts
only the absence of server errors and that light requests were answered during a heavy job).
The eigenvalues and matrices are invented random data.
"""
from __future__ import annotations

import argparse
import io
import os
import random
import socket
import statistics
import subprocess
import sys
import threading
import time
from collections import defaultdict
from pathlib import Path
from urllib.parse import urlparse

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
MAX_REQUESTS_PER_CLIENT = 20_000
REQUEST_TIMEOUT = 60.0
SERVER_START_SECONDS = 60.0
CANCEL_WAIT_SECONDS = 10.0
POLL_SECONDS = 0.25
LIGHT_SCHEMES = ("ab2", "bdf4", "rk4", "heun", "ssprk3", "trapezoid", "ab3", "bdf2")
FINISHED = ("done", "failed", "cancelled", "timed-out")
RUNNING = ("reading", "solving")
# kind -> relative weight in the light mix
MIX = {"health": 3, "catalogue": 1, "analyse": 2, "limit": 3}


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _loopback_only(url: str) -> str:
    host = urlparse(url).hostname
    if host != "127.0.0.1":
        raise SystemExit(f"loadtest: refusing {url!r}: only 127.0.0.1 is ever a target")
    return url.rstrip("/")


class Server:
    """The app under uvicorn in a child process on 127.0.0.1, stopped by its own pid."""

    def __init__(self):
        self.port = _free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        env = dict(os.environ)
        env["PYTHONPATH"] = str(ROOT / "server") + os.pathsep + env.get("PYTHONPATH", "")
        self.proc = subprocess.Popen(
            [sys.executable, "-m", "uvicorn", "stepfence.api.main:create_app", "--factory",
             "--host", "127.0.0.1", "--port", str(self.port), "--log-level", "warning"],
            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=env)

    def wait_ready(self, httpx):
        deadline = time.monotonic() + SERVER_START_SECONDS
        while time.monotonic() < deadline:
            if self.proc.poll() is not None:
                raise RuntimeError("the server exited: " + self.proc.stderr.read().decode()[-2000:])
            try:
                if httpx.get(self.url + "/health", timeout=2.0).status_code == 200:
                    return
            except httpx.HTTPError:
                pass
            time.sleep(0.2)
        raise RuntimeError(f"the server did not answer on {self.url} in {SERVER_START_SECONDS} s")

    def stop(self):
        if self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(timeout=15)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(timeout=5)
        if self.proc.stderr:
            self.proc.stderr.close()


def _matrix_npy(n: int, seed: int) -> bytes:
    buf = io.BytesIO()
    np.save(buf, np.random.default_rng(seed).standard_normal((n, n)))
    return buf.getvalue()


def _light_bodies():
    rng = np.random.default_rng(7)
    lam = (-rng.lognormal(0.0, 1.5, 300) + 1j * rng.normal(0.0, 2.0, 300))
    pairs = [[float(z.real), float(z.imag)] for z in lam]
    return pairs


class Heavy:
    """One matrix job: upload, poll its state in a thread, cancel on request."""

    def __init__(self, client, n: int, seed: int):
        self.client = client
        self.n = n
        self.seed = seed
        self.id = None
        self.state = "not started"
        self.snapshot = {}
        self.started = None
        self.finished_after = None
        self.history = []
        self._stop = threading.Event()
        self._thread = None

    def start(self):
        data = _matrix_npy(self.n, self.seed)
        self.started = time.monotonic()
        r = self.client.post("/api/spectrum/upload", data={"kind": "matrix"},
                             files={"file": (f"dense{self.n}.npy", data, "application/octet-stream")})
        if r.status_code != 202:
            self.state = f"refused ({r.status_code}: {r.text[:200]})"
            return self
        self.snapshot = r.json()
        self.id = self.snapshot["id"]
        self.state = self.snapshot["state"]
        self._thread = threading.Thread(target=self._poll, daemon=True)
        self._thread.start()
        return self

    def _poll(self):
        while not self._stop.is_set() and self.state not in FINISHED:
            try:
                r = self.client.get(f"/api/jobs/{self.id}")
                if r.status_code == 200:
                    self.snapshot = r.json()
                    if self.snapshot["state"] != self.state:
                        self.history.append((round(time.monotonic() - self.started, 2),
                                             self.snapshot["state"]))
                    self.state = self.snapshot["state"]
                    if self.state in FINISHED and self.finished_after is None:
                        self.finished_after = time.monotonic() - self.started
            except Exception:  # noqa: BLE001 - a failed poll is retried, the run goes on
                pass
            self._stop.wait(POLL_SECONDS)

    def cancel(self) -> dict:
        """DELETE the job; return its state then and how long until it said cancelled."""
        before = self.state
        t0 = time.monotonic()
        r = self.client.delete(f"/api/jobs/{self.id}")
        answered = time.monotonic() - t0
        at_delete = r.json().get("state") if r.status_code == 200 else f"HTTP {r.status_code}"
        deadline = t0 + CANCEL_WAIT_SECONDS
        while time.monotonic() < deadline:
            # ask directly rather than wait for the poller: this is the figure being measured
            g = self.client.get(f"/api/jobs/{self.id}")
            if g.status_code == 200 and g.json()["state"] in FINISHED:
                self.state = g.json()["state"]
                break
            time.sleep(0.05)
        return {"state_before_delete": before, "delete_status": r.status_code,
                "delete_answer_seconds": round(answered, 3), "state_in_delete_answer": at_delete,
                "state": self.state, "seconds_to_finished_state": round(time.monotonic() - t0, 3),
                "history": list(self.history)}

    def stop(self):
        self._stop.set()
        if self._thread is not None:
            self._thread.join(timeout=5)


def _warm_up(client, pairs) -> dict:
    """Ask each light request once per scheme, one at a time; return the seconds per kind.

    The first analyse/limit of a scheme derives its properties and its direction table (about
    a second each); measured apart, so the run's figures are those of a warm server.
    """
    out = defaultdict(float)
    for scheme in LIGHT_SCHEMES:
        for kind, send in (("analyse", lambda: client.post("/api/analyse", json={"scheme": scheme, "grid": 96})),
                           ("limit", lambda: client.post("/api/limit", json={"scheme": scheme, "eigenvalues": pairs}))):
            t0 = time.perf_counter()
            send()
            out[kind] += time.perf_counter() - t0
    t0 = time.perf_counter()
    client.get("/api/catalogue")
    out["catalogue"] = time.perf_counter() - t0
    return {k: round(v, 2) for k, v in out.items()}


def _percentile(values, q):
    if not values:
        return None
    values = sorted(values)
    k = min(len(values) - 1, max(0, int(round(q / 100 * (len(values) - 1)))))
    return values[k]


def run(duration: float = 20.0, clients: int = 32, heavy_n: int = 1800,
        exercise_cancel: bool = True, base_url: str | None = None, quiet: bool = True,
        warm: bool = True) -> dict:
    """Return latency and error figures of a load run on loopback (see the module docstring).

    With base_url (http://127.0.0.1:PORT) an already running server is used; otherwise one is
    started here and stopped at the end. With warm (default) every light request is sent once
    per scheme before the clients start (cold-start seconds are reported as "warm_up").
    """
    import httpx

    server = None
    if base_url is None:
        server = Server()
        url = server.url
    else:
        url = _loopback_only(base_url)
    records = []           # (kind, status or None, seconds, heavy state at the answer)
    rec_lock = threading.Lock()
    heavy = cancel = None
    try:
        if server is not None:
            server.wait_ready(httpx)
        control = httpx.Client(base_url=url, timeout=REQUEST_TIMEOUT)
        pairs = _light_bodies()
        warmup = _warm_up(control, pairs) if warm else None
        heavy = Heavy(control, heavy_n, seed=11).start()
        t_start = time.monotonic()
        deadline = t_start + duration
        kinds = [k for k, w in MIX.items() for _ in range(w)]

        def client_loop(index: int):
            rnd = random.Random(index)
            with httpx.Client(base_url=url, timeout=REQUEST_TIMEOUT) as c:
                for _ in range(MAX_REQUESTS_PER_CLIENT):
                    if time.monotonic() >= deadline:
                        return
                    kind = rnd.choice(kinds)
                    scheme = rnd.choice(LIGHT_SCHEMES)
                    t0 = time.perf_counter()
                    status = None
                    try:
                        if kind == "health":
                            r = c.get("/health")
                        elif kind == "catalogue":
                            r = c.get("/api/catalogue")
                        elif kind == "analyse":
                            r = c.post("/api/analyse", json={"scheme": scheme, "grid": 96})
                        else:
                            r = c.post("/api/limit", json={"scheme": scheme, "eigenvalues": pairs})
                        status = r.status_code
                    except httpx.HTTPError:
                        status = None
                    dt = time.perf_counter() - t0
                    with rec_lock:
                        records.append((kind, status, dt, heavy.state))

        threads = [threading.Thread(target=client_loop, args=(i,), daemon=True)
                   for i in range(clients)]
        for t in threads:
            t.start()
        if exercise_cancel and heavy.id is not None:
            # the second heavy job starts when the first is over, or at 60% of the run
            while time.monotonic() < t_start + 0.6 * duration and heavy.state not in FINISHED:
                time.sleep(0.1)
            second = Heavy(control, heavy_n, seed=12).start()
            if second.id is not None:
                # cancel it while it runs when it gets a solver slot within a few seconds,
                # else while queued (the first still holds the one solver slot)
                until = time.monotonic() + 5.0
                while time.monotonic() < until and second.state not in RUNNING + FINISHED:
                    time.sleep(0.05)
                cancel = second.cancel()
                cancel["n"] = heavy_n
            else:
                cancel = {"state": second.state}
            second.stop()
        for t in threads:
            t.join(timeout=REQUEST_TIMEOUT + duration)
        elapsed = time.monotonic() - t_start
        # the first heavy job gets until the end of the light run; then it is cancelled so
        # the run stops by itself
        heavy_state_at_end = heavy.state
        if heavy.id is not None and heavy.state not in FINISHED:
            heavy.cancel()
        heavy.stop()
        time_limit = heavy.snapshot.get("time_limit_seconds")
        control.close()
    finally:
        if server is not None:
            server.stop()

    per_kind = {}
    by_kind = defaultdict(list)
    for kind, status, dt, _ in records:
        by_kind[kind].append((status, dt))
    for kind, rows in sorted(by_kind.items()):
        ms = [1000 * dt for st, dt in rows if st is not None and st < 400]
        per_kind[kind] = {
            "count": len(rows),
            "p50_ms": None if not ms else round(statistics.median(ms), 1),
            "p99_ms": None if not ms else round(_percentile(ms, 99), 1),
            "max_ms": None if not ms else round(max(ms), 1),
            "server_errors": sum(1 for st, _ in rows if st is not None and st >= 500),
            "client_errors": sum(1 for st, _ in rows if st is not None and 400 <= st < 500),
            "no_answer": sum(1 for st, _ in rows if st is None),
        }
    answered_during_heavy = sum(1 for _, st, _, hs in records
                                if st is not None and st < 400 and hs in RUNNING)
    out = {
        "url": url,
        "duration_s": round(elapsed, 2),
        "clients": clients,
        "requests": len(records),
        "requests_per_s": round(len(records) / elapsed, 1) if elapsed > 0 else None,
        "per_kind": per_kind,
        "server_errors": sum(v["server_errors"] for v in per_kind.values()),
        "errors": sum(v["server_errors"] + v["client_errors"] + v["no_answer"]
                      for v in per_kind.values()),
        "light_answered_during_heavy": answered_during_heavy,
        "heavy": {"n": heavy_n, "state_at_end_of_run": heavy_state_at_end, "state": heavy.state,
                  "seconds": None if heavy.finished_after is None else round(heavy.finished_after, 2),
                  "history": heavy.history},
        "cancel": cancel,
        "job_time_limit_seconds": time_limit,
        "warm_up_seconds": warmup,
    }
    if not quiet:
        print_report(out)
    return out


def print_report(out: dict) -> None:
    print(f"load on {out['url']}: {out['clients']} clients for {out['duration_s']} s, "
          f"{out['requests']} requests ({out['requests_per_s']}/s)")
    print(f"{'kind':<10} {'count':>7} {'p50 ms':>9} {'p99 ms':>9} {'max ms':>9} {'5xx':>5} "
          f"{'4xx':>5} {'lost':>5}")
    for kind, v in out["per_kind"].items():
        print(f"{kind:<10} {v['count']:>7} {v['p50_ms']!s:>9} {v['p99_ms']!s:>9} {v['max_ms']!s:>9} "
              f"{v['server_errors']:>5} {v['client_errors']:>5} {v['no_answer']:>5}")
    print(f"errors: {out['errors']} (server errors: {out['server_errors']})")
    print(f"light requests answered while the heavy job was reading/solving: "
          f"{out['light_answered_during_heavy']}")
    h = out["heavy"]
    print(f"heavy job (dense N = {h['n']}): {h['state_at_end_of_run']} at the end of the run, "
          f"finally {h['state']}" + (f" after {h['seconds']} s" if h["seconds"] is not None else "")
          + f"; states {h['history']}")
    c = out["cancel"]
    if c:
        print(f"cancel of a second heavy job: {c.get('state_before_delete')} when DELETE was sent "
              f"(answered in {c.get('delete_answer_seconds')} s saying {c.get('state_in_delete_answer')}),"
              f" {c.get('state')} {c.get('seconds_to_finished_state')} s after the DELETE; states "
              f"{c.get('history')}")
    print(f"job time limit: {out['job_time_limit_seconds']} s")
    if out["warm_up_seconds"]:
        print(f"warm-up before the run (one request per scheme, in turn): {out['warm_up_seconds']} s")


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--duration", type=float, default=20.0)
    p.add_argument("--clients", type=int, default=32)
    p.add_argument("--heavy-n", type=int, default=1800)
    p.add_argument("--url", help="an already running server on http://127.0.0.1:PORT")
    p.add_argument("--cold", action="store_true", help="no warm-up: first requests derive tables")
    a = p.parse_args(argv)
    if not (0 < a.duration <= 600) or not (1 <= a.clients <= 256):
        p.error("--duration must lie in (0, 600] s and --clients in 1..256")
    run(a.duration, a.clients, a.heavy_n, base_url=a.url, quiet=False, warm=not a.cold)
    return 0


if __name__ == "__main__":
    sys.exit(main())
