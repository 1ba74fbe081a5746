"""Eigenvalues of matrices and pencils, Gershgorin disks and enclosures.

References used as independent checks: mpmath's eigensolvers at 40 digits, numpy.linalg and
scipy.linalg (LAPACK, called directly), closed-form spectra of the difference matrices, and
Gershgorin's theorem itself (every eigenvalue lies in the union of the disks).
"""
import mpmath
import numpy as np
import pytest
import scipy.linalg
import scipy.sparse
import scipy.sparse.linalg
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from threadpoolctl import threadpool_info

from stepfence.errors import InputError, LimitExceeded
from stepfence.spectra import (ENCLOSURE_CAUTION, Disk, Ellipse, ImagSegment, RealInterval,
                               assemble, dense_eigvals, eigenvalues_of, generalized_from_pair,
                               gershgorin_disks, gershgorin_union, parse_enclosure,
                               semidiscretisation, spectral_radius_disk)
from stepfence.spectra import matrices as matrices_module

FUZZ = settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def _mp_eigenvalues(A) -> np.ndarray:
    with mpmath.workdps(40):
        ev = mpmath.eig(mpmath.matrix(A.tolist()), left=False, right=False)
        return np.array([complex(z) for z in ev])


def _matched_distance(a, b) -> float:
    """Return the largest distance in the best one-to-one pairing of a and b."""
    from scipy.optimize import linear_sum_assignment
    cost = np.abs(np.asarray(a)[:, None] - np.asarray(b)[None, :])
    r, c = linear_sum_assignment(cost)
    assert len(r) == len(a) == len(b)
    return float(cost[r, c].max())


# --- dense -----------------------------------------------------------------------------

def test_dense_nonsymmetric_against_mpmath():
    A = np.random.default_rng(4).standard_normal((8, 8))
    s = eigenvalues_of(A, source="random")
    assert not s.partial and s.source == "random (dense, N=8)"
    assert _matched_distance(s.values, _mp_eigenvalues(A)) <= 1e-12 * np.linalg.norm(A)


def test_dense_hermitian_against_mpmath():
    rng = np.random.default_rng(5)
    B = rng.standard_normal((7, 7)) + 1j * rng.standard_normal((7, 7))
    H = B + B.conj().T
    s = eigenvalues_of(H)
    assert np.all(s.values.imag == 0)  # the symmetric solver was used
    with mpmath.workdps(40):
        ref = np.array([float(x) for x in mpmath.eighe(mpmath.matrix(H.tolist()), eigvals_only=True)])
    assert np.max(np.abs(np.sort(s.values.real) - np.sort(ref))) <= 1e-12 * np.linalg.norm(H)
    assert s.notes == ()  # normal: no caution


def test_dense_eigvals_runs_with_the_thread_limit(monkeypatch):
    seen = []
    real_eigvals = scipy.linalg.eigvals

    def spy(*args, **kw):
        seen.append({i["internal_api"]: i["num_threads"] for i in threadpool_info()})
        return real_eigvals(*args, **kw)

    monkeypatch.setattr(matrices_module.scipy.linalg, "eigvals", spy)
    A = np.random.default_rng(6).standard_normal((20, 20))
    assert np.allclose(np.sort_complex(dense_eigvals(A)), np.sort_complex(np.linalg.eigvals(A)))
    assert matrices_module.DENSE_EIG_THREADS == 1
    assert all(n == 1 for n in seen[0].values())


def test_non_normal_caution():
    up = assemble("advection-upwind", 30, bc="dirichlet").toarray()
    s = eigenvalues_of(up)
    departure = np.linalg.norm(up @ up.T - up.T @ up) / np.linalg.norm(up) ** 2
    assert f"{departure:.2g}" in s.notes[0] and "not normal" in s.notes[0]
    assert eigenvalues_of(assemble("advection-upwind", 30).toarray()).notes == ()  # circulant


def test_sparse_small_goes_dense():
    A = assemble("diffusion-1d", 300)
    s = eigenvalues_of(A)
    assert not s.partial and s.count == 300
    assert _matched_distance(s.values, semidiscretisation("diffusion-1d", 300).values) \
        <= 1e-10 * np.abs(s.values).max()


# --- pencils ---------------------------------------------------------------------------

def _fe_pair(n: int):
    """Linear finite elements for u_t = u_xx on (0, 1), Dirichlet: M u' = K u."""
    h = 1.0 / (n + 1)
    ones = np.ones(n - 1)
    K = scipy.sparse.diags([ones, -2 * np.ones(n), ones], [-1, 0, 1]) / h
    M = scipy.sparse.diags([ones, 4 * np.ones(n), ones], [-1, 0, 1]) * (h / 6)
    # derived by hand from the Toeplitz symbols of K and M:
    # lambda_j = -(6 / h^2) (1 - cos t_j) / (2 + cos t_j), t_j = j pi / (n + 1)
    t = np.arange(1, n + 1) * np.pi / (n + 1)
    return K.tocsr(), M.tocsr(), -(6 / h ** 2) * (1 - np.cos(t)) / (2 + np.cos(t))


def test_generalized_symmetric_pair_against_scipy_and_closed_form():
    K, M, exact = _fe_pair(12)
    s = generalized_from_pair(K.toarray(), M.toarray())
    ref = scipy.linalg.eigvals(K.toarray(), M.toarray())
    assert _matched_distance(s.values, ref) <= 1e-12 * np.abs(ref).max()
    assert _matched_distance(s.values, exact) <= 1e-12 * np.abs(exact).max()
    assert s.notes == ()


def test_generalized_nonsymmetric_pair_against_scipy():
    rng = np.random.default_rng(7)
    K = rng.standard_normal((9, 9))
    M = np.eye(9) + 0.3 * rng.standard_normal((9, 9))
    s = eigenvalues_of(K, M=M)
    ref = scipy.linalg.eigvals(K, M)
    assert _matched_distance(s.values, ref) <= 1e-10 * np.abs(ref).max()
    # the same eigenvalues as M^-1 K, by mpmath
    assert _matched_distance(s.values, _mp_eigenvalues(np.linalg.solve(M, K))) <= 1e-9 * np.abs(ref).max()
    assert "pencil" in s.notes[0]


@pytest.mark.parametrize("M", [np.diag([1.0, 1.0, 0.0]),
                               np.array([[1.0, 2.0, 3.0], [2.0, 4.0, 6.0], [0.0, 1.0, 1.0]])])
def test_singular_mass_matrix_is_refused(M):
    K = -np.eye(3) + np.diag([1.0, 1.0], 1)
    with pytest.raises(InputError) as e:
        eigenvalues_of(K, M=M, mass_field="M")
    assert e.value.field == "M" and "algebraic constraints" in e.value.message


def test_sparse_pencil_extremes_against_closed_form():
    K, M, exact = _fe_pair(4000)
    s = generalized_from_pair(K, M, which=("SR", "LR"))  # a pencil is not taken as symmetric
    assert s.partial and "pencil" in s.notes[-1]
    assert s.values.real.min() == pytest.approx(exact.min(), rel=1e-9)
    assert s.values.real.max() == pytest.approx(exact.max(), rel=1e-8)


# --- sparse extremes (ARPACK) ----------------------------------------------------------

def test_arpack_diffusion_20000_contains_most_negative_eigenvalue():
    n = 20000
    s = eigenvalues_of(assemble("diffusion-1d", n))
    exact = semidiscretisation("diffusion-1d", n).values.real
    assert s.partial and s.notes[0].startswith("partial spectrum")
    assert s.values.real.min() == pytest.approx(exact.min(), rel=1e-8)
    assert s.values.real.max() == pytest.approx(exact.max(), rel=1e-8)
    # every value returned is an eigenvalue (no spurious ones)
    nearest = np.min(np.abs(s.values.real[:, None] - exact[None, :]), axis=1)
    assert nearest.max() <= 1e-9 * np.abs(exact).max()


def test_arpack_nonsymmetric_extremes_against_closed_form():
    n = 6000
    params = {"nu": 0.01, "a": 1.0, "advection": "upwind"}
    s = eigenvalues_of(assemble("advection-diffusion", n, **params))
    exact = semidiscretisation("advection-diffusion", n, **params).values
    scale = np.abs(exact).max()
    assert s.partial and "largest real part" in s.notes[0]  # LR was not searched
    assert np.min(np.abs(s.values[:, None] - exact[None, :]), axis=1).max() <= 1e-9 * scale
    assert s.values.real.min() == pytest.approx(exact.real.min(), rel=1e-9)
    assert np.abs(s.values).max() == pytest.approx(scale, rel=1e-9)
    assert s.values.imag.max() == pytest.approx(exact.imag.max(), rel=1e-9)
    assert s.values.imag.min() == pytest.approx(exact.imag.min(), rel=1e-9)


def test_arpack_non_convergence_keeps_what_converged(monkeypatch):
    real_eigsh = scipy.sparse.linalg.eigsh

    def stingy(*args, **kw):
        vals = real_eigsh(*args, **kw)
        if kw.get("return_eigenvectors"):
            return vals
        raise scipy.sparse.linalg.ArpackNoConvergence("no", vals[:2], None)

    monkeypatch.setattr(matrices_module.scipy.sparse.linalg, "eigsh", stingy)
    s = eigenvalues_of(assemble("diffusion-1d", 3000))
    assert s.partial and any("did not fully converge" in n for n in s.notes)
    exact = semidiscretisation("diffusion-1d", 3000).values.real
    assert np.min(np.abs(s.values.real[:, None] - exact[None, :]), axis=1).max() <= 1e-9 * np.abs(exact).max()


def test_arpack_nothing_converged_is_a_clear_error(monkeypatch):
    def never(*args, **kw):
        raise scipy.sparse.linalg.ArpackNoConvergence("no", np.empty(0), None)

    monkeypatch.setattr(matrices_module.scipy.sparse.linalg, "eigsh", never)
    monkeypatch.setattr(matrices_module.scipy.sparse.linalg, "eigs", never)
    with pytest.raises(InputError, match="Gershgorin"):
        eigenvalues_of(assemble("diffusion-1d", 3000))


def test_search_stopped_while_moving_says_so(monkeypatch):
    # aim the shifts inside the spectrum and allow one refinement: the extreme is not reached
    real_point = matrices_module._gershgorin_point
    monkeypatch.setattr(matrices_module, "_gershgorin_point", lambda c, r, d: 0.9 * real_point(c, r, d))
    monkeypatch.setattr(matrices_module, "REFINE_ROUNDS", 1)
    s = eigenvalues_of(assemble("diffusion-1d", 3000))
    exact = semidiscretisation("diffusion-1d", 3000).values.real
    assert s.values.real.min() > exact.min() * (1 - 1e-3) + 1.0  # indeed short of the extreme
    moving = [n for n in s.notes if "still moving" in n]
    assert moving and "most negative real part" in moving[0] and "Gershgorin" in moving[0]


def test_too_large_to_factor_uses_regular_mode(monkeypatch):
    monkeypatch.setattr(matrices_module, "SHIFT_INVERT_MAX_FILL", 0)
    monkeypatch.setattr(matrices_module, "SHIFT_INVERT_COLAMD_MAX_N", 0)
    d = -np.arange(1.0, 3001.0) ** 1.5  # well separated extremes: regular mode converges
    A = scipy.sparse.diags(d, format="csr") + scipy.sparse.diags(np.full(2999, 1e-3), 1)
    s = eigenvalues_of(A, partial_count=8)
    assert s.partial and s.values.real.min() == pytest.approx(d.min(), rel=1e-10)


def test_option_and_matrix_checks():
    A = np.eye(3)
    for kw, field in ((dict(method="qr"), "method"), (dict(partial_count=0), "partial_count"),
                      (dict(partial_count=True), "partial_count"), (dict(which=("XX",)), "which"),
                      (dict(which=()), "which")):
        with pytest.raises(InputError) as e:
            eigenvalues_of(A, **kw)
        assert e.value.field == field
    with pytest.raises(InputError, match="square"):
        eigenvalues_of(np.zeros((2, 3)))
    with pytest.raises(InputError, match="row 1, column 2"):
        eigenvalues_of(np.array([[1.0, np.inf], [0.0, 1.0]]))
    with pytest.raises(InputError, match="list of eigenvalues"):
        eigenvalues_of(np.ones(3))
    with pytest.raises(InputError) as e:
        eigenvalues_of(A, M=np.eye(2))
    assert e.value.field == "mass"
    with pytest.raises(LimitExceeded):
        eigenvalues_of(scipy.sparse.identity(5000, format="csr"), method="dense")


# --- Gershgorin ------------------------------------------------------------------------

def _inside_union(values, centers, radii, slack) -> bool:
    d = np.abs(values[:, None] - centers[None, :]) - radii[None, :]
    return bool(np.all(d.min(axis=1) <= slack))


@FUZZ
@given(n=st.integers(1, 10), seed=st.integers(0, 2 ** 32 - 1), complex_=st.booleans(),
       spread=st.floats(0, 6))
def test_gershgorin_disks_contain_numpy_eigenvalues(n, seed, complex_, spread):
    rng = np.random.default_rng(seed)
    A = rng.standard_normal((n, n)) * 10.0 ** rng.uniform(-spread, spread, (n, n))
    if complex_:
        A = A + 1j * rng.standard_normal((n, n))
    ev = np.linalg.eigvals(A)
    slack = 1e-9 * max(np.abs(A).sum(axis=1).max(), 1e-300)
    for scaled in (False, True):
        for M in (A, scipy.sparse.csr_matrix(A)):
            c, r = gershgorin_disks(M, scaled=scaled)
            assert np.all(r >= 0) and _inside_union(ev, c, r, slack)
    c0, r0 = gershgorin_disks(A, scaled=False)
    c1, r1 = gershgorin_disks(A, scaled=True)
    assert np.max(np.abs(c1) + r1) <= np.max(np.abs(c0) + r0) * (1 + 1e-12)


def test_scaling_tightens_a_badly_scaled_matrix():
    D = np.diag(10.0 ** np.arange(6))
    T = assemble("diffusion-1d", 6, L=7.0).toarray()
    A = np.linalg.solve(D, T @ D)  # same eigenvalues as T, rows badly scaled
    for M in (A, scipy.sparse.csr_matrix(A)):
        _, plain = gershgorin_disks(M, scaled=False)
        _, tight = gershgorin_disks(M, scaled=True)
        # T's own disks have radius <= 2; the best similarity gives rho(|offdiag T|) = 2 cos(pi/7)
        assert tight.max() <= 2 * np.cos(np.pi / 7) * (1 + 1e-3) < 2.0 < plain.max()
        assert tight.max() >= 2 * np.cos(np.pi / 7) * (1 - 1e-12)  # no similarity does better


def test_gershgorin_union_and_spectral_radius_disk():
    A = assemble("diffusion-1d", 50).toarray()
    disks = gershgorin_union(A)
    assert len(disks) == len({(d.center, d.radius) for d in disks}) <= 50
    plain_c, plain_r = gershgorin_disks(A, scaled=False)
    assert max(abs(d.center) + d.radius for d in disks) <= np.max(np.abs(plain_c) + plain_r)
    ev = np.linalg.eigvalsh(A)
    assert all(any(abs(v - d.center) <= d.radius * (1 + 1e-12) for d in disks) for v in ev)
    rho = spectral_radius_disk(np.abs(ev).max())
    assert rho.center == 0 and rho.contains_origin()


# --- enclosures ------------------------------------------------------------------------

def test_disk_and_ellipse_boundaries_hit_their_axis_points_exactly():
    d = Disk(-2 + 1j, 3.0)
    b = d.boundary(10)
    assert len(b) == 10
    for p in (1 + 1j, -2 + 4j, -5 + 1j, -2 - 2j):
        assert p in b.tolist()
    assert np.allclose(np.abs(b - d.center), 3.0, rtol=0, atol=1e-15 * 4)
    assert np.all(np.diff(np.unwrap(np.angle(b - d.center))) > 0)  # counter-clockwise
    e = Ellipse(-1.0, 2.0, 0.5)
    for p in (1, -1 + 0.5j, -3, -1 - 0.5j):
        assert p in e.boundary(7).tolist()
    x, y = (e.boundary(64) - e.center).real, (e.boundary(64) - e.center).imag
    assert np.allclose((x / 2.0) ** 2 + (y / 0.5) ** 2, 1.0)
    assert e.point(0.25) == e.point(1.25) == -1 + 0.5j


def test_segments():
    r = RealInterval(-4.0, 0.1)
    assert r.boundary(5)[[0, -1]].tolist() == [-4, 0.1]
    assert r.point(0.5) == 0.1 and r.point(0.0) == -4.0 and r.contains_origin()
    s = ImagSegment(0.7, 3.0)
    b = s.boundary(3)
    assert b[[0, -1]].tolist() == [0.7j, 3j] and b[1] == pytest.approx(1.85j) and not s.contains_origin()
    assert s.point(0.5) == 3j


@pytest.mark.parametrize("shape,inside", [
    (Disk(3, 3), True), (Disk(3, 2.9), False), (Ellipse(2j, 1, 2), True),
    (Ellipse(2j, 1, 1.99), False), (Ellipse(2j, 0, 2), True), (Ellipse(2j, 0.0, 1.0), False),
    (Ellipse(0, 0, 0), True), (RealInterval(0, 1), True), (ImagSegment(-1, -0.5), False),
])
def test_contains_origin(shape, inside):
    assert shape.contains_origin() is inside
    assert shape.caution == ENCLOSURE_CAUTION and shape.describe()


def test_enclosure_validation():
    for make, field in ((lambda: Disk(0, -1), "radius"), (lambda: Disk(np.nan, 1), "center"),
                        (lambda: RealInterval(2, 1), "lo"), (lambda: Ellipse(0, 1, -1), "semi_imag"),
                        (lambda: ImagSegment(0, np.inf), "hi"), (lambda: Disk(0, 1).boundary(3), "n")):
        with pytest.raises(InputError) as e:
            make()
        assert e.value.field == field


def test_parse_enclosure():
    assert parse_enclosure({"kind": "disk", "center": [-1, 2], "radius": 3}) == Disk(-1 + 2j, 3)
    assert parse_enclosure({"kind": "ellipse", "center": -1, "semi_real": 2, "semi_imag": 1}) \
        == Ellipse(-1, 2, 1)
    assert parse_enclosure({"kind": "spectral-radius", "rho": 5}) == Disk(0, 5)
    assert parse_enclosure({"kind": "imag-segment", "lo": -2, "hi": 2}) == ImagSegment(-2, 2)
    for spec, field in (({"kind": "square"}, "enc.kind"), ({"kind": "disk", "center": 0}, "enc.radius"),
                        ({"kind": "disk", "center": 0, "radius": "3"}, "enc.radius"),
                        ({"kind": "disk", "center": [0], "radius": 1}, "enc.center"),
                        ({"kind": "disk", "center": 0, "radius": -1}, "enc.radius"),
                        ({"kind": "real-interval", "lo": 1, "hi": 0}, "enc.lo"),
                        ({"kind": "real-interval", "lo": 0, "hi": 1, "mid": 0}, "enc.mid"),
                        ([1, 2], "enc")):
        with pytest.raises(InputError) as e:
            parse_enclosure(spec, field="enc")
        assert e.value.field == field
