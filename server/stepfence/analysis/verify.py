"""Stepping verification: run the scheme on u' = J u and compare growth with pi's roots.

This is the check a sceptical user runs. Nothing here uses the stability polynomial to step:
multistep methods run their recurrence with the coefficients rho and sigma, Runge-Kutta
methods run their stages with the tableau (A, b), predictor-corrector pairs run the actual
P(EC)^m[E] algorithm, and schemes known only by R(z) multiply by R(h lambda) (diagonal
systems) or apply the matrix polynomial R(hJ). The observed growth per step is then set
beside the largest root modulus of pi(., h lambda) over the eigenvalues, which analysis
computes from the symbolic pi alone. Agreement confirms both; disagreement is reported.

Notation follows Hairer & Wanner [1]_ (multistep: sum_j alpha_j u_{n+j} = h sum_j beta_j f_{n+j},
ascending coefficients, alpha_k = 1) and Lambert [2]_ for the predictor-corrector modes.

References
----------
.. [1] E. Hairer, G. Wanner, Solving Ordinary Differential Equations II, 2nd ed., Springer
   1996, sections IV.2-IV.3 (one-step), IV.8 (solving the stage system), V.1 (multistep).
.. [2] J. D. Lambert, Numerical Methods for Ordinary Differential Systems, Wiley 1991,
   section 4.3 (predictor-corrector methods in P(EC)^m E and P(EC)^m modes).
"""
from __future__ import annotations

import math
import numbers
import warnings
from dataclasses import dataclass, replace
from fractions import Fraction
from math import factorial

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sps
import scipy.sparse.linalg as spla
import sympy as sp

from .. import limits
from ..errors import InputError, LimitExceeded
from ..schemes.base import Scheme
from ..schemes.stability import Z
from .steplimit import step_limit

# --- constants -------------------------------------------------------------------------------
STARTING_MODES = ("rk-accurate", "exact")
VERDICTS = ("bounded", "grows", "decays")

PREDICT_MAX_N = 2000            # dense eigenvalues of J for the prediction up to this order
DENSE_EXPM_N = 200              # scipy.linalg.expm for starting values up to this order
# expm_multiply costs about ||t J||_1 products; up to this total it is cheap at any N
EXACT_START_NORM_LIMIT = 1.0e3
EXACT_START_HARD_LIMIT = 1.0e6  # starting="exact" refuses beyond (minutes of products)
RADAU_SUBSTEPS = 64             # sub-steps of the L-stable fallback for stiff starting values
STACKED_MAX_DENSE = 2000        # s*N up to which the dense stacked stage matrix is formed
STACKED_MAX_SPARSE = 200_000    # the same for a sparse J (sparse kron)
# Unknown-steps (N * steps) per call: keeps one call within seconds. Belongs in
# stepfence.limits beside MAX_VERIFY_STEPS; kept here until that module is edited.
MAX_VERIFY_WORK = 200_000_000
SINGULAR_RCOND = 1e-12          # reciprocal condition below which a solve counts as singular
NON_NORMAL_THRESHOLD = 1e-8     # ||J J^H - J^H J||_F / ||J||_F^2 above this: non-normal
NON_NORMAL_PROBES = 8
TRANSIENT_NOTE_FACTOR = 1.25    # common practice, no source: what counts as visible growth
AGREEMENT_NOTE = 1e-3           # relative observed/predicted gap that earns a note
HORNER_TRUST = 1e-13            # float Horner accepted when its error bound is below this
MATRIX_HORNER_NOTE = 1e-8
MAX_PRECISE_EVALUATIONS = 50_000
RESCALE_ABOVE = 1e100           # history is rescaled (exactly: the system is linear) beyond
RESCALE_BELOW = 1e-100
CHUNK = 65_536                  # eigenvalues per batch in vectorised small solves
EPS = np.finfo(float).eps

SCOPE_NOTE = ("this steps the linear system u' = J u with J held fixed; for a nonlinear "
              "problem J changes along the solution (a frozen Jacobian), so a stable verdict "
              "here covers the linearisation only")


class _Singular(Exception):
    """An implicit solve (I - c J) x = r has no reliable solution at this c."""

    def __init__(self, rcond: float):
        super().__init__(rcond)
        self.rcond = rcond


# --- the result ------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class VerifyResult:
    """What stepping u' = J u with a scheme at step h showed.

    Attributes
    ----------
    scheme : str
        Catalogue name of the scheme.
    h : float
        The step.
    steps : int
        Steps taken from t = 0 (starting values included): u_0 .. u_steps.
    unknowns : int
        N, the size of the system.
    norms : ndarray, shape (steps + 1,)
        ||u_n||_2 for n = 0..steps with ||u_0|| = 1 (inf where beyond floating point range;
        ``log10_norms`` holds every value).
    log10_norms : ndarray, shape (steps + 1,)
        log10 ||u_n|| (-inf for an exactly zero vector).
    observed_growth_per_step : float
        exp of the least-squares slope of log ||u_n|| over the last half of the steps: the
        geometric-mean growth factor per step once the dominant mode has taken over.
    predicted_growth : float or None
        max over the eigenvalues of the largest root modulus of pi(., h lambda); None when
        the eigenvalues of a large matrix were not computed (see ``notes``).
    verdict : str
        ``"grows"``, ``"decays"`` or ``"bounded"`` (the growth is within the fit's resolution
        of 1).
    max_transient : float
        max_n ||u_n|| / ||u_0||.
    starting : str
        How u_1..u_{k-1} were obtained: ``"exact"``, ``"radau-substeps"``, or ``"none"``
        (one-step schemes).
    notes : tuple of str
        Cautions in plain words, then how the run was made.
    """

    scheme: str
    h: float
    steps: int
    unknowns: int
    norms: np.ndarray
    log10_norms: np.ndarray
    observed_growth_per_step: float
    predicted_growth: float | None
    verdict: str
    max_transient: float
    starting: str
    notes: tuple

    @property
    def relative_difference(self) -> float | None:
        """Return |observed - predicted| / predicted, or None without a prediction."""
        return _relative_gap(self.observed_growth_per_step, self.predicted_growth)


def _relative_gap(observed: float, predicted: float | None) -> float | None:
    if predicted is None or not math.isfinite(predicted):
        return None
    if predicted == 0:
        return 0.0 if observed == 0 else math.inf
    return abs(observed - predicted) / predicted


# --- the linear system -----------------------------------------------------------------------
class _System:
    """J stored as eigenvalues (diagonal), a dense array or a CSR matrix, with what stepping needs.

    Parameters
    ----------
    kind : str
        ``"diagonal"``, ``"dense"`` or ``"sparse"``.
    data : ndarray, shape (N,) or (N, N), or scipy.sparse.csr_matrix, shape (N, N)
    """

    def __init__(self, kind: str, data):
        self.kind = kind
        self.data = data
        self.n = data.shape[0]
        self.dtype = np.complex128 if kind == "diagonal" else data.dtype
        self.real = not np.issubdtype(self.dtype, np.complexfloating)
        self._eigenvalues = None
        self._eigenvalues_done = False

    def matvec(self, v: np.ndarray) -> np.ndarray:
        """Return J v."""
        if self.kind == "diagonal":
            return self.data * v
        return self.data @ v

    def rmatvec(self, v: np.ndarray) -> np.ndarray:
        """Return J^H v."""
        if self.kind == "diagonal":
            return np.conj(self.data) * v
        return self.data.conj().T @ v

    def one_norm(self) -> float:
        """Return ||J||_1 (the largest absolute column sum)."""
        if self.kind == "diagonal":
            return float(np.max(np.abs(self.data)))
        col = abs(self.data).sum(axis=0)
        return float(np.max(np.asarray(col)))

    def dense(self) -> np.ndarray:
        """Return J as a dense array, shape (N, N)."""
        if self.kind == "diagonal":
            return np.diag(self.data)
        if self.kind == "sparse":
            return self.data.toarray()
        return self.data

    def eigenvalues(self) -> np.ndarray | None:
        """Return the eigenvalues of J, shape (N,), or None when N > PREDICT_MAX_N."""
        if not self._eigenvalues_done:
            if self.kind == "diagonal":
                self._eigenvalues = self.data
            elif self.n <= PREDICT_MAX_N:
                self._eigenvalues = sla.eigvals(self.dense())
            self._eigenvalues_done = True
        return self._eigenvalues

    def shifted_solver(self, c: complex):
        """Return x -> (I - c J)^{-1} x, factored once.

        Raises
        ------
        _Singular
            When the factorisation fails or the reciprocal condition is below SINGULAR_RCOND.
        """
        if self.kind == "diagonal":
            d = 1.0 - c * self.data
            rcond = np.abs(d) / (1.0 + np.abs(c * self.data))
            worst = float(np.min(rcond))
            if worst < SINGULAR_RCOND:
                raise _Singular(worst)
            return lambda x: x / d
        eye = sps.identity(self.n, format="csc") if self.kind == "sparse" else np.eye(self.n)
        return _factor(eye - c * self.data)


def _factor(M):
    """Return x -> M^{-1} x for a dense or sparse square M, refusing a near-singular one."""
    if sps.issparse(M):
        M = sps.csc_matrix(M)
        try:
            lu = spla.splu(M)
        except RuntimeError as err:  # "Factor is exactly singular"
            raise _Singular(0.0) from err
        inverse = spla.LinearOperator(M.shape, matvec=lu.solve,
                                      rmatvec=lambda x: lu.solve(x, trans="H"), dtype=M.dtype)
        inv_norm = spla.onenormest(inverse) if M.shape[0] > 4 else np.abs(
            lu.solve(np.eye(M.shape[0], dtype=M.dtype))).sum(axis=0).max()
        anorm = float(abs(M).sum(axis=0).max())
        rcond = 1.0 / (anorm * inv_norm) if inv_norm > 0 else 0.0
        if not np.isfinite(rcond) or rcond < SINGULAR_RCOND:
            raise _Singular(float(rcond) if np.isfinite(rcond) else 0.0)
        return lu.solve
    with warnings.catch_warnings():
        warnings.simplefilter("error", sla.LinAlgWarning)
        try:
            lu, piv = sla.lu_factor(M, check_finite=False)
        except sla.LinAlgWarning as err:  # an exactly zero pivot
            raise _Singular(0.0) from err
    gecon, = sla.get_lapack_funcs(("gecon",), (lu,))
    anorm = float(np.abs(M).sum(axis=0).max())
    rcond, info = gecon(lu, anorm, norm="1")
    if info != 0 or not np.isfinite(rcond) or rcond < SINGULAR_RCOND:
        raise _Singular(float(rcond) if np.isfinite(rcond) else 0.0)
    return lambda x: sla.lu_solve((lu, piv), x, check_finite=False)


# --- input checks ----------------------------------------------------------------------------
def _system_from(matrix, eigenvalues) -> _System:
    """Return the _System for exactly one of matrix / eigenvalues, refusing bad input."""
    if matrix is not None and eigenvalues is not None:
        raise InputError("matrix", "give either matrix or eigenvalues, not both")
    if matrix is None and eigenvalues is None:
        raise InputError("matrix", "no system given: pass matrix (dense or sparse J) or "
                                   "eigenvalues (a diagonal system)")
    if eigenvalues is not None:
        if isinstance(eigenvalues, (str, bytes)) or sps.issparse(eigenvalues):
            raise InputError("eigenvalues", "must be a list or array of numbers")
        try:
            lam = np.asarray(eigenvalues, dtype=complex).ravel()
        except (TypeError, ValueError):
            raise InputError("eigenvalues", "must be a list or array of numbers") from None
        if lam.size == 0:
            raise InputError("eigenvalues", "no eigenvalues given")
        if lam.size > limits.MAX_EIGENVALUES:
            raise LimitExceeded("eigenvalues", f"{lam.size} eigenvalues; at most "
                                               f"{limits.MAX_EIGENVALUES} are allowed")
        bad = np.nonzero(~np.isfinite(lam))[0]
        if bad.size:
            raise InputError("eigenvalues", f"entry {int(bad[0])} is not finite (NaN or Inf)")
        return _System("diagonal", lam)
    if sps.issparse(matrix):
        n = _square_order(matrix.shape)
        if n > limits.MAX_SPARSE_N:
            raise LimitExceeded("matrix", f"order {n}; a sparse matrix may have at most "
                                          f"{limits.MAX_SPARSE_N} rows")
        if matrix.nnz > limits.MAX_SPARSE_NNZ:
            raise LimitExceeded("matrix", f"{matrix.nnz} nonzeros; at most "
                                          f"{limits.MAX_SPARSE_NNZ} are allowed")
        J = sps.csr_matrix(matrix)
        J = J.astype(_numeric_dtype(J.dtype))
        if not np.all(np.isfinite(J.data)):
            raise InputError("matrix", "has an entry that is not finite (NaN or Inf)")
        return _System("sparse", J)
    J = np.asarray(matrix)
    n = _square_order(J.shape)
    if n > limits.MAX_VERIFY_N:
        raise LimitExceeded("matrix", f"order {n}; a dense matrix for stepping may have at "
                                      f"most {limits.MAX_VERIFY_N} rows (pass a scipy.sparse "
                                      "matrix for larger systems)")
    J = np.ascontiguousarray(J, dtype=_numeric_dtype(J.dtype))
    if not np.all(np.isfinite(J)):
        bad = np.argwhere(~np.isfinite(J))[0]
        raise InputError("matrix", f"entry [{bad[0]}][{bad[1]}] is not finite (NaN or Inf)")
    return _System("dense", J)


def _square_order(shape) -> int:
    """Return N for a shape (N, N) with N >= 1; InputError naming the matrix otherwise."""
    if len(shape) != 2 or shape[0] != shape[1]:
        raise InputError("matrix", f"must be a square 2-D matrix, got shape {tuple(shape)}")
    if shape[0] == 0:
        raise InputError("matrix", "is empty")
    return int(shape[0])


def _numeric_dtype(dtype) -> type:
    if dtype.kind in "biuf":
        return np.float64
    if dtype.kind == "c":
        return np.complex128
    raise InputError("matrix", f"must hold numbers, got entries of type {dtype}")


def _check_step(h) -> float:
    if isinstance(h, bool) or not isinstance(h, numbers.Real):
        raise InputError("step", f"h must be a real number, got {type(h).__name__}")
    h = float(h)
    if not math.isfinite(h) or h <= 0:
        raise InputError("step", f"h must be a finite number > 0, got {h}")
    return h


def _check_int(value, field: str, low: int, high: int | None = None) -> int:
    if isinstance(value, bool) or not isinstance(value, numbers.Integral):
        raise InputError(field, f"must be an integer, got {type(value).__name__}")
    value = int(value)
    if value < low:
        raise InputError(field, f"must be at least {low}, got {value}")
    if high is not None and value > high:
        raise LimitExceeded(field, f"{value} is above the limit of {high}")
    return value


def _past_values(scheme: Scheme) -> int:
    """Return k, the number of past values the scheme's recurrence uses."""
    if scheme.kind == "multistep":
        return len(scheme.rho) - 1
    if scheme.kind == "predictor-corrector":
        return max(len(p.rho) - 1 for p in scheme.parts)
    return 1


# --- starting values -------------------------------------------------------------------------
def _pade(k: int, j: int) -> tuple[np.ndarray, np.ndarray]:
    """Return ascending float coefficients (P, Q) of the (k, j) Pade approximant of e^z.

    P_kj(z) = sum_i (k + j - i)! k! / ((k + j)! i! (k - i)!) z^i and Q_kj(z) = P_jk(-z)
    (Hairer & Wanner II, 2nd ed., section IV.3; formula from memory, checked in tests against
    scipy.linalg.expm through the starting values it produces).
    """
    def numerator(a, b, sign):
        return np.array([float(Fraction(factorial(a + b - i) * factorial(a),
                                        factorial(a + b) * factorial(i) * factorial(a - i)))
                         * sign**i for i in range(a + 1)])
    return numerator(k, j, 1), numerator(j, k, -1)


def _radau_propagator(system: _System, tau: float, substeps: int):
    """Return v -> R(tau J / M)^M v with R the (2,3) Pade approximant (Radau IIA, order 5).

    R = P/Q has deg P < deg Q, so R(w) = sum_i r_i / (w - p_i) over the poles p_i of Q, and
    (w - p)^{-1} = -(1/p) (1 - w/p)^{-1}: three shifted solves per sub-step, factored once.
    L-stability (R(inf) = 0) damps stiff components instead of reflecting them.
    """
    P, Q = _pade(2, 3)
    poles = np.roots(Q[::-1])
    dQ = np.polynomial.polynomial.polyder(Q)
    residues = (np.polynomial.polynomial.polyval(poles, P)
                / np.polynomial.polynomial.polyval(poles, dQ))
    w = tau / substeps
    solvers = [system.shifted_solver(w / p) for p in poles]
    weights = -residues / poles

    def propagate(v):
        for _ in range(substeps):
            v = sum(c * solve(v.astype(complex)) for c, solve in zip(weights, solvers))
        return v.real.copy() if system.real else v
    return propagate


def _starting_values(system: _System, h: float, u0: np.ndarray, k: int, mode: str):
    """Return ([u_0, ..., u_{k-1}], how, notes): the exact solution exp(t J) u0 at t = j h.

    Exact values let only the scheme's own roots show in the growth. The exact propagator is
    exp(t lambda) for a diagonal system, scipy.linalg.expm for small N, and
    scipy.sparse.linalg.expm_multiply otherwise. expm_multiply costs about ||t J||_1 products,
    so for a stiff large J (only with mode "rk-accurate") the values come from RADAU_SUBSTEPS
    sub-steps of the L-stable Radau IIA stability function instead, and a note says so.
    """
    if k == 1:
        return [u0], "none", []
    times = h * np.arange(k)
    if system.kind == "diagonal":
        return [u0 * np.exp(t * system.data) for t in times], "exact", []
    if system.n <= DENSE_EXPM_N:
        E = sla.expm(h * system.dense())
        values = [u0]
        for _ in range(k - 1):
            values.append(E @ values[-1])
        return values, "exact", []
    tau = h * system.one_norm()
    cost = tau * (k - 1)
    if cost <= EXACT_START_NORM_LIMIT or (mode == "exact" and cost <= EXACT_START_HARD_LIMIT):
        A = h * system.data
        trace = complex(system.data.diagonal().sum()) * h
        out = spla.expm_multiply(A, u0, start=0, stop=k - 1, num=k, endpoint=True,
                                 traceA=trace.real if system.real else trace)
        return [np.array(v) for v in out], "exact", []
    if mode == "exact":
        raise InputError("starting", f"exact starting values need about {cost:.3g} products "
                                     f"with J here (h*||J||_1 = {tau:.3g}); use "
                                     "starting='rk-accurate' or a smaller system")
    try:
        propagate = _radau_propagator(system, h, RADAU_SUBSTEPS)
    except _Singular as err:
        raise InputError("step", "the implicit solve for the starting values is singular "
                                 f"at this h (reciprocal condition {err.rcond:.2g})") from None
    values = [u0]
    for _ in range(k - 1):
        values.append(propagate(values[-1]))
    note = (f"starting values u_1..u_{k - 1}: h*||J||_1 = {tau:.3g} makes the exact solution "
            f"too costly here, so they come from {RADAU_SUBSTEPS} sub-steps per step of the "
            "L-stable Radau IIA (order 5) approximation; components with |h lambda| up to "
            "about 6 are exact to ~1e-9, stiffer ones are damped (exact for strongly decaying "
            "modes, not for stiff oscillatory ones)")
    return values, "radau-substeps", [note]


# --- recording the norms ---------------------------------------------------------------------
class _Recorder:
    """Collect log ||u_n|| and keep the stored history inside floating-point range."""

    def __init__(self, steps: int):
        self.log = np.empty(steps + 1)
        self.count = 0
        self.offset = 0.0    # log of the factor the history was divided by so far

    def push(self, u: np.ndarray) -> float | None:
        """Record ||u||; return a factor to multiply all stored vectors by, or None."""
        norm = math.sqrt(float(np.vdot(u, u).real))
        if not math.isfinite(norm):     # the squares overflowed: let numpy scale them
            norm = float(np.linalg.norm(u))
        if not math.isfinite(norm):
            raise InputError("step", "the stepped solution overflowed in one step (growth "
                                     "per step beyond 1e200): the step is far outside the "
                                     "stability region")
        self.log[self.count] = self.offset + (math.log(norm) if norm > 0 else -math.inf)
        self.count += 1
        if norm > RESCALE_ABOVE or 0 < norm < RESCALE_BELOW:
            self.offset += math.log(norm)
            return 1.0 / norm
        return None


def _linear_combination(coefficients, vectors):
    """Return sum c_j v_j over the nonzero c_j (None when all are zero)."""
    out = None
    for c, v in zip(coefficients, vectors):
        if c != 0:
            out = c * v if out is None else out + c * v
    return out


class _History:
    """The last k values u_{n+j} and f_{n+j} = J u_{n+j}, j = 0..k-1, in a ring buffer.

    A combination sum_j a_j u_{n+j} + sum_j b_j f_{n+j} is then two products of a k-vector
    with a (k, N) array, whatever k is; each f is computed once, when its u arrives.
    """

    def __init__(self, system: _System, start, rec: _Recorder):
        k = len(start)
        dtype = np.result_type(system.dtype, *[u.dtype for u in start])
        self.U = np.empty((k, system.n), dtype=dtype)
        self.F = np.empty((k, system.n), dtype=dtype)
        self.k = k
        self.oldest = 0
        self.rec = rec
        for j, u in enumerate(start):
            self.U[j] = u
            self.F[j] = system.matvec(u)
            self._record(self.U[j])

    def combiner(self, a: np.ndarray, b: np.ndarray):
        """Return () -> sum_j a_j u_{n+j} + sum_j b_j f_{n+j} (j = 0 the oldest value)."""
        # the k rotations of the coefficients, one per position of the oldest slot
        ra = np.array([np.roll(a, p) for p in range(self.k)])
        rb = np.array([np.roll(b, p) for p in range(self.k)])
        return lambda: ra[self.oldest] @ self.U + rb[self.oldest] @ self.F

    def push(self, u: np.ndarray, f: np.ndarray):
        """Replace the oldest pair by (u, f) and record ||u||."""
        self.U[self.oldest] = u
        self.F[self.oldest] = f
        self.oldest = (self.oldest + 1) % self.k
        self._record(u)

    def _record(self, u):
        factor = self.rec.push(u)
        if factor is not None:
            # linear recurrence: scaling every stored value scales the whole future alike
            self.U *= factor
            self.F *= factor


# --- multistep and predictor-corrector -------------------------------------------------------
def _normalised(rho, sigma, k):
    """Return float (alpha, beta) padded to k + 1 entries (zeros in front), alpha_k = 1."""
    alpha = np.array([float(sp.N(c)) for c in rho])
    beta = np.array([float(sp.N(c)) for c in sigma])
    alpha = np.concatenate([np.zeros(k + 1 - alpha.size), alpha])
    beta = np.concatenate([np.zeros(k + 1 - beta.size), beta])
    return alpha / alpha[-1], beta / alpha[-1]


def _run_multistep(system, h, scheme, start, rec, steps, singular):
    """Step sum_j alpha_j u_{n+j} = h sum_j beta_j J u_{n+j} to u_steps."""
    k = len(start)
    alpha, beta = _normalised(scheme.rho, scheme.sigma, k)
    solve = None
    if beta[-1] != 0:
        try:
            solve = system.shifted_solver(h * beta[-1])
        except _Singular as err:
            raise singular("multistep", beta[-1], err) from None
    hist = _History(system, start, rec)
    explicit_part = hist.combiner(-alpha[:-1], h * beta[:-1])
    for _ in range(k, steps + 1):
        rhs = explicit_part()
        u = rhs if solve is None else solve(rhs)
        hist.push(u, system.matvec(u))


def _run_predictor_corrector(system, h, scheme, start, rec, steps):
    """Step the P(EC)^m E or P(EC)^m algorithm itself (Lambert 1991, section 4.3).

    P: u^[0] from the explicit predictor. Then m times E: f = J u^[nu], C: u^[nu+1] from the
    corrector with f in place of f_{n+k}. With a final E the stored f_{n+k} is J u^[m];
    without it (P(EC)^m) it is the last evaluation, J u^[m-1], never J times the final u.
    """
    predictor, corrector = scheme.parts
    m = int(scheme.details["m"])
    final_evaluation = str(scheme.details["mode"]).strip().upper().endswith("E")
    k = len(start)
    ap, bp = _normalised(predictor.rho, predictor.sigma, k)
    ac, bc = _normalised(corrector.rho, corrector.sigma, k)
    hist = _History(system, start, rec)
    predict = hist.combiner(-ap[:-1], h * bp[:-1])
    corrector_past = hist.combiner(-ac[:-1], h * bc[:-1])
    for _ in range(k, steps + 1):
        u = predict()                                                     # P
        past = corrector_past()
        for _ in range(m):
            f = system.matvec(u)                                          # E
            u = past + (h * bc[-1]) * f                                   # C
        if final_evaluation:
            f = system.matvec(u)                                          # E
        hist.push(u, f)


# --- one-step schemes ------------------------------------------------------------------------
def _run_one_step(advance, u0, rec, steps):
    u = u0
    rec.push(u)
    for _ in range(steps):
        u = advance(u)
        factor = rec.push(u)
        if factor is not None:
            u = u * factor


def _tableau_numeric(tableau):
    A, b, _ = tableau.numeric()
    return np.asarray(A, dtype=float), np.asarray(b, dtype=float)


def _explicit_rk(system, h, A, b):
    """Return u -> u_{n+1} for an explicit tableau: k_i = J (u + h sum_{j<i} a_ij k_j)."""
    s = b.size

    def advance(u):
        K = []
        for i in range(s):
            inc = _linear_combination(h * A[i, :i], K)
            K.append(system.matvec(u if inc is None else u + inc))
        inc = _linear_combination(h * b, K)
        return u if inc is None else u + inc
    return advance


def _implicit_rk(system, h, A, b, singular):
    """Return (u -> u_{n+1}, route) for an implicit tableau.

    Routes: per eigenvalue small s x s solves (diagonal J); the stacked system
    (I - h A kron J) K = 1 kron J u factored once (s N up to STACKED_MAX_*); stage by stage
    with (I - h a_ii J) for a lower-triangular A; and for a larger fully implicit A its
    eigen-decomposition A = T D T^{-1}, which splits the stacked system into s shifted solves
    (Hairer & Wanner II, section IV.8).
    """
    s = b.size
    try:
        if system.kind == "diagonal":
            return _diagonal_rk(system, h, A, b), "diagonal"
        limit = STACKED_MAX_SPARSE if system.kind == "sparse" else STACKED_MAX_DENSE
        if s * system.n <= limit:
            return _stacked_rk(system, h, A, b), "stacked"
        if np.all(np.triu(A, 1) == 0):
            return _stagewise_rk(system, h, A, b), "stagewise"
        return _decoupled_rk(system, h, A, b), "decoupled"
    except _Singular as err:
        raise singular("runge-kutta", A, err) from None


def _diagonal_rk(system, h, A, b):
    """Return u -> R u with R = 1 + z b^T (I - zA)^{-1} 1 from s x s solves per eigenvalue."""
    z = h * system.data
    s = b.size
    factor = np.empty(z.size, dtype=complex)
    worst = math.inf
    for lo in range(0, z.size, CHUNK):
        zc = z[lo:lo + CHUNK]
        M = np.eye(s)[None, :, :] - zc[:, None, None] * A[None, :, :]
        sv = np.linalg.svd(M, compute_uv=False)
        # hardening fix: an all-zero M (one stage, h*lambda*a_11 = 1: the implicit midpoint
        # rule at h*lambda = 2) gave 0/0 = nan, which min() skips, and then an unhandled
        # LinAlgError (a 500 through the API); no largest singular value means singular
        with np.errstate(invalid="ignore", divide="ignore"):
            ratio = np.where(sv[:, 0] > 0, sv[:, -1] / sv[:, 0], 0.0)
        worst = min(worst, float(np.min(ratio)))
        if worst < SINGULAR_RCOND:
            raise _Singular(worst)
        W = np.linalg.solve(M, np.ones((zc.size, s, 1), dtype=complex))[..., 0]
        factor[lo:lo + CHUNK] = 1.0 + zc * (W @ b)
    return lambda u: factor * u


def _stacked_rk(system, h, A, b):
    s, n = b.size, system.n
    if system.kind == "sparse":
        M = sps.identity(s * n, format="csc") - h * sps.kron(sps.csr_matrix(A), system.data,
                                                             format="csc")
    else:
        M = np.eye(s * n) - h * np.kron(A, system.data)
    solve = _factor(M)

    def advance(u):
        K = solve(np.tile(system.matvec(u), s)).reshape(s, n)
        return u + h * (b @ K)
    return advance


def _stagewise_rk(system, h, A, b):
    s = b.size
    solvers = {}
    for i in range(s):
        d = A[i, i]
        if d != 0 and d not in solvers:
            solvers[d] = system.shifted_solver(h * d)

    def advance(u):
        K = []
        for i in range(s):
            inc = _linear_combination(h * A[i, :i], K)
            rhs = system.matvec(u if inc is None else u + inc)
            K.append(rhs if A[i, i] == 0 else solvers[A[i, i]](rhs))
        return u + h * (b @ np.array(K))
    return advance


def _decoupled_rk(system, h, A, b):
    d, T = np.linalg.eig(A)
    if np.linalg.cond(T) > 1e8:
        raise InputError("scheme", f"the stage system of {A.shape[0]} stages is too large to "
                                   "form and A is not (well) diagonalisable, so it cannot be "
                                   "split into shifted solves; use a smaller system")
    g = np.linalg.solve(T, np.ones(b.size))
    weights = (b @ T) * g
    parts = [(w, None if di == 0 else system.shifted_solver(h * di))
             for w, di in zip(weights, d) if w != 0]

    def advance(u):
        f = system.matvec(u).astype(complex)
        acc = sum(w * (f if solve is None else solve(f)) for w, solve in parts)
        new = u + h * acc
        return new.real.copy() if system.real else new
    return advance


# --- schemes known only by R(z) ---------------------------------------------------------------
def _float_horner(p: np.ndarray, z: np.ndarray):
    """Return (value, absolute error bound) of sum p_j z^j by Horner's rule in floating point."""
    val = np.zeros_like(z, dtype=complex)
    mag = np.zeros(z.shape)
    az = np.abs(z)
    for c in p[::-1]:
        val = val * z + c
        mag = mag * az + abs(c)
    return val, 2 * p.size * EPS * mag


def _exact_integer_poly(coeffs, digits: int):
    """Return (N_j ascending Python ints, D) with sum coeffs_j z^j = sum N_j z^j / D.

    Rational coefficients are exact; an algebraic one is rounded to `digits` digits.
    """
    fr = []
    for c in coeffs:
        c = sp.nsimplify(c) if getattr(c, "is_Float", False) else c
        q = sp.Rational(c) if c.is_Rational else sp.Rational(str(sp.N(c, digits)))
        fr.append(Fraction(int(q.p), int(q.q)))
    D = 1
    for f in fr:
        D = D * f.denominator // math.gcd(D, f.denominator)
    return [int(f * D) for f in fr], D


def _exact_parts(N, D, z: complex) -> tuple[Fraction, Fraction]:
    """Return (Re, Im) of sum N_j z^j / D for the double z, exactly (Fractions)."""
    re, im = Fraction(z.real), Fraction(z.imag)
    e = max(re.denominator, im.denominator)          # both powers of two
    a, bb = int(re * e), int(im * e)
    m = len(N) - 1
    sr, si = N[m], 0
    for j in range(m - 1, -1, -1):
        sr, si = sr * a - si * bb + N[j] * e ** (m - j), sr * bb + si * a
    den = D * e**m
    return Fraction(sr, den), Fraction(si, den)


def _exact_ratio(Np, Dp, Nq, Dq, z: complex) -> complex:
    """Return P(z)/Q(z) divided exactly, then rounded once.

    hardening fix: P(z) and Q(z) were rounded apart, and either overflows a double long
    before R does (found by fuzzing: rkc10 at |z| = 6.7e35 raised OverflowError, a 500).
    """
    a, b = _exact_parts(Np, Dp, z)
    c, d = _exact_parts(Nq, Dq, z)
    n = c * c + d * d
    if n == 0:
        raise InputError("step", f"h lambda = {z:.6g} is a pole of R(z): the implicit stage "
                                 "equations are singular at this step")
    try:
        return complex(float((a * c + b * d) / n), float((b * c - a * d) / n))
    except OverflowError:
        raise InputError("step", f"|R(h lambda)| exceeds the floating-point range at h lambda = "
                                 f"{z:.6g}: this step lies far outside the stability region "
                                 "and cannot be stepped") from None


def _poly_coefficients(expr) -> list:
    poly = sp.Poly(sp.expand(expr), Z)
    if poly.is_zero:
        # R(z) = 0 (found by fuzzing: degree -oo was a TypeError, a 500 through the API)
        return [sp.Integer(0)]
    return [poly.coeff_monomial(Z**j) for j in range(poly.degree() + 1)]


def stability_function_values(scheme: Scheme, z) -> np.ndarray:
    """Return R(z) = P(z)/Q(z) of a one-step scheme, accurate to about 1e-13 absolute.

    Horner's rule in the monomial basis loses digits when sum |p_j| |z|^j is large (the
    Runge-Kutta-Chebyshev polynomials on their long real interval). Where its error bound
    exceeds HORNER_TRUST the value is recomputed exactly in integer arithmetic (the double z is
    a dyadic rational) from the exact coefficients, then rounded once.

    Parameters
    ----------
    scheme : Scheme
        A one-step scheme with ``stability_function`` (P, Q).
    z : array_like of complex, shape (n,)

    Returns
    -------
    R : ndarray of complex, shape (n,)
    """
    P, Q = scheme.stability_function
    z = np.atleast_1d(np.asarray(z, dtype=complex))
    pc, qc = _poly_coefficients(P), _poly_coefficients(Q)
    p = np.array([complex(sp.N(c, 20)) for c in pc])
    q = np.array([complex(sp.N(c, 20)) for c in qc])
    vp, ep = _float_horner(p, z)
    vq, eq = _float_horner(q, z)
    with np.errstate(divide="ignore", invalid="ignore"):
        R = vp / vq
        err = (ep + np.abs(R) * eq) / np.abs(vq)
    bad = ~(err <= HORNER_TRUST * np.maximum(1.0, np.abs(R)))
    if np.any(bad):
        uniq, inverse = np.unique(z[bad], return_inverse=True)
        if uniq.size > MAX_PRECISE_EVALUATIONS:
            raise LimitExceeded("eigenvalues", f"{uniq.size} distinct h*lambda need exact "
                                               "evaluation of R(z); at most "
                                               f"{MAX_PRECISE_EVALUATIONS} are allowed")
        digits = 40 + int(np.log10(1.0 + float(np.max(np.abs(p)) + np.max(np.abs(q))))
                          + float(np.nanmax(np.log10(1.0 + np.abs(uniq)))) * len(pc))
        Np, Dp = _exact_integer_poly(pc, digits)
        Nq, Dq = _exact_integer_poly(qc, digits)
        exact = np.array([_exact_ratio(Np, Dp, Nq, Dq, w) for w in uniq])
        R[bad] = exact[inverse]
    return R


def _stability_function_advance(system, h, scheme):
    """Return (u -> R(hJ) u, notes) for a scheme known only by R(z) = P/Q."""
    P, Q = scheme.stability_function
    if system.kind == "diagonal":
        factor = stability_function_values(scheme, h * system.data)
        return (lambda u: factor * u), []
    qc = _poly_coefficients(Q)
    if len(qc) > 1:
        raise InputError("scheme", f"R(z) of {scheme.name} is rational (Q(z) = {Q}) and the "
                                   "scheme has no Butcher tableau: stepping a matrix needs the "
                                   "stages; give a tableau, or step the eigenvalues instead")
    p = np.array([float(sp.N(c / qc[0], 20)) for c in _poly_coefficients(P)])
    notes = []
    lam = system.eigenvalues()
    radius = h * (float(np.max(np.abs(lam))) if lam is not None else system.one_norm())
    bound = 2 * p.size * EPS * float(np.polynomial.polynomial.polyval(radius, np.abs(p)))
    if bound > MATRIX_HORNER_NOTE:
        notes.append(f"R(hJ) is applied by Horner's rule in the monomial basis; at this h its "
                     f"rounding may reach about {bound:.1g} of ||u|| per step, so growth "
                     "differences below that are not resolved")

    def advance(u):
        v = p[-1] * u
        for c in p[-2::-1]:
            v = c * u + h * system.matvec(v)
        return v
    return advance, notes


# --- cautions --------------------------------------------------------------------------------
def non_normality(system: _System, seed: int = 0) -> float:
    """Return ||J J^H - J^H J||_F / ||J||_F^2 (0 for a normal J), estimated by probing.

    With x of independent standard normal entries, E ||C x||^2 = ||C||_F^2, so the mean over
    NON_NORMAL_PROBES products C x = J (J^H x) - J^H (J x) estimates the commutator without
    forming it. A diagonal system is normal by construction.
    """
    if system.kind == "diagonal":
        return 0.0
    J = system.data
    fro = float(spla.norm(J)) if system.kind == "sparse" else float(np.linalg.norm(J))
    if fro == 0:
        return 0.0
    rng = np.random.default_rng(seed)
    X = rng.standard_normal((system.n, NON_NORMAL_PROBES))
    C = system.matvec(system.rmatvec(X)) - system.rmatvec(system.matvec(X))
    estimate = math.sqrt(float(np.sum(np.abs(C) ** 2)) / NON_NORMAL_PROBES)
    return estimate / fro**2


def _fit_growth(log_norms: np.ndarray, first: int):
    """Return (growth per step, resolution in log units) from the last half of the steps."""
    steps = log_norms.size - 1
    lo = max(steps // 2, first)
    y = log_norms[lo:]
    x = np.arange(lo, steps + 1, dtype=float)
    if not np.isfinite(y[-1]):
        return 0.0, 0.0
    keep = np.isfinite(y)
    x, y = x[keep], y[keep]
    if x.size < 2:
        return 0.0, 0.0
    xc = x - x.mean()
    slope = float(np.dot(xc, y - y.mean()) / np.dot(xc, xc))
    if x.size > 2:
        resid = y - y.mean() - slope * xc
        stderr = math.sqrt(float(np.dot(resid, resid)) / (x.size - 2) / float(np.dot(xc, xc)))
    else:
        stderr = 0.0
    return math.exp(slope), stderr


def _predicted_growth(scheme: Scheme, h: float, lam: np.ndarray) -> float:
    out = 0.0
    for lo in range(0, lam.size, CHUNK):
        out = max(out, float(np.max(scheme.pi.max_root_modulus(h * lam[lo:lo + CHUNK]))))
    return out


# --- the entry points ------------------------------------------------------------------------
def verify(scheme: Scheme, h, matrix=None, eigenvalues=None, steps: int = 200, seed: int = 0,
           starting: str = "rk-accurate") -> VerifyResult:
    """Return the VerifyResult of stepping u' = J u with the scheme at step h.

    Parameters
    ----------
    scheme : Scheme
        Any catalogue or custom scheme.
    h : float
        The step, finite and > 0.
    matrix : ndarray, shape (N, N), or scipy.sparse matrix, shape (N, N), optional
        J, real or complex (dense up to limits.MAX_VERIFY_N).
    eigenvalues : array_like of complex, shape (N,), optional
        Step the diagonal system J = diag(eigenvalues) instead (vectorised, complex).
    steps : int
        Steps from t = 0, starting values included; at least k + 1 for a k-step scheme and
        at most limits.MAX_VERIFY_STEPS.
    seed : int
        Seed of the random unit initial vector (it excites every mode).
    starting : str
        ``"rk-accurate"`` (default): starting values u_1..u_{k-1} of multistep schemes and
        pairs are the exact solution exp(t J) u_0, except for a stiff large J where that is
        too costly and sub-steps of the L-stable Radau IIA approximation are used (a note
        says so). ``"exact"``: always the exact solution (refused when very costly).

    Raises
    ------
    InputError
        Naming the field (``step``, ``steps``, ``matrix``, ``eigenvalues``, ``scheme``,
        ``starting``, ``seed``), including a singular implicit solve at this h (``step``).

    Examples
    --------
    >>> from stepfence.schemes.catalogue import get_scheme
    >>> r = verify(get_scheme("ab2"), 1.01, eigenvalues=[-1.0], steps=400)
    >>> r.verdict, round(r.observed_growth_per_step, 4) == round(r.predicted_growth, 4)
    ('grows', True)
    """
    system = _system_from(matrix, eigenvalues)
    return _verify(scheme, _check_step(h), system, steps, seed, starting, None)


def _verify(scheme, h, system, steps, seed, starting, normality) -> VerifyResult:
    if not isinstance(scheme, Scheme):
        raise InputError("scheme", f"expected a Scheme, got {type(scheme).__name__}")
    if starting not in STARTING_MODES:
        raise InputError("starting", f"must be one of {STARTING_MODES}, got {starting!r}")
    k = _past_values(scheme)
    steps = _check_int(steps, "steps", k + 1, limits.MAX_VERIFY_STEPS)
    seed = _check_int(seed, "seed", 0)
    if steps * system.n > MAX_VERIFY_WORK:
        raise LimitExceeded("steps", f"{steps} steps of {system.n} unknowns; at most "
                                     f"{MAX_VERIFY_WORK} unknown-steps per run")
    # hardening fix: h * lambda beyond the double range cannot be stepped; it reached the
    # exact R(z) fallback as infinity and raised OverflowError (a 500 through the API, found
    # by fuzzing: rkc10, h = 8.6e299, lambda = 7e16 + 5e16i)
    with np.errstate(over="ignore"):
        reach = h * system.one_norm()
    if not math.isfinite(reach):
        raise InputError("step", f"h = {h:.6g} times the size of J ({system.one_norm():.6g}, "
                                 "largest |lambda| or ||J||_1) overflows floating point: no "
                                 "step of this size can be stepped")
    rng = np.random.default_rng(seed)
    if system.real:
        u0 = rng.standard_normal(system.n)
    else:
        u0 = rng.standard_normal(system.n) + 1j * rng.standard_normal(system.n)
    u0 = u0 / np.linalg.norm(u0)

    def singular(family, coefficient, err):
        return _singular_error(system, h, family, coefficient, err)

    rec = _Recorder(steps)
    notes = []
    how = "none"
    if scheme.kind in ("multistep", "predictor-corrector"):
        start, how, start_notes = _starting_values(system, h, u0, k, starting)
        notes += start_notes
        if scheme.kind == "multistep":
            _run_multistep(system, h, scheme, start, rec, steps, singular)
        else:
            _run_predictor_corrector(system, h, scheme, start, rec, steps)
    elif scheme.tableau is not None:
        A, b = _tableau_numeric(scheme.tableau)
        if np.all(np.triu(A) == 0):
            advance = _explicit_rk(system, h, A, b)
        else:
            advance, _ = _implicit_rk(system, h, A, b, singular)
        _run_one_step(advance, u0, rec, steps)
    elif scheme.stability_function is not None:
        advance, horner_notes = _stability_function_advance(system, h, scheme)
        notes += horner_notes
        _run_one_step(advance, u0, rec, steps)
    else:
        raise InputError("scheme", f"{scheme.name} has neither coefficients, a tableau nor a "
                                   "stability function to step with")

    log_norms = rec.log
    growth, resolution = _fit_growth(log_norms, k)
    tolerance = max(1e-9, 3.0 * resolution)
    slope = math.log(growth) if growth > 0 else -math.inf
    verdict = "grows" if slope > tolerance else "decays" if slope < -tolerance else "bounded"
    peak = int(np.argmax(log_norms))
    with np.errstate(over="ignore"):
        max_transient = float(np.exp(log_norms[peak] - log_norms[0]))

    lam = system.eigenvalues()
    predicted = None if lam is None else _predicted_growth(scheme, h, lam)
    measure = non_normality(system) if normality is None else normality
    cautions = _cautions(system, verdict, growth, predicted, max_transient, peak, measure)
    with np.errstate(over="ignore"):
        norms = np.exp(log_norms)
    log10 = log_norms / math.log(10.0)
    norms.setflags(write=False)
    log10.setflags(write=False)
    return VerifyResult(
        scheme=scheme.name, h=h, steps=steps, unknowns=system.n, norms=norms,
        log10_norms=log10, observed_growth_per_step=growth, predicted_growth=predicted,
        verdict=verdict, max_transient=max_transient, starting=how,
        notes=tuple(cautions + notes + [SCOPE_NOTE]))


def _cautions(system, verdict, growth, predicted, max_transient, peak, measure) -> list:
    out = []
    if measure > NON_NORMAL_THRESHOLD:
        out.append(f"J is non-normal (||J J^H - J^H J||_F / ||J||_F^2 = about {measure:.2g}): "
                   "its eigenvalues do not bound the transient, so growth before decay is "
                   "possible even when every h*lambda lies in the stability region")
    if max_transient > TRANSIENT_NOTE_FACTOR and verdict != "grows":
        out.append(f"transient growth observed before decay: ||u_n|| reached "
                   f"{max_transient:.3g} times its initial value (at step {peak}) although the "
                   f"run {'decays' if verdict == 'decays' else 'stays bounded'} in the end")
    if predicted is None:
        out.append(f"predicted growth not computed: N = {system.n} is above {PREDICT_MAX_N}, "
                   "the largest order whose dense eigenvalues are computed here; pass the "
                   "eigenvalues to compare")
        return out
    gap = _relative_gap(growth, predicted)
    if verdict == "grows" and predicted <= 1 + 1e-12:
        out.append(f"the run grows although every h*lambda is in the stability region "
                   f"(largest root modulus {predicted:.6g}): a non-normal transient not yet "
                   "over, or eigenvalues that rounding has moved")
    elif verdict != "grows" and predicted > 1 + 1e-9:
        out.append(f"the prediction says growth (largest root modulus {predicted:.6g}) but the "
                   f"run does not grow yet (observed {growth:.6g} per step): the growing root's "
                   "mode is barely excited (exact starting values excite spurious roots only "
                   "through the scheme's truncation error) or too weakly present in u_0; more "
                   "steps will show it")
    elif gap is not None and gap > AGREEMENT_NOTE:
        out.append(f"observed growth per step {growth:.6g} differs from the predicted largest "
                   f"root modulus {predicted:.6g} by {100 * gap:.2g}%: the dominant mode may "
                   "not have taken over within these steps (more steps help), several roots "
                   "may share the largest modulus, or J is non-normal")
    if system.kind != "diagonal" and measure > NON_NORMAL_THRESHOLD:
        out.append("the eigenvalues of a non-normal matrix are sensitive to rounding; the "
                   "prediction uses them as computed")
    return out


def _singular_error(system, h, family, coefficient, err) -> InputError:
    """Return the InputError for a singular implicit solve, naming the offending h*lambda."""
    lam = system.eigenvalues()
    if family == "multistep":
        beta = float(coefficient)
        targets = np.array([1.0 / (h * beta)])
        what = f"makes (I - h beta_k J) singular (beta_k = {beta:.6g})"
    else:
        mu = np.linalg.eigvals(coefficient)
        mu = mu[mu != 0]
        targets = 1.0 / (h * mu)
        what = "is a pole of R(z) and makes the stage system (I - h A kron J) singular"
    if lam is not None and lam.size and targets.size:
        dist = np.abs(lam[:, None] - targets[None, :])
        i = int(np.argmin(np.min(dist, axis=1)))
        hl = complex(h * lam[i])
        return InputError("step", f"the implicit system is singular at this h: h*lambda = "
                                  f"{_text(hl)} {what}")
    return InputError("step", f"the implicit system is singular at this h (reciprocal "
                              f"condition {err.rcond:.2g}): some h*lambda {what}")


def _text(z: complex) -> str:
    if z.imag == 0:
        return f"{z.real:.12g}"
    return f"{z.real:.12g}{'+' if z.imag >= 0 else '-'}{abs(z.imag):.12g}i"


def verify_around_limit(scheme: Scheme, matrix=None, eigenvalues=None, steps: int = 400,
                        factors=(0.99, 1.01), seed: int = 0,
                        starting: str = "rk-accurate") -> list:
    """Return one VerifyResult per factor, stepping at factor * h_max.

    h_max comes from analysis.steplimit on the eigenvalues (given, or the dense eigenvalues of
    a matrix with N <= PREDICT_MAX_N). Just below h_max the run should stay bounded, just
    above it grow. When h_max is unbounded or zero there is nothing to bracket: the single
    result returned is stepped at a large step (unbounded: max |h lambda| = 1e3, expected to
    stay bounded) or a small one (zero: max |h lambda| = 1e-3, expected to grow), and its
    first note says so.

    Parameters
    ----------
    scheme : Scheme
    matrix, eigenvalues, steps, seed, starting
        As for :func:`verify`.
    factors : sequence of float
        Positive finite multiples of h_max (at most 16).

    Returns
    -------
    list of VerifyResult
    """
    system = _system_from(matrix, eigenvalues)
    if isinstance(factors, (str, bytes)):
        raise InputError("factors", "must be a list of numbers")
    try:
        factors = [float(f) for f in factors]
    except (TypeError, ValueError):
        raise InputError("factors", "must be a list of numbers") from None
    if not factors or len(factors) > 16:
        raise InputError("factors", f"give 1 to 16 factors, got {len(factors)}")
    for f in factors:
        if not math.isfinite(f) or f <= 0:
            raise InputError("factors", f"every factor must be finite and > 0, got {f}")
    lam = system.eigenvalues()
    if lam is None:
        raise InputError("matrix", f"N = {system.n} is above {PREDICT_MAX_N}: its eigenvalues "
                                   "are not computed here, so h_max is unknown; pass the "
                                   "eigenvalues, or call verify at a step of your choice")
    limit = step_limit(scheme, lam)
    measure = non_normality(system)
    binding = ("" if limit.binding_eigenvalue is None
               else f", binding eigenvalue {_text(complex(limit.binding_eigenvalue))}")
    if limit.h_max is not None and limit.h_max > 0:
        out = []
        for f in factors:
            r = _verify(scheme, f * limit.h_max, system, steps, seed, starting, measure)
            note = f"stepped at {f:g} x h_max (h_max = {limit.h_max:.12g}{binding})"
            out.append(replace(r, notes=(note,) + r.notes))
        return out
    scale = float(np.max(np.abs(lam)))
    if scale == 0:
        scale = 1.0
    if limit.h_max is None:
        h = 1e3 / scale
        note = ("nothing to bracket: every positive step is stable for this spectrum "
                f"(h_max unbounded); stepped once at h = {h:.6g} (max |h lambda| = 1e3), "
                "which should stay bounded")
    else:
        h = 1e-3 / scale
        why = ("the scheme fails the root condition" if not limit.zero_stable
               else "no positive step is stable for the binding eigenvalue")
        note = (f"nothing to bracket: h_max = 0 ({why}); stepped once at h = {h:.6g} "
                "(max |h lambda| = 1e-3), which should grow")
    r = _verify(scheme, h, system, steps, seed, starting, measure)
    return [replace(r, notes=(note,) + r.notes)]
