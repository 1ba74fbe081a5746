"""Butcher tableaux: exact Runge-Kutta coefficients, their checks and their stability function.

A Runge-Kutta method with s stages is given by its tableau (A, b, c),

    k_i = f(t_n + c_i h, u_n + h sum_j a_ij k_j),   u_{n+1} = u_n + h sum_i b_i k_i,

in the notation of Butcher [1]_ and Hairer, Norsett & Wanner [2]_. Every entry is held exactly
(sympy rationals, or real algebraic numbers such as ``1/2 - sqrt(3)/6``), so that the order
conditions and the stability function come out exactly. The published coefficients of the
catalogue live in :mod:`stepfence.schemes.rk_tableaux`; this module only turns them, or a
user's JSON, into checked objects.

References
----------
.. [1] J. C. Butcher, Numerical Methods for Ordinary Differential Equations, 2nd ed., Wiley 2008.
.. [2] E. Hairer, S. P. Norsett, G. Wanner, Solving Ordinary Differential Equations I, 2nd ed.,
   Springer 1993, section II.1; E. Hairer, G. Wanner, Solving Ordinary Differential Equations
   II, 2nd ed., Springer 1996, section IV.3 (stability function).
"""
from __future__ import annotations

import math
import numbers
from dataclasses import dataclass
from fractions import Fraction
from functools import cached_property, lru_cache
from typing import Any

import numpy as np
import sympy as sp

from .. import limits
from ..errors import InputError, LimitExceeded
from .stability import Z

# An algebraic value whose 50-digit evaluation is below this is taken as zero when symbolic
# expansion did not already cancel it: a real nonzero algebraic number built from a handful of
# tableau entries is never that small, while rounding noise of an exact zero always is.
ZERO_DIGITS = 50
ZERO_TOLERANCE = sp.Float("1e-45", ZERO_DIGITS)

JSON_KEYS = ("A", "b", "c", "b_embedded", "fsal", "name")
MAX_NAME_CHARS = 200


# --- exact entries ---------------------------------------------------------------------------

def vanishes(value: sp.Expr) -> bool:
    """Return True when an exact real number is zero.

    Rationals are decided exactly. An algebraic value is first expanded (which cancels every
    sum of rational multiples of the same radicals, the case of all published tableaux); when
    that leaves something, it is evaluated to 50 digits and taken as zero below 1e-45. That
    numeric step gives the same verdict as ``sympy.simplify(value) == 0`` would whenever the
    latter can decide, without its cost on the (common) nonzero values.
    """
    value = sp.expand(value)
    if value.is_Rational:
        return value == 0
    return bool(abs(sp.N(value, ZERO_DIGITS)) < ZERO_TOLERANCE)


def _tidy(value: sp.Expr) -> sp.Expr:
    """Return a canonical exact form: rationals unchanged, radicals expanded and rationalised."""
    if value.is_Rational:
        return value
    value = sp.radsimp(sp.expand(value))
    return sp.Integer(0) if vanishes(value) else sp.expand(value)


def exact_entry(value: Any, field: str, where: str) -> sp.Expr:
    """Return one tableau entry as an exact real sympy number.

    Parameters
    ----------
    value : int, float, fractions.Fraction, str or sympy.Expr
        Integers and fractions are exact. A float is read as the decimal it prints as
        (``sympy.Rational(str(x))``: 0.1 means 1/10, not the binary double nearest to it).
        A string goes through the strict number parser
        :func:`stepfence.polytext.parse_number` (``"1/2 - sqrt(3)/6"``); it is never evaluated.
        A sympy value must be a real algebraic number without floats in it.
    field : str
        The input field for error messages (``"tableau"``).
    where : str
        The entry's place, prefixed to messages (``"A[2][1]"``).

    Raises
    ------
    InputError
        Naming ``field`` and ``where`` when the entry is not an exact real number.
    """
    if isinstance(value, bool) or value is None:
        raise InputError(field, f"{where}: expected a number, got {value!r}")
    if isinstance(value, str):
        from ..polytext import parse_number  # lazily: the parser module is optional at import
        try:
            parsed = parse_number(value, field)
        except InputError as err:
            raise _renamed(err, field, f"{where}: ") from err
        return _checked_number(sp.sympify(parsed, strict=True), field, where)
    if isinstance(value, numbers.Integral):
        return sp.Integer(int(value))
    if isinstance(value, Fraction):
        return sp.Rational(value.numerator, value.denominator)
    if isinstance(value, (float, sp.Float)) or (isinstance(value, numbers.Real)
                                                and not isinstance(value, sp.Basic)):
        x = float(value)
        if not math.isfinite(x):
            raise InputError(field, f"{where}: {x} is not a finite number")
        return sp.Rational(str(value if isinstance(value, sp.Float) else x))
    if isinstance(value, sp.Basic):
        return _checked_number(value, field, where)
    raise InputError(field, f"{where}: expected a number or a number string, "
                            f"got {type(value).__name__}")


def _checked_number(value: sp.Basic, field: str, where: str) -> sp.Expr:
    if not isinstance(value, sp.Expr) or not value.is_number:
        raise InputError(field, f"{where}: {value} is not a number")
    if value.has(sp.Float):
        raise InputError(field, f"{where}: {value} mixes a floating-point number into an exact "
                                "expression; write it as a fraction")
    if value.is_Rational:
        return value
    if value.is_algebraic is not True:
        raise InputError(field, f"{where}: {value} is not an algebraic number (only rationals "
                                "and radicals such as sqrt(3) are supported)")
    approx = sp.N(value, 30)
    if approx.has(sp.zoo, sp.nan, sp.oo, -sp.oo):
        raise InputError(field, f"{where}: {value} is not finite")
    if abs(sp.im(approx)) > 1e-25:
        raise InputError(field, f"{where}: {value} is not real (complex tableaux are not "
                                "supported)")
    return _tidy(value)


# --- shapes --------------------------------------------------------------------------------

def _stage_count(rows: int, field: str) -> int:
    if rows < 1:
        raise InputError(field, "A is empty; a tableau needs at least one stage")
    if rows > limits.MAX_STAGES:
        raise LimitExceeded(field, f"A has {rows} stages; at most {limits.MAX_STAGES} stages "
                                   "are allowed")
    return rows


def _rows_of(A: Any, field: str) -> list[list[Any]]:
    """Return A as a list of s rows of s raw entries, refusing any other shape."""
    if isinstance(A, sp.MatrixBase) or isinstance(A, np.ndarray):
        arr = A.tolist()
    elif isinstance(A, (list, tuple)):
        arr = A
    else:
        raise InputError(field, f"A must be a square list of rows, got {type(A).__name__}")
    s = _stage_count(len(arr), field)
    rows = []
    for i, row in enumerate(arr):
        if not isinstance(row, (list, tuple)):
            raise InputError(field, f"A[{i}] must be a list of {s} numbers, "
                                    f"got {type(row).__name__}")
        if len(row) != s:
            raise InputError(field, f"A is not square: it has {s} rows but A[{i}] has "
                                    f"{_entries(len(row))}")
        rows.append(list(row))
    return rows


def _vector_of(v: Any, name: str, s: int, field: str) -> list[Any]:
    """Return a weight or node vector as a list of s raw entries."""
    if isinstance(v, (sp.MatrixBase, np.ndarray)):
        shape = tuple(v.shape)
        if len(shape) > 2 or (len(shape) == 2 and min(shape) != 1):
            raise InputError(field, f"{name} must be a vector of {s} numbers, got an array of "
                                    f"shape {shape}")
        v = list(v) if isinstance(v, sp.MatrixBase) else list(v.ravel())
    if not isinstance(v, (list, tuple)):
        raise InputError(field, f"{name} must be a list of {s} numbers, got {type(v).__name__}")
    if len(v) != s:
        raise InputError(field, f"{name} has {_entries(len(v))} but A has {s} stages")
    return list(v)


def _entries(n: int) -> str:
    return "1 entry" if n == 1 else f"{n} entries"


def _same(x: sp.Expr, y: sp.Expr) -> bool:
    return vanishes(x - y)


# --- the tableau ---------------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class ButcherTableau:
    """An s-stage Runge-Kutta method, held exactly and checked on construction.

    Parameters
    ----------
    A : sympy.ImmutableMatrix, shape (s, s), or list of s lists of s numbers
        Stage coefficients a_ij.
    b : tuple of sympy.Expr, shape (s,)
        Weights of the propagated solution (a 1 x s matrix or any sequence is accepted).
    c : tuple of sympy.Expr, shape (s,), optional
        Nodes. They must equal the row sums of A exactly; when omitted they are derived so.
    b_embedded : tuple of sympy.Expr, shape (s,), optional
        Weights of the embedded (error-estimating) solution of a pair.
    fsal : bool
        First same as last: the last stage of a step is the first of the next, so an
        explicit FSAL method costs s - 1 evaluations per step. Requires the last row of A to
        equal b and the first stage to be explicit.
    name : str
        Catalogue name or ``"custom"``.

    Entries may be ints, fractions, floats (read as the decimal they print as), strings
    for the strict parser, or exact sympy numbers; they are stored as exact sympy numbers.

    Raises
    ------
    InputError
        With field ``"tableau"``, naming the entry or the shape that is wrong.

    Examples
    --------
    >>> t = ButcherTableau([[0, 0], [1, 0]], [sp.Rational(1, 2), sp.Rational(1, 2)])
    >>> t.c, t.explicit, t.stages
    ((0, 1), True, 2)
    >>> t.stability_function()
    (z**2/2 + z + 1, 1)
    """

    A: Any
    b: Any
    c: Any = None
    b_embedded: Any = None
    fsal: bool = False
    name: str = "custom"

    def __post_init__(self):
        field = "tableau"
        raw = _rows_of(self.A, field)
        s = len(raw)
        A = sp.ImmutableMatrix([[exact_entry(x, field, f"A[{i}][{j}]") for j, x in enumerate(row)]
                                for i, row in enumerate(raw)])
        b = tuple(exact_entry(x, field, f"b[{i}]")
                  for i, x in enumerate(_vector_of(self.b, "b", s, field)))
        row_sums = [_tidy(sum(A.row(i), sp.Integer(0))) for i in range(s)]
        if self.c is None:
            c = tuple(row_sums)
        else:
            c = tuple(exact_entry(x, field, f"c[{i}]")
                      for i, x in enumerate(_vector_of(self.c, "c", s, field)))
            for i in range(s):
                if not _same(row_sums[i], c[i]):
                    raise InputError(field, f"row {i} of A sums to {row_sums[i]} but c[{i}] = "
                                            f"{c[i]} (rows counted from 0; c must equal A 1)")
        b_emb = None
        if self.b_embedded is not None:
            b_emb = tuple(exact_entry(x, field, f"b_embedded[{i}]")
                          for i, x in enumerate(_vector_of(self.b_embedded, "b_embedded", s,
                                                           field)))
        if not isinstance(self.fsal, bool):
            raise InputError(field, f"fsal must be true or false, got {self.fsal!r}")
        if not isinstance(self.name, str) or not self.name or len(self.name) > MAX_NAME_CHARS:
            raise InputError(field, f"name must be a non-empty string of at most "
                                    f"{MAX_NAME_CHARS} characters")
        if self.fsal:
            if not all(_same(A[s - 1, j], b[j]) for j in range(s)):
                raise InputError(field, "fsal is set but the last row of A differs from b, so "
                                        "the last stage is not the next step's first")
            if not all(vanishes(A[0, j]) for j in range(s)):
                raise InputError(field, "fsal is set but the first stage is implicit (row 0 "
                                        "of A is not zero)")
        object.__setattr__(self, "A", A)
        object.__setattr__(self, "b", b)
        object.__setattr__(self, "c", c)
        object.__setattr__(self, "b_embedded", b_emb)

    # --- structure -------------------------------------------------------------------------
    @property
    def stages(self) -> int:
        """Return s, the number of stages."""
        return self.A.rows

    def _zero_pattern(self) -> list[list[bool]]:
        return [[vanishes(self.A[i, j]) for j in range(self.stages)] for i in range(self.stages)]

    @cached_property
    def _pattern(self) -> tuple:
        zero = self._zero_pattern()
        s = self.stages
        lower = all(zero[i][j] for i in range(s) for j in range(i + 1, s))
        diagonal = [self.A[i, i] for i in range(s)]
        diag_zero = [zero[i][i] for i in range(s)]
        return lower, diagonal, diag_zero

    @property
    def explicit(self) -> bool:
        """Return True when A is strictly lower triangular (every stage explicit)."""
        lower, _, diag_zero = self._pattern
        return lower and all(diag_zero)

    @property
    def diagonally_implicit(self) -> bool:
        """Return True for a DIRK: A lower triangular with at least one nonzero diagonal entry."""
        lower, _, diag_zero = self._pattern
        return lower and not all(diag_zero)

    @property
    def singly_diagonally_implicit(self) -> bool:
        """Return True for an SDIRK: lower triangular, all diagonal entries one nonzero gamma.

        A method with an explicit first stage and equal gamma after it (ESDIRK) is not counted.
        """
        lower, diagonal, diag_zero = self._pattern
        return (lower and not diag_zero[0]
                and all(_same(d, diagonal[0]) for d in diagonal[1:]))

    @cached_property
    def stiffly_accurate(self) -> bool:
        """Return True when the last row of A equals b (u_{n+1} is the last stage value)."""
        s = self.stages
        return all(_same(self.A[s - 1, j], self.b[j]) for j in range(s))

    @property
    def evaluations_per_step(self) -> int:
        """Return the right-hand-side evaluations per step: s, or s - 1 for explicit FSAL."""
        return self.stages - 1 if (self.fsal and self.explicit) else self.stages

    @cached_property
    def is_rational(self) -> bool:
        """Return True when every entry of A, b, c (and b_embedded) is rational."""
        entries = list(self.A) + list(self.b) + list(self.c) + list(self.b_embedded or ())
        return all(x.is_Rational for x in entries)

    # --- linear stability ------------------------------------------------------------------
    @cached_property
    def _stability(self) -> tuple:
        s = self.stages
        ones_bT = sp.ImmutableMatrix(s, s, lambda i, j: self.b[j])
        P = _det_one_minus_z(self.A - ones_bT)
        Q = _det_one_minus_z(self.A)
        return _cancel_normalised(P, Q)

    def stability_function(self) -> tuple[sp.Expr, sp.Expr]:
        """Return (P, Q), polynomials in Z with R(z) = P(z)/Q(z) and Q(0) = 1.

        R(z) = 1 + z b^T (I - zA)^{-1} 1 = det(I - zA + z 1 b^T) / det(I - zA)
        (Hairer & Wanner II, 2nd ed., Proposition IV.3.2). Both determinants come from
        division-free characteristic polynomials, so they are exact; radicals are expanded
        and rationalised coefficient by coefficient, and common factors are cancelled.
        """
        return self._stability

    # --- views -----------------------------------------------------------------------------
    def numeric(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Return (A, b, c) as float arrays, shapes (s, s), (s,), (s,)."""
        A = np.array([[float(x) for x in self.A.row(i)] for i in range(self.stages)])
        b = np.array([float(x) for x in self.b])
        c = np.array([float(x) for x in self.c])
        return A, b, c

    def to_json(self) -> dict:
        """Return a JSON-ready dict with every entry as an exact string; from_json reads it."""
        out = {
            "name": self.name,
            "A": [[_text(x) for x in self.A.row(i)] for i in range(self.stages)],
            "b": [_text(x) for x in self.b],
            "c": [_text(x) for x in self.c],
            "fsal": self.fsal,
        }
        if self.b_embedded is not None:
            out["b_embedded"] = [_text(x) for x in self.b_embedded]
        return out

    @classmethod
    def from_json(cls, obj: Any, field: str = "tableau") -> "ButcherTableau":
        """Return the tableau described by a JSON object.

        Parameters
        ----------
        obj : dict
            ``{"A": [[...], ...], "b": [...], "c": [...], "b_embedded": [...], "fsal": bool,
            "name": str}``; only A and b are required. Entries are ints, floats (read as the
            decimal written: ``0.1`` is exactly 1/10) or strings such as ``"2/3"`` or
            ``"1/2 - sqrt(3)/6"``, read by the strict parser (never evaluated).
        field : str
            Field name used in every error message.

        Raises
        ------
        InputError
            Naming ``field`` and the entry: ``tableau: A[2][1]: ...``.
        """
        if not isinstance(obj, dict):
            raise InputError(field, f"expected an object with keys A and b, "
                                    f"got {type(obj).__name__}")
        unknown = sorted(set(obj) - set(JSON_KEYS), key=str)
        if unknown:
            raise InputError(field, f"unknown key {unknown[0]!r}",
                             expected="keys " + ", ".join(JSON_KEYS))
        for key in ("A", "b"):
            if key not in obj:
                raise InputError(field, f"missing {key}")
        try:
            # null stands for "not given" in every optional key
            fsal = obj.get("fsal")
            name = obj.get("name")
            return cls(A=obj["A"], b=obj["b"], c=obj.get("c"),
                       b_embedded=obj.get("b_embedded"),
                       fsal=False if fsal is None else fsal,
                       name="custom" if name is None else name)
        except InputError as err:
            if err.field == field:
                raise
            raise _renamed(err, field) from err


def _renamed(err: InputError, field: str, prefix: str = "") -> InputError:
    """Return a copy of err (same class, same position) reported under another field."""
    return type(err)(field, prefix + err.message, position=err.position, expected=err.expected,
                     line=err.line, column=err.column)


def _text(x: sp.Expr) -> str:
    return str(x)


def _det_one_minus_z(M: sp.MatrixBase) -> list[sp.Expr]:
    """Return the ascending coefficients of det(I - z M), length s + 1.

    With det(x I - M) = x^s + a_1 x^(s-1) + ... + a_s, det(I - z M) = 1 + a_1 z + ... + a_s z^s.
    """
    M = sp.Matrix(M)
    if not all(a.is_Rational for a in M):
        # hardening fix: with radicals in A, sympy's charpoly works on raw expressions that
        # grow without bound (a dense 8-stage tableau with sqrt(2) in every entry ran for
        # minutes, tying up a server thread); in the algebraic field QQ<sqrt(...)> it is exact
        # and takes milliseconds. Same coefficients (checked in test_hardening_numeric.py).
        from sympy.polys.matrices import DomainMatrix
        try:
            dm = DomainMatrix.from_Matrix(M, extension=True)
        except Exception:  # noqa: BLE001 - no field found: keep the general route below
            dm = None
        if dm is not None and dm.domain.is_AlgebraicField:
            return [_tidy(sp.expand(dm.domain.to_sympy(a))) for a in dm.charpoly()]
    x = sp.Dummy("x")
    # expand, not the default simplify: entries are canonical already and simplify is slow
    coeffs = M.charpoly(x, simplify=sp.expand).all_coeffs()
    return [_tidy(a) for a in coeffs]


def _cancel_normalised(P: list, Q: list) -> tuple[sp.Expr, sp.Expr]:
    """Return (P, Q) as expressions in Z with common factors cancelled and Q(0) = 1."""
    Pz = sp.Add(*[a * Z**k for k, a in enumerate(P)])
    Qz = sp.Add(*[a * Z**k for k, a in enumerate(Q)])
    algebraic = not all(a.is_Rational for a in P + Q)
    opts = {"extension": True} if algebraic else {}
    g = sp.gcd(Pz, Qz, **opts)
    if sp.degree(g, Z) > 0:
        Pz = sp.quo(Pz, g, Z, **opts)
        Qz = sp.quo(Qz, g, Z, **opts)
    q0 = Qz.subs(Z, 0)
    Pz, Qz = (_tidy_poly(Pz / q0), _tidy_poly(Qz / q0))
    return Pz, Qz


def _tidy_poly(expr: sp.Expr) -> sp.Expr:
    poly = sp.Poly(sp.expand(expr), Z)
    return sp.Add(*[_tidy(a) * Z**k for (k,), a in poly.terms()])


# --- the catalogue -------------------------------------------------------------------------

def catalogue_names() -> tuple[str, ...]:
    """Return the names of the tabulated Runge-Kutta methods, in catalogue order."""
    from .rk_tableaux import TABLEAUX
    return tuple(TABLEAUX)


@lru_cache(maxsize=None)
def catalogue_tableau(name: str) -> ButcherTableau:
    """Return the checked tableau of a catalogue method (``rk4``, ``dopri5``, ``radau5``...).

    Raises
    ------
    InputError
        With field ``"scheme"`` when the name is not in the catalogue.
    """
    from .rk_tableaux import TABLEAUX
    spec = TABLEAUX.get(name)
    if spec is None:
        raise InputError("scheme", f"unknown Runge-Kutta tableau {name!r}",
                         expected="one of " + ", ".join(TABLEAUX))
    return ButcherTableau(A=spec["A"], b=spec["b"], c=spec["c"],
                          b_embedded=spec.get("b_embedded"), fsal=spec.get("fsal", False),
                          name=name)
