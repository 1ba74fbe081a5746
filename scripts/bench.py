#!/usr/bin/env python
"""Benchmarks: every figure is a ratio measured in this one run (machines here are shared).

    .venv/bin/python scripts/bench.py [--quick]

1. Exact vectorised step limit of 10^6 eigenvalues (4-step LMM ab4, bdf4, rk4, abm4-pece)
   against (a) a naive per-eigenvalue bisection with a root solve per iteration and (b) merely
   reading the array and computing moduli and arguments. Peak memory by tracemalloc.
2. Accuracy on a sample: relative error against a 50-digit mpmath bisection.
3. Dense eigenvalues N = 2000: one BLAS thread against the default (threadpoolctl).
4. Server: analyse a 6-step scheme with region fill, and the limit of 10^4 eigenvalues, each
   as a ratio to a bare /health request (in-process ASGI client).
5. Load on loopback (scripts/loadtest.py): 32 clients for 20 s of light requests while one
   dense eigenvalue job solves and a second is cancelled; p50/p99 per request kind, errors,
   and p99 under load as a ratio to the same request's unloaded time. --no-load skips it.
"""
from __future__ import annotations

import argparse
import statistics
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np


def timed(fn, repeat=3):
    best = float("inf")
    out = None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t)
    return best, out


def naive_bisection(pi, lam, iters=60):
    """Per-eigenvalue bisection of the first exit, np.roots at every iteration (baseline a)."""
    out = []
    for l in lam:
        lo, hi = 0.0, 1.0
        while np.max(np.abs(np.roots(pi.zeta_coefficients(np.asarray(hi * l))[::-1]))) <= 1 + 1e-12:
            hi *= 2
            if hi > 1e6:
                break
        for _ in range(iters):
            mid = 0.5 * (lo + hi)
            if np.max(np.abs(np.roots(pi.zeta_coefficients(np.asarray(mid * l))[::-1]))) <= 1 + 1e-12:
                lo = mid
            else:
                hi = mid
        out.append(lo)
    return np.array(out)


def bench_step_limits(n, sample):
    from stepfence.analysis.steplimit import step_limit
    from stepfence.schemes.catalogue import get_scheme
    rng = np.random.default_rng(2026)
    # a mixed stiff/oscillatory spectrum (invented data)
    lam = -rng.lognormal(0, 2, n) + 1j * rng.normal(0, 3, n)
    stored = lam.copy()
    print(f"\n== step limit of {n:,} eigenvalues ==")
    t_read, _ = timed(lambda: (np.array(stored, copy=True), np.abs(stored), np.angle(stored)))
    print(f"baseline (b) read + |lambda| + arg: {t_read * 1e3:.1f} ms")
    for name in ("ab4", "bdf4", "rk4", "abm4-pece"):
        s = get_scheme(name)
        t0 = time.perf_counter()
        step_limit(s, lam[:5000], table=True)  # builds and caches the direction table
        t_table = time.perf_counter() - t0
        t_fast, res = timed(lambda: step_limit(s, lam, table=True), repeat=2)
        tracemalloc.start()
        step_limit(s, lam, table=True)
        peak = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
        sub = lam[:sample]
        t_naive, ref = timed(lambda: naive_bisection(s.pi, sub), repeat=1)
        per_fast = t_fast / n
        per_naive = t_naive / sample
        print(f"{name:10s} exact {t_fast * 1e3:8.1f} ms ({per_fast * 1e9:6.0f} ns/eig) | "
              f"table build {t_table:5.2f} s (once per scheme) | "
              f"vs naive bisection x{per_naive / per_fast:,.0f} faster per eigenvalue | "
              f"vs baseline (b) x{t_fast / t_read:.1f} | peak memory {peak / 2**20:.0f} MiB | "
              f"exact-route directions {res.exact_directions}")


def bench_accuracy(sample):
    import mpmath
    import sympy as sp
    from stepfence.analysis.steplimit import step_limit
    from stepfence.schemes.catalogue import get_scheme
    print("\n== accuracy against mpmath (50 digits) ==")
    rng = np.random.default_rng(5)
    lam = -rng.lognormal(0, 1, sample) + 1j * rng.normal(0, 2, sample)
    for name in ("ab4", "bdf4", "rk4", "abm4-pece"):
        s = get_scheme(name)
        res = step_limit(s, lam, table=True)
        worst = 0.0
        for l, h in zip(lam, res.per_eigenvalue):
            if not np.isfinite(h) or h == 0:
                continue
            with mpmath.workdps(50):
                def mod(t):
                    z = mpmath.mpmathify(complex(l)) * t
                    cs = [sum(mpmath.mpmathify(sp.N(c, 60)) * z**j for j, c in enumerate(row))
                          for row in s.pi.exact]
                    while len(cs) > 1 and abs(cs[-1]) == 0:
                        cs.pop()
                    return max(abs(r) for r in mpmath.polyroots(cs[::-1], maxsteps=400, extraprec=200))
                lo = mpmath.mpf(h) * (1 - mpmath.mpf("1e-9"))
                hi = mpmath.mpf(h) * (1 + mpmath.mpf("1e-9"))
                if not (mod(lo) <= 1 < mod(hi)):
                    worst = max(worst, 1e-9)
                    continue
                for _ in range(40):
                    mid = (lo + hi) / 2
                    if mod(mid) <= 1:
                        lo = mid
                    else:
                        hi = mid
                worst = max(worst, abs(float(lo) - h) / h)
        print(f"{name:10s} max relative error over {sample} eigenvalues: {worst:.2e}")


def bench_dense_eigs(n):
    from threadpoolctl import threadpool_info, threadpool_limits
    print(f"\n== dense eigenvalues N = {n} ==")
    rng = np.random.default_rng(1)
    A = rng.normal(size=(n, n))
    info = threadpool_info()
    print("BLAS:", ", ".join(f"{i.get('internal_api')} {i.get('num_threads')} threads" for i in info))
    t_def, _ = timed(lambda: np.linalg.eigvals(A), repeat=1)
    with threadpool_limits(1):
        t_one, _ = timed(lambda: np.linalg.eigvals(A), repeat=1)
    print(f"default threads {t_def:.2f} s, one thread {t_one:.2f} s: one thread x{t_def / t_one:.2f} faster")


def bench_server():
    try:
        from fastapi.testclient import TestClient
        from stepfence.api.main import create_app
    except Exception as e:  # noqa: BLE001
        print(f"\n== server: skipped ({e}) ==")
        return
    print("\n== server (in-process) ==")
    client = TestClient(create_app())

    def med(fn, n=20):
        xs = []
        for _ in range(n):
            t = time.perf_counter()
            r = fn()
            xs.append(time.perf_counter() - t)
            assert r.status_code == 200, r.text[:200]
        return statistics.median(xs)

    t_health = med(lambda: client.get("/health"))
    views = iter(range(10_000))
    # a new view each time: region payloads are cached per (scheme, view)
    t_an = med(lambda: client.post("/api/analyse", json={
        "scheme": "bdf6", "view": {"xlim": [-10 - next(views) * 1e-3, 30], "ylim": [-20, 20]}}), 10)
    rng = np.random.default_rng(3)
    lam = np.column_stack([-rng.lognormal(0, 1, 10_000), rng.normal(0, 2, 10_000)]).tolist()
    client.post("/api/limit", json={"scheme": "rk4", "eigenvalues": lam})
    t_lim = med(lambda: client.post("/api/limit", json={"scheme": "rk4", "eigenvalues": lam}), 5)
    print(f"/health {t_health * 1e3:.2f} ms | analyse bdf6 + region {t_an * 1e3:.1f} ms "
          f"(x{t_an / t_health:.0f}) | limit of 10^4 eigenvalues {t_lim * 1e3:.1f} ms (x{t_lim / t_health:.0f})")


def bench_fill():
    from stepfence.analysis.region import region_raster
    from stepfence.schemes.catalogue import get_scheme
    print("\n== region fill 400 x 400, 6-step method ==")
    s = get_scheme("bdf6")
    t_sc, _ = timed(lambda: region_raster(s.pi, (-10, 30), (-20, 20), 400, 400), repeat=2)
    Zg = (np.linspace(-10, 30, 40)[None, :] + 1j * np.linspace(-20, 20, 40)[:, None]).ravel()
    t_r, _ = timed(lambda: [np.roots(s.pi.zeta_coefficients(np.asarray(z))[::-1]) for z in Zg], repeat=1)
    t_r *= 160_000 / Zg.size
    print(f"Schur-Cohn fill {t_sc * 1e3:.0f} ms vs a root solve per point {t_r:.1f} s (x{t_r / t_sc:.0f})")


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true", help="10^5 eigenvalues, smaller samples")
    ap.add_argument("--no-load", action="store_true", help="skip the 20 s load run")
    a = ap.parse_args()
    n = 100_000 if a.quick else 1_000_000
    bench_step_limits(n, 20 if a.quick else 100)
    bench_accuracy(10 if a.quick else 40)
    bench_fill()
    bench_dense_eigs(800 if a.quick else 2000)
    bench_server()
    if not a.no_load:
        bench_load(8 if a.quick else 20, 32)


def bench_load(duration, clients):
    """Load on loopback; the figures are printed by loadtest itself, plus ratios here."""
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    import loadtest
    print(f"\n== load: {clients} clients x {duration} s on 127.0.0.1, one heavy job + a cancel ==")
    idle = loadtest.run(duration=3.0, clients=1, heavy_n=200, exercise_cancel=False, quiet=True)
    out = loadtest.run(duration=duration, clients=clients, heavy_n=1800, quiet=False)
    for kind, v in out["per_kind"].items():
        base = idle["per_kind"].get(kind, {}).get("p50_ms")
        if base and v["p99_ms"]:
            print(f"  {kind:<10} p99 under load / p50 of one client alone: x{v['p99_ms'] / base:.1f}")


if __name__ == "__main__":
    sys.exit(main())
