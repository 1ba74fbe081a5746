"""Standard semi-discretisations: closed-form eigenvalues against the assembled matrices.

The independent route is numpy/LAPACK's eigenvalues of the matrix that `assemble` builds from
the stencil; the closed forms are written separately in models.py. Continuum limits are
checked against the exact eigenvalues of the differential operator.
"""
import numpy as np
import pytest
from scipy.optimize import linear_sum_assignment

from stepfence.errors import InputError, LimitExceeded
from stepfence.spectra import MODELS, ModelInfo, ParamInfo, assemble, semidiscretisation

RTOL = 1e-10


def _matched_distance(a, b) -> float:
    """Return the largest distance in the best one-to-one pairing of a and b."""
    cost = np.abs(np.asarray(a)[:, None] - np.asarray(b)[None, :])
    r, c = linear_sum_assignment(cost)
    assert len(r) == len(a) == len(b)
    return float(cost[r, c].max())


CASES = [
    ("diffusion-1d", 60, {"bc": "dirichlet"}), ("diffusion-1d", 60, {"bc": "periodic"}),
    ("diffusion-1d", 61, {"bc": "periodic", "nu": 0.3, "L": 2.5}),
    ("diffusion-1d", 2, {"bc": "periodic"}),
    ("diffusion-2d", 9, {"bc": "dirichlet"}), ("diffusion-2d", 8, {"bc": "periodic", "nu": 2.0}),
    ("advection-upwind", 60, {"a": 1.5}), ("advection-upwind", 61, {"a": -0.7, "L": 3.0}),
    ("advection-centred", 60, {"a": 2.0}), ("advection-centred", 61, {"a": -1.0}),
    ("advection-centred", 60, {"a": 2.0, "bc": "dirichlet"}),
    ("advection-centred", 61, {"a": 1.0, "bc": "dirichlet"}),
    ("advection-diffusion", 60, {}), ("advection-diffusion", 61, {"a": -3.0, "nu": 0.05}),
    ("advection-diffusion", 60, {"advection": "upwind", "a": 2.0, "nu": 0.01}),
    ("advection-diffusion", 60, {"advection": "upwind", "a": -2.0, "nu": 0.01}),
    # Dirichlet: cell Peclet 0.4 keeps the matrix close enough to normal for LAPACK to agree
    ("advection-diffusion", 40, {"bc": "dirichlet", "a": 1.0, "nu": 0.06}),
    ("advection-diffusion", 40, {"bc": "dirichlet", "a": 1.0, "nu": 0.06, "advection": "upwind"}),
    ("advection-diffusion", 30, {"bc": "dirichlet", "a": 1.0, "nu": 0.002}),  # Peclet 16: complex
]


@pytest.mark.parametrize("kind,n,params", CASES)
def test_closed_form_matches_eigenvalues_of_assembled_matrix(kind, n, params):
    spec = semidiscretisation(kind, n, **params)
    A = assemble(kind, n, **params)
    size = n * n if kind == "diffusion-2d" else n
    assert A.shape == (size, size) and spec.count == size
    numeric = np.linalg.eigvals(A.toarray())
    scale = np.abs(spec.values).max()
    tol = RTOL * scale
    if "dirichlet" == params.get("bc") and kind == "advection-diffusion" and params.get("nu") == 0.002:
        tol = 1e-7 * scale  # far from normal: LAPACK's own eigenvalues are this sensitive
    assert _matched_distance(spec.values, numeric) <= tol


@pytest.mark.parametrize("kind,n,params", [c for c in CASES if c[0].startswith("diffusion")])
def test_symmetric_models_eigenvalue_by_eigenvalue(kind, n, params):
    # eigvalsh is accurate to eps * ||A|| absolutely, so compare sorted values one by one
    spec = np.sort(semidiscretisation(kind, n, **params).values.real)
    numeric = np.linalg.eigvalsh(assemble(kind, n, **params).toarray())
    assert np.max(np.abs(spec - numeric)) <= RTOL * np.abs(spec).max()


def test_upwind_inflow_is_a_jordan_block_and_numpy_scatters():
    n, a = 40, 1.0
    spec = semidiscretisation("advection-upwind", n, a=a, bc="dirichlet")
    A = assemble("advection-upwind", n, a=a, bc="dirichlet").toarray()
    # a triangular matrix's eigenvalues are its diagonal: that is the check
    assert np.array_equal(A, np.tril(A))
    assert np.array_equal(np.sort(np.diag(A)), np.sort(spec.values.real))
    assert np.all(spec.values == -a * n)  # -a/dx, dx = L/n
    assert "non-normal" in spec.notes[0] and "pseudospectra" in spec.notes[0]
    # from memory: a perturbation eps of an n x n Jordan block moves eigenvalues ~ eps^(1/n);
    # here a relative perturbation of 1e-12 moves them by tens of percent
    E = np.random.default_rng(8).standard_normal((n, n))
    E *= 1e-12 * np.linalg.norm(A) / np.linalg.norm(E)
    scatter = np.abs(np.linalg.eigvals(A + E) - (-a * n)).max() / (a * n)
    assert scatter > 0.1
    up = assemble("advection-upwind", n, a=-a, bc="dirichlet").toarray()
    assert np.array_equal(up, np.triu(up)) and np.all(np.diag(up) == -a * n)


@pytest.mark.parametrize("nu,L", [(1.0, 1.0), (0.3, 2.0)])
def test_dirichlet_diffusion_tends_to_the_continuous_eigenvalue(nu, L):
    # exact: u_xx on (0, L) with zero ends has eigenvalues -(j pi / L)^2; the second-order
    # scheme is too small in magnitude by nu pi^4 dx^2 / (12 L^4) to leading order
    # (Taylor expansion of sin^2; LeVeque 2007, section 2.10, from memory)
    for n in (50, 100, 200):
        dx = L / (n + 1)
        lam1 = semidiscretisation("diffusion-1d", n, nu=nu, L=L).values.real.max()
        gap = lam1 - (-nu * np.pi ** 2 / L ** 2)
        assert gap == pytest.approx(nu * np.pi ** 4 * dx ** 2 / (12 * L ** 4), rel=1e-3)


def test_sign_conventions():
    up = semidiscretisation("advection-upwind", 64, a=2.0).values
    down = semidiscretisation("advection-upwind", 64, a=-2.0).values
    for v in (up, down):
        assert np.all(v.real <= 1e-12) and v.real.min() == pytest.approx(-2 * 2.0 * 64)
    centred = semidiscretisation("advection-centred", 64, a=2.0).values
    assert np.all(centred.real == 0) and np.abs(centred.imag).max() == pytest.approx(2.0 * 64)
    assert np.all(semidiscretisation("diffusion-2d", 5).values.real < 0)


def test_notes_follow_the_normality_of_each_model():
    assert semidiscretisation("advection-upwind", 50).notes == ()
    assert semidiscretisation("diffusion-1d", 50, bc="periodic").notes == ()
    assert "over-specifies" in semidiscretisation("advection-centred", 50, bc="dirichlet").notes[0]
    strong = semidiscretisation("advection-diffusion", 50, bc="dirichlet", nu=0.01)
    assert "non-normal" in strong.notes[0] and "Peclet" in strong.notes[0]
    mild = semidiscretisation("advection-diffusion", 10, bc="dirichlet", nu=10.0)
    assert mild.notes == ()
    s = semidiscretisation("diffusion-1d", 10)
    assert s.source.startswith("model diffusion-1d") and "closed-form" in s.source


def test_registry_drives_both_functions():
    for kind, info in MODELS.items():
        assert isinstance(info, ModelInfo) and info.description
        assert all(isinstance(p, ParamInfo) for p in info.params.values())
        defaults = {k: p.default for k, p in info.params.items() if k != "n"}
        n = info.params["n"].default
        spec = semidiscretisation(kind, n, **defaults)
        assert spec.count == (n * n if kind == "diffusion-2d" else n)
        assert assemble(kind, n).shape[0] == spec.count
        for name, p in info.params.items():
            for choice in p.choices:
                semidiscretisation(kind, 4, **{name: choice})


@pytest.mark.parametrize("kind,n,params,field", [
    ("wave", 10, {}, "kind"), ("diffusion-1d", 1, {}, "n"), ("diffusion-1d", 2.5, {}, "n"),
    ("diffusion-1d", True, {}, "n"), ("diffusion-1d", 10, {"L": 0}, "L"),
    ("diffusion-1d", 10, {"L": float("nan")}, "L"), ("diffusion-1d", 10, {"nu": -1}, "nu"),
    ("diffusion-1d", 10, {"nu": "1"}, "nu"), ("diffusion-1d", 10, {"a": 1.0}, "a"),
    ("diffusion-1d", 10, {"bc": "neumann"}, "bc"), ("advection-upwind", 10, {"a": True}, "a"),
    ("advection-diffusion", 10, {"advection": "downwind"}, "advection"),
    ("advection-centred", 10, {"dt": 0.1}, "dt"),
])
def test_bad_parameters_name_the_field(kind, n, params, field):
    with pytest.raises(InputError) as e:
        semidiscretisation(kind, n, **params)
    assert e.value.field == field
    with pytest.raises(InputError):
        assemble(kind, n, **params)


def test_size_limits():
    with pytest.raises(LimitExceeded) as e:
        semidiscretisation("diffusion-2d", 1415)
    assert e.value.field == "n"
    with pytest.raises(LimitExceeded):
        semidiscretisation("diffusion-1d", 2_000_001)


def test_american_spelling_is_an_alias():
    us = semidiscretisation("advection-diffusion", 12, advection="centered").values
    assert np.array_equal(us, semidiscretisation("advection-diffusion", 12).values)
