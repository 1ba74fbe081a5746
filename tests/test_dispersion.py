"""Principal root, amplitude and phase error: checked against closed forms and mpmath.

References named beside the checks:
- Hairer, Norsett & Wanner, Solving ODEs I, 2nd ed., Springer 1993, section III.2 (error
  constants C_{p+1}; the principal root satisfies zeta(z) - e^z ~ -C_{p+1}/sigma(1) z^{p+1},
  derived again below) and III.3 (the principal root; Milne-Simpson is only weakly stable:
  its spurious root sits near -1 and exceeds the principal one in modulus for small z < 0 --
  from memory, checked here against mpmath.polyroots).
- Hairer & Wanner, Solving ODEs II, 2nd ed., Springer 1996, section IV.3: the trapezoidal rule
  has R(z) = (1 + z/2)/(1 - z/2) (from memory; rederived in the test from the method).
- The BDF2 and leapfrog roots are the quadratic formula applied to their rho - z sigma.

Leading terms (derivation used by the order tests). With zeta(z) = e^z + C' z^{p+1} + ...,
log(zeta e^{-z}) = log(1 + C' z^{p+1} e^{-z} + ...) = C' z^{p+1} + O(z^{p+2}). Its real part is
log(|zeta| / |e^z|), so |zeta|/|e^z| - 1 ~ Re(C' z^{p+1}); its imaginary part is
arg zeta - Im z, the phase error, ~ Im(C' z^{p+1}). On z = i y with real C', i^{p+1} is real for
odd p and imaginary for even p: one part starts at y^{p+1} with coefficient C' i^{p+1}, the
other one order later. E.g. RK4: R(iy) - e^{iy} ~ -(iy)^5/120, so the phase error is
-y^5/120 (the wave lags) and the amplitude error starts at y^6.
"""
from __future__ import annotations


import mpmath
import numpy as np
import pytest
import sympy as sp
from hypothesis import given, settings, strategies as st

from stepfence.analysis.accuracy import accuracy
from stepfence.analysis.dispersion import (along_spectrum, amplification_and_phase,
                                           imaginary_axis_curves, principal_error_constant,
                                           principal_root, spurious_roots)
from stepfence.errors import InputError
from stepfence.schemes.catalogue import get_scheme
from stepfence.specs import scheme_from_spec

DPS = 40


def rk4():
    # the degree-4 Taylor polynomial: R of classical RK4 (Hairer, Norsett & Wanner I, II.1)
    return scheme_from_spec({"stability": "1 + z + z^2/2 + z^3/6 + z^4/24", "stages": 4})


def mp_coefficients(pi, z):
    """Ascending zeta-coefficients of pi(., z) in mpmath, from the exact sympy entries."""
    return [sum(mpmath.mpmathify(sp.N(c, DPS + 20)) * z ** j for j, c in enumerate(row))
            for row in pi.exact]


def mp_roots(pi, z):
    c = mp_coefficients(pi, z)
    while len(c) > 1 and c[-1] == 0:
        c.pop()
    return mpmath.polyroots(c[::-1], maxsteps=400, extraprec=200)


def mp_principal(pi, z, steps=60):
    """zeta(z) at 40 digits: mpmath.polyroots along the ray from 0, nearest-root matching.

    Independent of the tracker under test; the step is small enough that the matched root is
    always much nearer than any other (asserted).
    """
    with mpmath.workdps(DPS):
        z = mpmath.mpc(z)
        cur = mpmath.mpf(1)
        for k in range(1, steps + 1):
            roots = list(mp_roots(pi, z * k / steps))
            roots.sort(key=lambda r: abs(r - cur))
            if len(roots) > 1:
                assert abs(roots[0] - cur) < 0.3 * abs(roots[1] - cur), "reference ambiguous"
            cur = roots[0]
        return complex(cur)


# --- the principal root itself ----------------------------------------------------------------
@pytest.mark.parametrize("name", ["ab3", "bdf3", "am4", "milne-simpson", "abm4-pece", "ndf2"])
def test_principal_root_matches_mpmath_continuation(name):
    # independent route: mpmath.polyroots at 40 digits, continued along the same ray
    s = get_scheme(name)
    zs = np.array([0.3 + 0.4j, -0.9 + 0.6j, 1.1j, 0.5 - 0.7j])
    got = principal_root(s, zs).value
    for z, g in zip(zs, got):
        ref = mp_principal(s.pi, z)
        assert abs(g - ref) <= 1e-13 * abs(ref), (name, z, g, ref)


def test_bdf2_principal_root_closed_form():
    # BDF2, alpha_k = 1: pi = (1 - 2z/3) zeta^2 - 4/3 zeta + 1/3, so
    # zeta = (2 + sqrt(1 + 2z)) / (3 - 2z) on the branch with zeta(0) = 1; the principal
    # square root is that branch wherever 1 + 2tz (0 <= t <= 1) avoids (-inf, 0].
    s = get_scheme("bdf2")
    rng = np.random.default_rng(7)
    z = rng.uniform(-8, 8, 400) + 1j * rng.uniform(-8, 8, 400)
    z = z[(np.abs(z.imag) > 1e-3) & (np.abs(z - 1.5) > 1e-2)]
    exact = (2 + np.sqrt(1 + 2 * z)) / (3 - 2 * z)
    got = principal_root(s, z).value
    assert np.max(np.abs(got - exact) / np.abs(exact)) < 1e-12


def test_bdf2_on_its_branch_cut_and_through_infinity():
    s = get_scheme("bdf2")
    # z < -1/2: a conjugate pair of equal modulus; the value is the limit from Im z > 0
    z = np.array([-0.75, -3.0, -1e4, -1e6], dtype=complex)
    r = principal_root(s, z)
    upper = (2 + np.sqrt(1 + 2 * z + 0j)) / (3 - 2 * z)   # numpy: sqrt(-x + 0j) = +i sqrt(x)
    assert np.all(r.on_cut) and not np.any(r.ambiguous)
    assert np.max(np.abs(r.value - upper) / np.abs(upper)) < 1e-10
    # z = 2 > 3/2: the root went through infinity (the leading coefficient 1 - 2z/3 vanished)
    r = principal_root(s, [2.0, 1.5 + 0.05j])
    exact = (2 + np.sqrt(1 + 2 * r.z)) / (3 - 2 * r.z)
    assert np.allclose(r.value, exact, rtol=1e-12, atol=0)
    assert r.through_zero[0] and not r.through_zero[1]


def test_leapfrog_collision_on_the_imaginary_axis_is_marked():
    # leapfrog: zeta^2 - 2 z zeta - 1 = 0, zeta = z + sqrt(1 + z^2); the roots collide at z = i
    s = get_scheme("leapfrog")
    y = np.array([0.2, 0.6, 0.95, 0.999, 1.2, 3.0])
    ap = amplification_and_phase(s, 1j * y)
    below = y < 1
    assert np.allclose(ap.amplification[below], 1.0, atol=1e-14)
    assert np.allclose(ap.phase_error[below], np.arcsin(y[below]) - y[below], atol=1e-13)
    assert np.all(ap.ambiguous[~below]) and not np.any(ap.ambiguous[below])
    assert np.all(np.isnan(ap.amplification[~below]))


def test_trapezoid_dispersion_closed_form():
    # R(iy) = (1 + iy/2)/(1 - iy/2): |R(iy)| = 1 and arg R = 2 arctan(y/2), continuous
    s = get_scheme("trapezoid")
    c = imaginary_axis_curves(s, 40.0, 401)
    y = c.omega_h
    assert np.max(np.abs(c.amplification - 1)) < 1e-14
    assert np.max(np.abs(c.phase_error - (2 * np.arctan(y / 2) - y))) < 1e-12
    assert c.phase_ratio[0] == 1.0
    assert np.allclose(c.phase_ratio[1:], 2 * np.arctan(y[1:] / 2) / y[1:], rtol=1e-12)


# --- leading error terms against the error constants ------------------------------------------
def _log_error(s, y):
    ap = amplification_and_phase(s, 1j * y)
    return np.log1p(ap.amplitude_error), ap.phase_error


@pytest.mark.parametrize("name", ["ab2", "ab3", "am3", "bdf2", "rk4", "abm4-pece"])
def test_imaginary_axis_error_order_and_constant(name):
    s = rk4() if name == "rk4" else get_scheme(name)
    p, c_exact = principal_error_constant(s)
    C = float(c_exact)
    lead = C * 1j ** (p + 1)                 # coefficient of y^{p+1} in log(zeta e^{-z})
    dominant_is_phase = abs(lead.imag) > abs(lead.real)
    # halve h*omega from 0.1 down: small enough for the leading term to dominate, large
    # enough that |C'| y^{p+1} stands above rounding (1e-16 in the amplitude)
    y = 0.1 / 2.0 ** np.arange(6)
    amp, phase = _log_error(s, y)
    major, minor = (phase, amp) if dominant_is_phase else (amp, phase)
    coef = lead.imag if dominant_is_phase else lead.real
    slope = np.polyfit(np.log(y), np.log(np.abs(major)), 1)[0]
    assert abs(slope - (p + 1)) < 0.05, (name, slope)
    # the leading coefficient is the exact error constant from analysis.accuracy
    assert abs(major[-1] / y[-1] ** (p + 1) / coef - 1) < 0.02
    # the other part starts at least one order later (fitted where it is above rounding)
    keep = np.abs(minor) > 1e-13
    assert keep.sum() >= 3
    minor_slope = np.polyfit(np.log(y[keep]), np.log(np.abs(minor[keep])), 1)[0]
    assert minor_slope > p + 1.8, (name, minor_slope)


@pytest.mark.parametrize("name", ["ab3", "bdf3", "am3", "leapfrog", "abm4-pece", "ndf2", "rk4"])
def test_principal_error_constant_sign_against_mpmath(name):
    # independent route: (zeta(z) - e^z) / z^{p+1} at z = 1e-4 in 40-digit arithmetic, zeta the
    # polyroots root nearest e^z (the others are O(1) away); the estimate is off by O(z)
    s = rk4() if name == "rk4" else get_scheme(name)
    p, c = principal_error_constant(s)
    with mpmath.workdps(DPS):
        z = mpmath.mpf("1e-4")
        roots = sorted(mp_roots(s.pi, z), key=lambda r: abs(r - mpmath.e ** z))
        est = (roots[0] - mpmath.e ** z) / z ** (p + 1)
    assert abs(complex(est) - float(c)) <= 1e-3 * abs(float(c)), (name, est, c)


def test_rk4_phase_lag_minus_y5_over_120():
    # from the derivation in the module docstring, C' = -1/120 (accuracy() gives R - e^z)
    s = rk4()
    assert accuracy(s).error_constant == sp.Rational(-1, 120)
    y = np.array([0.02, 0.05])
    _, phase = _log_error(s, y)
    assert np.allclose(phase / y ** 5, -1 / 120, rtol=1e-3)


# --- spurious roots, along the spectrum ---------------------------------------------------------
def test_spurious_root_of_a_two_step_method_by_vieta():
    # for a quadratic c2 zeta^2 + c1 zeta + c0 the two roots multiply to c0 / c2
    s = get_scheme("ab2")
    z = np.array([-0.3 + 0.2j, 0.4j, -1.0])
    root = principal_root(s, z).value
    other = spurious_roots(s, z)[:, 0]
    c = s.pi.zeta_coefficients(z)
    assert np.allclose(root * other, c[:, 0] / c[:, 2], rtol=1e-13)


def test_milne_simpson_parasitic_root_on_the_negative_axis():
    s = get_scheme("milne-simpson")
    lam = np.array([-1.0, -5.0])
    table = along_spectrum(s, lam, 0.1)
    assert np.all(table.parasitic)
    for zz, spur in zip(table.z, table.spurious_max):
        with mpmath.workdps(DPS):
            mods = sorted(abs(r) for r in mp_roots(s.pi, mpmath.mpc(zz)))
        assert abs(spur - float(mods[-1])) < 1e-13       # the largest root is the spurious one


def test_along_spectrum_relative_error_against_mpmath():
    s = get_scheme("bdf3")
    lam = np.array([-2.0 + 1.0j, 3.0j, -0.5, 0.8])
    h = 0.3
    table = along_spectrum(s, lam, h)
    for zz, e, ratio in zip(table.z, table.relative_error, table.amplification_ratio):
        ref = mp_principal(s.pi, zz)
        with mpmath.workdps(DPS):
            ez = mpmath.exp(mpmath.mpc(zz))
            e_ref = abs(mpmath.mpc(ref) / ez - 1)
            r_ref = abs(mpmath.mpc(ref)) / abs(ez)
        # a difference of two nearly equal doubles: rounding floor ~ 1e-16 absolute
        assert abs(e - float(e_ref)) <= 1e-12 * float(e_ref) + 1e-15
        assert abs(ratio - float(r_ref)) <= 1e-13 * float(r_ref)


@settings(max_examples=25, deadline=None)
@given(st.floats(-3, 3), st.floats(0.01, 3))
def test_conjugate_modes_mirror(re, im):
    # real coefficients: zeta(conj z) = conj zeta(z), so amplitudes agree and phases flip
    s = get_scheme("ab4")
    table = along_spectrum(s, [complex(re, im), complex(re, -im)], 0.5)
    a = amplification_and_phase(s, [0.5 * complex(re, -im)])
    if table.ambiguous[0]:
        return
    assert table.amplification[0] == pytest.approx(table.amplification[1], rel=1e-14)
    assert table.phase_error[0] == pytest.approx(-table.phase_error[1], rel=1e-12, abs=1e-14)
    assert a.amplification[0] == pytest.approx(table.amplification[1], rel=1e-12)


def test_relative_error_combines_amplitude_and_phase():
    # |zeta e^{-z} - 1| = |exp(a + i phi) - 1| with a = log amplification ratio, phi the phase
    s = rk4()
    ap = amplification_and_phase(s, np.array([0.7j, -0.4 + 1.1j, -2.0]))
    direct = np.abs(ap.zeta * np.exp(-ap.z) - 1)
    assert np.allclose(ap.relative_error, direct, rtol=1e-12)
    assert np.isnan(ap.spurious_max).all()                # one-step: no spurious roots


# --- refusals ---------------------------------------------------------------------------------
def test_inputs_are_refused_with_their_field():
    with pytest.raises(InputError) as e:
        along_spectrum(get_scheme("ab2"), [-1.0], 0.0)
    assert e.value.field == "h"
    with pytest.raises(InputError) as e:
        along_spectrum(get_scheme("ab2"), [float("nan")], 0.1)
    assert e.value.field == "eigenvalues"
    with pytest.raises(InputError) as e:
        imaginary_axis_curves(get_scheme("ab2"), 2.0, 1)
    assert e.value.field == "n"
    with pytest.raises(InputError) as e:      # rho(1) != 0: no branch starts at zeta = 1
        principal_root(scheme_from_spec({"rho": "z^2 - 1/2", "sigma": "z"}), [0.1])
    assert e.value.field == "scheme"
