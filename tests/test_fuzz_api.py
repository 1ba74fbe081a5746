"""Fuzzing the HTTP API: no request, however odd, gets a server error.

Two generators, both bounded in examples (and so in time) and derandomised so the suite is
reproducible; STEPFENCE_FUZZ_EXAMPLES raises the count and STEPFENCE_FUZZ_RANDOM=1 draws
fresh examples, for deeper runs by hand:

* schemathesis reads /openapi.json and drives every operation with schema-shaped and
  schema-breaking requests (its example, coverage and fuzzing phases);
* hypothesis strategies written here build *plausible* bodies the schema alone rarely reaches:
  real catalogue schemes and typed-in methods, spectra with magnitudes from subnormal to 1e308,
  zero, duplicates, steps from 1e-300 to 1e300, so the numerical core is what gets fuzzed.

The property checked is the issue's: every answer is below 500, and every 4xx is our JSON error
naming a field. What the generators ran is recorded and checked at the end (a fuzz run that
sent nothing would otherwise pass).
"""
from __future__ import annotations

import json
import os
from collections import Counter

import pytest
import schemathesis
from fastapi.testclient import TestClient
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from stepfence.api.main import create_app
from stepfence.api.settings import Settings
from stepfence.schemes.catalogue import LISTED

EXAMPLES = int(os.environ.get("STEPFENCE_FUZZ_EXAMPLES", "25"))
# STEPFENCE_FUZZ_RANDOM=1 draws fresh examples (by hand only: the suite must be reproducible)
FUZZ = settings(max_examples=EXAMPLES, deadline=None, database=None,
                derandomize=os.environ.get("STEPFENCE_FUZZ_RANDOM") != "1",
                suppress_health_check=list(HealthCheck))

# small bounds keep each fuzzed request cheap (the bounds themselves are tested in
# test_hardening_api.py); the job time limit stops any matrix a fuzzer uploads
APP = create_app(Settings(max_job_seconds=10, max_jobs=2, max_grid=96), warm_catalogue=False)
schema = schemathesis.openapi.from_asgi("/openapi.json", APP)
SENT: Counter = Counter()
STATUSES: dict = {}


def _strict(constant):
    raise AssertionError(f"the answer holds {constant}, which is not JSON")


def _check(label: str, status: int, body_text: str, payload) -> None:
    SENT[label] += 1
    STATUSES.setdefault(label, Counter())[status] += 1
    assert status < 500, f"{label} answered {status} to {payload!r}: {body_text[:600]}"
    if body_text and status != 405:
        # strict JSON: a NaN or Infinity would break the page's JSON.parse
        json.loads(body_text, parse_constant=_strict)


@schema.parametrize()
@FUZZ
def test_openapi_operations_never_answer_a_server_error(case):
    response = case.call()
    _check("schemathesis " + case.operation.label, response.status_code, response.text,
           (case.path_parameters, case.query, case.body))
    if 400 <= response.status_code < 500 and response.status_code != 405:
        err = response.json().get("error")
        assert err and err.get("field") and err.get("message"), response.text[:400]


# --- plausible bodies -----------------------------------------------------------------------

magnitudes = st.one_of(
    st.floats(allow_nan=False, allow_infinity=False),                    # anything finite
    st.sampled_from([0.0, -0.0, 1.0, -1.0, -2.0, 5e-324, -5e-324, 1e-300, -1e300, 1.7e308,
                     -1.7e308, 2.0 ** 52, -2.0 ** -1074]),
    st.floats(-50, 50))
pairs = st.lists(st.tuples(magnitudes, magnitudes).map(list), min_size=1, max_size=24)
spectrum_text = pairs.map(lambda ps: "\n".join(f"{a!r} {b!r}" for a, b in ps))
moderate = st.lists(st.tuples(st.floats(-60, 1), st.floats(-60, 60)).map(list), min_size=1, max_size=24)
eigenvalues = st.one_of(moderate, pairs, spectrum_text,
                        pairs.map(lambda ps: ps + [[a, -b] for a, b in ps] + ps[:3]))

small_int = st.integers(-6, 6)
fractions = st.tuples(st.integers(-9, 9), st.integers(1, 9)).map(lambda t: f"{t[0]}/{t[1]}")
coefficient = st.one_of(small_int.map(str), fractions,
                        st.sampled_from(["sqrt(2)", "1/2 + sqrt(3)/6", "0", "1e-300", "1e300", "1e99",
                                         "-1e-99", "1e50", "3/1e40"]))


def _poly(cs):
    return " + ".join(f"({c}) z^{i}" for i, c in enumerate(cs))


typed_multistep = st.integers(1, 4).flatmap(lambda k: st.tuples(
    st.lists(coefficient, min_size=k + 1, max_size=k + 1),
    st.lists(coefficient, min_size=1, max_size=k + 1))).map(
    lambda ab: {"rho": _poly(ab[0]), "sigma": _poly(ab[1])})
typed_tableau = st.integers(1, 3).flatmap(lambda s: st.tuples(
    st.lists(st.lists(coefficient, min_size=s, max_size=s), min_size=s, max_size=s),
    st.lists(coefficient, min_size=s, max_size=s))).map(
    lambda Ab: {"tableau": {"A": Ab[0], "b": Ab[1]}})
typed_stability = st.lists(coefficient, min_size=1, max_size=5).map(
    lambda cs: {"stability": _poly(cs)})
catalogue = st.sampled_from(sorted(LISTED) + ["rkc50", "rkc2-40", "theta:0.5", "theta:1",
                                              "bdf6", "ab2-am2-pec", "am1"])
schemes = st.one_of(catalogue, catalogue.map(lambda n: {"name": n}), typed_multistep,
                    typed_tableau, typed_stability,
                    st.tuples(catalogue, catalogue, st.integers(1, 3)).map(
                        lambda t: {"predictor": t[0], "corrector": t[1], "m": t[2]}))
steps = st.one_of(st.floats(min_value=1e-300, max_value=1e300), st.floats(1e-3, 10))


@pytest.fixture(scope="module")
def client():
    with TestClient(APP, raise_server_exceptions=False) as c:
        yield c


@FUZZ
@given(scheme=schemes, grid=st.integers(16, 96), region=st.booleans())
def test_plausible_analyse_never_fails(client, scheme, grid, region):
    body = {"scheme": scheme, "grid": grid, "parts": ["describe", "region"] if region else ["describe"]}
    r = client.post("/api/analyse", json=body)
    _check("plausible /api/analyse", r.status_code, r.text, body)


@FUZZ
@given(scheme=schemes, eigs=eigenvalues, per=st.booleans(),
       safety=st.one_of(st.none(), st.floats(0.01, 1)))
def test_plausible_limit_never_fails(client, scheme, eigs, per, safety):
    body = {"scheme": scheme, "eigenvalues": eigs, "per_eigenvalue": per, "safety": safety}
    r = client.post("/api/limit", json=body)
    _check("plausible /api/limit", r.status_code, r.text, body)


@FUZZ
@given(scheme=schemes, eigs=eigenvalues, h=steps, n=st.integers(1, 60))
def test_plausible_verify_never_fails(client, scheme, eigs, h, n):
    body = {"scheme": scheme, "eigenvalues": eigs, "h": h, "steps": n}
    r = client.post("/api/verify", json=body)
    _check("plausible /api/verify", r.status_code, r.text, body)


@FUZZ
@given(scheme=schemes, eigs=eigenvalues, h=st.one_of(st.none(), steps),
       tol=st.floats(1e-12, 0.5), per=st.sampled_from(["step", "unit-time"]),
       other=st.one_of(st.none(), catalogue))
def test_plausible_accuracy_never_fails(client, scheme, eigs, h, tol, per, other):
    body = {"scheme": scheme, "eigenvalues": eigs, "h": h, "tol": tol, "per": per, "other": other}
    r = client.post("/api/accuracy", json=body)
    _check("plausible /api/accuracy", r.status_code, r.text, body)


@FUZZ
@given(text=st.one_of(spectrum_text, st.text(max_size=200)))
def test_plausible_spectrum_text_never_fails(client, text):
    r = client.post("/api/spectrum/parse", json={"text": text})
    _check("plausible /api/spectrum/parse", r.status_code, r.text, text)


def test_zz_the_fuzzers_sent_what_they_promise():
    # runs last in this file (pytest keeps definition order): every generator sent requests,
    # and the plausible ones reached the numerics (some answers were 200)
    labels = {k for k in SENT if k.startswith("plausible")}
    assert len(labels) == 5, SENT
    for label in labels:
        assert SENT[label] >= min(EXAMPLES, 10), (label, SENT[label])
        assert STATUSES[label][200] > 0, (label, STATUSES[label])
    operations = {k for k in SENT if k.startswith("schemathesis")}
    assert len(operations) >= 12, operations
    print("fuzz requests:", sum(SENT.values()), dict(SENT))
