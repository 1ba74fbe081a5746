"""Numerical edge cases, each a named test, each answer checked against an outside route.

Outside routes used here: closed forms worked out in the comments and evaluated with numpy,
sympy or mpmath in this file (not by stepfence), direct time stepping written here, and
published facts named beside each check ("from memory" where the book was not at hand).
Regression tests name the bug they pin (found while hardening, see docs/hardening.md).
"""
from __future__ import annotations

import math
import subprocess
import sys
import threading
import tracemalloc
from fractions import Fraction

import mpmath
import numpy as np
import pytest
import sympy as sp
from fastapi.testclient import TestClient

from stepfence import (InputError, LimitExceeded, describe, get_scheme, limit_report,
                       parse_spectrum_text, scheme_from_spec, step_limit, verify)
from stepfence.api.main import create_app
from stepfence.report import region_payload

ULP = 2.0 ** -52


@pytest.fixture(scope="module")
def client():
    with TestClient(create_app(warm_catalogue=False)) as c:
        yield c


def _rk4_R(z):
    # classical RK4 is the degree-4 Taylor polynomial of e^z (Hairer & Wanner II, 2nd ed.,
    # section IV.2, from memory)
    return 1 + z + z**2 / 2 + z**3 / 6 + z**4 / 24


def _mp_first_exit(R, d, t_max=10.0, samples=4000, dps=40):
    """Return the first t > 0 with |R(t d)| = 1, by a scan and mpmath bisection at dps digits.

    Written here from the definition h_max = sup{h : |R(t d)| <= 1 for 0 < t <= h} for a
    one-step method; it shares nothing with the engine's resultant route.
    """
    with mpmath.workdps(dps):
        d = mpmath.mpc(d)
        g = lambda t: abs(R(t * d)) ** 2 - 1
        ts = [mpmath.mpf(t_max) * k / samples for k in range(1, samples + 1)]
        prev = ts[0]
        assert g(prev) <= 0, "the ray starts outside the region"
        for t in ts[1:]:
            if g(t) > 0:
                lo, hi = prev, t
                for _ in range(3 * dps + 20):
                    mid = (lo + hi) / 2
                    lo, hi = (mid, hi) if g(mid) <= 0 else (lo, mid)
                return float(lo)
            prev = t
    return math.inf


# --- lambda = 0 ----------------------------------------------------------------------------

def test_lambda_zero_needs_only_the_root_condition():
    # h*0 = 0 for every h: only the root condition matters. Forward Euler's rho = zeta - 1 has
    # its one root at 1 (zero-stable), BDF7 fails it (Hairer, Norsett & Wanner I, 2nd ed.,
    # Theorem III.3.4, from memory; checked below with numpy's roots of the BDF7 rho).
    euler = step_limit(get_scheme("euler"), [0.0])
    assert euler.unbounded and euler.h_max is None and euler.zero_eigenvalues == 1
    assert any("only need the root condition (satisfied)" in m for m in euler.messages)
    # with a non-zero eigenvalue beside it, only that one binds: |1 + h (-4)| <= 1 iff h <= 1/2
    mixed = step_limit(get_scheme("euler"), [0.0, -4.0])
    assert mixed.h_max == 0.5 and mixed.binding_index == 1
    bdf7 = step_limit(get_scheme("bdf7"), [0.0])
    assert bdf7.zero_stable is False and bdf7.h_max == 0.0
    assert any("NOT satisfied" in m for m in bdf7.messages)


# --- lambda exactly on the boundary --------------------------------------------------------

def test_lambda_on_the_boundary_forward_euler_limit_is_exactly_one():
    # |1 + h lambda| = 1 at h = 1 for lambda = -2: on the boundary, a simple root, stable;
    # just above, |1 - 2h| > 1. The limit must be 1 to the last bit.
    res = step_limit(get_scheme("euler"), [-2.0])
    assert res.h_max == 1.0
    assert res.windows == ((0.0, 1.0),)
    # independent route: step u_{n+1} = (1 + h lambda) u_n here, in numpy
    for h, grows in ((1.0, False), (1.0 + 1e-6, True)):
        u = np.cumprod(np.full(20000, 1.0 + h * -2.0))
        assert (abs(u[-1]) > 1.001) == grows
    # and the engine's own stepping agrees at h = h_max exactly: bounded, growth 1
    run = verify(get_scheme("euler"), res.h_max, eigenvalues=[-2.0], steps=400)
    assert run.verdict == "bounded"
    assert run.observed_growth_per_step == pytest.approx(1.0, abs=1e-12)


# --- sigma vanishing on the unit circle ----------------------------------------------------

def test_sigma_vanishing_on_unit_circle_trapezoid_locus_through_infinity():
    s = get_scheme("trapezoid")
    # sigma(zeta) = (zeta + 1)/2 vanishes at zeta = -1 (exact arithmetic here)
    assert sum(Fraction(str(b)) * (-1) ** j for j, b in enumerate(s.sigma)) == 0
    d = describe(s)
    # the locus z = rho/sigma on |zeta| = 1 is 2 (w - 1)/(w + 1) = 2i tan(theta/2): the whole
    # imaginary axis, through infinity at theta = pi; the region is the left half plane
    assert d["a_stable"] is True and d["bounded"] is False
    assert d["real_interval"] == [None, 0.0] and d["imag_interval"] == [None, None]
    reg = region_payload(s, grid=32)
    xs = [x for b in reg["branches"] for x in b["x"] if x is not None]
    ys = [y for b in reg["branches"] for y in b["y"] if y is not None]
    assert max(abs(x) for x in xs) < 1e-9               # on the imaginary axis
    assert max(ys) > 100 and min(ys) < -100              # it runs off towards +-infinity
    assert all(math.isfinite(v) and abs(v) <= 1e8 for v in ys)
    assert any(x is None for b in reg["branches"] for x in b["x"])  # broken where it leaves
    # the raster agrees with Re z < 0 away from the axis (|R(z)| = |(1+z/2)/(1-z/2)|)
    x = np.array(reg["raster"]["x"])[None, :]
    stable = np.array(reg["raster"]["stable"], dtype=bool)
    clear = np.broadcast_to(np.abs(x) > 0.05 * np.ptp(x), stable.shape)
    assert np.array_equal(stable[clear], np.broadcast_to(x < 0, stable.shape)[clear])
    # on the imaginary axis every step is (weakly) stable: |R(iy)| = 1 exactly
    assert step_limit(s, [1j, -5j]).unbounded


# --- double root of rho on the unit circle -------------------------------------------------

def test_double_root_of_rho_on_unit_circle_names_the_offending_root(client):
    # rho = (zeta - 1)(zeta + 1)^2: zeta = -1 is a double root on the circle (sympy's roots
    # below), so the method is not zero-stable; typed as text, the words name that root
    spec = {"rho": "(z - 1)(z + 1)^2", "sigma": "z^2"}
    zeta = sp.Symbol("zeta")
    assert sp.roots((zeta - 1) * (zeta + 1) ** 2, zeta) == {1: 1, -1: 2}
    d = describe(scheme_from_spec(spec))
    assert d["zero_stable"] is False
    assert "root -1 on the unit circle has multiplicity 2" in d["root_condition"]
    offending = [r for r in d["rho_roots"] if r["multiplicity"] > 1]
    assert offending == [{"value": [-1.0, 0.0], "modulus": 1.0, "multiplicity": 2, "on_circle": True}]
    r = client.post("/api/limit", json={"scheme": spec, "eigenvalues": [[-1, 0]]})
    assert r.status_code == 200, r.text
    body = r.json()
    assert body["h_max"] == 0.0 and body["zero_stable"] is False
    assert "fails the root condition" in body["summary"]
    assert body["cautions"][0]["key"] == "root-condition"


def test_bdf7_fails_the_root_condition_h_max_zero_in_words():
    # BDF7: rho(zeta) = sum_{j=1..7} (1/j) zeta^(7-j) (zeta - 1)^j (Hairer, Norsett & Wanner I,
    # 2nd ed., eq. III.(1.22'), from memory), built and solved here with numpy
    P = np.polynomial.polynomial
    rho = np.zeros(8)
    for j in range(1, 8):
        rho = P.polyadd(rho, P.polymul(np.eye(8)[7 - j], P.polypow([-1.0, 1.0], j)) / j)
    worst = max(abs(np.roots(rho[::-1])))
    assert worst > 1.02
    s = get_scheme("bdf7")
    rep = limit_report(s, [-1.0, -10.0])
    assert rep["zero_stable"] is False and rep["h_max"] == 0.0
    assert rep["summary"] == "bdf7: fails the root condition, so no step near 0 is stable (h_max = 0)."
    moduli = [r["modulus"] for r in describe(s)["rho_roots"]]
    assert max(moduli) == pytest.approx(worst, rel=1e-9)
    # windows away from 0 may exist (h lambda deep in the left half plane) but none from 0
    assert all(lo > 0 for lo, hi in rep["windows"])


# --- unbounded regions -----------------------------------------------------------------------

@pytest.mark.parametrize("name", ["backward-euler", "trapezoid", "bdf2", "gauss2", "radau3"])
def test_unbounded_regions_of_a_stable_schemes_give_json_null(client, name):
    # A-stable (Hairer & Wanner II, 2nd ed., sections IV.3 and V.1, from memory); checked here:
    # the largest root of pi(., z) on a grid of the left half plane, by numpy, is <= 1
    s = get_scheme(name)
    xs, ys = np.meshgrid(-np.logspace(-3, 3, 25), np.linspace(-1e3, 1e3, 41))
    z = (xs + 1j * ys).ravel()
    worst = max(max(abs(np.roots(c[::-1]))) for c in s.pi.zeta_coefficients(z))
    assert worst <= 1 + 1e-9
    r = client.post("/api/limit", json={"scheme": name, "eigenvalues": [[-1e6, 0], [-3, 40], [-1e-9, -1]]})
    assert r.status_code == 200, r.text
    body = r.json()
    assert body["unbounded"] is True and body["h_max"] is None
    assert body["windows"] == [[0.0, None]] and body["h_max_per_evaluation"] is None


# --- magnitudes from 1e-300 to 1e300 --------------------------------------------------------

def test_magnitudes_from_1e_minus_300_to_1e300_scale_exactly_as_one_over_lambda():
    # h_max(c lambda) = h_max(lambda) / c by the definition (t lambda in S depends on t |lambda|).
    # For c = 2^k the division is exact in binary, so the limit must scale bit for bit.
    rk4 = get_scheme("rk4")
    d = (-1 + 1j) / math.sqrt(2)
    base = step_limit(rk4, [d]).h_max
    # the base value against mpmath on RK4's R(z), at 40 digits (independent route)
    assert base == pytest.approx(_mp_first_exit(_rk4_R, d), rel=1e-12)
    euler = get_scheme("euler")
    for k in range(-996, 997, 83):          # |lambda| from 2^-996 ~ 1e-300 to 2^996 ~ 1e300
        c = 2.0 ** k
        assert step_limit(rk4, [c * d]).h_max == base / c, k
        assert step_limit(euler, [-2.0 * c]).h_max == 1.0 / c, k
    for e in range(-300, 301, 50):          # decimal magnitudes: to rounding
        c = 10.0 ** e
        assert step_limit(rk4, [c * d]).h_max == pytest.approx(base / c, rel=4 * ULP), e


# --- NaN and Inf -----------------------------------------------------------------------------

def test_nan_and_inf_in_eigenvalues_are_refused_by_core_api_and_cli(client, tmp_path):
    for bad in ([math.nan], [-1.0, math.inf], [complex(1, math.nan)]):
        with pytest.raises(InputError) as err:
            step_limit(get_scheme("rk4"), bad)
        assert err.value.field == "eigenvalues" and "not finite" in err.value.message
    raw = b'{"scheme": "rk4", "eigenvalues": [[-1, 0], [-Infinity, 0]]}'
    r = client.post("/api/limit", content=raw, headers={"content-type": "application/json"})
    assert r.status_code == 422
    assert r.json()["error"]["field"] == "eigenvalues[1][0]"
    r = client.post("/api/spectrum/parse", json={"text": "-1\n(2, inf)"})
    assert r.status_code == 422
    err = r.json()["error"]
    assert err["field"] == "text" and err["line"] == 2 and "not a finite number" in err["message"]
    path = tmp_path / "eigs.txt"
    path.write_text("-1\n-Infinity\n")
    p = subprocess.run([sys.executable, "-m", "stepfence", "limit", "rk4", "--eigs", str(path)],
                       capture_output=True, text=True, timeout=120)
    assert p.returncode == 2
    assert p.stderr.count("\n") == 1 and "--eigs" in p.stderr and "line 2" in p.stderr


def test_leading_nan_line_is_refused_not_skipped_as_a_header():
    # regression: 'nan' alone on the first line was taken for a header of words and skipped
    # with only a note, silently dropping that eigenvalue
    for text in ("nan\n-1\n-2", "inf\n-1", "NaN", "-inf"):
        with pytest.raises(InputError) as err:
            parse_spectrum_text(text, "eigenvalues")
        assert "not a finite number" in err.value.message and err.value.line == 1, text
    # a real header of words is still skipped
    assert parse_spectrum_text("re im\n-1 0\n-2 1").values.tolist() == [-1, -2 + 1j]


# --- duplicate and conjugate eigenvalues ------------------------------------------------------

def test_duplicate_and_conjugate_eigenvalues():
    rk4 = get_scheme("rk4")
    lam = -1 + 2j
    one = step_limit(rk4, [lam]).h_max
    assert one == pytest.approx(_mp_first_exit(_rk4_R, lam / abs(lam)) / abs(lam), rel=1e-12)
    many = step_limit(rk4, [lam, lam, lam, np.conj(lam), np.conj(lam)])
    # pi is real, so conjugates have equal limits; duplicates change nothing
    assert many.h_max == one and many.count == 5
    assert many.per_eigenvalue[3] == many.per_eigenvalue[0]
    assert many.binding_index == 0   # the first of equals binds
    # a duplicated zero eigenvalue is still only the root condition
    assert step_limit(rk4, [0, 0, lam]).h_max == one


# --- a spectrum of one million entries -------------------------------------------------------

def test_one_million_eigenvalues_complete_in_bounded_memory():
    rng = np.random.default_rng(2027)
    lam = -rng.lognormal(0.0, 2.0, 1_000_000) + 1j * rng.normal(0.0, 3.0, 1_000_000)
    rk4 = get_scheme("rk4")
    tracemalloc.start()
    try:
        res = step_limit(rk4, lam)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    # a generous bound (memory is not time); 1e6 complex values are 16 MB
    assert peak < 2 ** 30, f"peak {peak / 2**20:.0f} MiB"
    assert res.count == 1_000_000 and res.per_eigenvalue.shape == (1_000_000,)
    b = lam[res.binding_index]
    # the binding eigenvalue's limit against mpmath (independent), and the minimum holds
    assert res.h_max == pytest.approx(_mp_first_exit(_rk4_R, b / abs(b)) / abs(b), rel=1e-10)
    assert res.h_max == np.min(res.per_eigenvalue)
    for j in rng.choice(lam.size, 5, replace=False):
        want = _mp_first_exit(_rk4_R, lam[j] / abs(lam[j])) / abs(lam[j])
        assert res.per_eigenvalue[j] == pytest.approx(want, rel=1e-10), j


# --- a singular implicit solve in verification -----------------------------------------------

@pytest.mark.parametrize("name, h, lam", [
    ("backward-euler", 1.0, 1.0),   # 1 - h lambda = 0
    ("trapezoid", 1.0, 2.0),        # 1 - h lambda / 2 = 0
    ("gauss2", 2.0, 1.0),           # the pole of (1 + z/2)/(1 - z/2) at z = 2
])
def test_singular_implicit_solve_in_verification_names_step(client, name, h, lam):
    # regression (gauss2): one stage with h*lambda*a_11 = 1 gave 0/0 in the conditioning test
    # and an unhandled LinAlgError, a 500 through the API
    with pytest.raises(InputError) as err:
        verify(get_scheme(name), h, eigenvalues=[lam, -1.0], steps=20)
    assert err.value.field == "step" and "singular" in err.value.message
    r = client.post("/api/verify", json={"scheme": name, "h": h, "eigenvalues": [[lam, 0]], "steps": 20})
    assert r.status_code == 422, r.text
    assert r.json()["error"]["field"] == "step"


def test_verify_h_lambda_beyond_floating_point_is_a_bad_step_not_a_crash(client):
    # regression, found by fuzzing /api/verify: h*lambda = inf reached R(z)'s exact fallback
    # and raised OverflowError (500)
    body = {"scheme": "rkc10", "h": 8.6e299, "eigenvalues": [[7e16, 5e16]], "steps": 4}
    r = client.post("/api/verify", json=body)
    assert r.status_code == 422, r.text
    assert r.json()["error"]["field"] == "step" and "overflows" in r.json()["error"]["message"]


# --- a reducible method -----------------------------------------------------------------------

def test_reducible_method_is_flagged_in_words():
    # rho = (zeta - 1)(zeta - 1/2), sigma = zeta - 1/2 share zeta - 1/2 (sympy's gcd here): it
    # is forward Euler in disguise, with a fixed extra root 1/2
    zeta = sp.Symbol("zeta")
    assert sp.gcd((zeta - 1) * (zeta - sp.Rational(1, 2)), zeta - sp.Rational(1, 2)) == zeta - sp.Rational(1, 2)
    s = scheme_from_spec({"rho": "(z - 1)(z - 1/2)", "sigma": "z - 1/2"})
    d = describe(s)
    assert d["reducible"] is True
    assert any("share the factor zeta - 1/2" in n and "reducible" in n for n in d["notes"])
    # same region as forward Euler (|1 + z| <= 1): h_max(-2) = 1
    assert step_limit(s, [-2.0]).h_max == pytest.approx(1.0, rel=1e-14)


# --- leapfrog ---------------------------------------------------------------------------------

def test_leapfrog_region_has_an_empty_interior_and_metrics_say_so():
    # pi = zeta^2 - 2 z zeta - 1: the roots' product is -1, so |zeta1| |zeta2| = 1 and no z
    # has both roots strictly inside; checked here with numpy at random points
    rng = np.random.default_rng(5)
    z = rng.normal(size=200) + 1j * rng.normal(size=200)
    assert all(max(abs(np.roots([1, -2 * w, -1]))) >= 1 - 1e-12 for w in z)
    s = get_scheme("leapfrog")
    d = describe(s)
    assert d["empty_interior"] is True and d["bounded"] is True
    reg = region_payload(s, grid=48)
    assert not any(any(row) for row in reg["raster"]["stable"])
    res = step_limit(s, [-1.0])
    assert res.h_max == 0.0
    assert "no positive step is stable" in limit_report(s, [-1.0])["summary"]


def test_leapfrog_imaginary_segment_is_exactly_minus_one_to_one():
    # on z = i y the roots are i y +- sqrt(1 - y^2): on the circle and simple for |y| < 1, a
    # double root i at y = 1 (the discriminant 4 z^2 + 4 of sympy vanishes at z = +-i), so the
    # stable set is the open segment (-i, i)
    zeta, z = sp.symbols("zeta z")
    assert set(sp.solve(sp.discriminant(zeta**2 - 2 * z * zeta - 1, zeta), z)) == {sp.I, -sp.I}
    s = get_scheme("leapfrog")
    lo, hi = describe(s)["imag_interval"]
    assert abs(hi - 1) <= 2 * ULP and abs(lo + 1) <= 2 * ULP
    # the step limit of lambda = i is the sup 1, and never above it by more than rounding
    h = step_limit(s, [1j]).h_max
    assert 1 - 4 * ULP <= h <= 1.0
    # open ends: inside at 0.999 i, not at i itself (the double root)
    from stepfence.analysis.region import is_in_region
    assert is_in_region(s.pi, 0.999j) and not is_in_region(s.pi, 1j)


# --- regressions of the hardening fixes in the core -----------------------------------------

def test_exact_irrational_coefficients_are_kept_not_rounded_to_a_guess():
    # regression: multistep() passed exact irrational coefficients through sympy's nsimplify,
    # which replaced sqrt(2)/12 - sqrt(3)/15 + 1/13 by a different number 5.8e-18 away
    # (216*2**(37/49)*3**(25/49)*5**(31/49)*7**(8/49)/30625)
    coeff = sp.sqrt(2) / 12 - sp.sqrt(3) / 15 + sp.Rational(1, 13)
    s = scheme_from_spec({"rho": "z^2 - z", "sigma": "(sqrt(2)/12 - sqrt(3)/15 + 1/13) z + 1/2"})
    assert sp.expand(s.sigma[1] - coeff) == 0
    assert not s.sigma[1].has(sp.Float) and s.sigma[1].atoms(sp.Pow) <= {sp.sqrt(2), sp.sqrt(3)}


def test_tableau_with_radicals_stability_function_matches_a_linear_solve():
    # the determinant form runs in the algebraic field QQ<sqrt(2)> (hardening: the raw
    # expression route ran for minutes on a dense 8-stage tableau); the answer is compared
    # with R(z) = 1 + z b^T (I - z A)^{-1} 1 from mpmath's linear solve at 60 digits (sympy's
    # exact LUsolve on radical entries swells past minutes itself, so it is no usable check)
    rng = np.random.default_rng(3)
    n = 8
    nums = [[(rng.integers(0, 9), rng.integers(1, 9), rng.integers(1, 9), rng.integers(1, 9))
             for _ in range(n)] for _ in range(n)]
    entries = [[f"{a}/{b} + {c}/{d}*sqrt(2)" for a, b, c, d in row] for row in nums]
    bq = [(rng.integers(1, 9), rng.integers(1, 9)) for _ in range(n)]
    s = scheme_from_spec({"tableau": {"A": entries, "b": [f"{p}/{q}" for p, q in bq]}})
    P, Q = s.stability_function
    Z = sp.Symbol("z")
    with mpmath.workdps(60):
        r2 = mpmath.sqrt(2)
        A = mpmath.matrix([[mpmath.mpf(int(a)) / int(b) + mpmath.mpf(int(c)) / int(d) * r2
                            for a, b, c, d in row] for row in nums])
        bv = mpmath.matrix([[mpmath.mpf(int(p)) / int(q) for p, q in bq]])
        for zv in (sp.Rational(1, 3), sp.Rational(-7, 5)):
            zm = mpmath.mpf(zv.p) / zv.q
            x = mpmath.lu_solve(mpmath.eye(n) - zm * A, mpmath.ones(n, 1))
            want = 1 + zm * (bv * x)[0]
            got = sp.N(P.subs(Z, zv) / Q.subs(Z, zv), 60)
            assert abs(mpmath.mpf(str(got)) - want) < mpmath.mpf(10) ** -40 * (1 + abs(want))


def test_more_than_two_independent_square_roots_are_refused_with_the_bound(client):
    # hardening bound (specs.MAX_SQRT_RANK = 2): with six independent square roots a 1-stage
    # tableau ran for minutes; sqrt(6) is not independent of sqrt(2), sqrt(3) and passes
    ok = scheme_from_spec({"alpha": "-1, 1", "beta": "sqrt(6)/10, 1 - sqrt(2)/3 - sqrt(3)/7"})
    assert ok.steps == 1
    for spec, field in (({"tableau": {"A": [["(sqrt(2) + sqrt(3) + sqrt(5))/30"]], "b": ["1"]}}, "tableau"),
                        ({"rho": "z - 1", "sigma": "sqrt(2) z/3 + sqrt(5)/7 - sqrt(7)/11"}, "sigma"),
                        ({"stability": "1 + z + (sqrt(2) + sqrt(3) + sqrt(5)) z^2/20"}, "stability")):
        with pytest.raises(LimitExceeded) as err:
            scheme_from_spec(spec)
        assert err.value.field == field and "at most 2" in err.value.message
        r = client.post("/api/analyse", json={"scheme": spec, "parts": ["region"]})
        assert r.status_code == 413, r.text
        assert r.json()["error"]["field"] == field


def test_rho_with_too_many_steps_names_rho_not_alpha():
    # regression: a 13-step rho typed as text was reported as "alpha: has 13 steps"
    with pytest.raises(InputError) as err:
        scheme_from_spec({"rho": "z^13 - z^12", "sigma": "1"})
    assert err.value.field == "rho" and "at most 12" in err.value.message


def test_concurrent_first_limits_of_one_scheme_build_one_table(monkeypatch):
    # regression: concurrent first requests for one scheme each built the direction table
    # (about a second each); under 32 clients a cold server answered in 40 s
    from stepfence.analysis import steplimit
    built = []
    real = steplimit._Table.__init__

    def counting(self, pi, *a, **k):
        built.append(1)
        real(self, pi, *a, **k)
    monkeypatch.setattr(steplimit._Table, "__init__", counting)
    s = scheme_from_spec({"alpha": "-1/3, -2/3, 1", "beta": "0, 5/6, 1/2"})  # a fresh pi
    lam = -np.random.default_rng(0).lognormal(0, 1, 3000) + 1j * np.linspace(-3, 3, 3000)
    out = []
    threads = [threading.Thread(target=lambda: out.append(step_limit(s, lam).h_max)) for _ in range(6)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(120)
    assert len(out) == 6 and len(set(out)) == 1
    assert len(built) == 1


def test_roots_spanning_a_hundred_orders_are_resolved(client):
    # regression (found by fuzzing): rho = -1e-99 zeta^2 + 3 zeta + 1 did not converge in
    # mpmath's polyroots at the default steps (a 500). Its roots, by the quadratic formula at
    # 60 digits here: -1/3 (to 1e-99) and 3e99.
    r = client.post("/api/analyse", json={"scheme": {"rho": "-1e-99 z^2 + 3 z + 1", "sigma": "z"},
                                          "parts": ["describe"]})
    assert r.status_code == 200, r.text
    with mpmath.workdps(60):
        a, b, c = mpmath.mpf("-1e-99"), mpmath.mpf(3), mpmath.mpf(1)
        disc = mpmath.sqrt(b * b - 4 * a * c)
        big = float(abs((-b - disc) / (2 * a)))
    d = r.json()["describe"]
    assert d["zero_stable"] is False and "not zero-stable" in d["root_condition"]
    mods = sorted(root["modulus"] for root in d["rho_roots"])
    assert math.isclose(mods[0], 1 / 3, rel_tol=1e-15) and math.isclose(mods[1], big, rel_tol=1e-12)


def test_coefficients_spanning_more_than_the_range_bound_are_refused_before_exact_algebra(client):
    # regression (found by fuzzing): sqrt(2) beside 1e300 failed inside sympy's field arithmetic
    from stepfence.specs import MAX_COEFFICIENT_RANGE
    body = {"scheme": {"rho": "1e300 + sqrt(2) z", "sigma": "1/2 + sqrt(3)/6"}, "eigenvalues": [[0, 0]]}
    r = client.post("/api/limit", json=body)
    assert r.status_code == 413 and r.json()["error"]["field"] == "rho", r.text
    assert f"{MAX_COEFFICIENT_RANGE:.0e}" in r.json()["error"]["message"]
    # just inside the bound the engine still answers, and correctly: sigma = 1e99 is forward
    # Euler with h scaled by 1e99, |1 - 1e99 h| <= 1 iff h <= 2e-99
    ok = step_limit(scheme_from_spec({"rho": "z - 1", "sigma": "1e99"}), [-1.0])
    assert math.isclose(ok.h_max, 2e-99, rel_tol=1e-12)


def test_verify_where_R_overflows_but_P_over_Q_does_not(client):
    # regression (found by fuzzing): R = P/Q was rounded as P and Q apart. Gauss6 at
    # |h lambda| = 1e60 has |P|, |Q| ~ 1e180 but |R| -> 1 (R is the (3,3) Pade approximant of
    # e^z, |R(iy)| = 1 on the imaginary axis; Hairer & Wanner II, 2nd ed., section IV.3, from
    # memory); rkc10 at |z| = 6.7e35 has |R| ~ 1e358: no step of that size can be stepped.
    r = client.post("/api/verify", json={"scheme": "gauss6", "h": 1e60, "eigenvalues": [[0, 1]], "steps": 3})
    assert r.status_code == 200, r.text
    assert r.json()["norms"] == pytest.approx([1.0, 1.0, 1.0, 1.0], rel=1e-9)
    r = client.post("/api/verify", json={"scheme": "rkc10", "h": 1.681676006816409e19,
                                         "eigenvalues": [[0.0, 3.9881422529285656e16]], "steps": 2})
    assert r.status_code == 422 and r.json()["error"]["field"] == "step", r.text


def test_verify_stability_function_zero_kills_every_mode(client):
    # regression (found by fuzzing): R(z) = 0 had no degree (a TypeError, a 500); u_1 = 0
    r = client.post("/api/verify", json={"scheme": {"stability": "0"}, "h": 1.0,
                                         "eigenvalues": [[-1, 0], [0, 0]], "steps": 2})
    assert r.status_code == 200, r.text
    assert r.json()["norms"][0] == pytest.approx(1.0, rel=1e-15) and r.json()["norms"][1] == 0.0


def test_inconsistent_method_with_every_root_inside_is_not_said_to_have_root_one():
    # a new user's typo: alpha = 1, 2, 3 gives rho = 3 zeta^2 + 2 zeta + 1, rho(1) = 6 != 0.
    # numpy's roots: modulus sqrt(1/3) twice, so zeta = 1 is no root and nothing is on the circle
    s = scheme_from_spec({"alpha": "1, 2, 3", "beta": "1, 1"})
    mods = np.abs(np.roots([3, 2, 1]))
    assert np.allclose(mods, math.sqrt(1 / 3))
    d = describe(s)
    assert d["zero_stable"] is True and d["order"] == 0
    assert "zeta = 1 is not a root" in d["root_condition"]
    assert "only root on the unit circle" not in d["root_condition"]


def test_accuracy_limit_at_magnitudes_1e_minus_300_to_1e300(client):
    # regression (found by fuzzing; the earlier answer for -1e300 was "no limit"): per step the
    # local error depends on z = h lambda only. Reference: the root x of
    # |R(-x) e^x - 1| = 1e-6 for RK4's R (the degree-4 Taylor polynomial), by mpmath bisection
    # at 40 digits here; then h = x / |lambda| for every magnitude.
    with mpmath.workdps(40):
        g = lambda x: abs(_rk4_R(-x) * mpmath.exp(x) - 1) - mpmath.mpf("1e-6")
        x = float(mpmath.findroot(g, (mpmath.mpf("0.05"), mpmath.mpf("0.5")), solver="bisect"))
    for m in (1e-300, 1e-100, 1.0, 1e100, 1e300):
        r = client.post("/api/accuracy", json={"scheme": "rk4", "eigenvalues": [[-m, 0]], "tol": 1e-6})
        assert r.status_code == 200, r.text
        assert r.json()["accuracy_limit"]["h_max"] == pytest.approx(x / m, rel=1e-9), m
    # per unit time the tolerance scales with |lambda|: outside 1e-50..1e50 refused with the bound
    r = client.post("/api/accuracy", json={"scheme": "rk4", "eigenvalues": [[-1e300, 0]],
                                           "tol": 1e-6, "per": "unit-time"})
    assert r.status_code == 413 and r.json()["error"]["field"] == "eigenvalues"
    assert "1e+50" in r.json()["error"]["message"]
