"""POST /api/accuracy: the accuracy-limited step beside the stability limit, over HTTP.

Independent routes used here: the command line (`stepfence accuracy ... --json`) run as a
subprocess, and RK4's stability function evaluated in mpmath at 40 digits in this file.
"""
from __future__ import annotations


import mpmath
import pytest
from fastapi.testclient import TestClient

import cli_runs
from stepfence.api.main import create_app
from stepfence.api.settings import Settings

EIGS = "-1\n-2+3i\n-0.1+5i\n-0.1-5i\n-40\n"
PAIRS = [[-1, 0], [-2, 3], [-0.1, 5], [-0.1, -5], [-40, 0]]


@pytest.fixture(scope="module")
def client():
    with TestClient(create_app(warm_catalogue=False)) as c:
        yield c


@pytest.fixture(scope="module")
def cli(tmp_path_factory):
    """`stepfence accuracy rk4 ... --json` per step and per unit time, each in its own process."""
    path = tmp_path_factory.mktemp("acc") / "eigs.txt"
    path.write_text(EIGS)
    base = ["accuracy", "rk4", "--eigs", str(path)]
    return cli_runs.run({
        "step": base + ["--tol", "1e-6", "--per", "step", "--step", "0.01", "--compare", "bdf4"],
        "unit-time": base + ["--tol", "1e-4", "--per", "unit-time"],
    })


def _error(r, status):
    assert r.status_code == status, r.text
    return r.json()["error"]


def _rk4_relative_error(z) -> mpmath.mpf:
    # classical RK4: R(z) is the degree-4 Taylor polynomial of e^z (Hairer, Norsett & Wanner,
    # Solving ODEs I, 2nd ed., section IV.2, from memory); one step's relative error
    # |R(z) e^{-z} - 1|, the quantity docs/accuracy.md calls the local relative error
    with mpmath.workdps(40):
        z = mpmath.mpc(z)
        r = 1 + z + z**2 / 2 + z**3 / 6 + z**4 / 24
        return abs(r * mpmath.exp(-z) - 1)


def test_accuracy_rk4_equals_the_command_line(client, cli):
    r = client.post("/api/accuracy", json={"scheme": "rk4", "eigenvalues": EIGS, "h": 0.01,
                                           "tol": 1e-6, "per": "step", "other": "bdf4"})
    assert r.status_code == 200, r.text
    rep = r.json()
    want = cli["step"]
    assert rep["accuracy_limit"]["h_max"] == pytest.approx(want["accuracy_limit"]["h_max"], rel=1e-13)
    assert rep["stability_limit"]["h_max"] == pytest.approx(want["stability_limit"]["h_max"], rel=1e-13)
    assert rep["verdict"] == want["verdict"]
    assert rep["binding"] == want["binding"] == "accuracy"
    assert rep["stiffness_ratio"] == pytest.approx(want["stiffness_ratio"], rel=1e-14)
    assert rep["comparison"]["text"] == want["comparison"]["text"]
    assert rep["cautions"] == want["cautions"]
    assert rep["h"] == 0.01 and rep["h_source"] == "given"
    assert rep["spectrum"]["count"] == 5 and len(rep["spectrum"]["relative_error"]) == 5
    n = len(rep["imaginary_axis"]["omega_h"])
    assert n > 2 and len(rep["imaginary_axis"]["amplitude_error"]) == n == len(rep["imaginary_axis"]["phase_error"])


def test_accuracy_limit_meets_the_tolerance_in_mpmath(client):
    # at the reported h the worst eigenvalue's one-step error equals tol; a little below it every
    # eigenvalue is within tol, a little above one is not (mpmath, independent of the core)
    tol = 1e-6
    r = client.post("/api/accuracy", json={"scheme": "rk4", "eigenvalues": PAIRS, "tol": tol})
    assert r.status_code == 200, r.text
    h = r.json()["accuracy_limit"]["h_max"]
    worst = lambda step: max(_rk4_relative_error(step * complex(a, b)) for a, b in PAIRS)  # noqa: E731
    assert float(worst(h)) == pytest.approx(tol, rel=1e-8)
    assert worst(h * (1 - 1e-6)) < tol < worst(h * (1 + 1e-6))


def test_accuracy_per_unit_time_equals_the_command_line(client, cli):
    r = client.post("/api/accuracy", json={"scheme": "rk4", "eigenvalues": PAIRS, "tol": 1e-4,
                                           "per": "unit-time"})
    assert r.status_code == 200, r.text
    rep = r.json()
    assert rep["per"] == "unit-time" and rep["comparison"] is None
    assert rep["accuracy_limit"]["h_max"] == pytest.approx(cli["unit-time"]["accuracy_limit"]["h_max"], rel=1e-13)
    # per unit time: one step's error <= tol * h at the limit (mpmath)
    h = rep["accuracy_limit"]["h_max"]
    worst = max(_rk4_relative_error(h * complex(a, b)) for a, b in PAIRS)
    assert float(worst) == pytest.approx(1e-4 * h, rel=1e-8)


@pytest.mark.parametrize("tol", [0, 2, -1e-3])
def test_accuracy_tol_outside_zero_one_names_tol(client, tol):
    err = _error(client.post("/api/accuracy", json={"scheme": "rk4", "eigenvalues": PAIRS, "tol": tol}), 422)
    assert err["field"] == "tol"


def test_accuracy_tol_above_the_per_step_bound_names_tol(client):
    # 0.7 is in (0, 1) but the core refuses per-step tolerances above 0.5 (docs/accuracy.md)
    err = _error(client.post("/api/accuracy", json={"scheme": "rk4", "eigenvalues": PAIRS, "tol": 0.7}), 422)
    assert err["field"] == "tol" and "0.5" in err["message"]


def test_accuracy_bad_scheme_and_bad_other(client):
    err = _error(client.post("/api/accuracy", json={"scheme": "no-such-scheme", "eigenvalues": PAIRS}), 422)
    assert err["field"] == "scheme" and "no-such-scheme" in err["message"]
    err = _error(client.post("/api/accuracy", json={"scheme": "rk4", "eigenvalues": PAIRS, "other": "nope"}), 422)
    assert err["field"] == "other"
    err = _error(client.post("/api/accuracy", json={"scheme": "rk4", "eigenvalues": PAIRS,
                                                    "other": {"rho": "z^2 - z", "sigma": "3/2 z - 1/2 +"}}), 422)
    assert err["field"] == "other.sigma" and err["position"] is not None


def test_accuracy_bad_per_and_unknown_field(client):
    err = _error(client.post("/api/accuracy", json={"scheme": "rk4", "eigenvalues": PAIRS, "per": "year"}), 422)
    assert err["field"] == "per"
    err = _error(client.post("/api/accuracy", json={"scheme": "rk4", "eigenvalues": PAIRS, "tolerance": 1e-3}), 422)
    assert err["field"] == "tolerance"


def test_accuracy_step_far_beyond_the_spectrum_is_refused(client):
    # regression: h = 1e300 reached the core's root finder with |h lambda| = 4e301 and gave a 500
    err = _error(client.post("/api/accuracy", json={"scheme": "rk4", "eigenvalues": PAIRS, "h": 1e300}), 422)
    assert err["field"] == "h"


def test_accuracy_respects_the_eigenvalue_bound():
    with TestClient(create_app(Settings(max_eigenvalues=3), warm_catalogue=False)) as c:
        err = _error(c.post("/api/accuracy", json={"scheme": "rk4", "eigenvalues": PAIRS}), 413)
    assert err["field"] == "eigenvalues"
