"""Eigenvalues of a Jacobian, or of a pencil M u' = K u: all of them (LAPACK) or the extremes (ARPACK).

Dense problems (N <= MAX_DENSE_N, and sparse ones up to DENSE_FROM_SPARSE_N) get every
eigenvalue. Larger sparse problems get the extreme eigenvalues in a few directions of the
complex plane by shift-invert ARPACK, aimed at the extreme points of the Gershgorin disks; the
result is marked partial, with a caution note saying what may be missing.

References
----------
.. [1] R. B. Lehoucq, D. C. Sorensen, C. Yang, "ARPACK Users' Guide", SIAM 1998, ch. 3
   (shift-invert spectral transformation).
.. [2] R. S. Varga, "Gershgorin and His Circles", Springer 2004, ch. 1.
.. [3] E. E. Osborne, "On pre-conditioning of matrices", J. ACM 7 (1960) 338-345.
.. [4] C. R. Johnson, "Numerical determination of the field of values of a general complex
   matrix", SIAM J. Numer. Anal. 15 (1978) 595-602.
(Chapter and page numbers from memory.)
"""
from __future__ import annotations

import numpy as np
import scipy.linalg
import scipy.sparse
import scipy.sparse.csgraph
import scipy.sparse.linalg
from threadpoolctl import threadpool_limits

from .. import limits
from ..errors import InputError, LimitExceeded
from .spectrum import Spectrum

# One BLAS thread for dense eigenvalue problems: on these 2-core machines the nonsymmetric
# eigenproblem at N = 2000 was measured faster with one thread than with the default two
# (see the report of the spectra package; threaded LAPACK's Hessenberg reduction gains
# little and the two threads contend with the server's other work).
DENSE_EIG_THREADS = 1
DENSE_FROM_SPARSE_N = 2000
METHODS = ("auto", "dense", "sparse")
DIRECTIONS = {"LM": "largest modulus", "SR": "most negative real part",
              "LR": "largest real part", "LI": "largest imaginary part",
              "SI": "most negative imaginary part"}
DEFAULT_DIRECTIONS = ("LM", "SR", "LI", "SI")
MAX_PARTIAL_COUNT = 500
HERMITIAN_RTOL = 1e-14          # |A - A^H| <= this * max|a_ij| counts as Hermitian (rounding)
NON_NORMAL_RTOL = 1e-8          # ||AA^H - A^HA||_F / ||A||_F^2 above this earns a caution
NORMALITY_CHECK_MAX_NNZ = 2_000_000
SINGULAR_MASS_FACTOR = 100.0    # |beta| <= this * N * eps * ||M||_F: M numerically singular
DEDUPE_RTOL = 1e-10             # the same eigenvalue found in two directions, relative to scale
SHIFT_OFFSET = 1e-7             # shifts sit this far (relative) outside the point they aim at
PROBE_COUNT = 4
ROUGH_TOL = 1e-2                # rough extremes, only to aim a shift when Gershgorin is loose
REFINE_ROUNDS = 3
# ARPACK's cost per restart is about N * ncv^2 flops; maxiter is set from these budgets so that
# a direction that does not converge gives up in seconds rather than minutes.
PROBE_WORK = 3e8
FULL_WORK = 3e10
RESTART_WORK = 3e9              # caps the eigenvalues sought per direction: N (2k + 1)^2 <= this
ROUGH_WORK = 2e8
# One BLAS thread for ARPACK too: k = 64 shift-invert at N = 20000 took 1.3 s with one thread
# and 10.7 s with two on a loaded 2-core machine (orthogonalisation of short vectors).
ARPACK_THREADS = 1
PERRON_ITERATIONS = 100
# Shift-invert needs an LU factor of K - sigma M. With a reverse Cuthill-McKee ordering and no
# column reordering the factor stays inside the band, so N * (3 * bandwidth + 1) bounds its
# size; admit it up to this many entries. Beyond, COLAMD is tried up to
# SHIFT_INVERT_COLAMD_MAX_N unknowns (a 300 x 300 five-point Laplacian took 0.4 s and 9e6
# entries), and larger problems use ARPACK's regular mode within REGULAR_MODE_WORK flops.
SHIFT_INVERT_MAX_FILL = 30_000_000
SHIFT_INVERT_COLAMD_MAX_N = 100_000
REGULAR_MODE_WORK = 3e10

PARTIAL_NOTE = (
    "partial spectrum: only the extreme eigenvalues in the directions {directions} were "
    "computed ({count} eigenvalues of N={n}); interior eigenvalues are missing and can still "
    "bind for schemes whose stability region is not convex{unsearched}.")
HERMITIAN_PARTIAL_NOTE = (
    "partial spectrum: the matrix is symmetric (Hermitian), so its eigenvalues are real; only "
    "the {count} most negative and largest of N={n} were computed. They span the whole "
    "interval, but interior eigenvalues can still bind for schemes whose stability interval "
    "has gaps.")
NON_NORMAL_NOTE = (
    "the matrix is not normal (||AA*-A*A||/||A||^2 = {departure:.2g}): its eigenvalues can "
    "understate how much errors grow for many steps, so a step that is stable for every "
    "eigenvalue may still amplify them strongly. Look at pseudospectra or check by stepping.")
PENCIL_NOTE = ("eigenvalues of the pencil (K, M), that is of M^-1 K; how far they describe "
               "transient growth depends on the norm M defines, which was not checked.")


# --- checks ----------------------------------------------------------------------------

def check_order(shape, field: str, name: str = "the matrix", sparse: bool = False,
                nnz: int = 0) -> int:
    """Return N of a square N x N shape, refusing other shapes and orders over the limits."""
    if len(shape) != 2 or shape[0] != shape[1] or shape[0] < 1:
        shown = "x".join(str(s) for s in shape) if len(shape) else "a scalar"
        raise InputError(field, f"{name} is {shown}; a Jacobian is a square matrix")
    n = int(shape[0])
    if sparse:
        if n > limits.MAX_SPARSE_N:
            raise LimitExceeded(field, f"sparse matrix of order {n}; at most {limits.MAX_SPARSE_N}")
        if nnz > limits.MAX_SPARSE_NNZ:
            raise LimitExceeded(field, f"{nnz} stored entries; at most {limits.MAX_SPARSE_NNZ}")
    elif n > limits.MAX_DENSE_N:
        raise LimitExceeded(field, f"dense matrix of order {n}; at most {limits.MAX_DENSE_N} "
                                   f"(store a larger one as sparse: MatrixMarket coordinate or "
                                   f"scipy .npz)")
    return n


def checked_dense(arr, field: str, name: str = "the matrix") -> np.ndarray:
    """Return arr as a square float64 or complex128 matrix within MAX_DENSE_N, all finite.

    Raises
    ------
    InputError
        Not numbers, a 1-D list (with a hint to use the eigenvalue input), not square, or
        NaN/infinite entries (the first one's row and column are named).
    """
    try:
        arr = np.asarray(arr)
    except (ValueError, TypeError):
        raise InputError(field, f"{name} is not a rectangular array of numbers") from None
    if arr.dtype.kind not in "iufc":
        raise InputError(field, f"{name} holds {arr.dtype} values; numbers expected")
    if arr.ndim == 1:
        raise InputError(field, f"{name} is a 1-dimensional array: that is a list of "
                                f"eigenvalues; use the eigenvalue input")
    check_order(arr.shape, field, name)
    out = np.array(arr, dtype=np.complex128 if arr.dtype.kind == "c" else np.float64)
    bad = ~np.isfinite(out)
    if bad.any():
        r, c = np.argwhere(bad)[0]
        raise InputError(field, f"{name} has {int(bad.sum())} entries that are NaN or infinite, "
                                f"the first at row {r + 1}, column {c + 1}")
    return out


def _checked_matrix(A, field: str):
    """Return A as a dense checked array or a float64/complex128 csr_matrix."""
    if not scipy.sparse.issparse(A):
        return checked_dense(A, field)
    if A.dtype.kind not in "iufc":
        raise InputError(field, f"the matrix holds {A.dtype} values; numbers expected")
    csr = scipy.sparse.csr_matrix(A, dtype=np.complex128 if A.dtype.kind == "c" else np.float64)
    check_order(csr.shape, field, sparse=True, nnz=csr.nnz)
    csr.sum_duplicates()
    if not np.all(np.isfinite(csr.data)):
        raise InputError(field, f"the matrix has {int((~np.isfinite(csr.data)).sum())} entries "
                                f"that are NaN or infinite")
    return csr


def is_hermitian(A) -> bool:
    """Return True when A equals its conjugate transpose up to rounding (HERMITIAN_RTOL)."""
    if scipy.sparse.issparse(A):
        scale = abs(A).max() if A.nnz else 0.0
        diff = A - A.conj().T
        return bool(scale == 0 or (abs(diff).max() if diff.nnz else 0.0) <= HERMITIAN_RTOL * scale)
    scale = np.abs(A).max()
    return bool(scale == 0 or np.abs(A - A.conj().T).max() <= HERMITIAN_RTOL * scale)


def departure_from_normality(A) -> float | None:
    """Return ||A A^H - A^H A||_F / ||A||_F^2 (0 for a normal matrix); None when too costly."""
    if scipy.sparse.issparse(A):
        if A.nnz > NORMALITY_CHECK_MAX_NNZ:
            return None
        norm2 = scipy.sparse.linalg.norm(A) ** 2
        comm = A @ A.conj().T - A.conj().T @ A
        num = scipy.sparse.linalg.norm(comm) if comm.nnz else 0.0
    else:
        norm2 = np.linalg.norm(A) ** 2
        with threadpool_limits(limits=DENSE_EIG_THREADS):
            num = np.linalg.norm(A @ A.conj().T - A.conj().T @ A)
    return 0.0 if norm2 == 0 else float(num / norm2)


# --- dense -----------------------------------------------------------------------------

def dense_eigvals(A, threads: int | None = None, hermitian: bool | None = None) -> np.ndarray:
    """Return all eigenvalues of the dense matrix A as complex128.

    Parameters
    ----------
    A : ndarray, shape (N, N)
        A finite square matrix.
    threads : int or None
        BLAS/LAPACK threads for the call (threadpoolctl); None means DENSE_EIG_THREADS.
    hermitian : bool or None
        Use the symmetric solver (real eigenvalues); None detects it (is_hermitian).

    Returns
    -------
    ndarray of complex128, shape (N,)
    """
    A = np.asarray(A)
    if hermitian is None:
        hermitian = is_hermitian(A)
    with threadpool_limits(limits=DENSE_EIG_THREADS if threads is None else threads):
        if hermitian:
            return scipy.linalg.eigvalsh(A, check_finite=False).astype(np.complex128)
        return scipy.linalg.eigvals(A, check_finite=False).astype(np.complex128)


def _singular_mass(field: str, count: int, n: int) -> InputError:
    return InputError(field, f"the mass matrix M is singular (or nearly): the pencil has {count} "
                             f"infinite eigenvalue(s) of {n}. Infinite eigenvalues mean "
                             f"algebraic constraints (a differential-algebraic system), not an "
                             f"ODE u' = M^-1 K u; stepfence refuses to give step limits for it")


def _dense_pencil(K: np.ndarray, M: np.ndarray, mass_field: str, threads) -> tuple[np.ndarray, bool]:
    """Return (eigenvalues of K v = lambda M v, used_symmetric_route)."""
    n = K.shape[0]
    tiny = SINGULAR_MASS_FACTOR * n * np.finfo(float).eps
    with threadpool_limits(limits=DENSE_EIG_THREADS if threads is None else threads):
        if is_hermitian(K) and is_hermitian(M):
            m_eigs = scipy.linalg.eigvalsh(M, check_finite=False)
            m_scale = np.abs(m_eigs).max()
            if np.any(np.abs(m_eigs) <= tiny * m_scale):
                raise _singular_mass(mass_field, int(np.sum(np.abs(m_eigs) <= tiny * m_scale)), n)
            if m_eigs.min() > 0:
                return scipy.linalg.eigh(K, M, eigvals_only=True,
                                         check_finite=False).astype(np.complex128), True
        (alpha, beta) = scipy.linalg.eigvals(K, M, homogeneous_eigvals=True, check_finite=False)
    infinite = np.abs(beta) <= tiny * np.linalg.norm(M)
    if infinite.any():
        raise _singular_mass(mass_field, int(infinite.sum()), n)
    return (alpha / beta).astype(np.complex128), False


# --- Gershgorin -----------------------------------------------------------------------

def _row_disks(absA, diag: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Return the radii of the row disks of D^-1 A D, D = diag(d), from |A| (dense or sparse)."""
    return np.asarray(absA @ d).ravel() / d - np.abs(diag)


def _perron_scaling(off_abs, iterations: int = PERRON_ITERATIONS) -> np.ndarray:
    """Return an approximate Perron vector of |A| off the diagonal, as scaling factors d.

    With d the Perron vector every row disk of D^-1 A D has radius rho(|offdiag A|), the least
    largest radius any diagonal similarity achieves (Varga [2]_, ch. 1). Power iteration on
    I + |offdiag A| converges for any pattern; fewer iterations only loosen the disks, which
    stay valid for every positive d.
    """
    d = np.ones(off_abs.shape[0])
    for _ in range(iterations):
        d = d + np.asarray(off_abs @ d).ravel()
        d /= d.max()
    return np.maximum(d, 1e-150)


def _disk_extent(centers: np.ndarray, radii: np.ndarray) -> tuple[float, float]:
    return float(np.max(np.abs(centers) + radii)), float(radii.sum())


def gershgorin_disks(A, scaled: bool = True) -> tuple[np.ndarray, np.ndarray]:
    """Return the centres and radii of the row Gershgorin disks of A [2]_.

    Every eigenvalue of A lies in the union of the disks |z - a_ii| <= sum_{j != i} |a_ij|,
    and also in that of any diagonal similarity D^-1 A D, which has the same centres.

    Parameters
    ----------
    A : ndarray or scipy.sparse matrix, shape (N, N)
    scaled : bool
        Tighten by a diagonal similarity: the approximate Perron vector of |A| off the
        diagonal (dense and sparse), and for dense A also LAPACK's balancing
        (scipy.linalg.matrix_balance [3]_). The candidate whose disks reach least far from
        the origin is kept, the unscaled disks included, so scaling never loosens the bound.

    Returns
    -------
    centers : ndarray of complex128, shape (N,)
    radii : ndarray of float64, shape (N,)
    """
    A = _checked_matrix(A, "matrix")
    diag = A.diagonal().astype(np.complex128)
    absA = abs(A)
    ones = np.ones(diag.size)
    best = np.maximum(_row_disks(absA, diag, ones), 0.0)
    if not scaled or diag.size == 1 or not best.any():
        return diag, best
    off_abs = absA - scipy.sparse.diags(np.abs(diag)) if scipy.sparse.issparse(A) \
        else absA - np.diag(np.abs(diag))
    scalings = [_perron_scaling(off_abs)]
    if not scipy.sparse.issparse(A):
        scalings.append(scipy.linalg.matrix_balance(A, permute=False, separate=True)[1][0])
    for d in scalings:
        radii = np.maximum(_row_disks(absA, diag, d), 0.0)
        if np.all(np.isfinite(radii)) and _disk_extent(diag, radii) < _disk_extent(diag, best):
            best = radii
    return diag, best


# --- sparse extremes -------------------------------------------------------------------

class _Factor:
    """LU factor of a sparse matrix with a known bound on its size, or None when too costly."""

    def __init__(self, lu, perm):
        self.lu, self.perm = lu, perm

    def solve(self, b: np.ndarray) -> np.ndarray:
        if self.perm is None:
            return self.lu.solve(b)
        y = self.lu.solve(b[self.perm])
        x = np.empty_like(y)
        x[self.perm] = y
        return x


def _factor(B) -> _Factor | None:
    """Return an LU factor of B within the fill bound, or None (too large or singular)."""
    n = B.shape[0]
    B = scipy.sparse.csr_matrix(B)
    perm = scipy.sparse.csgraph.reverse_cuthill_mckee(B, symmetric_mode=False)
    Bp = B[perm][:, perm].tocoo()
    bandwidth = int(np.abs(Bp.row - Bp.col).max()) if Bp.nnz else 0
    try:
        if n * (3 * bandwidth + 1) <= SHIFT_INVERT_MAX_FILL:
            return _Factor(scipy.sparse.linalg.splu(Bp.tocsc(), permc_spec="NATURAL"), perm)
        if n <= SHIFT_INVERT_COLAMD_MAX_N:
            return _Factor(scipy.sparse.linalg.splu(B.tocsc()), None)
    except RuntimeError:  # exactly singular: the shift is an eigenvalue
        return None
    return None


def _v0(n: int, dtype) -> np.ndarray:
    """Return a fixed ARPACK start vector, so that results repeat run to run."""
    v = np.random.default_rng(20240601).standard_normal(n)
    return v.astype(dtype)


def _arpack(op, k: int, which: str, hermitian: bool, work: float, tol: float = 0.0,
            vectors: bool = False):
    """Return (eigenvalues, converged[, vectors]) of ARPACK on op within about `work` flops.

    What converged is kept when ARPACK stops early; nothing is raised.
    """
    n = op.shape[0]
    solver = scipy.sparse.linalg.eigsh if hermitian else scipy.sparse.linalg.eigs
    k = min(k, n - 1 if hermitian else n - 2)
    ncv = min(n, max(2 * k + 1, 20))
    maxiter = int(np.clip(work / (n * ncv * ncv), 3, 1000))
    empty = np.empty(0, dtype=np.complex128)
    try:
        with threadpool_limits(limits=ARPACK_THREADS):
            out = solver(op, k=k, which=which, tol=tol, maxiter=maxiter, ncv=ncv,
                         v0=_v0(n, op.dtype), return_eigenvectors=vectors)
        ok = True
    except scipy.sparse.linalg.ArpackNoConvergence as e:
        out, ok = ((e.eigenvalues, e.eigenvectors) if vectors else e.eigenvalues), False
    except scipy.sparse.linalg.ArpackError:
        out, ok = ((empty, None) if vectors else empty), False
    if vectors:
        return np.asarray(out[0], dtype=np.complex128), ok, out[1]
    return np.asarray(out, dtype=np.complex128), ok


class _Problem:
    """K v = lambda M v (M None for the standard problem) with what ARPACK needs of it."""

    def __init__(self, K, M):
        self.K, self.M, self.n = K, M, K.shape[0]
        self.real = K.dtype.kind != "c" and (M is None or M.dtype.kind != "c")
        self.hermitian = M is None and is_hermitian(K)
        self._mass_factor = None

    def near(self, sigma: complex, k: int, work: float) -> tuple[np.ndarray, bool] | None:
        """Return the eigenvalues nearest sigma by shift-invert [1]_, or None without a factor."""
        real_shift = self.real and sigma.imag == 0
        shift = sigma.real if real_shift else sigma
        K = self.K if real_shift else self.K.astype(np.complex128)
        M = scipy.sparse.identity(self.n, format="csr") if self.M is None else self.M
        factor = _factor(K - shift * M)
        if factor is None:
            return None
        dtype = np.float64 if real_shift else np.complex128
        mass = self.M
        op = scipy.sparse.linalg.LinearOperator(
            (self.n, self.n), dtype=dtype,
            matvec=lambda x: factor.solve(np.asarray(x if mass is None else mass @ x, dtype=dtype)))
        mu, ok = _arpack(op, k, "LM", self.hermitian and real_shift, work)
        mu = mu[mu != 0]
        return shift + 1.0 / mu, ok

    def _operator(self):
        """Return M^-1 K as something ARPACK can multiply by, or None if M cannot be factored."""
        if self.M is None:
            return self.K
        if self._mass_factor is None:
            self._mass_factor = _factor(self.M)
        if self._mass_factor is None:
            return None
        f, K = self._mass_factor, self.K
        return scipy.sparse.linalg.LinearOperator(
            (self.n, self.n), dtype=np.result_type(K.dtype, self.M.dtype),
            matvec=lambda x: f.solve(K @ x))

    def regular(self, k: int, direction: str, tol: float, work: float) -> tuple[np.ndarray, bool]:
        """Return extreme eigenvalues by ARPACK's regular mode within about `work` flops."""
        op = self._operator()
        if op is None:
            return np.empty(0, dtype=np.complex128), False
        which = {"SR": "SA", "LR": "LA"}.get(direction, direction) if self.hermitian else direction
        if self.real and not self.hermitian and direction == "SI":
            which = "LI"  # for real matrices ARPACK's LI and SI mean largest and smallest |imag|
        return _arpack(op, k, which, self.hermitian, work, tol)

    def rough_aim(self, direction: str) -> complex | None:
        """Return a point near the extreme in the direction, to aim a shift when disks are loose.

        For a standard problem and a half-plane direction u, the extreme point of the numerical
        range {v*Kv : |v| = 1} in that direction is v*Kv for v the top eigenvector of the
        Hermitian matrix (conj(u) K + u K*)/2 (Johnson's construction [4]_); it is exact for a
        normal K and lies beyond the eigenvalues otherwise. Else a rough regular-mode extreme.
        """
        if self.M is None and direction != "LM":
            u = _outward(direction, 0)
            H = (np.conj(u) * self.K + u * self.K.conj().T) * 0.5
            if self.real and u.imag == 0:
                H = H.real
            _, _, v = _arpack(H, 1, "LA", True, ROUGH_WORK, ROUGH_TOL, vectors=True)
            if v is not None and v.size:
                v = v[:, 0]
                return complex(np.vdot(v, self.K @ v) / np.vdot(v, v))
            return None
        rough, _ = self.regular(1, direction, ROUGH_TOL, ROUGH_WORK)
        if rough.size == 0:
            return None
        theta = complex(rough[np.argmax(_score(rough, direction))])
        return theta * (1 + ROUGH_TOL) if direction == "LM" else theta


_SCORES = {"LM": np.abs, "SR": lambda v: -v.real, "LR": lambda v: v.real,
           "LI": lambda v: v.imag, "SI": lambda v: -v.imag}


def _score(values: np.ndarray, direction: str) -> np.ndarray:
    """Return how far each value lies in the direction (larger is more extreme)."""
    return _SCORES[direction](np.asarray(values))


def _outward(direction: str, point: complex) -> complex:
    if direction == "LM":
        return point / abs(point) if point != 0 else 1.0
    return {"SR": -1.0, "LR": 1.0, "LI": 1j, "SI": -1j}[direction]


def _gershgorin_point(centers: np.ndarray, radii: np.ndarray, direction: str) -> complex:
    """Return the point of the union of disks farthest in the direction."""
    if direction == "LM":
        i = int(np.argmax(np.abs(centers) + radii))
        return complex(centers[i] + radii[i] * _outward("LM", centers[i]))
    u = _outward(direction, 0)
    i = int(np.argmax((centers * np.conj(u)).real + radii))
    return complex(centers[i] + radii[i] * u)


def _extreme(problem: _Problem, direction: str, aim: complex, k: int, scale: float):
    """Return (eigenvalues near the extreme in the direction, status), or None if the problem
    is too large to factor for shift-invert.

    status is "converged"; "partial" (ARPACK stopped early, what converged is kept); "moving"
    (the extreme still moved outward when the search stopped); or "failed" (nothing found).
    """

    # Just outside the point, relative to its own size (an eigenvalue at 0 next to one at -10
    # must not look clustered from a shift 1e-7 * ||A|| away) and below 1/N^2: the extremes of
    # a discretised operator of order N lie about |lambda| / N^2 apart.
    rel = min(SHIFT_OFFSET, 1.0 / problem.n ** 2)

    least = 1e3 * np.finfo(float).eps * scale  # closer, rounding in the factor would hide the gap

    def beside(point: complex) -> complex:
        return point + max(rel * abs(point), least) * _outward(direction, point)

    found = None
    for attempt in range(2):
        if attempt == 1:
            # the disks are loose and the extremes clustered: aim nearer, then probe again
            aim = problem.rough_aim(direction)
            if aim is None:
                break
        probe = problem.near(beside(aim), PROBE_COUNT, PROBE_WORK)
        if probe is None:
            return None
        if probe[0].size:
            found = probe[0]
            break
    if found is None:
        return np.empty(0, dtype=np.complex128), "failed"
    status = "moving"
    for _ in range(REFINE_ROUNDS):
        theta = complex(found[np.argmax(_score(found, direction))])
        sigma = beside(theta)
        full = problem.near(sigma, k, FULL_WORK)
        if full is None:
            break
        found = np.concatenate([found, full[0]])
        if _score(found, direction).max() <= _score(np.array([sigma]), direction)[0]:
            # nothing lies beyond the shift: it sat beside the extreme
            status = "converged" if full[1] else "partial"
            break
    return found, status


def _dedupe(values: np.ndarray, tol: float) -> np.ndarray:
    """Return values with those within tol of an earlier one removed (input order kept)."""
    kept: list[complex] = []
    for v in values:
        if not kept or np.min(np.abs(np.asarray(kept) - v)) > tol:
            kept.append(v)
    return np.asarray(kept, dtype=np.complex128)


def _lumped_disks(K, M) -> tuple[np.ndarray, np.ndarray]:
    """Return Gershgorin disks of diag(m)^-1 K, m the lumped mass: an aim, not an enclosure."""
    m = np.asarray(M.sum(axis=1)).ravel()
    if not np.all(np.abs(m) > 0):
        m = M.diagonal()
    if not np.all(np.abs(m) > 0):
        m = np.ones(K.shape[0])
    return gershgorin_disks(scipy.sparse.diags(1.0 / m) @ K)


def _sparse_extremes(K, M, k: int, which: tuple[str, ...], field: str, mass_field: str):
    """Return (values, notes, hermitian) of extreme eigenvalues of a large sparse problem."""
    problem = _Problem(K, M)
    if M is not None and problem._operator() is None:
        raise InputError(mass_field, "the mass matrix M cannot be factored within the memory "
                                     "bound, or it is singular (algebraic constraints, not an ODE)")
    centers, radii = gershgorin_disks(K) if M is None else _lumped_disks(K, M)
    scale = float(np.max(np.abs(centers) + radii)) or 1.0
    if problem.hermitian:
        directions = ("SR", "LR")
    elif problem.real:
        # a real matrix's spectrum is symmetric about the real axis: LI also gives SI
        directions = tuple(dict.fromkeys("LI" if d == "SI" else d for d in which))
    else:
        directions = tuple(which)
    pieces, notes = [], []
    for d in directions:
        aim = _gershgorin_point(centers, radii, d)
        if M is not None:
            # lumped-mass disks enclose nothing: aim at whichever guess lies farther out
            rough = problem.rough_aim(d)
            if rough is not None and _score(np.array([rough]), d)[0] > _score(np.array([aim]), d)[0]:
                aim = rough
        got = _extreme(problem, d, aim, k, scale)
        if got is None:
            values, ok = problem.regular(k, d, 0.0, REGULAR_MODE_WORK)
            if not ok:
                notes.append(f"the matrix is too large to factor for shift-invert, and ARPACK's "
                             f"regular mode did not converge for the {DIRECTIONS[d]} direction "
                             f"within its work bound: {values.size} eigenvalue(s) kept there")
        else:
            values, status = got
            if status in ("partial", "failed"):
                notes.append(f"ARPACK did not fully converge for the {DIRECTIONS[d]} direction; "
                             f"the {values.size} eigenvalue(s) that did are kept")
            elif status == "moving":
                bound = _gershgorin_point(centers, radii, d) if M is None else None
                where = "" if bound is None else (
                    f" (the Gershgorin disks reach {bound.real:.6g}{bound.imag:+.6g}i)")
                notes.append(f"the search for the {DIRECTIONS[d]} stopped while the extreme was "
                             f"still moving outward: eigenvalues farther out may be missing"
                             f"{where}, and a step limit from these values can be too large")
        pieces.append(values)
    values = np.concatenate(pieces) if pieces else np.empty(0, dtype=np.complex128)
    if problem.real and values.size:
        values = np.concatenate([values, np.conj(values)])
    if problem.hermitian:
        values = values.real.astype(np.complex128)
    values = _dedupe(values, DEDUPE_RTOL * scale)
    if values.size == 0:
        raise InputError(field, f"ARPACK found no eigenvalues of this order-{K.shape[0]} matrix "
                                f"in any direction; use its Gershgorin disks as an enclosure")
    return values, notes, problem.hermitian


# --- the entry point -------------------------------------------------------------------

def _checked_options(method, partial_count, which) -> tuple[str, int, tuple[str, ...]]:
    if method not in METHODS:
        raise InputError("method", f"unknown method {method!r}", expected="'auto', 'dense' or 'sparse'")
    if isinstance(partial_count, bool) or not isinstance(partial_count, (int, np.integer)) \
            or not 1 <= partial_count <= MAX_PARTIAL_COUNT:
        raise InputError("partial_count", f"must be an integer from 1 to {MAX_PARTIAL_COUNT}")
    which = (which,) if isinstance(which, str) else tuple(which)
    unknown = [w for w in which if w not in DIRECTIONS]
    if not which or unknown:
        raise InputError("which", f"unknown direction(s) {unknown}" if unknown else "no direction given",
                         expected=", ".join(f"{k} ({v})" for k, v in DIRECTIONS.items()))
    return method, int(partial_count), which


def eigenvalues_of(A, M=None, method: str = "auto", partial_count: int = 64,
                   which=DEFAULT_DIRECTIONS, field: str = "matrix", source: str = "matrix",
                   mass_field: str = "mass", threads: int | None = None) -> Spectrum:
    """Return the Spectrum of the Jacobian A, or of the pencil M u' = A u when M is given.

    Parameters
    ----------
    A : ndarray or scipy.sparse matrix, shape (N, N)
        The Jacobian (K of the pencil).
    M : ndarray or scipy.sparse matrix, shape (N, N), optional
        A nonsingular mass matrix; the eigenvalues are those of M^-1 A.
    method : {"auto", "dense", "sparse"}
        "auto": all eigenvalues for dense A and for sparse A up to DENSE_FROM_SPARSE_N,
        the extremes by ARPACK beyond.
    partial_count : int
        Eigenvalues sought near each extreme in the sparse method.
    which : sequence of {"LM", "SR", "LR", "LI", "SI"}
        Directions of the extremes in the sparse method (see DIRECTIONS). A Hermitian A has
        real eigenvalues: its two ends are computed whatever is asked.
    field, mass_field : str
        Names of the inputs, for error messages.
    source : str
        How to name the matrix in the Spectrum's ``source``.
    threads : int or None
        BLAS threads for the dense method (DENSE_EIG_THREADS when None).

    Returns
    -------
    Spectrum
        ``partial`` for the sparse method, with a caution note first; a caution when A is
        measurably non-normal.

    Raises
    ------
    InputError
        Bad matrices, a singular mass matrix (infinite eigenvalues mean constraints, not an
        ODE), unknown options.
    LimitExceeded
        Over MAX_DENSE_N for the dense method, or the sparse bounds.
    """
    method, k, which = _checked_options(method, partial_count, which)
    A = _checked_matrix(A, field)
    if M is not None:
        M = _checked_matrix(M, mass_field)
        if M.shape != A.shape:
            raise InputError(mass_field, f"the mass matrix is {M.shape[0]}x{M.shape[1]}, the "
                                         f"Jacobian {A.shape[0]}x{A.shape[1]}")
    n = A.shape[0]
    sparse = scipy.sparse.issparse(A) or scipy.sparse.issparse(M)
    what = source if M is None else f"pencil ({source}, mass matrix)"
    notes: list[str] = []
    small = n < 3  # ARPACK needs N > k + 1
    if method == "dense" or (method == "auto" and (not sparse or n <= DENSE_FROM_SPARSE_N)) or small:
        check_order(A.shape, field)
        Ad = A.toarray() if scipy.sparse.issparse(A) else A
        if M is None:
            values = dense_eigvals(Ad, threads=threads)
            departure = departure_from_normality(Ad)
            if departure is not None and departure > NON_NORMAL_RTOL:
                notes.append(NON_NORMAL_NOTE.format(departure=departure))
        else:
            Md = M.toarray() if scipy.sparse.issparse(M) else M
            values, symmetric = _dense_pencil(Ad, Md, mass_field, threads)
            if not symmetric:
                notes.append(PENCIL_NOTE)
        return Spectrum(values, source=f"{what} (dense, N={n})", notes=tuple(notes))
    K = scipy.sparse.csr_matrix(A)
    if K.nnz == 0:
        return Spectrum(np.zeros(n), source=f"{what} (sparse, N={n}, all zero)")
    Ms = None if M is None else scipy.sparse.csr_matrix(M)
    k_cap = max(8, int((np.sqrt(RESTART_WORK / n) - 1) / 2))
    capped = k > k_cap
    values, more, hermitian = _sparse_extremes(K, Ms, min(k, k_cap), which, field, mass_field)
    if capped:
        more.insert(0, f"at N={n}, {k_cap} eigenvalues per direction were sought instead of "
                       f"{k}, to bound the time ARPACK takes")
    if hermitian:
        first = HERMITIAN_PARTIAL_NOTE.format(count=values.size, n=n)
    else:
        searched = set(which)
        if K.dtype.kind != "c" and searched & {"LI", "SI"}:
            searched |= {"LI", "SI"}  # conjugate pairs: one imaginary end gives the other
        unsearched = [DIRECTIONS[d] for d in DIRECTIONS if d not in searched]
        tail = ("; no search was made for the " + " or the ".join(unsearched) + ", so an "
                "eigenvalue found only there (one with positive real part, say) would go "
                "unnoticed") if unsearched else ""
        first = PARTIAL_NOTE.format(directions=", ".join(DIRECTIONS[d] for d in which),
                                    count=values.size, n=n, unsearched=tail)
    notes = [first, *more]
    if M is None and not hermitian:
        departure = departure_from_normality(K)
        if departure is not None and departure > NON_NORMAL_RTOL:
            notes.append(NON_NORMAL_NOTE.format(departure=departure))
    elif M is not None:
        notes.append(PENCIL_NOTE)
    return Spectrum(values, source=f"{what} (sparse, N={n}, nnz={K.nnz}, ARPACK extremes)",
                    partial=True, notes=tuple(notes))


def generalized_from_pair(K, M, **options) -> Spectrum:
    """Return the Spectrum of M u' = K u: eigenvalues_of(K, M=M, **options), named for the pair.

    Parameters
    ----------
    K, M : ndarray or scipy.sparse matrix, shape (N, N)
        Stiffness-like matrix and nonsingular mass matrix.
    **options
        Passed on to eigenvalues_of (method, partial_count, which, field, ...).
    """
    options.setdefault("source", "K")
    return eigenvalues_of(K, M=M, **options)
