"""The accuracy-limited step, verdicts and the work comparison, checked from outside.

References and routes named beside the checks:
- mpmath at 40 digits: the local error |zeta - e^z| / |e^z| just below and just above each
  limit, zeta the root of pi(., z) nearest e^z from mpmath.polyroots (at these small |z| the
  other roots are far away, asserted).
- Closed forms solved with scipy.optimize.brentq: forward Euler R = 1 + z; the trapezoidal
  rule R = (1 + z/2)/(1 - z/2), whose error on z = i y is |e^{i phi} - 1| = 2 |sin(phi/2)|
  with phi = 2 arctan(y/2) - y (rederived from R, see test_dispersion).
- Small-h asymptotics e(h) ~ |C'| |h lambda|^{p+1} with C' from analysis.accuracy (exact
  rationals: Hairer, Norsett & Wanner, Solving ODEs I, 2nd ed., section III.2).
- Stiffness ratio as defined by Lambert, Computational Methods in ODEs, Wiley 1973, section
  8.2 (from memory).
"""
from __future__ import annotations

import json
import math

import mpmath
import numpy as np
import pytest
import sympy as sp
from scipy.optimize import brentq

from stepfence.analysis.accuracy_limit import (accuracy_limited_step, accuracy_report,
                                               accuracy_report_text, binding_limit,
                                               efficiency_at_equal_accuracy, stiffness_ratio,
                                               verdict)
from stepfence.analysis.dispersion import principal_error_constant
from stepfence.analysis.steplimit import step_limit
from stepfence.errors import InputError
from stepfence.schemes.catalogue import get_scheme
from stepfence.specs import scheme_from_spec

DPS = 40


def rk4():
    try:
        return get_scheme("rk4")
    except InputError:  # the catalogue's tableau entries may not be loadable yet
        return scheme_from_spec({"stability": "1 + z + z^2/2 + z^3/6 + z^4/24", "stages": 4})


def euler():
    return scheme_from_spec({"stability": "1 + z"})


def scheme(name):
    return {"rk4": rk4, "euler": euler}.get(name, lambda: get_scheme(name))()


def mp_error(s, z):
    """Local relative error of one step at z, 40 digits, root nearest e^z (asserted clear)."""
    with mpmath.workdps(DPS):
        z = mpmath.mpc(z)
        c = [sum(mpmath.mpmathify(sp.N(cc, DPS + 20)) * z ** j for j, cc in enumerate(row))
             for row in s.pi.exact]
        while len(c) > 1 and c[-1] == 0:
            c.pop()
        ez = mpmath.exp(z)
        roots = sorted(mpmath.polyroots(c[::-1], maxsteps=400, extraprec=200),
                       key=lambda r: abs(r - ez))
        if len(roots) > 1:
            assert abs(roots[0] - ez) < 0.1 * abs(roots[1] - ez), "reference ambiguous"
        return abs(roots[0] / ez - 1)


CASES = [
    ("am2", [-1.0, -3 + 2j, 0.5j], 1e-6, "step"),
    ("rk4", [-2.0, 1j, -1 + 1j], 1e-8, "step"),
    ("bdf2", [-1.0, 2j], 1e-5, "unit-time"),
    ("ab3", [-1 + 0.5j, 0.3], 1e-7, "step"),
    ("abm4-pece", [-1.0, 1.5j], 1e-8, "step"),
]


@pytest.mark.parametrize("name,lam,tol,per", CASES)
def test_limit_sits_on_the_tolerance_by_mpmath(name, lam, tol, per):
    s = scheme(name)
    lim = accuracy_limited_step(s, lam, tol, per)
    h = lim.h_max
    below, above = h * (1 - 1e-7), h * (1 + 1e-7)
    w = (lambda t: 1.0) if per == "step" else (lambda t: t)
    # every eigenvalue meets the tolerance just below the limit ...
    for l in lam:
        assert mp_error(s, below * l) <= tol * w(below)
    # ... and the binding one fails it just above
    assert mp_error(s, above * lim.binding_eigenvalue) > tol * w(above)


def test_euler_real_axis_against_brentq():
    # R = 1 + z: e(h) = |(1 - h) e^h - 1| for lambda = -1, evaluated in mpmath
    def e(h):
        with mpmath.workdps(30):
            return float(abs((1 - mpmath.mpf(h)) * mpmath.exp(h) - 1))
    for tol in (1e-3, 1e-6):
        ref = brentq(lambda h: e(h) - tol, 1e-9, 0.5, xtol=1e-15, rtol=1e-14)
        got = accuracy_limited_step(euler(), [-1.0], tol).h_max
        assert got == pytest.approx(ref, rel=1e-10)
    ref_t = brentq(lambda h: e(h) / h - 1e-3, 1e-12, 0.5, xtol=1e-18, rtol=1e-14)
    got_t = accuracy_limited_step(euler(), [-1.0], 1e-3, "unit-time").h_max
    assert got_t == pytest.approx(ref_t, rel=1e-9)
    # 1e-6 per unit time: local errors ~ 2e-12, where double precision fixes h only to
    # about 1e-6 (the limit says so); mpmath's root still lies within that
    ref_t = brentq(lambda h: e(h) / h - 1e-6, 1e-12, 0.5, xtol=1e-20, rtol=1e-14)
    lim = accuracy_limited_step(euler(), [-1.0], 1e-6, "unit-time")
    assert lim.h_max == pytest.approx(ref_t, rel=2e-6)
    assert any("double precision" in m for m in lim.messages)


def test_trapezoid_oscillation_against_closed_form():
    omega = 3.0
    def e(h):
        phi = 2 * math.atan(h * omega / 2) - h * omega
        return 2 * abs(math.sin(phi / 2))
    for tol in (1e-4, 0.1):
        ref = brentq(lambda h: e(h) - tol, 1e-6, 1.0, xtol=1e-15, rtol=1e-14)
        got = accuracy_limited_step(get_scheme("trapezoid"), [1j * omega], tol).h_max
        assert got == pytest.approx(ref, rel=1e-10)


@pytest.mark.parametrize("name,per", [("rk4", "step"), ("bdf2", "step"), ("ab3", "unit-time")])
def test_small_tolerance_asymptotics_from_the_error_constant(name, per):
    s = scheme(name)
    p, c = principal_error_constant(s)
    lam = -1.0 + 0.5j
    tols = 10.0 ** -np.arange(4, 11)
    h = np.array([accuracy_limited_step(s, [lam], t, per).h_max for t in tols])
    q = p + 1 if per == "step" else p
    slope = np.polyfit(np.log(tols), np.log(h), 1)[0]
    assert slope == pytest.approx(1 / q, abs=0.01)
    # leading term: |C'| |h lambda|^{p+1} = tol (times h per unit time)
    a = abs(float(c)) * abs(lam) ** (p + 1)
    assert h[-1] / (tols[-1] / a) ** (1 / q) == pytest.approx(1.0, abs=0.01)


def test_limit_at_a_root_collision_is_flagged():
    # leapfrog on lambda = 2i: the roots collide at h lambda = i (h = 1/2); with a tolerance
    # the error never reaches before it, the limit is the collision, said so in the messages
    lim = accuracy_limited_step(get_scheme("leapfrog"), [2j], 2.0, "unit-time")
    assert lim.h_max == pytest.approx(0.5, rel=1e-8)
    assert any("not determined" in m for m in lim.messages)
    # just below: |zeta| = 1, phase arcsin(y) - y, so e/h = 2|sin(phase/2)|/h, under 2
    y = 2 * 0.5 * (1 - 1e-6)
    assert 2 * abs(math.sin((math.asin(y) - y) / 2)) / (y / 2) < 2.0


def test_zero_eigenvalues_set_no_limit():
    lim = accuracy_limited_step(get_scheme("bdf3"), [0.0, 0.0], 1e-6)
    assert lim.unbounded and lim.h_max is None and lim.binding_eigenvalue is None


def test_stiffness_ratio():
    # fastest over slowest decay rate, over Re < 0 only
    assert stiffness_ratio([-1.0, -10.0, -1000.0 + 5j, 5j, 2.0]) == pytest.approx(1000.0)
    assert stiffness_ratio([1j, -1j, 0.5]) is None


@pytest.mark.parametrize("name,lam,tol", [("euler", [1j, -1.0], 1e-3), ("ab3", [1j], 0.5),
                                           ("bdf2", [-1.0, -1e4], 1e-4)])
def test_verdict_names_the_smaller_limit_with_both_numbers(name, lam, tol):
    s = scheme(name)
    hs = step_limit(s, lam).h_max
    ha = accuracy_limited_step(s, lam, tol).h_max
    h, which = binding_limit(hs, ha)
    text = verdict(hs, ha, tol)
    expected = min(math.inf if hs is None else hs, math.inf if ha is None else ha)
    assert h == expected
    assert which == ("stability" if expected == hs else "accuracy")
    assert text.startswith(f"{which} binds")
    for v in (hs, ha):
        assert ("unbounded" if v is None else f"{v:.6g}") in text


def test_rk4_beats_euler_per_evaluation_at_a_tight_tolerance():
    # a non-stiff spectrum and a tight tolerance: the higher order pays for its 4 evaluations
    lam = [-1.0, -2 + 1j, -2 - 1j, -0.5]
    for per, tol in (("unit-time", 1e-8), ("step", 1e-8)):
        comp = efficiency_at_equal_accuracy(euler(), rk4(), lam, tol, per)
        assert comp.work_ratio > 10
        for w in (comp.first, comp.second):
            assert w.binding == "accuracy"
            assert w.evaluations_per_unit_time == pytest.approx(w.evaluations_per_step / w.h)
        # the second (rk4) is named first in the sentence: it needs fewer evaluations
        w = comp.second
        assert comp.text.split(" needs ")[0].startswith(w.label if w.name == "custom" else w.name)
        # the ratio is the ratio of the two limits times that of the costs
        assert comp.work_ratio == pytest.approx(
            (1 / comp.first.h) / (4 / comp.second.h), rel=1e-12)


def test_report_is_json_ready_and_consistent():
    s = get_scheme("bdf2")
    lam = np.concatenate([-np.logspace(0, 4, 12), 1j * np.linspace(-3, 3, 5)])
    rep = accuracy_report(s, lam, None, 1e-4, "step", other_scheme=rk4(), table_limit=10)
    text = json.dumps(rep, allow_nan=False)     # no NaN/Inf anywhere
    assert json.loads(text)["verdict"] == rep["verdict"]
    lim = accuracy_limited_step(s, lam, 1e-4)
    assert rep["accuracy_limit"]["h_max"] == lim.h_max
    assert rep["stability_limit"]["h_max"] is None and rep["stability_limit"]["unbounded"]
    assert rep["h"] == lim.h_max and rep["h_source"] == "binding limit"
    assert rep["binding"] == "accuracy"
    assert rep["spectrum"]["truncated"] and rep["spectrum"]["shown"] == 10
    assert rep["at_h"]["meets_tolerance"]
    assert rep["at_h"]["max_relative_error"] == pytest.approx(1e-4, rel=1e-6)
    assert any("stiff problem" in c for c in rep["cautions"])
    assert rep["comparison"]["first"]["name"] == "bdf2"
    axis = rep["imaginary_axis"]
    assert len(axis["omega_h"]) == len(axis["phase_error"]) == 256
    assert "binds" in accuracy_report_text(rep)


def test_report_at_an_unstable_step_says_so():
    rep = accuracy_report(get_scheme("ab2"), [-10.0], 0.5, 1e-3)
    assert rep["at_h"]["stable"] is False
    assert any("not stable" in c for c in rep["cautions"])


def test_refusals_name_the_field():
    s = get_scheme("ab2")
    for kwargs, field in [({"tol": 0.0}, "tol"), ({"tol": 2.0}, "tol"),
                          ({"per": "decade"}, "per"), ({"eigenvalues": []}, "eigenvalues")]:
        args = {"eigenvalues": [-1.0], "tol": 1e-6, "per": "step", **kwargs}
        with pytest.raises(InputError) as e:
            accuracy_limited_step(s, **args)
        assert e.value.field == field
