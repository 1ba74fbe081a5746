"""Order of a Runge-Kutta method from the rooted-tree conditions, and of R(z) against e^z.

A method (A, b, c) has order p when Phi(t) = 1/gamma(t) for every rooted tree t with at most p
vertices (Butcher [1]_, Hairer, Norsett & Wanner [2]_ Theorem II.2.13). Here

    gamma(t) = |t| * prod gamma(t_i)               (density)
    sigma(t) = prod over distinct subtrees u of m_u! sigma(u)^m_u     (symmetry)
    Phi(t)   = b^T g(t),   g(t) = prod_i (A g(t_i))  (elementwise; g(single vertex) = 1)

for t = [t_1, ..., t_m], the tree whose root carries the subtrees t_i. The trees are generated
once per order by our own code and kept in a module cache; every g is computed once per
tableau and shared by all trees that contain it.

Arithmetic: a rational tableau is checked exactly with fractions.Fraction. A tableau with
algebraic entries (sqrt) is checked with mpmath at 60 significant digits in a private context,
and a condition counts as satisfied when |Phi(t) - 1/gamma(t)| < 1e-45: rounding at 60 digits
stays far below that, and a genuinely failed condition of a method with entries of moderate
size is far above it.

References
----------
.. [1] J. C. Butcher, Numerical Methods for Ordinary Differential Equations, 2nd ed., Wiley 2008,
   chapter 3.
.. [2] E. Hairer, S. P. Norsett, G. Wanner, Solving Ordinary Differential Equations I, 2nd ed.,
   Springer 1993, section II.2.
.. [3] J. R. Dormand, Numerical Methods for Differential Equations: A Computational Approach,
   CRC Press 1996 (error coefficients tau(t) and their 2-norm A^(q)).
"""
from __future__ import annotations

import math
from collections import Counter
from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache

import mpmath
import sympy as sp

from ..errors import InputError
from ..schemes.butcher import vanishes
from ..schemes.stability import Z

MAX_TREE_ORDER = 10       # 1205 trees in all; beyond the order of any tabulated method
DEFAULT_MAX_ORDER = 8
MP_DIGITS = 60
MP_TOLERANCE_EXPONENT = -45
MAX_LINEAR_ORDER = 60

Shape = tuple  # a tree: the sorted tuple of its root's subtrees; () is the single vertex


@dataclass(frozen=True)
class RootedTree:
    """One rooted tree with the numbers the order conditions need.

    Attributes
    ----------
    shape : tuple
        Canonical nested tuple: the sorted tuple of the root's subtrees; ``()`` is one vertex.
    order : int
        Number of vertices |t|.
    gamma : int
        Density gamma(t).
    sigma : int
        Symmetry sigma(t), the order of the tree's automorphism group.
    children : tuple of int
        Indices (into all_trees()) of the root's subtrees, with repetition.
    index : int
        This tree's own index into all_trees().
    """

    shape: Shape
    order: int
    gamma: int
    sigma: int
    children: tuple
    index: int

    def text(self) -> str:
        """Return bracket notation: ``t`` for one vertex, ``[t, [t]]`` for a root with subtrees."""
        return _bracket(self.shape)


def _bracket(shape: Shape) -> str:
    if not shape:
        return "t"
    return "[" + ", ".join(_bracket(u) for u in shape) + "]"


def _grow(shape: Shape):
    """Yield every tree obtained by attaching one new leaf to some vertex of shape."""
    yield tuple(sorted(shape + ((),)))
    for i, child in enumerate(shape):
        for bigger in _grow(child):
            yield tuple(sorted(shape[:i] + (bigger,) + shape[i + 1:]))


@lru_cache(maxsize=None)
def _tree_table() -> tuple:
    """Return every rooted tree through MAX_TREE_ORDER, built once per process."""
    # every tree of order n >= 2 loses a leaf to become a tree of order n - 1, so growing all
    # trees of order n - 1 by one leaf reaches all trees of order n
    levels = [[()]]
    for _ in range(2, MAX_TREE_ORDER + 1):
        grown = {g for shape in levels[-1] for g in _grow(shape)}
        levels.append(sorted(grown, key=lambda t: (len(t), t)))
    index: dict = {}
    out = []
    for order, level in enumerate(levels, start=1):
        for shape in level:
            kids = tuple(index[u] for u in shape)
            gamma = order * math.prod(out[k].gamma for k in kids)
            sigma = math.prod(math.factorial(m) * out[index[u]].sigma ** m
                              for u, m in Counter(shape).items())
            tree = RootedTree(shape, order, gamma, sigma, kids, len(out))
            index[shape] = tree.index
            out.append(tree)
    return tuple(out)


def all_trees(max_order: int = DEFAULT_MAX_ORDER) -> tuple:
    """Return every rooted tree with at most max_order vertices, ordered by order.

    Subtrees always come before the trees that contain them, so stage vectors can be
    filled in one pass, and all_trees(n) is a prefix of all_trees(n + 1).
    """
    _check_max_order(max_order, "max_order", MAX_TREE_ORDER)
    table = _tree_table()
    return table[:_count_through(max_order)]


@lru_cache(maxsize=None)
def _count_through(max_order: int) -> int:
    return sum(1 for t in _tree_table() if t.order <= max_order)


def trees_of_order(order: int) -> tuple:
    """Return the rooted trees with exactly ``order`` vertices."""
    _check_max_order(order, "order", MAX_TREE_ORDER)
    return tuple(t for t in all_trees(order) if t.order == order)


def _check_max_order(value, field: str, bound: int) -> None:
    if isinstance(value, bool) or not isinstance(value, int) or not 1 <= value <= bound:
        raise InputError(field, f"must be an integer from 1 to {bound}, got {value!r}")


# --- elementary weights --------------------------------------------------------------------

class _ExactField:
    """Python Fractions: exact and fast for rational tableaux."""

    name = "exact rational arithmetic"

    def convert(self, x: sp.Expr):
        return Fraction(int(x.p), int(x.q))

    def reciprocal(self, n: int):
        return Fraction(1, n)

    def satisfied(self, residual) -> bool:
        return residual == 0

    def to_float(self, x) -> float:
        return float(x)

    def sqrt_text(self, x) -> str:
        return str(sp.sqrt(sp.Rational(x.numerator, x.denominator)))


class _MpField:
    """mpmath at MP_DIGITS digits in a private context (no global precision is touched)."""

    name = (f"mpmath at {MP_DIGITS} digits; a condition holds when "
            f"|Phi(t) - 1/gamma(t)| < 1e{MP_TOLERANCE_EXPONENT}")

    def __init__(self):
        self.ctx = mpmath.MPContext()
        self.ctx.dps = MP_DIGITS
        self.tol = self.ctx.mpf(10) ** MP_TOLERANCE_EXPONENT

    def convert(self, x: sp.Expr):
        return self.ctx.mpf(sp.N(x, MP_DIGITS + 10))

    def reciprocal(self, n: int):
        return self.ctx.mpf(1) / n

    def satisfied(self, residual) -> bool:
        return abs(residual) < self.tol

    def to_float(self, x) -> float:
        return float(x)

    def sqrt_text(self, x) -> None:
        return None


def _weights(tableau, embedded: bool):
    if embedded:
        if tableau.b_embedded is None:
            raise InputError("tableau", "has no embedded weights (b_embedded)")
        return tableau.b_embedded
    return tableau.b


def elementary_weights(tableau, max_order: int = DEFAULT_MAX_ORDER, embedded: bool = False):
    """Return (Phi, field): Phi[i] is Phi(t) for all_trees(max_order)[i], in field's numbers.

    Each stage vector g(t) and each product A g(t) is computed once and reused by every tree
    that has t as a subtree.
    """
    trees = all_trees(max_order)
    num = _ExactField() if tableau.is_rational else _MpField()
    s = tableau.stages
    A = [[num.convert(tableau.A[i, j]) for j in range(s)] for i in range(s)]
    b = [num.convert(x) for x in _weights(tableau, embedded)]
    rows = [[(j, a) for j, a in enumerate(row) if a != 0] for row in A]  # skip zeros
    one = num.convert(sp.Integer(1))
    Ag = []      # A g(t) per tree
    Phi = []
    for tree in trees:
        g = [one] * s
        for k in tree.children:
            v = Ag[k]
            g = [gi * vi for gi, vi in zip(g, v)]
        Ag.append([sum((a * g[j] for j, a in row), 0 * one) for row in rows])
        Phi.append(sum((bi * gi for bi, gi in zip(b, g)), 0 * one))
    return Phi, num


def order_conditions(tableau, max_order: int = DEFAULT_MAX_ORDER,
                     embedded: bool = False) -> dict:
    """Return the order of a Runge-Kutta method from its rooted-tree conditions.

    Parameters
    ----------
    tableau : ButcherTableau
    max_order : int
        Check trees up to this order (1 to MAX_TREE_ORDER); the reported order is capped here.
    embedded : bool
        Use the embedded weights b_embedded instead of b.

    Returns
    -------
    dict
        ``order``: largest p with Phi(t) = 1/gamma(t) for all trees of order <= p;
        ``capped``: True when every condition through max_order holds (order may be higher);
        ``trees_checked``: {order q: number of trees checked} for q = 1 .. min(p + 1, max_order);
        ``failed_trees``: bracket text of the trees of order p + 1 that fail;
        ``error_order``: p + 1, or None when capped;
        ``principal_error_norm``: A^(p+1) = ||tau^(p+1)||_2 with
        tau(t) = (Phi(t) - 1/gamma(t)) / sigma(t) over the trees of order p + 1 (the
        definition of Dormand 1996, [3]_), as a float, or None when capped;
        ``principal_error_norm_exact``: the same as exact text for rational tableaux, else None;
        ``arithmetic``: how the conditions were decided.
    """
    _check_max_order(max_order, "max_order", MAX_TREE_ORDER)
    trees = all_trees(max_order)
    Phi, num = elementary_weights(tableau, max_order, embedded)
    checked: dict = {}
    p = max_order
    failed: list = []
    tau_sq = 0
    for q in range(1, max_order + 1):
        level = [t for t in trees if t.order == q]
        checked[q] = len(level)
        for t in level:
            tau = (Phi[t.index] - num.reciprocal(t.gamma)) / t.sigma
            if not num.satisfied(tau):
                failed.append(t.text())
            tau_sq = tau_sq + tau * tau
        if failed:
            p = q - 1
            break
        tau_sq = 0
    capped = not failed
    return {
        "order": p,
        "capped": capped,
        "max_order": max_order,
        "trees_checked": checked,
        "failed_trees": failed,
        "error_order": None if capped else p + 1,
        "principal_error_norm": None if capped else math.sqrt(num.to_float(tau_sq)),
        "principal_error_norm_exact": None if capped else num.sqrt_text(tau_sq),
        "arithmetic": num.name,
    }


# --- linear order: R(z) against e^z --------------------------------------------------------

def linear_order(P: sp.Expr, Q: sp.Expr, max_order: int = 20) -> tuple:
    """Return (p, C) with R(z) - e^z = C z^(p+1) + O(z^(p+2)) for R = P/Q.

    Since Q(0) != 0, R - e^z = (P - Q e^z)/Q has the leading coefficient of P - Q e^z divided
    by Q(0); its Taylor coefficients are p_k - sum_j q_j / (k - j)!, exact.

    Parameters
    ----------
    P, Q : sympy.Expr
        Polynomials in Z (stepfence.schemes.stability.Z) with exact coefficients, Q(0) != 0.
    max_order : int
        Look no further than z^(max_order + 1).

    Returns
    -------
    (int, sympy.Expr or None)
        p, and the exact error constant C. When R matches e^z through z^(max_order + 1), returns
        (max_order, None): the order is at least max_order. p = -1 means R(0) != 1.

    Raises
    ------
    InputError
        Field ``"stability_function"`` when P or Q is not a polynomial in z or Q(0) = 0.
    """
    _check_max_order(max_order, "max_order", MAX_LINEAR_ORDER)
    try:
        Pp = sp.Poly(sp.expand(P), Z)
        Qp = sp.Poly(sp.expand(Q), Z)
    except sp.PolynomialError as err:
        raise InputError("stability_function", f"P and Q must be polynomials in z: {err}") from err
    p_co = _ascending(Pp)
    q_co = _ascending(Qp)
    q0 = q_co[0] if q_co else sp.Integer(0)
    if vanishes(q0):
        raise InputError("stability_function", "Q(0) = 0: R(z) has a pole at z = 0")
    for k in range(max_order + 2):
        pk = p_co[k] if k < len(p_co) else 0
        ck = pk - sum(q_co[j] / sp.factorial(k - j) for j in range(min(k, len(q_co) - 1) + 1))
        ck = sp.radsimp(sp.expand(ck / q0))
        if not vanishes(ck):
            return k - 1, ck
    return max_order, None


def _ascending(poly: sp.Poly) -> list:
    return list(reversed(poly.all_coeffs())) if not poly.is_zero else []
