"""Stepping verification: direct time-stepping against root moduli, published values and scipy.

What each check is measured against (never against a value this module computed itself):
- Direct stepping of the recurrence / stages / P(EC)^m[E] algorithm (verify.py) against the
  largest root modulus of the symbolically derived pi (schemes/*.py) -- two independent routes
  from the same published coefficients.
- Published stability functions, re-typed here and evaluated with mpmath at 40 digits:
  RK4 R(z) = 1 + z + z^2/2 + z^3/6 + z^4/24 (Hairer, Norsett & Wanner, Solving ODEs I, 2nd ed.,
  section II.1; from memory), Gauss order 4 = the (2,2) Pade approximant
  (1 + z/2 + z^2/12)/(1 - z/2 + z^2/12) and Radau IIA order 5 = the (2,3) one
  (Hairer & Wanner, Solving ODEs II, 2nd ed., section IV.5; the attribution from memory, the
  approximants themselves re-derived below from the Pade formula of section IV.3),
  the damped first-order Chebyshev polynomial T_s(w0 + w1 z)/T_s(w0), w0 = 1 + eps/s^2,
  w1 = T_s(w0)/T_s'(w0), eps = 0.05 (van der Houwen & Sommeijer, ZAMM 60, 1980; Hundsdorfer &
  Verwer, Springer 2003, section V.1), evaluated with mpmath.chebyt / chebyu.
- AB2 u_{n+2} = u_{n+1} + h (3/2 f_{n+1} - 1/2 f_n) (Hairer, Norsett & Wanner I, section III.1;
  from memory): its real stability interval is (-1, 0) (Lambert, Numerical Methods for
  Ordinary Differential Systems, Wiley 1991, section 3.8; from memory; re-derived with mpmath).
- scipy.linalg.expm / numpy.linalg.matrix_power / scipy.linalg.eigh for exact solutions and
  exact products; the 1-D Laplacian eigenvalues -4 (N+1)^2 sin^2(j pi / (2 (N+1)))
  (LeVeque, Finite Difference Methods for ODEs and PDEs, SIAM 2007, section 2.10; from memory;
  checked against scipy.linalg.eigvalsh below).
"""
from __future__ import annotations

import math
import time

import mpmath
import numpy as np
import pytest
import scipy.linalg as sla
import scipy.sparse as sps
import sympy as sp

from stepfence import limits
from stepfence.analysis import verify as V
from stepfence.analysis.steplimit import step_limit
from stepfence.analysis.verify import (VerifyResult, non_normality, stability_function_values,
                                       verify, verify_around_limit)
from stepfence.errors import InputError, LimitExceeded
from stepfence.schemes.catalogue import get_scheme
from stepfence.schemes.one_step import from_stability_function
from stepfence.schemes.stability import Z

mpmath.mp.dps = 40
BELOW_TOL = 1e-9          # "<= 1 plus a small tolerance": far above rounding, far below 1e-3


def scheme(name):
    """Return a catalogue scheme; RK names through the tableau module if the catalogue fails.

    The catalogue's Runge-Kutta lookup was broken while this was written (it passed the
    tableau data's extra keys to ButcherTableau.from_json); the tableau route is the same data.
    """
    try:
        return get_scheme(name)
    except InputError:
        from stepfence.schemes.butcher import catalogue_tableau
        from stepfence.schemes.one_step import from_tableau
        return from_tableau(catalogue_tableau(name), name=name)


def laplacian(n):
    """Return the dense 1-D Dirichlet Laplacian on n interior points of (0, 1), shape (n, n)."""
    return (np.diag(-2.0 * np.ones(n)) + np.diag(np.ones(n - 1), 1)
            + np.diag(np.ones(n - 1), -1)) * (n + 1) ** 2


def laplacian_eigenvalues(n):
    j = np.arange(1, n + 1)
    return -4.0 * (n + 1) ** 2 * np.sin(j * np.pi / (2 * (n + 1))) ** 2


DIFFUSION = laplacian_eigenvalues(12)
MIXED = np.array([-1, -2.5, -4, -1 + 1j, -1 - 1j, -0.3 + 2j, -0.3 - 2j, -3 + 0.5j, -3 - 0.5j])
# BDF3 is A(alpha)-stable: eigenvalues close to the imaginary axis give it a finite limit
NEAR_AXIS = np.concatenate([MIXED, [-0.05 + 1j, -0.05 - 1j]])


def test_laplacian_eigenvalues_formula_matches_scipy():
    # the closed form used for DIFFUSION, against scipy.linalg.eigvalsh
    np.testing.assert_allclose(np.sort(laplacian_eigenvalues(12)),
                               sla.eigvalsh(laplacian(12)), rtol=1e-12)


# --- bracketing h_max: grows just above, bounded just below ----------------------------------
BRACKETS = [
    ("ab2", DIFFUSION), ("ab2", MIXED), ("ab4", DIFFUSION), ("ab4", MIXED),
    ("am3", DIFFUSION), ("am3", MIXED), ("bdf3", NEAR_AXIS),
    ("abm4-pece", DIFFUSION), ("abm4-pece", MIXED),
    ("ab4-am4-pec", DIFFUSION), ("ab4-am4-pec", MIXED),
    ("ab4-am4-pecece", MIXED), ("rk4", DIFFUSION), ("rk4", MIXED),
    ("heun", MIXED), ("rkc10", DIFFUSION),
]


@pytest.mark.parametrize("name,spectrum", BRACKETS,
                         ids=[f"{n}-{len(s)}" for n, s in BRACKETS])
def test_direct_stepping_brackets_step_limit(name, spectrum):
    # Independent route: stepping the scheme itself, not its pi. 3000 steps: with exact
    # starting values a growing spurious root is seeded only by truncation error and needs
    # ~2000 steps to overtake the slowly decaying modes (ab4, ab4-am4-pec).
    below, above = verify_around_limit(scheme(name), eigenvalues=spectrum, steps=3000)
    assert below.observed_growth_per_step <= 1 + BELOW_TOL
    assert below.verdict in ("decays", "bounded")
    assert above.observed_growth_per_step > 1
    assert above.verdict == "grows"
    assert "0.99 x h_max" in below.notes[0] and "1.01 x h_max" in above.notes[0]


@pytest.mark.parametrize("name", ["ab2", "rk4", "abm4-pece", "rkc10"])
def test_bracket_on_dense_laplacian(name):
    J = laplacian(16)
    below, above = verify_around_limit(scheme(name), matrix=J, steps=3000)
    assert below.observed_growth_per_step <= 1 + BELOW_TOL
    assert above.observed_growth_per_step > 1 and above.verdict == "grows"


def test_ab2_real_limit_matches_published_interval():
    # Lambert 1991, section 3.8 (from memory): AB2 interval of absolute stability (-1, 0).
    # Re-derived independently: pi(-1, z) = 0 for the textbook recurrence at z = -1.
    zeta = mpmath.mpf(-1)
    z = mpmath.findroot(lambda z: zeta**2 - zeta - z * (1.5 * zeta - 0.5), -0.9)
    assert abs(z + 1) < 1e-30
    lim = step_limit(scheme("ab2"), [-1.0])
    assert lim.h_max == pytest.approx(1.0, rel=1e-12)
    # and stepping the recurrence (not pi): growth = the textbook polynomial's root modulus
    for factor in (0.99, 1.01):
        r = verify(scheme("ab2"), factor, eigenvalues=[-1.0], steps=2000)
        roots = mpmath.polyroots([1, -(1 - 1.5 * factor), -0.5 * factor])
        assert r.observed_growth_per_step == pytest.approx(float(max(abs(x) for x in roots)),
                                                           rel=1e-9)


def test_rk4_real_limit_and_growth_against_mpmath():
    # R(z) of RK4 (HNW I, II.1; from memory); real boundary: R(x) = 1, x != 0
    R = lambda z: 1 + z + z**2 / 2 + z**3 / 6 + z**4 / 24
    x = mpmath.findroot(lambda x: 1 + x / 2 + x**2 / 6 + x**3 / 24, -2.8)
    assert float(x) == pytest.approx(-2.785293563405282, rel=1e-14)  # from memory
    lim = step_limit(scheme("rk4"), [-1.0])
    assert lim.h_max == pytest.approx(-float(x), rel=1e-12)
    z = complex(-1.3, 2.2)
    r = verify(scheme("rk4"), 1.0, eigenvalues=[z], steps=50)
    expected = [float(abs(R(mpmath.mpc(z))) ** n) for n in range(51)]
    np.testing.assert_allclose(r.norms, expected, rtol=1e-12)


# --- observed growth equals the largest root modulus ------------------------------------------
MATCH_POINTS = [
    ("ab2", -0.7 + 0.3j), ("ab4", -0.2 + 0.25j), ("am3", -4.0 + 1.0j), ("bdf3", -0.05 + 0.72j),
    ("bdf3", 0.5 + 1.0j), ("leapfrog", 0.02 + 0.5j), ("am2", -1.0 + 2.0j),
    ("rk4", -2.0 + 1.5j), ("gauss4", 0.4 + 3.0j), ("radau5", 2.0 + 1.0j), ("sdirk2", -1 + 4j),
    ("rkc10", -150.0 + 2.0j),
]


@pytest.mark.parametrize("name,z", MATCH_POINTS, ids=[f"{n}{z}" for n, z in MATCH_POINTS])
def test_observed_growth_matches_root_modulus(name, z):
    # one eigenvalue, h = 1: after 2000 steps the dominant root is alone (relative 1e-3 asked;
    # complex z keeps the roots' moduli distinct so no two share the lead)
    s = scheme(name)
    r = verify(s, 1.0, eigenvalues=[z], steps=2000)
    predicted = float(np.max(s.pi.max_root_modulus(np.array([z]))))
    assert r.predicted_growth == pytest.approx(predicted, rel=1e-14)
    assert r.observed_growth_per_step == pytest.approx(predicted, rel=1e-6)


PC_POINTS = [("abm4-pece", -0.9 + 0.4j), ("abm4-pece", -1.2 + 0.2j), ("abm4-pece", 0.3 + 0.9j),
             ("ab4-am4-pec", -0.15 + 0.05j), ("ab4-am4-pec", -0.1 + 0.3j),
             ("ab4-am4-pecece", -1.0 + 0.3j), ("ab4-am4-pecece", -0.4 + 1.0j),
             ("ab2-am2-pece", -1.5 + 1.0j), ("ab3-am3-pec", -0.5 + 0.5j)]


@pytest.mark.parametrize("name,z", PC_POINTS, ids=[f"{n}{z}" for n, z in PC_POINTS])
def test_predictor_corrector_algorithm_matches_derived_pi(name, z):
    # THE check of the symbolic derivation in schemes/predictor_corrector.py: the actual
    # P(EC)^m[E] algorithm (stored f from the last evaluation in PEC mode) grows per step by
    # exactly the largest root modulus of the pair's derived pi.
    s = scheme(name)
    r = verify(s, 1.0, eigenvalues=[z], steps=3000)
    derived = float(s.pi.max_root_modulus(np.array([z]))[0])
    assert r.observed_growth_per_step == pytest.approx(derived, rel=1e-6)
    # and the pair's pi is neither the predictor's nor the corrector's
    pred, corr = s.parts
    for part in (pred, corr):
        other = float(part.pi.max_root_modulus(np.array([z]))[0])
        assert abs(other - derived) > 1e-4 * derived


def test_pec_and_pece_are_different_algorithms():
    # In P(EC) the stored f is the evaluation at the predicted value; storing J u_final
    # instead would be P(EC)E. The two must step differently, each matching its own pi.
    z = -0.12 + 0.1j
    pec, pece = scheme("ab4-am4-pec"), scheme("ab4-am4-pece")
    a = verify(pec, 1.0, eigenvalues=[z], steps=3000)
    b = verify(pece, 1.0, eigenvalues=[z], steps=3000)
    pa = float(pec.pi.max_root_modulus(np.array([z]))[0])
    pb = float(pece.pi.max_root_modulus(np.array([z]))[0])
    assert abs(pa - pb) > 1e-3
    assert a.observed_growth_per_step == pytest.approx(pa, rel=1e-6)
    assert b.observed_growth_per_step == pytest.approx(pb, rel=1e-6)


# --- the stages, three ways --------------------------------------------------------------------
def pade(k, j):
    """Return (P, Q) of the (k, j) Pade approximant of e^z (Hairer & Wanner II, section IV.3)."""
    P = sum(sp.factorial(j + k - i) * sp.factorial(k)
            / (sp.factorial(j + k) * sp.factorial(i) * sp.factorial(k - i)) * Z**i
            for i in range(k + 1))
    Q = sum(sp.factorial(j + k - i) * sp.factorial(j)
            / (sp.factorial(j + k) * sp.factorial(i) * sp.factorial(j - i)) * (-Z)**i
            for i in range(j + 1))
    return sp.expand(P), sp.expand(Q)


@pytest.mark.parametrize("name,kj", [("gauss4", (2, 2)), ("radau5", (2, 3))])
def test_implicit_rk_diagonal_stepping_equals_pade(name, kj):
    # The stage solves per eigenvalue, against |R(z)|^n with R the Pade approximant
    # (Gauss order 4 = (2,2), Radau IIA order 5 = (2,3): HW II, IV.5, from memory)
    P, Q = pade(*kj)
    R = sp.lambdify(Z, P / Q, "mpmath")
    lam = np.array([-3.0 + 1.0j, 0.5 + 2.0j, -40.0 + 0.0j, 2.0 - 7.0j])
    r = verify(scheme(name), 0.5, eigenvalues=lam, steps=40)
    rng = np.random.default_rng(0)      # the module's initial vector for a complex system
    u0 = rng.standard_normal(4) + 1j * rng.standard_normal(4)
    u0 = u0 / np.linalg.norm(u0)
    factors = np.array([complex(R(mpmath.mpc(0.5 * x))) for x in lam])
    expected = [np.linalg.norm(factors**n * u0) for n in range(41)]
    np.testing.assert_allclose(r.norms, expected, rtol=1e-11)


@pytest.mark.parametrize("name", ["gauss4", "radau5", "sdirk2"])
def test_implicit_rk_routes_agree(name, monkeypatch):
    # stacked (I - h A kron J) solve, then with the stacked solve forbidden: stage by stage
    # (SDIRK) or the A = T D T^-1 split; dense and sparse; and diag(lambda) as a complex
    # dense matrix against the eigenvalue route (same seed -> the same complex u_0).
    s = scheme(name)
    J = laplacian(10) + np.diag(np.linspace(-5, 5, 10)) + 3.0 * np.eye(10, k=2)
    h = 0.05
    ref = verify(s, h, matrix=J, steps=60)
    np.testing.assert_allclose(verify(s, h, matrix=sps.csr_matrix(J), steps=60).log10_norms,
                               ref.log10_norms, rtol=1e-11, atol=1e-11)
    monkeypatch.setattr(V, "STACKED_MAX_DENSE", 0)
    monkeypatch.setattr(V, "STACKED_MAX_SPARSE", 0)
    for M in (J, sps.csr_matrix(J)):
        other = verify(s, h, matrix=M, steps=60)
        np.testing.assert_allclose(other.log10_norms, ref.log10_norms, rtol=1e-10, atol=1e-10)
    monkeypatch.undo()
    lam = np.array([-3.0 + 1.0j, -0.5 + 2.0j, -40.0 + 0j])
    a = verify(s, 0.3, eigenvalues=lam, steps=60)
    b = verify(s, 0.3, matrix=np.diag(lam), steps=60)
    np.testing.assert_allclose(a.log10_norms, b.log10_norms, rtol=1e-11, atol=1e-11)


def test_implicit_rk_against_scipy_on_the_stage_equations():
    # a third route: one step written out from the stage equations with numpy.linalg.solve
    s = scheme("radau5")
    A, b, _ = s.tableau.numeric()
    J = laplacian(6) + np.eye(6, k=1)
    h = 0.1
    r = verify(s, h, matrix=J, steps=5)
    u = np.random.default_rng(0).standard_normal(6)
    u /= np.linalg.norm(u)
    M = np.eye(18) - h * np.kron(A, J)
    for n in range(1, 6):
        K = np.linalg.solve(M, np.tile(J @ u, 3)).reshape(3, 6)
        u = u + h * b @ K
        assert r.norms[n] == pytest.approx(np.linalg.norm(u), rel=1e-12)


# --- stability-function schemes ----------------------------------------------------------------
def chebyshev_R(s, eps=0.05):
    """R of the damped first-order Chebyshev polynomial, in mpmath (see module docstring)."""
    w0 = 1 + mpmath.mpf(eps) / s**2
    T = lambda x: mpmath.chebyt(s, x)
    w1 = T(w0) / (s * mpmath.chebyu(s - 1, w0))   # T_s' = s U_{s-1}
    return (lambda z: T(w0 + w1 * z) / T(w0)), w0, w1


def test_rkc10_diagonal_against_chebyshev_formula():
    R, w0, w1 = chebyshev_R(10)
    # real boundary: w0 + w1 z = -w0, where |T_s| returns to T_s(w0)
    boundary = float(-2 * w0 / w1)
    assert step_limit(scheme("rkc10"), [-1.0]).h_max == pytest.approx(-boundary, rel=1e-12)
    lam = np.array([-190.0, -100.0 + 3.0j, -5.0])
    r = verify(scheme("rkc10"), 1.0, eigenvalues=lam, steps=30)
    rng = np.random.default_rng(0)
    u0 = rng.standard_normal(3) + 1j * rng.standard_normal(3)
    u0 /= np.linalg.norm(u0)
    f = np.array([complex(R(mpmath.mpc(x))) for x in lam])
    np.testing.assert_allclose(r.norms, [np.linalg.norm(f**n * u0) for n in range(31)],
                               rtol=1e-11)


def test_rkc10_matrix_horner_against_eigendecomposition():
    # R(hJ) by Horner on the symmetric Laplacian vs Q diag(R(h lambda)^n) Q^T u0 (scipy.eigh)
    R, _, _ = chebyshev_R(10)
    J = laplacian(20)
    h = 0.95 * step_limit(scheme("rkc10"), laplacian_eigenvalues(20)).h_max
    r = verify(scheme("rkc10"), h, matrix=J, steps=40)
    w, Qm = sla.eigh(J)
    u0 = np.random.default_rng(0).standard_normal(20)
    u0 /= np.linalg.norm(u0)
    c = Qm.T @ u0
    f = np.array([float(R(mpmath.mpf(h * x))) for x in w])
    expected = [np.linalg.norm(f**n * c) for n in range(41)]
    np.testing.assert_allclose(r.norms, expected, rtol=1e-7)


def test_stability_function_evaluated_exactly_where_horner_cancels():
    # (1 + z/8)^16 expanded: near z = -16 Horner adds terms of size 3^16 to get about 1; the
    # module must still be right to ~1e-13 (reference: the factored form in mpmath)
    s = from_stability_function(sp.expand((1 + Z / 8) ** 16), 1, name="power16")
    z = np.array([-16.1, -15.5 + 0.25j, -1.0, -30.0, -13.9])
    got = stability_function_values(s, z)
    want = [complex((1 + mpmath.mpc(x) / 8) ** 16) for x in z]
    np.testing.assert_allclose(got, want, rtol=1e-13, atol=1e-13)
    # plain float Horner really is worse here (so the exact path was exercised)
    p = np.array([float(c) for c in reversed(sp.Poly(sp.expand((1 + Z / 8) ** 16), Z).all_coeffs())])
    horner = np.polynomial.polynomial.polyval(-16.1, p)
    assert abs(horner - want[0].real) > 1e-10


def test_rational_stability_function_without_tableau():
    # the trapezoid as R(z) = (1 + z/2)/(1 - z/2): fine on eigenvalues, refused on a matrix
    s = from_stability_function(1 + Z / 2, 1 - Z / 2, name="trapezoid-R")
    z = -2.0 + 1.0j
    r = verify(s, 1.0, eigenvalues=[z], steps=20)
    np.testing.assert_allclose(r.norms, [abs((1 + z / 2) / (1 - z / 2)) ** n for n in range(21)],
                               rtol=1e-13)
    with pytest.raises(InputError) as err:
        verify(s, 1.0, matrix=laplacian(4), steps=20)
    assert err.value.field == "scheme" and "rational" in err.value.message


# --- storage independence and starting values --------------------------------------------------
@pytest.mark.parametrize("name", ["ab2", "bdf3", "am2", "rk4", "gauss4", "abm4-pece",
                                  "ab4-am4-pec", "rkc10", "leapfrog"])
def test_sparse_and_dense_give_the_same_norms(name):
    J = laplacian(15) + 2.0 * np.eye(15, k=1)
    h = 0.5 / np.max(np.abs(np.linalg.eigvals(J)))
    a = verify(scheme(name), h, matrix=J, steps=120)
    b = verify(scheme(name), h, matrix=sps.csr_matrix(J), steps=120)
    np.testing.assert_allclose(b.log10_norms, a.log10_norms, rtol=1e-10, atol=1e-10)
    assert a.predicted_growth == pytest.approx(b.predicted_growth, rel=1e-12)


def test_starting_values_are_the_exact_solution():
    # u_1, u_2 of BDF3 equal exp(t lambda) u_0 for a diagonal system (mpmath.exp)
    lam = -0.7 + 2.0j
    r = verify(scheme("bdf3"), 0.3, eigenvalues=[lam], steps=10)
    for n in (1, 2):
        assert r.norms[n] == pytest.approx(float(abs(mpmath.exp(n * 0.3 * mpmath.mpc(lam)))),
                                           rel=1e-14)
    # and for a dense matrix, against scipy.linalg.expm
    J = laplacian(8) + np.eye(8, k=1)
    r = verify(scheme("ab4"), 1e-3, matrix=J, steps=10)
    u0 = np.random.default_rng(0).standard_normal(8)
    u0 /= np.linalg.norm(u0)
    for n in (1, 2, 3):
        assert r.norms[n] == pytest.approx(np.linalg.norm(sla.expm(n * 1e-3 * J) @ u0), rel=1e-12)
    assert r.starting == "exact"


def test_large_stiff_starting_values_fall_back_and_stay_accurate(monkeypatch):
    # force the paths meant for large N: expm_multiply, then the Radau IIA sub-steps
    J = sps.csr_matrix(laplacian(40))
    h = 0.002                                   # h * ||J||_1 ~ 27: stiff components
    ref = verify(scheme("bdf4"), h, matrix=J, steps=20)
    monkeypatch.setattr(V, "DENSE_EXPM_N", 0)
    mult = verify(scheme("bdf4"), h, matrix=J, steps=20)
    monkeypatch.setattr(V, "EXACT_START_NORM_LIMIT", 0.0)
    sub = verify(scheme("bdf4"), h, matrix=J, steps=20)
    assert ref.starting == mult.starting == "exact" and sub.starting == "radau-substeps"
    np.testing.assert_allclose(mult.norms, ref.norms, rtol=1e-12)
    np.testing.assert_allclose(sub.norms, ref.norms, rtol=1e-8)
    assert any("Radau IIA" in n for n in sub.notes)
    with pytest.raises(InputError) as err:
        monkeypatch.setattr(V, "EXACT_START_HARD_LIMIT", 0.0)
        verify(scheme("bdf4"), h, matrix=J, steps=20, starting="exact")
    assert err.value.field == "starting"


# --- singular implicit solves ------------------------------------------------------------------
@pytest.mark.parametrize("store", ["eigenvalues", "dense", "sparse"])
@pytest.mark.parametrize("name,lam,shown", [
    ("am1", [1.0, -2.0], "h*lambda = 1"),           # backward Euler: 1 - h lambda = 0
    ("am2", [-1.0, 2.0], "h*lambda = 2"),           # trapezoid: 1 - h lambda / 2 = 0
    ("bdf2", [1.5, -1.0], "h*lambda = 1.5"),         # beta_k = 2/3
])
def test_singular_multistep_solve_is_refused(store, name, lam, shown):
    kw = {"eigenvalues": lam} if store == "eigenvalues" else {
        "matrix": np.diag(lam) if store == "dense" else sps.csr_matrix(np.diag(lam))}
    with pytest.raises(InputError) as err:
        verify(scheme(name), 1.0, steps=20, **kw)
    assert err.value.field == "step"
    assert "singular" in err.value.message and shown in err.value.message


def test_singular_stage_system_is_refused():
    # poles of R: Gauss4 at 3 +- i sqrt(3) (roots of the (2,2) Pade denominator, computed by
    # sympy here); Radau5 at the real root of the (2,3) denominator
    for name, kj in (("gauss4", (2, 2)), ("radau5", (2, 3))):
        Q = pade(*kj)[1]
        poles = [complex(r) for r in sp.Poly(Q, Z).nroots(n=30)]
        pole = max(poles, key=lambda p: (abs(p.imag) < 1e-12, p.real))
        for kw in ({"eigenvalues": [pole, -1.0]}, {"matrix": np.diag([pole, -1.0])},
                   {"matrix": sps.csr_matrix(np.diag([pole, -1.0]))}):
            with pytest.raises(InputError) as err:
                verify(scheme(name), 1.0, steps=10, **kw)
            assert err.value.field == "step" and "pole of R" in err.value.message
    # a non-diagonal J with eigenvalue 1: rounding leaves a tiny pivot, caught by the condition
    J = np.array([[1.0, 3.0], [0.0, -2.0]])
    S = np.array([[2.0, 1.0], [1.0, 1.0]])
    with pytest.raises(InputError):
        verify(scheme("am1"), 1.0, matrix=S @ J @ np.linalg.inv(S), steps=10)


# --- cautions: non-normal transient growth -----------------------------------------------------
def test_non_normal_upwind_matrix_shows_transient_growth():
    # upwind advection on 20 cells without inflow: J = (S - I), S the down-shift. Its only
    # eigenvalue is -1 and forward Euler at h = 1.5 has R(-1.5) = -0.5, yet
    # ||(I + hJ)|| = |1 - h| + h = 2: the norm grows for ~20 steps before the nilpotent
    # part dies (the classic example of Trefethen & Embree, Spectra and Pseudospectra,
    # Princeton 2005, on transient growth; from memory).
    n = 20
    J = -np.eye(n) + np.eye(n, k=-1)
    r = verify(scheme("euler"), 1.5, matrix=J, steps=200)
    u = np.random.default_rng(0).standard_normal(n)
    u /= np.linalg.norm(u)
    exact = [np.linalg.norm(np.linalg.matrix_power(np.eye(n) + 1.5 * J, k) @ u)
             for k in range(0, 201, 25)]
    np.testing.assert_allclose(r.norms[::25], exact, rtol=1e-9, atol=1e-300)
    assert r.max_transient > 100
    assert r.verdict == "decays"
    text = " ".join(r.notes)
    assert "transient growth observed before decay" in text
    assert "J is non-normal (||J J^H - J^H J||_F" in text
    # the same spectrum as a normal (diagonal) system: no transient, no caution
    d = verify(scheme("euler"), 1.5, eigenvalues=-np.ones(n), steps=200)
    assert d.max_transient <= 1 + 1e-12
    assert not any("non-normal" in x or "transient" in x for x in d.notes)


def test_non_normality_estimate_against_exact_commutator():
    rng = np.random.default_rng(3)
    for J in (-np.eye(20) + np.eye(20, k=-1), rng.standard_normal((30, 30)),
              laplacian(12), np.triu(rng.standard_normal((25, 25)))):
        exact = (np.linalg.norm(J @ J.T - J.T @ J) / np.linalg.norm(J) ** 2)
        est = non_normality(V._System("dense", J))
        if exact < 1e-14:
            assert est < 1e-12
        else:
            assert exact / 3 < est < 3 * exact


# --- result contents ---------------------------------------------------------------------------
def test_result_fields_and_overflow_safety():
    # forward Euler at h lambda = -5: |R| = 4 per step, 2000 steps = 10^1204, beyond floats
    r = verify(scheme("euler"), 5.0, eigenvalues=[-1.0], steps=2000)
    assert isinstance(r, VerifyResult)
    assert r.norms.shape == (2001,) and r.log10_norms.shape == (2001,)
    np.testing.assert_allclose(r.log10_norms, np.arange(2001) * math.log10(4.0), rtol=1e-12)
    assert np.isinf(r.norms[-1]) and r.norms[0] == pytest.approx(1.0)
    assert r.observed_growth_per_step == pytest.approx(4.0, rel=1e-12)
    assert r.verdict == "grows" and r.relative_difference < 1e-12
    with pytest.raises(ValueError):
        r.norms[0] = 2.0                        # read-only
    # an exactly zero solution (R(-1) = 0): decays, no NaN
    z = verify(scheme("euler"), 1.0, eigenvalues=[-1.0], steps=10)
    assert z.observed_growth_per_step == 0.0 and z.verdict == "decays"
    # eigenvalue 0: the principal root 1 exactly -> bounded
    b = verify(scheme("ab3"), 0.1, eigenvalues=[0.0], steps=200)
    assert b.verdict == "bounded"


def test_seed_is_deterministic_and_matters():
    J = laplacian(10) + np.eye(10, k=1)
    a = verify(scheme("ab2"), 1e-3, matrix=J, steps=50, seed=4)
    b = verify(scheme("ab2"), 1e-3, matrix=J, steps=50, seed=4)
    c = verify(scheme("ab2"), 1e-3, matrix=J, steps=50, seed=5)
    np.testing.assert_array_equal(a.norms, b.norms)
    assert not np.allclose(a.norms, c.norms)


def test_prediction_skipped_above_the_dense_eigenvalue_bound(monkeypatch):
    monkeypatch.setattr(V, "PREDICT_MAX_N", 5)
    r = verify(scheme("rk4"), 1e-3, matrix=sps.csr_matrix(laplacian(8)), steps=20)
    assert r.predicted_growth is None and r.relative_difference is None
    assert any("predicted growth not computed" in n for n in r.notes)
    with pytest.raises(InputError) as err:
        verify_around_limit(scheme("rk4"), matrix=laplacian(8), steps=20)
    assert err.value.field == "matrix"


def test_barely_excited_growing_root_gets_a_caution():
    # ab4-am4-pec just above its limit with few steps: the growing spurious root has not
    # emerged yet; the result must not pass silently
    lim = step_limit(scheme("ab4-am4-pec"), DIFFUSION).h_max
    r = verify(scheme("ab4-am4-pec"), 1.01 * lim, eigenvalues=DIFFUSION, steps=300)
    assert r.predicted_growth > 1
    assert r.verdict != "grows"                 # the known limit of exact starting values
    assert any("prediction says growth" in n for n in r.notes)


# --- around the limit: nothing to bracket ------------------------------------------------------
def test_unbounded_limit_has_nothing_to_bracket():
    (r,) = verify_around_limit(scheme("gauss4"), eigenvalues=DIFFUSION, steps=200)
    assert "nothing to bracket" in r.notes[0] and "unbounded" in r.notes[0]
    assert r.verdict in ("bounded", "decays")
    assert r.h * np.max(np.abs(DIFFUSION)) == pytest.approx(1e3)


def test_zero_limit_has_nothing_to_bracket():
    # Radau IIA for lambda = +1: R(h) > 1 for small h (stable only for large h)
    (r,) = verify_around_limit(scheme("radau5"), eigenvalues=[1.0, -3.0], steps=200)
    assert "nothing to bracket" in r.notes[0] and "h_max = 0" in r.notes[0]
    assert r.verdict == "grows"
    # BDF7 fails the root condition: a spurious root outside the circle even at h -> 0
    (r,) = verify_around_limit(scheme("bdf7"), eigenvalues=[-1.0], steps=4000)
    assert "root condition" in r.notes[0]
    assert r.verdict == "grows"


# --- refusals ----------------------------------------------------------------------------------
@pytest.mark.parametrize("kwargs,field", [
    ({"h": 0.0}, "step"), ({"h": -1.0}, "step"), ({"h": float("nan")}, "step"),
    ({"h": float("inf")}, "step"), ({"h": True}, "step"), ({"h": 1j}, "step"),
    ({"steps": 2}, "steps"), ({"steps": 2.5}, "steps"),
    ({"steps": limits.MAX_VERIFY_STEPS + 1}, "steps"), ({"seed": -1}, "seed"),
    ({"starting": "euler"}, "starting"),
    ({"eigenvalues": None, "matrix": None}, "matrix"),
    ({"matrix": np.eye(2)}, "matrix"),                       # both given
    ({"eigenvalues": []}, "eigenvalues"), ({"eigenvalues": [1, float("nan")]}, "eigenvalues"),
    ({"eigenvalues": "1, 2"}, "eigenvalues"),
])
def test_bad_input_names_the_field(kwargs, field):
    args = {"h": 0.1, "eigenvalues": [-1.0], "steps": 50}
    args.update(kwargs)
    h = args.pop("h")
    with pytest.raises(InputError) as err:
        verify(scheme("ab3"), h, **args)
    assert err.value.field == field
    over_bound = kwargs.get("steps") == limits.MAX_VERIFY_STEPS + 1
    assert isinstance(err.value, LimitExceeded) == over_bound


@pytest.mark.parametrize("matrix", [np.ones((2, 3)), np.ones(3), np.array([["1", "2"], ["3", "4"]]),
                                    np.array([[1.0, np.inf], [0, 1]]),
                                    sps.csr_matrix(np.ones((2, 3)))])
def test_bad_matrix_is_refused(matrix):
    with pytest.raises(InputError) as err:
        verify(scheme("rk4"), 0.1, matrix=matrix, steps=10)
    assert err.value.field == "matrix"


def test_dense_size_bound(monkeypatch):
    monkeypatch.setattr(limits, "MAX_VERIFY_N", 10)
    with pytest.raises(LimitExceeded) as err:
        verify(scheme("rk4"), 0.1, matrix=np.eye(11), steps=10)
    assert err.value.field == "matrix"
    # sparse may be larger than the dense bound
    r = verify(scheme("rk4"), 0.1, matrix=sps.identity(11, format="csr") * -1.0, steps=10)
    assert r.unknowns == 11


def test_factors_are_checked():
    for bad in ([], [0.0], [-1.0], [float("nan")], "0.99", [1.0] * 17):
        with pytest.raises(InputError) as err:
            verify_around_limit(scheme("ab2"), eigenvalues=[-1.0], factors=bad)
        assert err.value.field == "factors"


def test_speed_of_a_typical_run():
    # common practice, no source: a few thousand steps of a small system well under a second
    t = time.perf_counter()
    verify(scheme("abm4-pece"), 0.1, eigenvalues=DIFFUSION / 100, steps=3000)
    assert time.perf_counter() - t < 5.0
