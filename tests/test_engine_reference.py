"""Engine figures against published values, sympy/mpmath and independent routes.

Every expected number names its source. "from memory" marks values recalled from the cited
book without the page at hand.
"""
from fractions import Fraction

import mpmath
import numpy as np
import pytest
import sympy as sp

from stepfence.analysis.accuracy import accuracy
from stepfence.analysis.rays import ray_windows
from stepfence.analysis.region import region_metrics
from stepfence.analysis.roots import root_condition
from stepfence.schemes.catalogue import get_scheme


# --- exact coefficients -----------------------------------------------------------------------
# Hairer, Norsett & Wanner, Solving ODEs I, 2nd ed., Table III.1.1 (explicit Adams) and
# Table III.1.2 (implicit Adams); from memory.
AB_BETA = {
    2: [Fraction(-1, 2), Fraction(3, 2)],
    3: [Fraction(5, 12), Fraction(-16, 12), Fraction(23, 12)],
    4: [Fraction(-9, 24), Fraction(37, 24), Fraction(-59, 24), Fraction(55, 24)],
}
AM_BETA = {
    3: [Fraction(-1, 12), Fraction(8, 12), Fraction(5, 12)],
    4: [Fraction(1, 24), Fraction(-5, 24), Fraction(19, 24), Fraction(9, 24)],
}


@pytest.mark.parametrize("p", sorted(AB_BETA))
def test_adams_bashforth_coefficients(p):
    s = get_scheme(f"ab{p}")
    assert [Fraction(int(b.p), int(b.q)) for b in s.sigma[:-1]] == AB_BETA[p]
    assert s.sigma[-1] == 0 and s.explicit


@pytest.mark.parametrize("p", sorted(AM_BETA))
def test_adams_moulton_coefficients(p):
    s = get_scheme(f"am{p}")
    assert [Fraction(int(b.p), int(b.q)) for b in s.sigma] == AM_BETA[p]


def test_bdf3_coefficients():
    # Hairer, Norsett & Wanner, Solving ODEs I, 2nd ed., (III.1.22'): BDF3
    # 11/6 y_{n+3} - 3 y_{n+2} + 3/2 y_{n+1} - 1/3 y_n = h f_{n+3}; from memory.
    s = get_scheme("bdf3")
    scaled = [a * sp.Rational(11, 6) for a in s.rho]
    assert scaled == [sp.Rational(-1, 3), sp.Rational(3, 2), -3, sp.Rational(11, 6)]
    assert s.sigma[-1] * sp.Rational(11, 6) == 1


def test_adams_bashforth_matches_sympy_quadrature_of_lagrange_interpolant():
    # independent route: sympy's own interpolating polynomial, integrated symbolically
    s = sp.Symbol("s")
    for k in (5, 8, 12):
        pts = list(range(k))
        beta = []
        for j in pts:
            data = [(x, 1 if x == j else 0) for x in pts]
            L = sp.interpolate(data, s)
            beta.append(sp.integrate(L, (s, k - 1, k)))
        assert list(get_scheme(f"ab{k}").sigma[:-1]) == beta


# --- order and error constants ----------------------------------------------------------------
# Hairer, Norsett & Wanner, Solving ODEs I, 2nd ed., Table III.2.1 (error constants
# C_{p+1}/sigma(1) of Adams and BDF); Lambert, Numerical Methods for ODE Systems 1991, sec 3.10.
# Sign convention C_{p+1} of sum j^q alpha_j/q! - ...; from memory.
ERROR_CONSTANTS = {
    "ab1": (1, sp.Rational(1, 2)), "ab2": (2, sp.Rational(5, 12)), "ab3": (3, sp.Rational(3, 8)),
    "ab4": (4, sp.Rational(251, 720)), "ab5": (5, sp.Rational(95, 288)),
    "am2": (2, sp.Rational(-1, 12)), "am3": (3, sp.Rational(-1, 24)),
    "am4": (4, sp.Rational(-19, 720)), "am5": (5, sp.Rational(-3, 160)),
    "bdf1": (1, sp.Rational(-1, 2)), "bdf2": (2, sp.Rational(-1, 3)), "bdf3": (3, sp.Rational(-1, 4)),
    "bdf4": (4, sp.Rational(-1, 5)), "bdf5": (5, sp.Rational(-1, 6)), "bdf6": (6, sp.Rational(-1, 7)),
    "milne-simpson": (4, sp.Rational(-1, 180)), "leapfrog": (2, sp.Rational(1, 6)),
}


@pytest.mark.parametrize("name", sorted(ERROR_CONSTANTS))
def test_order_and_normalised_error_constant(name):
    p, c = ERROR_CONSTANTS[name]
    acc = accuracy(get_scheme(name))
    assert acc.order == p
    assert acc.error_constant_normalised == c


def test_error_constant_against_sympy_series_of_the_residual():
    # independent route: residual rho(e^h) - h sigma(e^h) expanded by sympy
    h = sp.Symbol("h")
    for name in ("ab3", "am4", "bdf5", "nystrom3", "ms4"):
        s = get_scheme(name)
        rho = sum(a * sp.exp(j * h) for j, a in enumerate(s.rho))
        sig = sum(b * sp.exp(j * h) for j, b in enumerate(s.sigma))
        ser = sp.series(rho - h * sig, h, 0, 10).removeO()
        acc = accuracy(s)
        p = acc.order
        assert all(sp.simplify(ser.coeff(h, q)) == 0 for q in range(p + 1))
        assert sp.simplify(ser.coeff(h, p + 1) - acc.error_constant) == 0


def test_dahlquist_first_barrier_across_catalogue():
    # Dahlquist's first barrier (Hairer, Norsett & Wanner I, Theorem III.3.5): a zero-stable
    # k-step method has order <= k + 1 (k odd) and <= k + 2 (k even); <= k when explicit.
    for name in [f"ab{p}" for p in range(1, 13)] + [f"am{p}" for p in range(1, 13)] + \
            [f"bdf{k}" for k in range(1, 11)] + ["leapfrog", "milne-simpson", "nystrom5", "ms5", "ndf3"]:
        s = get_scheme(name)
        rc = root_condition(s)
        if not rc.zero_stable:
            continue
        p = accuracy(s).order
        k = s.steps
        bound = k if s.explicit else (k + 2 if k % 2 == 0 else k + 1)
        assert p <= bound, name


def test_dahlquist_second_barrier_across_catalogue():
    # Dahlquist's second barrier (Hairer & Wanner II, Theorem V.1.4): an A-stable multistep
    # method has order <= 2.
    for name in [f"am{p}" for p in range(1, 9)] + [f"bdf{k}" for k in range(1, 7)] + \
            [f"ndf{k}" for k in range(1, 6)] + ["milne-simpson", "theta:0.6"]:
        s = get_scheme(name)
        if region_metrics(s).a_stable:
            assert accuracy(s).order <= 2, name


# --- root condition ---------------------------------------------------------------------------
def test_bdf_root_condition_fails_from_seven():
    # Hairer, Norsett & Wanner I, Theorem III.3.4 (Cryer 1972): BDF is zero-stable iff k <= 6
    for k in range(1, 11):
        assert root_condition(get_scheme(f"bdf{k}")).zero_stable == (k <= 6), k


def test_weak_stability_of_leapfrog_and_milne_simpson():
    # Hairer, Norsett & Wanner I, section III.3 / III.9: rho = zeta^2 - 1 has roots +-1
    for name in ("leapfrog", "milne-simpson"):
        rc = root_condition(get_scheme(name))
        assert rc.zero_stable and not rc.strongly_stable
        assert sorted(round(r.value.real) for r in rc.roots) == [-1, 1]


def test_double_root_on_circle_is_not_zero_stable():
    from stepfence.schemes.multistep import multistep
    s = multistep([1, -2, 1], [0, 0, 1])  # rho = (zeta - 1)^2: inconsistent and unstable
    rc = root_condition(s)
    assert not rc.zero_stable
    assert rc.offending[0].multiplicity == 2


# --- region metrics ---------------------------------------------------------------------------
# Real stability intervals [lo, 0]: Hairer & Wanner II, 2nd ed., section V.1, Fig. 1.1/1.2
# and Lambert 1991, Table 3.6 (AB, AM); issue text for AB2..AB4. From memory where marked.
REAL_LO = {
    "ab1": -2, "ab2": -1, "ab3": sp.Rational(-6, 11), "ab4": sp.Rational(-3, 10),
    "am3": -6, "am4": -3,
}


@pytest.mark.parametrize("name", sorted(REAL_LO))
def test_real_interval_published(name):
    lo, hi = region_metrics(get_scheme(name)).real_interval
    assert lo == pytest.approx(float(REAL_LO[name]), rel=1e-12)
    assert hi == 0 or abs(hi) < 1e-300


def test_am4_and_am5_real_intervals_from_memory():
    # Lambert 1991, Table 3.6: AM k=3 (order 4) -3.0, k=4 (order 5) -1.8 (2 digits, from memory)
    assert region_metrics(get_scheme("am5")).real_interval[0] == pytest.approx(-1.8367, abs=5e-4)


# Hairer & Wanner II, 2nd ed., Table V.2.1 (A(alpha) of BDF) and Shampine & Reichelt 1997
# Table 1 (NDF; rounded to degrees). From memory.
BDF_ANGLES = {3: 86.03, 4: 73.35, 5: 51.84, 6: 17.84}
NDF_ANGLES = {3: 80, 4: 66, 5: 51}


@pytest.mark.parametrize("k", sorted(BDF_ANGLES))
def test_bdf_a_alpha(k):
    m = region_metrics(get_scheme(f"bdf{k}"))
    assert m.a0_stable and not m.a_stable
    assert m.a_alpha_deg == pytest.approx(BDF_ANGLES[k], abs=0.006)


@pytest.mark.parametrize("k", sorted(NDF_ANGLES))
def test_ndf_a_alpha(k):
    m = region_metrics(get_scheme(f"ndf{k}"))
    # the table gives whole degrees, truncated (51 for NDF5 = BDF5 at 51.84)
    assert int(m.a_alpha_deg) == NDF_ANGLES[k]


def test_a_stable_low_order():
    # Hairer & Wanner II, section V.1: backward Euler, trapezoid, BDF1, BDF2 are A-stable;
    # NDF1, NDF2 too (Shampine & Reichelt 1997)
    for name in ("am1", "am2", "bdf2", "ndf1", "ndf2"):
        m = region_metrics(get_scheme(name))
        assert m.a_stable, name
    assert region_metrics(get_scheme("bdf2")).l_stable
    assert not region_metrics(get_scheme("am2")).l_stable  # |zeta(inf)| = 1 for the trapezoid


def test_leapfrog_region_is_the_imaginary_segment():
    # Hairer & Wanner II, section V.1 (Fig. 1.3 discussion): leapfrog stable only on (-i, i)
    m = region_metrics(get_scheme("leapfrog"))
    assert m.real_interval[0] == 0
    assert m.imag_interval[1] == pytest.approx(1.0, rel=1e-12)
    assert m.empty_interior


def test_milne_simpson_imaginary_segment():
    # Milne-Simpson: stable on i*(-sqrt(3), sqrt(3)) only (Lambert 1991, section 3.8; from memory)
    m = region_metrics(get_scheme("milne-simpson"))
    assert m.imag_interval[1] == pytest.approx(np.sqrt(3), rel=1e-12)
    assert m.real_interval[0] == 0


# --- every endpoint confirmed with mpmath at high precision -----------------------------------
def _mp_max_modulus(scheme, z, dps=50):
    with mpmath.workdps(dps):
        coeffs = []
        for row in scheme.pi.exact:
            c = sum(mpmath.mpmathify(sp.N(cij, dps + 10)) * mpmath.mpmathify(z) ** j
                    for j, cij in enumerate(row))
            coeffs.append(c)
        while len(coeffs) > 1 and abs(coeffs[-1]) == 0:
            coeffs.pop()
        roots = mpmath.polyroots(coeffs[::-1], maxsteps=500, extraprec=200)
        return max(abs(r) for r in roots)


def _mp_exit(scheme, d, guess, dps=50):
    """mpmath root of max|zeta(t d)| - 1 near guess, by bisection on a bracket."""
    with mpmath.workdps(dps):
        lo = mpmath.mpf(guess) * (1 - mpmath.mpf("1e-6"))
        hi = mpmath.mpf(guess) * (1 + mpmath.mpf("1e-6"))
        f = lambda t: _mp_max_modulus(scheme, t * mpmath.mpmathify(d), dps) - 1
        assert f(lo) <= 0 < f(hi)
        for _ in range(60):
            mid = (lo + hi) / 2
            if f(mid) <= 0:
                lo = mid
            else:
                hi = mid
        return float((lo + hi) / 2)


@pytest.mark.parametrize("name,d", [("ab3", -1), ("ab3", 1j), ("ab4", 1j), ("am4", -1),
                                    ("bdf5", 1j), ("abm4-pece", -1), ("rkc6", -1), ("rk4", 1j),
                                    ("ab2", np.exp(2.5j)), ("bdf4", np.exp(1.7j))])
def test_interval_endpoints_against_mpmath(name, d):
    s = get_scheme(name)
    rw = ray_windows(s.pi, d)
    t = rw.first_exit
    assert 0 < t < np.inf
    ref = _mp_exit(s, d, t)
    assert t == pytest.approx(ref, rel=1e-12)


@pytest.mark.parametrize("name,s,order", [("rkc10", 10, 1), ("rkc50", 50, 1), ("rkc200", 200, 1),
                                          ("rkc2-10", 10, 2), ("rkc2-80", 80, 2)])
def test_rkc_real_interval_against_mpmath_chebyshev(name, s, order):
    # independent route: mpmath's own Chebyshev polynomial (mpmath.chebyt) at 60 digits in
    # R(z) = T_s(w0 + w1 z)/T_s(w0) (van der Houwen & Sommeijer 1980) or the second-order
    # a + b T_s(w0 + w1 z) (Sommeijer, Shampine & Verwer 1998), bisected for |R| = 1
    sch = get_scheme(name)
    t = ray_windows(sch.pi, -1).first_exit
    with mpmath.workdps(60):
        eps = mpmath.mpf(1) / 20 if order == 1 else mpmath.mpf(2) / 13
        w0 = 1 + eps / s**2
        T = lambda x: mpmath.chebyt(s, x)
        dT = lambda x: mpmath.diff(T, x)
        if order == 1:
            w1 = T(w0) / dT(w0)
            R = lambda z: T(w0 + w1 * z) / T(w0)
        else:
            d2 = mpmath.diff(T, w0, 2)
            w1 = dT(w0) / d2
            b = d2 / dT(w0) ** 2
            a = 1 - b * T(w0)
            R = lambda z: a + b * T(w0 + w1 * z)
        lo, hi = mpmath.mpf(t) * (1 - mpmath.mpf("1e-9")), mpmath.mpf(t) * (1 + mpmath.mpf("1e-9"))
        assert abs(R(-lo)) <= 1 < abs(R(-hi))
        for _ in range(60):
            mid = (lo + hi) / 2
            if abs(R(-mid)) <= 1:
                lo = mid
            else:
                hi = mid
        ref = float(lo)
    assert t == pytest.approx(ref, rel=1e-12)
    if order == 1:
        # beta(s) ~ (2 - 4 eps / 3) s^2 for small damping (van der Houwen & Sommeijer 1980)
        assert t == pytest.approx((2 - 4 * 0.05 / 3) * s * s, rel=0.01)


def test_bdf3_imaginary_window_starts_later():
    # BDF3 is unstable near the origin on the imaginary axis and stable again beyond a point:
    # the window start is confirmed by mpmath (root moduli on both sides)
    s = get_scheme("bdf3")
    rw = ray_windows(s.pi, 1j)
    assert rw.windows[0][0] > 0 and np.isinf(rw.windows[0][1])
    t0 = rw.windows[0][0]
    assert _mp_max_modulus(s, 1j * t0 * (1 - 1e-8)) > 1
    assert _mp_max_modulus(s, 1j * t0 * (1 + 1e-8)) <= 1
