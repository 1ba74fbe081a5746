"""HTTP API: each route's happy path and its errors, checked against outside references.

Independent routes used here: the command line (`stepfence limit ... --json` in a subprocess),
numpy/scipy computations written in this file, and published values named beside each check.
"""
from __future__ import annotations

import io
import json
import multiprocessing
import subprocess
import sys
import time

import numpy as np
import pytest
import scipy.linalg
from fastapi.testclient import TestClient

from stepfence import limits
from stepfence.api.main import create_app
from stepfence.api.settings import Settings, default_plotly_js

JOB_WAIT_SECONDS = 40


@pytest.fixture(scope="module")
def client():
    # the catalogue warm-up (orders of every listed scheme) would compete for the CPU with
    # every other test; only the catalogue test turns it on
    with TestClient(create_app(warm_catalogue=False)) as c:
        yield c


def _error(r, status):
    assert r.status_code == status, r.text
    body = r.json()
    assert "error" in body, body
    return body["error"]


def _wait_job(client, job_id, until=("done", "failed", "cancelled", "timed-out")):
    deadline = time.monotonic() + JOB_WAIT_SECONDS
    while time.monotonic() < deadline:
        r = client.get(f"/api/jobs/{job_id}")
        assert r.status_code == 200, r.text
        if r.json()["state"] in until:
            return r.json()
        time.sleep(0.1)
    raise AssertionError(f"job {job_id} did not reach {until} in {JOB_WAIT_SECONDS} s")


def _mtx(A: np.ndarray) -> bytes:
    """Return A as a MatrixMarket coordinate file (written here, not by stepfence)."""
    n = A.shape[0]
    rows = [f"{i + 1} {j + 1} {float(A[i, j])!r}" for i in range(n) for j in range(n) if A[i, j] != 0]
    return ("%%MatrixMarket matrix coordinate real general\n"
            f"{n} {n} {len(rows)}\n" + "\n".join(rows) + "\n").encode()


# --- health, catalogue, openapi, page ----------------------------------------------------

def test_health(client):
    r = client.get("/health")
    assert r.status_code == 200
    assert r.json()["status"] == "ok"


def test_catalogue_is_grouped_with_steps_and_orders():
    # BDF k-step has order k (Hairer, Norsett & Wanner, Solving ODEs I, 2nd ed., section III.1);
    # classical RK4 has order 4 (same book, section II.1). Orders are derived in the
    # background, so ask a few times.
    from stepfence.api import catalogue_index
    deadline = time.monotonic() + 30
    with TestClient(create_app()) as client:
        try:
            while True:
                r = client.get("/api/catalogue")
                assert r.status_code == 200
                entries = {e["name"]: e for f in r.json()["families"] for e in f["schemes"]}
                # the menu entries and then the orders arrive from the background process
                if all(entries.get(n, {}).get("order") is not None for n in ("bdf4", "rk4")):
                    break
                assert time.monotonic() < deadline, "orders of bdf4/rk4 not derived in 30 s"
                time.sleep(0.2)
        finally:
            catalogue_index.stop_warmup()
    body = r.json()
    fams = {f["family"]: [e["name"] for e in f["schemes"]] for f in body["families"]}
    assert any("bdf4" in names for names in fams.values())
    assert entries["bdf4"]["steps"] == 4 and entries["bdf4"]["explicit"] is False
    assert entries["bdf4"]["order"] == 4
    assert entries["rk4"]["order"] == 4 and entries["rk4"]["stages"] == 4
    assert entries["rk4"]["explicit"] is True
    assert entries["ab2"]["steps"] == 2 and entries["ab2"]["explicit"] is True
    assert all(e["family"] == fam for fam, names in fams.items() for e in
               (entries[n] for n in names))
    assert body["cautions"]


def test_openapi_documents_bounds_and_no_cdn_docs(client):
    r = client.get("/openapi.json")
    assert r.status_code == 200
    spec = r.json()
    for path in ("/api/analyse", "/api/limit", "/api/spectrum/parse", "/api/spectrum/model",
                 "/api/spectrum/upload", "/api/jobs/{job_id}", "/api/verify", "/api/catalogue"):
        assert path in spec["paths"], path
    assert str(limits.MAX_BODY_BYTES) in spec["info"]["description"]
    assert str(limits.MAX_JOB_SECONDS) in spec["info"]["description"]
    # the interactive docs pages load their scripts from a CDN: they must not be served
    assert client.get("/docs").status_code == 404
    assert client.get("/redoc").status_code == 404


def test_page_and_plotly_are_served_locally(client):
    r = client.get("/")
    assert r.status_code == 200
    html = r.text
    assert '<script type="module" src="js/main.js">' in html
    assert 'src="/vendor/plotly.min.js"' in html
    assert "http://" not in html.replace("http://www.w3.org/2000/svg", "") and "https://" not in html
    r = client.get("/vendor/plotly.min.js")
    assert r.status_code == 200
    assert r.content == default_plotly_js().read_bytes()
    assert "connect-src 'self'" in r.headers["content-security-policy"]


@pytest.mark.parametrize("path", ["/..%2f..%2fetc/passwd", "/%2e%2e/", "/%2e%2e/%2e%2e/etc/passwd",
                                  "/..%2f..%2f..%2fpyproject.toml", "/css/..%2f..%2fpyproject.toml",
                                  "/js/%2e%2e/%2e%2e/server/stepfence/limits.py"])
def test_static_path_traversal_is_refused(client, path):
    r = client.get(path)
    assert r.status_code == 404
    assert b"root:" not in r.content and b"MAX_BODY_BYTES" not in r.content
    assert b"[project]" not in r.content


def test_settings_default_to_the_documented_limits():
    s = Settings()
    assert s.max_body_bytes == limits.MAX_BODY_BYTES
    assert s.max_upload_bytes == limits.MAX_UPLOAD_BYTES
    assert s.max_job_seconds == limits.MAX_JOB_SECONDS
    assert (s.web_dir / "index.html").is_file()


# --- analyse -----------------------------------------------------------------------------

def test_analyse_ab2_real_interval(client):
    # Hairer & Wanner, Solving ODEs II, 2nd ed., section V.1: AB2's real stability interval
    # is [-1, 0].
    r = client.post("/api/analyse", json={"scheme": "ab2", "grid": 64})
    assert r.status_code == 200, r.text
    d = r.json()["describe"]
    assert d["real_interval"][0] == pytest.approx(-1.0, abs=1e-12)
    assert d["real_interval"][1] == pytest.approx(0.0, abs=1e-12)
    assert d["order"] == 2 and d["explicit"] is True


def test_analyse_ab2_typed_as_rho_sigma_matches(client):
    # AB2 written out from its textbook formula u_{n+2} - u_{n+1} = h (3/2 f_{n+1} - 1/2 f_n)
    # (Hairer, Norsett & Wanner, Solving ODEs I, 2nd ed., section III.1): the same interval.
    r = client.post("/api/analyse", json={"scheme": {"rho": "z^2 - z", "sigma": "3/2 z - 1/2"},
                                          "grid": 48})
    assert r.status_code == 200, r.text
    assert r.json()["describe"]["real_interval"][0] == pytest.approx(-1.0, abs=1e-12)
    r = client.post("/api/analyse", json={"scheme": {"alpha": "0, -1, 1", "beta": ["-1/2", "3/2", 0]},
                                          "grid": 48})
    assert r.status_code == 200, r.text
    assert r.json()["describe"]["real_interval"][0] == pytest.approx(-1.0, abs=1e-12)


def test_analyse_region_raster_follows_view_and_grid(client):
    r = client.post("/api/analyse", json={"scheme": "euler", "grid": 50,
                                          "view": {"xlim": [-3, 1], "ylim": [-2, 2]}})
    assert r.status_code == 200, r.text
    reg = r.json()["region"]
    assert reg["xlim"] == [-3, 1] and reg["ylim"] == [-2, 2]
    ras = reg["raster"]
    assert len(ras["x"]) == 50 and len(ras["stable"]) == len(ras["y"])
    assert all(len(row) == 50 for row in ras["stable"])
    # forward Euler's region is the disc |1 + z| <= 1 (R(z) = 1 + z): check the raster cell by
    # cell away from the boundary, with the disc computed here
    x = np.array(ras["x"])[None, :]
    y = np.array(ras["y"])[:, None]
    dist = np.abs(1 + x + 1j * y)
    stable = np.array(ras["stable"])
    clear = np.abs(dist - 1) > 0.1
    assert np.array_equal(stable[clear], (dist[clear] <= 1).astype(int))
    assert reg["branches"] and all(len(b["x"]) == len(b["y"]) for b in reg["branches"])


def test_analyse_predictor_corrector_pair_has_stencil_parts(client):
    r = client.post("/api/analyse", json={"scheme": {"predictor": "ab2", "corrector": "am2", "m": 1,
                                                     "mode": "PECE"}, "grid": 32})
    assert r.status_code == 200, r.text
    body = r.json()
    assert body["describe"]["kind"] == "predictor-corrector"
    names = [p["name"] for p in body["stencil"]["parts"]]
    assert names == ["ab2", "am2"]


def test_analyse_malformed_polynomial_names_the_field(client):
    r = client.post("/api/analyse", json={"scheme": {"rho": "z^2 - z", "sigma": "3/2 z - 1/2 +"}})
    err = _error(r, 422)
    assert err["field"] == "sigma"
    assert err["position"] is not None and err["message"]
    r = client.post("/api/analyse", json={"scheme": {"rho": "z^2 - * z", "sigma": "1"}})
    assert _error(r, 422)["field"] == "rho"


def test_analyse_unknown_scheme_and_unknown_field(client):
    err = _error(client.post("/api/analyse", json={"scheme": "no-such-scheme"}), 422)
    assert err["field"] == "scheme" and "no-such-scheme" in err["message"]
    err = _error(client.post("/api/analyse", json={"scheme": {"rho": "z-1", "sigma": "1", "gamma": 2}}), 422)
    assert err["field"] == "scheme.gamma"
    err = _error(client.post("/api/analyse", json={"scheme": "ab2", "view": {"xlim": [1, 0], "ylim": [0, 1]}}), 422)
    assert err["field"] == "view.xlim"


def test_analyse_over_the_grid_bound_is_413(client):
    err = _error(client.post("/api/analyse", json={"scheme": "ab2", "grid": limits.MAX_GRID + 1}), 413)
    assert err["field"] == "grid"


@pytest.mark.parametrize("body", [b"[1, 2]", b"{bad json", b'{"scheme": 3}', b'"ab2"', b"{}",
                                  b'{"scheme": {"tableau": {"A": "x", "b": [1]}}}',
                                  b'{"scheme": {"predictor": "ab4"}}'])
def test_analyse_garbage_is_a_4xx_never_500(client, body):
    r = client.post("/api/analyse", content=body, headers={"content-type": "application/json"})
    assert r.status_code == 422, r.text
    assert r.json()["error"]["field"]


# --- body limit --------------------------------------------------------------------------

def test_body_over_the_limit_is_413():
    small = Settings(max_body_bytes=2048)
    with TestClient(create_app(small, warm_catalogue=False)) as c:
        big = json.dumps({"scheme": "ab2", "eigenvalues": [[-1.0, 0.0]] * 400})
        err = _error(c.post("/api/limit", content=big, headers={"content-type": "application/json"}), 413)
        assert err["field"] == "body"

        def chunks():  # no Content-Length: the middleware has to count
            for _ in range(10):
                yield b" " * 1000
        err = _error(c.post("/api/limit", content=chunks(), headers={"content-type": "application/json"}), 413)
        assert err["field"] == "body"
        ok = c.post("/api/limit", json={"scheme": "ab2", "eigenvalues": [[-1, 0]]})
        assert ok.status_code == 200


# --- limit -------------------------------------------------------------------------------

SPECTRUM = [[-1.0, 0.0], [-2.0, 3.0], [-0.5, -0.25], [-40.0, 1.0], [-3.0, -3.0]]


def test_limit_equals_the_command_line(client, tmp_path):
    # independent route: the CLI in its own processes, reading the same numbers from a file
    path = tmp_path / "eigs.txt"
    path.write_text("\n".join(f"{re!r}{im:+.17g}i" for re, im in SPECTRUM) + "\n")
    schemes = ["rk4", "abm4-pece"]
    procs = {s: subprocess.Popen([sys.executable, "-m", "stepfence", "limit", s, "--eigs", str(path), "--json"],
                                 stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True) for s in schemes}
    for scheme, proc in procs.items():
        out, err = proc.communicate(timeout=120)
        assert proc.returncode == 0, err
        cli = json.loads(out)
        r = client.post("/api/limit", json={"scheme": scheme, "eigenvalues": SPECTRUM})
        assert r.status_code == 200, r.text
        api = r.json()
        assert api["unbounded"] == cli["unbounded"] is False
        assert api["h_max"] == pytest.approx(cli["h_max"], rel=1e-14)
        assert api["binding_index"] == cli["binding_index"]
        assert api["windows"] == [list(w) for w in cli["windows"]]


def test_limit_per_eigenvalue_for_ab2(client):
    # AB2's real interval [-1, 0] (Hairer & Wanner II, 2nd ed., section V.1) gives
    # h_max(lambda) = 1/|lambda| for negative real lambda.
    r = client.post("/api/limit", json={"scheme": "ab2", "eigenvalues": [[-1, 0], [-4, 0]],
                                        "per_eigenvalue": True, "safety": 0.8})
    assert r.status_code == 200, r.text
    body = r.json()
    assert body["per_eigenvalue"] == [pytest.approx(1.0, rel=1e-12), pytest.approx(0.25, rel=1e-12)]
    assert body["h_max"] == pytest.approx(0.25, rel=1e-12)
    assert body["binding_index"] == 1 and body["binding_eigenvalue"] == [-4.0, 0.0]
    assert body["h_safe"] == pytest.approx(0.2, rel=1e-12)
    assert {c["key"] for c in body["cautions"]} >= {"non-normal", "constant-step", "verify"}


def test_limit_text_eigenvalues_equal_pairs(client):
    text = "\n".join(f"{re!r}{im:+.17g}i" for re, im in SPECTRUM)
    a = client.post("/api/limit", json={"scheme": "rk4", "eigenvalues": text})
    b = client.post("/api/limit", json={"scheme": "rk4", "eigenvalues": SPECTRUM})
    assert a.status_code == 200 and b.status_code == 200
    assert a.json()["h_max"] == b.json()["h_max"]


def test_limit_growing_mode_caution(client):
    r = client.post("/api/limit", json={"scheme": "bdf2", "eigenvalues": [[1.0, 0.0], [-1, 0]]})
    assert r.status_code == 200, r.text
    keys = [c["key"] for c in r.json()["cautions"]]
    assert keys[0] == "growing"


def test_limit_refuses_nan_and_bad_safety(client):
    raw = b'{"scheme": "ab2", "eigenvalues": [[-1, 0], [NaN, 0]]}'
    err = _error(client.post("/api/limit", content=raw, headers={"content-type": "application/json"}), 422)
    assert err["field"] == "eigenvalues[1][0]"
    raw = b'{"scheme": "ab2", "eigenvalues": [[-1, Infinity]]}'
    assert _error(client.post("/api/limit", content=raw, headers={"content-type": "application/json"}), 422)["field"] == "eigenvalues[0][1]"
    err = _error(client.post("/api/limit", json={"scheme": "ab2", "eigenvalues": "-1\nnan"}), 422)
    assert err["field"] == "eigenvalues"
    err = _error(client.post("/api/limit", json={"scheme": "ab2", "eigenvalues": [[-1, 0]], "safety": 1.5}), 422)
    assert err["field"] == "safety"
    err = _error(client.post("/api/limit", json={"scheme": "ab2", "eigenvalues": []}), 422)
    assert err["field"] == "eigenvalues"


# --- spectra -----------------------------------------------------------------------------

def test_spectrum_parse(client):
    r = client.post("/api/spectrum/parse", json={"text": "-1\n-2+3i\n(-4, -1)"})
    assert r.status_code == 200, r.text
    body = r.json()
    assert body["count"] == 3
    assert body["values"] == [[-1.0, 0.0], [-2.0, 3.0], [-4.0, -1.0]]
    assert body["extremes"]["min_real"] == -4.0
    err = _error(client.post("/api/spectrum/parse", json={"text": "-1\n-2+3x"}), 422)
    assert err["field"] == "text" and err["line"] == 2


def test_spectrum_model_matches_an_eigensolver(client):
    # independent route: the 1-D Dirichlet Laplacian assembled here and solved by LAPACK
    n, L, nu = 12, 0.5, 0.3
    r = client.post("/api/spectrum/model", json={"kind": "diffusion-1d", "n": n,
                                                 "params": {"L": L, "nu": nu}})
    assert r.status_code == 200, r.text
    got = np.sort(np.array(r.json()["values"])[:, 0])
    dx = L / (n + 1)
    T = nu / dx**2 * (np.diag(-2 * np.ones(n)) + np.diag(np.ones(n - 1), 1) + np.diag(np.ones(n - 1), -1))
    want = np.sort(scipy.linalg.eigvalsh(T))
    assert np.allclose(got, want, rtol=1e-10)
    err = _error(client.post("/api/spectrum/model", json={"kind": "no-such", "n": 4}), 422)
    assert err["field"] == "kind"
    err = _error(client.post("/api/spectrum/model", json={"kind": "diffusion-1d", "n": 10, "params": {"nu": "x"}}), 422)
    assert err["field"] == "nu"


def test_spectrum_models_listing(client):
    r = client.get("/api/spectrum/models")
    assert r.status_code == 200
    kinds = {m["kind"]: m for m in r.json()["models"]}
    assert "diffusion-1d" in kinds
    assert {p["name"] for p in kinds["diffusion-1d"]["params"]} >= {"L", "nu"}


def test_upload_list(client):
    data = b"re,im\n-1,0\n-2,0.5\n-3,-0.5\n"
    r = client.post("/api/spectrum/upload", files={"file": ("eigs.csv", data, "text/csv")}, data={"kind": "list"})
    assert r.status_code == 200, r.text
    assert r.json()["count"] == 3
    err = _error(client.post("/api/spectrum/upload", files={"file": ("e.csv", b"", "text/csv")}, data={"kind": "list"}), 422)
    assert err["field"] == "file"
    err = _error(client.post("/api/spectrum/upload", files={"file": ("e.csv", b"1,2\n", "text/csv")}, data={"kind": "both"}), 422)
    assert err["field"] == "kind"


def test_upload_matrix_job_and_verify_with_it(client):
    # independent route: numpy's eigenvalues of the same matrix
    rng = np.random.default_rng(3)
    A = -np.diag(np.arange(1.0, 7.0)) + 0.3 * np.triu(rng.standard_normal((6, 6)), 1)
    r = client.post("/api/spectrum/upload", files={"file": ("j.mtx", _mtx(A), "text/plain")}, data={"kind": "matrix"})
    assert r.status_code == 202, r.text
    job = _wait_job(client, r.json()["id"])
    assert job["state"] == "done", job
    assert job["progress"] == 1.0
    got = np.sort_complex(np.array([complex(*v) for v in job["result"]["values"]]))
    want = np.sort_complex(np.linalg.eigvals(A))
    assert np.allclose(got, want, atol=1e-10)
    v = client.post("/api/verify", json={"scheme": "bdf2", "h": 0.1, "job": job["id"], "steps": 50})
    assert v.status_code == 200, v.text
    assert v.json()["source"] == "matrix" and len(v.json()["norms"]) == 51


def test_upload_bad_matrix_job_fails_with_a_message(client):
    r = client.post("/api/spectrum/upload", files={"file": ("j.mtx", b"%%MatrixMarket matrix coordinate real general\n2 3 1\n1 1 1\n", "text/plain")},
                    data={"kind": "matrix"})
    assert r.status_code == 202, r.text
    job = _wait_job(client, r.json()["id"])
    assert job["state"] == "failed"
    assert job["error"]["field"] == "file" and job["error"]["message"]


def _children_gone(seconds=10):
    deadline = time.monotonic() + seconds
    while multiprocessing.active_children():
        if time.monotonic() > deadline:
            return False
        time.sleep(0.05)
    return True


def _upload_big_matrix(client, seed):
    """Start a job on a dense 1800 x 1800 matrix: seconds of work for the solver process."""
    buf = io.BytesIO()
    np.save(buf, np.random.default_rng(seed).standard_normal((1800, 1800)))
    r = client.post("/api/spectrum/upload", files={"file": ("big.npy", buf.getvalue(), "application/octet-stream")},
                    data={"kind": "matrix"})
    assert r.status_code == 202, r.text
    return r


def test_cancel_stops_the_solver_process(client):
    r = _upload_big_matrix(client, 0)
    jid = r.json()["id"]
    _wait_job(client, jid, until=("reading", "solving", "done", "failed"))
    d = client.delete(f"/api/jobs/{jid}")
    assert d.status_code == 200
    job = _wait_job(client, jid)
    assert job["state"] == "cancelled", job
    assert _children_gone(), "the solver process is still running after cancel"
    assert client.get("/api/jobs/nope").status_code == 404
    assert client.delete("/api/jobs/nope").status_code == 404


def test_job_time_limit_stops_the_solver():
    with TestClient(create_app(Settings(max_job_seconds=0.5), warm_catalogue=False)) as c:
        job = _wait_job(c, _upload_big_matrix(c, 1).json()["id"])
        assert job["state"] == "timed-out", job
        assert _children_gone()


# --- verify ------------------------------------------------------------------------------

def _ab2_growth(z: complex) -> float:
    # AB2 on y' = lambda y: zeta^2 - (1 + 3z/2) zeta + z/2 = 0; roots by numpy here
    return float(max(abs(np.roots([1, -(1 + 1.5 * z), 0.5 * z]))))


def test_verify_ab2_past_and_below_its_limit(client):
    r = client.post("/api/verify", json={"scheme": "ab2", "h": 1.05, "eigenvalues": [[-1, 0]], "steps": 400})
    assert r.status_code == 200, r.text
    body = r.json()
    assert body["verdict"] == "grows"
    assert body["observed_growth_per_step"] == pytest.approx(_ab2_growth(-1.05), rel=1e-6)
    assert body["predicted_growth"] == pytest.approx(_ab2_growth(-1.05), rel=1e-9)
    r = client.post("/api/verify", json={"scheme": "ab2", "h": 0.9, "eigenvalues": "-1", "steps": 400})
    assert r.status_code == 200, r.text
    assert r.json()["verdict"] == "decays"
    assert r.json()["predicted_growth"] == pytest.approx(_ab2_growth(-0.9), rel=1e-9)


def test_verify_errors(client):
    err = _error(client.post("/api/verify", json={"scheme": "ab2", "h": -1, "eigenvalues": [[-1, 0]]}), 422)
    assert err["field"] == "h"
    err = _error(client.post("/api/verify", json={"scheme": "ab2", "h": 0.1}), 422)
    assert err["field"] == "eigenvalues"
    err = _error(client.post("/api/verify", json={"scheme": "ab2", "h": 0.1, "job": "nope"}), 422)
    assert err["field"] == "job"
    err = _error(client.post("/api/verify", json={"scheme": "ab2", "h": 0.1, "eigenvalues": [[-1, 0]],
                                                  "steps": limits.MAX_VERIFY_STEPS + 1}), 422)
    assert err["field"] == "steps"
