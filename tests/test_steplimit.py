"""Step limits of spectra: published extents, mpmath, and the table route against the exact one."""
import math

import mpmath
import numpy as np
import pytest
import sympy as sp

from stepfence.analysis.steplimit import step_limit
from stepfence.errors import InputError
from stepfence.schemes.catalogue import get_scheme


def _mp_stable(scheme, z, dps=50):
    with mpmath.workdps(dps):
        coeffs = [sum(mpmath.mpmathify(sp.N(c, dps + 10)) * mpmath.mpmathify(z) ** j
                      for j, c in enumerate(row)) for row in scheme.pi.exact]
        while len(coeffs) > 1 and abs(coeffs[-1]) == 0:
            coeffs.pop()
        roots = mpmath.polyroots(coeffs[::-1], maxsteps=500, extraprec=200)
        return max(abs(r) for r in roots)


def _mp_hmax(scheme, lam, guess, dps=50):
    """Bisection at 50 digits on the first exit of h*lam, bracketed around guess."""
    with mpmath.workdps(dps):
        lam = mpmath.mpmathify(lam)
        lo, hi = mpmath.mpf(guess) * (1 - mpmath.mpf("1e-7")), mpmath.mpf(guess) * (1 + mpmath.mpf("1e-7"))
        assert _mp_stable(scheme, lo * lam) <= 1 < _mp_stable(scheme, hi * lam)
        for _ in range(55):
            mid = (lo + hi) / 2
            if _mp_stable(scheme, mid * lam) <= 1:
                lo = mid
            else:
                hi = mid
        return float(lo)


def test_real_spectrum_uses_real_interval():
    # AB2 real interval [-1, 0] (Hairer & Wanner II, section V.1): h_max = 1/|lambda_max|
    lam = -np.linspace(1, 250, 400)
    res = step_limit(get_scheme("ab2"), lam)
    assert res.h_max == pytest.approx(1 / 250, rel=1e-13)
    assert res.binding_eigenvalue == -250


def test_imaginary_spectrum_rk4():
    # RK4 imaginary extent 2 sqrt(2) (Hairer & Wanner II, section IV.2; issue text)
    lam = 1j * np.linspace(-40, 40, 81)
    lam = lam[lam != 0]
    res = step_limit(get_scheme("rk4"), lam)
    assert res.h_max == pytest.approx(2 * math.sqrt(2) / 40, rel=1e-13)


@pytest.mark.parametrize("name", ["ab4", "bdf4", "rk4", "abm4-pece", "bdf3", "am3"])
def test_mixed_spectrum_against_mpmath(name):
    rng = np.random.default_rng(7)
    lam = np.concatenate([-rng.uniform(0.1, 30, 40) + 1j * rng.uniform(-20, 20, 40),
                          [-50.0, -0.5 + 3j, -2 + 0.1j]])
    s = get_scheme(name)
    res = step_limit(s, lam)
    if res.h_max in (None, 0.0):
        pytest.skip("no finite positive limit for this spectrum")
    ref = _mp_hmax(s, complex(res.binding_eigenvalue), res.h_max)
    assert res.h_max == pytest.approx(ref, rel=1e-12)


@pytest.mark.parametrize("name", ["ab3", "bdf4", "rk4", "abm4-pece"])
def test_table_route_equals_exact_route(name):
    rng = np.random.default_rng(11)
    lam = rng.normal(-3, 3, 2500) + 1j * rng.normal(0, 4, 2500)
    s = get_scheme(name)
    a = step_limit(s, lam, table=False)
    b = step_limit(s, lam, table=True)
    ok = np.isfinite(a.per_eigenvalue) & (a.per_eigenvalue > 0)
    rel = np.abs(a.per_eigenvalue[ok] - b.per_eigenvalue[ok]) / a.per_eigenvalue[ok]
    assert rel.max() < 1e-12
    assert np.array_equal(a.per_eigenvalue[~ok], b.per_eigenvalue[~ok])
    flat = lambda w: [x if x is not None else math.inf for pair in w for x in pair]
    assert flat(a.windows) == pytest.approx(flat(b.windows), rel=1e-12)


def test_zero_eigenvalue_only_needs_root_condition():
    res = step_limit(get_scheme("ab2"), [0.0, -1.0])
    assert res.h_max == pytest.approx(1.0, rel=1e-13)
    assert res.zero_eigenvalues == 1
    only_zero = step_limit(get_scheme("ab2"), [0.0])
    assert only_zero.unbounded


def test_root_condition_failure_gives_zero():
    res = step_limit(get_scheme("bdf7"), [-1.0])
    assert res.h_max == 0.0 and not res.zero_stable
    assert any("root condition" in m for m in res.messages)


def test_unbounded_for_a_stable_scheme():
    res = step_limit(get_scheme("bdf2"), [-1, -1000 + 5j, -1e6])
    assert res.unbounded and res.h_max is None
    assert res.windows == ((0.0, None),)


def test_growing_mode_window_for_implicit_scheme():
    # backward Euler: R = 1/(1 - z) has |R| <= 1 for |z - 1| >= 1, so lambda = 1 is "stable"
    # for h >= 2 (exact); the message says this is not accuracy
    res = step_limit(get_scheme("backward-euler"), [1.0])
    assert res.h_max == 0.0
    assert res.windows[0][0] == pytest.approx(2.0, rel=1e-13) and res.windows[0][1] is None
    assert any("not accuracy" in m for m in res.messages)


def test_nan_is_rejected():
    with pytest.raises(InputError):
        step_limit(get_scheme("ab2"), [np.nan, -1])


def test_huge_and_tiny_magnitudes_scale_exactly():
    s = get_scheme("rk4")
    for mag in (1e-300, 1e-150, 1e150, 1e300):
        res = step_limit(s, [-mag])
        assert res.h_max * mag == pytest.approx(2.785293563405282, rel=1e-12)


def test_duplicate_and_conjugate_eigenvalues():
    s = get_scheme("ab3")
    a = step_limit(s, [-1 + 2j])
    b = step_limit(s, [-1 + 2j, -1 - 2j, -1 + 2j])
    assert a.h_max == pytest.approx(b.h_max, rel=1e-15)


def test_stepping_confirms_the_limit():
    # independent route: iterate the recurrence of AB3 on a single mode just below/above h_max
    s = get_scheme("ab3")
    lam = -1 + 3j
    h = step_limit(s, [lam]).h_max
    alpha = [complex(a) for a in s.rho]
    beta = [complex(b) for b in s.sigma]

    def growth(hh, n=4000):
        z = hh * lam
        u = [1.0 + 0j, np.exp(z), np.exp(2 * z)]
        for _ in range(n):
            new = (-sum(alpha[j] * u[-3 + j] for j in range(3)) + z * sum(beta[j] * u[-3 + j] for j in range(3)))
            u = u[1:] + [new / alpha[3]]
        return abs(u[-1])

    assert growth(0.99 * h) < 1.0
    assert growth(1.01 * h) > 1.0
