"""Strict parsers for exact numbers, number lists, polynomials and rational functions.

User text never reaches ``eval``, ``sympify`` or ``parse_expr``: it is tokenised and read by the
small recursive-descent grammar below, and every value is built from Python integers with exact
arithmetic of our own; sympy only receives the finished numbers. What is accepted:

* numbers: ``3``, ``-4/3``, ``0.125``, ``.5``, ``1.5e-3`` (decimals are read exactly, so
  ``0.1`` is 1/10, never a binary float), and ``sqrt(q)`` of a rational ``q``;
* operators ``+ - * / ^`` (``**``, ``·``, ``×`` and the minus sign U+2212 are read as their
  ASCII twins), parentheses, superscript exponents (``ζ²``, ``z⁻¹``);
* implicit multiplication by juxtaposition: ``2zeta``, ``3 z^2``, ``(1+z)(1-z)``, ``z(z+1)``.
  It has the same precedence as ``*`` and ``/``, read left to right, so ``1/2 z^2`` is z^2/2.
  It is refused right after a division by anything but a number (``1/(1-z)(1+z)`` could mean
  either grouping);
* the imaginary unit ``i`` (also ``j``, ``I``) only where the caller allows complex values;
* the variable under its name or an alias (``ζ`` for ``zeta``), spelt one way in one text.

Refused, with a message naming the field, the place and the problem: two numbers side by side,
two signs in a row (``1+-z``), chained powers (``z^2^3``), non-integer or variable exponents,
``0^0``, division by zero, names other than the variable, ``=``, ``inf`` and ``nan``, in number
fields a sign with a space before it and none after (``1 -1``: a list typed without commas?),
and anything over the bounds in stepfence.limits (text length, polynomial degree) or in the
constants below (nesting, size of one exact number, total arithmetic), so no text can make a
parse slow or huge.

Positions in errors are 0-based character offsets into the text; line and column are 1-based.
format_exact writes an exact number back as text these parsers read.
"""
from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache
from math import gcd

import sympy as sp

from .errors import InputError, LimitExceeded
from .limits import MAX_POLY_DEGREE, MAX_TEXT_CHARS

MAX_NESTING = 100            # parentheses deep; keeps the recursive reader far from Python's limit
MAX_LITERAL_DIGITS = 1250    # digits in one number literal: room for any MAX_NUMBER_BITS integer
MAX_NUMBER_BITS = 4096       # numerator or denominator of any exact rational (~1233 digits), far
                             # below the 4300 digits Python still converts with str()
MAX_NUMBER_TERMS = 16        # terms of one exact irrational number, as in 1 + sqrt(2) + sqrt(3)
MAX_SQRT_ARGUMENT = 10**12   # numerator and denominator of q in sqrt(q): they are factorised
MAX_EXPONENT = 100_000       # |n| in x^n; the bit and degree bounds usually bite first
MAX_WORK = 400_000           # exact-arithmetic work per text: a few seconds at worst (see charge)

VARIABLE_ALIASES = {"zeta": ("ζ",), "z": ()}
IMAGINARY_NAMES = ("i", "j", "I")
FUNCTION_NAMES = ("sqrt",)

_ONE_CHAR_OPS = {"+": "+", "-": "-", "\u2212": "-", "*": "*", "\u00b7": "*", "\u00d7": "*",
                 "/": "/", "^": "^", "(": "(", ")": ")", ",": ",", ";": ";", "[": "[", "]": "]"}
_ASCII_DIGITS = {c: i for i, c in enumerate("0123456789")}
_ASCII_SIGNS = {"+": False, "-": True, "\u2212": True}
_SUPERSCRIPT_DIGITS = {c: i for i, c in enumerate("⁰¹²³⁴⁵⁶⁷⁸⁹")}
_SUPERSCRIPT_SIGNS = {"⁺": False, "⁻": True}
_ALLOWED = "numbers, + - * / ^, parentheses and sqrt(...)"

_ZERO = Fraction(0)
_ONE = Fraction(1)


# --- one parse: text, field, position, work budget ------------------------------------------

class _Context:
    """One parse: the text and field, where reading has got to, and the work spent so far.

    Errors built here name the field and the place; ``at`` is the position of the operation
    under way, so arithmetic deep inside can still say where in the text it was asked for.
    ``primes`` are those met in sqrt arguments: the only ones a square root here can contain.
    """

    def __init__(self, text: str, field: str):
        self.text = text
        self.field = field
        self.at = 0
        self.work = 0
        self.primes: set[int] = set()

    def error(self, position: int, message: str, expected: str | None = None,
              limit: bool = False) -> InputError:
        line = self.text.count("\n", 0, position) + 1
        column = position - (self.text.rfind("\n", 0, position) + 1) + 1
        cls = LimitExceeded if limit else InputError
        return cls(self.field, message, position=position, expected=expected,
                   line=line, column=column)

    def charge(self, units: int):
        """Count work, in units of about one rational multiply-add; refuse past MAX_WORK."""
        self.work += units
        if self.work > MAX_WORK:
            raise self.error(self.at, "this expression needs too much exact arithmetic; "
                                      "simplify it or expand it by hand", limit=True)


# --- exact numbers: Q(i, sqrt(p1), sqrt(p2), ...) ---------------------------------------------
# A number is a Fraction when rational, else a _Surd: a sum of distinct monomials
# q * sqrt(m) * i^e with m > 0 squarefree, e in {0, 1} and q != 0. That form is canonical, so a
# number is zero exactly when it is Fraction(0), and degrees of polynomials are never in doubt.

class _Surd:
    """An irrational (or non-real) exact number: terms {(m, e): q} as described above."""

    __slots__ = ("terms",)

    def __init__(self, terms: dict):
        self.terms = terms

    def __eq__(self, other):
        return isinstance(other, _Surd) and self.terms == other.terms

    def __hash__(self):
        return hash(frozenset(self.terms.items()))

    def __repr__(self):
        return f"_Surd({self.terms})"


def _number(terms: dict):
    """Return the canonical number with these terms (zero coefficients already dropped)."""
    if not terms:
        return _ZERO
    if len(terms) == 1 and (1, 0) in terms:
        return terms[(1, 0)]
    return _Surd(terms)


def _terms_of(a) -> dict:
    if isinstance(a, _Surd):
        return a.terms
    return {(1, 0): a} if a else {}


def _term_count(a) -> int:
    return len(a.terms) if isinstance(a, _Surd) else 1


def _accumulate(terms: dict, key: tuple, q: Fraction):
    """Add q to the term under key, dropping it when it cancels to zero."""
    s = terms.get(key, _ZERO) + q
    if s:
        terms[key] = s
    else:
        terms.pop(key, None)


def _nadd(a, b):
    if not isinstance(a, _Surd) and not isinstance(b, _Surd):
        return a + b
    out = dict(_terms_of(a))
    for key, q in _terms_of(b).items():
        _accumulate(out, key, q)
    return _number(out)


def _nneg(a):
    if isinstance(a, _Surd):
        return _Surd({k: -q for k, q in a.terms.items()})
    return -a


def _nmul(a, b):
    if not isinstance(a, _Surd) and not isinstance(b, _Surd):
        return a * b
    out: dict = {}
    for (m1, e1), q1 in _terms_of(a).items():
        for (m2, e2), q2 in _terms_of(b).items():
            # sqrt(m1) sqrt(m2) = g sqrt(m1 m2 / g^2) for squarefree m1, m2 and g = gcd
            g = gcd(m1, m2)
            q = q1 * q2 * g
            e = e1 + e2
            if e == 2:
                q, e = -q, 0
            _accumulate(out, ((m1 // g) * (m2 // g), e), q)
    return _number(out)


def _conjugate(a: _Surd, prime: int) -> _Surd:
    """Return the image of a under sqrt(prime) -> -sqrt(prime) (prime 0: i -> -i)."""
    return _Surd({(m, e): (-q if (e if prime == 0 else m % prime == 0) else q)
                  for (m, e), q in a.terms.items()})


def _ninv(ctx: _Context, b):
    """Return 1/b for a nonzero exact b.

    Multiplying by the conjugate under one of the field's automorphisms (sqrt(p) -> -sqrt(p),
    or i -> -i) removes that generator from the denominator; once all are gone it is rational.
    """
    if not isinstance(b, _Surd):
        ctx.charge(1)
        return 1 / b
    numerator = _ONE
    for prime in [0] + sorted(ctx.primes):
        if not isinstance(b, _Surd):
            break
        if not any((e if prime == 0 else m % prime == 0) for m, e in b.terms):
            continue
        conj = _conjugate(b, prime)
        ctx.charge(_product_cost((b, numerator), (conj,)))
        numerator = _checked(ctx, _nmul(numerator, conj))
        b = _checked(ctx, _nmul(b, conj))
    return _nmul(numerator, 1 / b)


def _sqrt(ctx: _Context, q: Fraction, allow_complex: bool):
    """Return sqrt(q) for a rational q, or None when q < 0 and complex values are refused."""
    if q < 0 and not allow_complex:
        return None
    if q == 0:
        return _ZERO
    n, d = abs(q.numerator), q.denominator
    if max(n, d) > MAX_SQRT_ARGUMENT:
        raise ctx.error(ctx.at, "sqrt takes numerators and denominators up to "
                                f"{MAX_SQRT_ARGUMENT:.0e}", limit=True)
    # sqrt(n/d) = sqrt(n d)/d = s sqrt(f)/d with n d = s^2 f, f squarefree
    ctx.charge(5)
    factors = dict(_factorint(n))
    for p, k in _factorint(d).items():
        factors[p] = factors.get(p, 0) + k
    s, f = 1, 1
    for p, k in factors.items():
        s *= p ** (k // 2)
        if k % 2:
            f *= p
            ctx.primes.add(p)
    return _number({(f, 1 if q < 0 else 0): Fraction(s, d)})


@lru_cache(maxsize=512)
def _factorint(n: int) -> dict:
    return sp.factorint(n)


def _checked(ctx: _Context, c):
    """Return c after checking it against the size bounds of one exact number."""
    if isinstance(c, _Surd):
        if len(c.terms) > MAX_NUMBER_TERMS:
            raise ctx.error(ctx.at, f"an exact number here has more than {MAX_NUMBER_TERMS} "
                                    "terms", limit=True)
        parts = c.terms.values()
    else:
        parts = (c,)
    for q in parts:
        if q.numerator.bit_length() > MAX_NUMBER_BITS or \
                q.denominator.bit_length() > MAX_NUMBER_BITS:
            raise ctx.error(ctx.at, f"an exact number here needs more than {MAX_NUMBER_BITS} "
                                    "bits", limit=True)
    return c


def _to_sympy(c) -> sp.Expr:
    """Return the sympy form of an exact number."""
    if not isinstance(c, _Surd):
        return sp.Rational(c.numerator, c.denominator)
    return sp.Add(*[sp.Rational(q.numerator, q.denominator) * sp.sqrt(sp.Integer(m))
                    * (sp.I if e else 1) for (m, e), q in sorted(c.terms.items())])


def _power(ctx: _Context, a, n: int):
    """Return a^n for an exact a and an integer n of at most MAX_EXPONENT."""
    if abs(n) > MAX_EXPONENT:
        raise ctx.error(ctx.at, f"the exponent {n} is larger than {MAX_EXPONENT}", limit=True)
    if n < 0:
        a, n = _ninv(ctx, a), -n
    if isinstance(a, Fraction):
        # refuse before computing: a^n has about n times the bits of a
        if a and (max(a.numerator.bit_length(), a.denominator.bit_length()) - 1) * n \
                > MAX_NUMBER_BITS:
            raise ctx.error(ctx.at, f"an exact number here needs more than {MAX_NUMBER_BITS} "
                                    "bits", limit=True)
        return _checked(ctx, a ** n)
    result = _ONE
    while n:
        if n & 1:
            ctx.charge(_product_cost((result,), (a,)))
            result = _checked(ctx, _nmul(result, a))
        n >>= 1
        if n:
            ctx.charge(_product_cost((a,), (a,)))
            a = _checked(ctx, _nmul(a, a))
    return result


# --- polynomials: tuples of exact coefficients, ascending powers ----------------------------

def _trim(p: tuple) -> tuple:
    n = len(p)
    while n > 1 and p[n - 1] == 0:
        n -= 1
    return p[:n]


def _is_zero(p: tuple) -> bool:
    return len(p) == 1 and p[0] == 0


def _degree(p: tuple) -> int:
    return len(p) - 1


def _weight(p: tuple) -> int:
    """Return the work of touching every coefficient of p once."""
    return sum(_term_count(c) for c in p)


def _product_cost(p: tuple, q: tuple) -> int:
    """Return the work of multiplying every coefficient of p by every one of q.

    A rational multiply-add is one unit; each pair of terms of irrational numbers costs about
    two (measured with fractions.Fraction on CPython 3.11).
    """
    rp = sum(1 for c in p if c != 0 and not isinstance(c, _Surd))
    rq = sum(1 for c in q if c != 0 and not isinstance(c, _Surd))
    return rp * rq + 2 * (_weight(p) * _weight(q) - rp * rq)


def _padd(ctx: _Context, p: tuple, q: tuple) -> tuple:
    if len(p) < len(q):
        p, q = q, p
    ctx.charge(_weight(q))
    return _trim(tuple(_nadd(a, q[i]) if i < len(q) else a for i, a in enumerate(p)))


def _pscale(ctx: _Context, p: tuple, c) -> tuple:
    ctx.charge(_product_cost(p, (c,)))
    return _trim(tuple(_nmul(a, c) for a in p))


def _pmul(ctx: _Context, p: tuple, q: tuple) -> tuple:
    if _is_zero(p) or _is_zero(q):
        return (_ZERO,)
    ctx.charge(_product_cost(p, q))
    out = [_ZERO] * (len(p) + len(q) - 1)
    for i, a in enumerate(p):
        if a == 0:
            continue
        for j, b in enumerate(q):
            if b != 0:
                out[i + j] = _nadd(out[i + j], _nmul(a, b))
    return _trim(tuple(out))


def _pdivmod(ctx: _Context, p: tuple, q: tuple) -> tuple[tuple, tuple]:
    """Return quotient and remainder of p divided by the nonzero q."""
    inv_lead = _ninv(ctx, q[-1])
    r = list(p)
    quo = [_ZERO] * max(len(p) - len(q) + 1, 1)
    for shift in range(len(p) - len(q), -1, -1):
        factor = _checked(ctx, _nmul(r[shift + len(q) - 1], inv_lead))
        quo[shift] = factor
        if factor == 0:
            continue
        ctx.charge(_product_cost((factor,), q))
        for j, b in enumerate(q):
            r[shift + j] = _checked(ctx, _nadd(r[shift + j], _nneg(_nmul(factor, b))))
    return _trim(tuple(quo)), _trim(tuple(r[: max(len(q) - 1, 1)]))


def _pgcd(ctx: _Context, p: tuple, q: tuple) -> tuple:
    """Return the monic greatest common divisor of two polynomials, not both zero."""
    while not _is_zero(q):
        p, q = q, _pdivmod(ctx, p, q)[1]
    return _pscale(ctx, p, _ninv(ctx, p[-1]))


def _reduce(ctx: _Context, num: tuple, den: tuple) -> tuple[tuple, tuple]:
    """Return num / den with their greatest common divisor cancelled."""
    if _is_zero(num):
        return num, (_ONE,)
    g = _pgcd(ctx, num, den)
    if _degree(g) == 0:
        return num, den
    return _pdivmod(ctx, num, g)[0], _pdivmod(ctx, den, g)[0]


# --- tokens --------------------------------------------------------------------------------

@dataclass(frozen=True)
class _Token:
    kind: str            # "num", "name", "sup", "op", "nl", "end"
    text: str            # as typed; for "op" the ASCII operator
    start: int
    end: int
    space_before: bool
    value: object = None  # num: Fraction; sup: int


def _tokenize(ctx: _Context, newline_separates: bool) -> list[_Token]:
    """Return the tokens of ctx.text, ending with an "end" token."""
    text = ctx.text
    tokens: list[_Token] = []
    i, n = 0, len(text)
    space = False
    while i < n:
        c = text[i]
        if c == "\n" and newline_separates:
            tokens.append(_Token("nl", c, i, i + 1, space))
            i += 1
            space = True
            continue
        if c.isspace():
            i += 1
            space = True
            continue
        start = i
        if "0" <= c <= "9" or (c == "." and i + 1 < n and "0" <= text[i + 1] <= "9"):
            i, value = _read_number(ctx, i)
            tokens.append(_Token("num", text[start:i], start, i, space, value))
        elif c.isalpha() or c == "_":
            while i < n and (text[i].isalpha() or text[i] == "_" or "0" <= text[i] <= "9"):
                i += 1
            tokens.append(_Token("name", text[start:i], start, i, space))
        elif c in _SUPERSCRIPT_DIGITS or c in _SUPERSCRIPT_SIGNS:
            i, value = _read_signed_digits(ctx, i, _SUPERSCRIPT_SIGNS, _SUPERSCRIPT_DIGITS,
                                           "a superscript exponent", "such as ⁻¹")
            tokens.append(_Token("sup", text[start:i], start, i, space, value))
        elif text.startswith("**", i):
            tokens.append(_Token("op", "^", i, i + 2, space))
            i += 2
        elif c in _ONE_CHAR_OPS:
            tokens.append(_Token("op", _ONE_CHAR_OPS[c], i, i + 1, space))
            i += 1
        elif c == "=":
            raise ctx.error(i, "'=' is not allowed: give only the right-hand side, "
                               "such as 'zeta^2 - zeta'")
        else:
            raise ctx.error(i, f"unexpected character {c!r}", expected=_ALLOWED)
        space = False
    tokens.append(_Token("end", "", n, n, space))
    return tokens


def _run_end(text: str, i: int, chars) -> int:
    """Return the index just past the run of characters from chars that starts at i."""
    n = len(text)
    while i < n and text[i] in chars:
        i += 1
    return i


def _read_signed_digits(ctx: _Context, i: int, signs: dict, digits: dict, what: str,
                        example: str, position: int | None = None) -> tuple[int, int]:
    """Return (end, value) of an optional sign and at most 6 digits starting at i.

    signs maps each sign character to whether it negates, digits each digit to its value;
    errors point at position (default i) and call the thing read `what`.
    """
    text = ctx.text
    where = i if position is None else position
    negative = False
    if i < len(text) and text[i] in signs:
        negative = signs[text[i]]
        i += 1
    j = _run_end(text, i, digits)
    if j == i:
        raise ctx.error(where, f"{what} has no digits", expected=example)
    if j - i > 6:
        raise ctx.error(where, f"{what} is too large", limit=True)
    value = int("".join(str(digits[d]) for d in text[i:j]))
    return j, -value if negative else value


def _read_number(ctx: _Context, i: int) -> tuple[int, Fraction]:
    """Return (end, exact value) of the decimal literal starting at i."""
    text, n = ctx.text, len(ctx.text)
    start = i
    i = _run_end(text, i, _ASCII_DIGITS)
    whole = text[start:i]
    frac = ""
    if i < n and text[i] == ".":
        f0 = i + 1
        i = _run_end(text, f0, _ASCII_DIGITS)
        frac = text[f0:i]
        if i < n and text[i] == ".":
            raise ctx.error(i, "a number has a second decimal point")
    exp = 0
    if i < n and text[i] in "eE":
        i, exp = _read_signed_digits(ctx, i + 1, _ASCII_SIGNS, _ASCII_DIGITS,
                                     "the exponent of a number", "digits after 'e', as in 1e-3",
                                     position=i)
    digits = (whole + frac).lstrip("0") or "0"
    if len(digits) > MAX_LITERAL_DIGITS:
        raise ctx.error(start, f"a number has more than {MAX_LITERAL_DIGITS} digits", limit=True)
    exp -= len(frac)
    mantissa = int(digits)
    if mantissa == 0:
        return i, _ZERO
    # a cheap early refusal; the exact bit count is checked once the value exists
    if max(len(digits) + max(exp, 0), -exp) * 3.33 > 2 * MAX_NUMBER_BITS:
        raise ctx.error(start, f"an exact number here needs more than {MAX_NUMBER_BITS} bits",
                        limit=True)
    value = Fraction(mantissa * 10 ** exp) if exp >= 0 else Fraction(mantissa, 10 ** -exp)
    ctx.at = start
    return i, _checked(ctx, value)


# --- values met while reading: num / den ---------------------------------------------------

@dataclass(frozen=True)
class _Value:
    num: tuple
    den: tuple = (_ONE,)
    literal: bool = False   # a bare number literal, for the "1/2 z" juxtaposition rule

    @property
    def is_constant(self) -> bool:
        return len(self.num) == 1 and len(self.den) == 1

    @property
    def constant(self):
        """The value when it is a number (readers keep constant denominators at 1)."""
        return self.num[0] if self.is_constant else None


class _Reader:
    """Recursive-descent reader of one expression over a list of tokens.

    mode is "constant" (no variable), "polynomial" (division only by constants) or
    "rational" (any nonzero divisor).

    Grammar (juxtaposition is a product at the precedence of * and /)::

        expression := [sign] term (("+" | "-") term)*
        term       := power (("*" | "/") [sign] power | power-without-sign)*
        power      := primary [("^" exponent) | superscript]
        exponent   := [sign] (integer | "(" expression ")")
        primary    := number | variable | i | "sqrt" "(" expression ")" | "(" expression ")"
    """

    def __init__(self, ctx: _Context, tokens: list[_Token], mode: str, variable: str | None,
                 names: tuple, allow_complex: bool, in_list: bool = False):
        self.ctx = ctx
        self.tokens = tokens
        self.pos = 0
        self.mode = mode
        self.variable = variable
        self.names = names
        self.allow_complex = allow_complex
        self.in_list = in_list
        self.depth = 0
        self.spelling = None        # the one spelling of the variable this text uses

    # token helpers
    @property
    def tok(self) -> _Token:
        return self.tokens[self.pos]

    def is_op(self, *ops: str) -> bool:
        return self.tok.kind == "op" and self.tok.text in ops

    def take(self) -> _Token:
        t = self.tokens[self.pos]
        self.pos += 1
        return t

    def fail(self, message: str, token: _Token | None = None, expected: str | None = None,
             limit: bool = False) -> InputError:
        t = self.tok if token is None else token
        return self.ctx.error(t.start, message, expected=expected, limit=limit)

    @staticmethod
    def describe(t: _Token) -> str:
        if t.kind == "end":
            return "the end of the text"
        if t.kind == "nl":
            return "a line break"
        return repr(t.text)

    def expected_operand(self) -> str:
        return "a number" + (f", {self.variable}" if self.variable else "") + " or '('"

    # grammar
    def read_all(self) -> _Value:
        value = self.expression()
        t = self.tok
        if t.kind != "end":
            if t.kind == "op" and t.text == ")":
                raise self.fail("')' has no matching '('")
            if t.kind == "op" and t.text in ",;":
                raise self.fail(f"{t.text!r} is not allowed here: this field takes one "
                                "expression")
            raise self.fail(f"unexpected {self.describe(t)}", expected="an operator")
        return value

    def expression(self) -> _Value:
        negative = False
        if self.is_op("+", "-"):
            negative = self.take().text == "-"
            self.refuse_second_sign()
        value = self.term()
        if negative:
            value = self.negate(value)
        while self.is_op("+", "-"):
            op = self.take()
            # in a number field "1 -1" is more likely two entries than a difference
            if self.mode == "constant" and op.space_before and not self.tok.space_before \
                    and self.tok.kind != "end":
                tail = ", or separate list entries with commas" if self.in_list else ""
                raise self.fail(f"ambiguous {op.text!r} with a space before it and none after: "
                                f"write 'a {op.text} b'{tail}", op)
            self.refuse_second_sign()
            rhs = self.term()
            value = self.add(value, self.negate(rhs) if op.text == "-" else rhs, op)
        return value

    def refuse_second_sign(self):
        if self.is_op("+", "-"):
            raise self.fail("two signs in a row: remove one, or use parentheses as in "
                            "'1 + (-z)'")

    def term(self) -> _Value:
        value = self.power()
        divided_by_literal = None   # after a division: was the divisor a bare number?
        while True:
            if self.is_op("*", "/"):
                op = self.take()
                rhs = self.signed_power()
                if op.text == "*":
                    value = self.mul(value, rhs, op)
                    divided_by_literal = None
                else:
                    value = self.div(value, rhs, op)
                    divided_by_literal = rhs.literal
            elif self.tok.kind == "name" or self.is_op("("):
                if divided_by_literal is False:
                    raise self.fail("ambiguous product after a division: write '(a/b)c' or "
                                    "'a/(bc)'")
                op = self.tok
                value = self.mul(value, self.power(), op)
            elif self.tok.kind == "num":
                hint = "separate list entries with commas" if self.in_list \
                    else "put an operator between them"
                raise self.fail(f"a number cannot follow another value directly: {hint}",
                                expected="an operator")
            else:
                return value

    def signed_power(self) -> _Value:
        if self.is_op("+", "-"):
            negative = self.take().text == "-"
            self.refuse_second_sign()
            value = self.power()
            return self.negate(value) if negative else value
        return self.power()

    def power(self) -> _Value:
        base = self.primary()
        if self.is_op("^"):
            op = self.take()
            exponent = self.exponent()
        elif self.tok.kind == "sup":
            op = self.take()
            exponent = op.value
        else:
            return base
        if self.is_op("^") or self.tok.kind == "sup":
            raise self.fail("chained powers are ambiguous: write a^(b^c) or (a^b)^c")
        return self.pow(base, exponent, op)

    def exponent(self) -> int:
        start = self.tok
        negative = False
        if self.is_op("+", "-"):
            negative = self.take().text == "-"
            self.refuse_second_sign()
        t = self.tok
        if t.kind == "num":
            if not t.text.isdigit():
                raise self.fail("an exponent must be a whole number", t, expected="such as 2")
            self.take()
            n = int(t.value)
        elif self.is_op("("):
            inner = self.primary()
            if not inner.is_constant:
                raise self.fail("an exponent must not contain the variable", start)
            c = inner.constant
            if isinstance(c, _Surd) or c.denominator != 1:
                raise self.fail("an exponent must be a whole number", start)
            n = int(c)
        elif t.kind == "name" and t.text in self.names:
            raise self.fail("an exponent must not contain the variable", t)
        else:
            raise self.fail(f"expected an exponent, found {self.describe(t)}", t,
                            expected="a whole number or a parenthesised one")
        return -n if negative else n

    def primary(self) -> _Value:
        t = self.tok
        if t.kind == "num":
            self.take()
            return _Value((t.value,), literal=True)
        if t.kind == "name":
            return self.name()
        if self.is_op("("):
            self.take()
            self.depth += 1
            if self.depth > MAX_NESTING:
                raise self.fail(f"parentheses are nested more than {MAX_NESTING} deep", t,
                                limit=True)
            if self.is_op(")"):
                raise self.fail("empty parentheses")
            value = self.expression()
            if not self.is_op(")"):
                raise self.fail(f"this '(' is not closed: {self.describe(self.tok)} comes "
                                "where ')' should", t, expected="')'")
            self.take()
            self.depth -= 1
            return _Value(value.num, value.den)
        if t.kind == "sup":
            raise self.fail("a superscript exponent needs something to raise")
        if t.kind == "end":
            raise self.fail("the text ends too early", expected=self.expected_operand())
        raise self.fail(f"unexpected {self.describe(t)}", expected=self.expected_operand())

    def name(self) -> _Value:
        t = self.take()
        if t.text in self.names:
            if self.spelling is None:
                self.spelling = t.text
            elif t.text != self.spelling:
                raise self.fail(f"the variable is written both {self.spelling!r} and "
                                f"{t.text!r}: use one name throughout", t)
            return _Value((_ZERO, _ONE))
        if t.text in IMAGINARY_NAMES:
            if not self.allow_complex:
                raise self.fail(f"the imaginary unit {t.text!r} is not allowed here: values "
                                "must be real", t)
            return _Value((_Surd({(1, 1): _ONE}),))
        if t.text in FUNCTION_NAMES:
            return self.square_root(t)
        raise self.fail(self.unknown_name_message(t.text), t)

    def unknown_name_message(self, name: str) -> str:
        if name.lower() in ("inf", "infinity", "nan", "oo"):
            return f"{name!r} is not a finite number"
        if self.variable is None:
            return f"unknown name {name!r}: this field takes a number, not a variable " \
                   f"({_ALLOWED})"
        v = self.variable
        if name.startswith(v) and name[len(v):].isdigit():
            return f"unknown name {name!r}: write {v}^{name[len(v):]} for a power or " \
                   f"{name[len(v):]}{v} for a product"
        if len(name) <= 2 or name in ("lambda", "zeta", "xi", "mu"):
            return f"unknown name {name!r}: the variable here is {v!r}"
        return f"unknown name {name!r}: only {_ALLOWED} and the variable {v!r} are allowed"

    def square_root(self, t: _Token) -> _Value:
        if not self.is_op("("):
            raise self.fail("sqrt needs parentheses, as in sqrt(2)", expected="'('")
        arg = self.primary()
        q = arg.constant
        if q is None or isinstance(q, _Surd):
            raise self.fail("sqrt takes a rational number only, as in sqrt(3) or sqrt(1/2)", t)
        self.ctx.at = t.start
        root = _sqrt(self.ctx, q, self.allow_complex)
        if root is None:
            raise self.fail("sqrt of a negative number is not real", t)
        return _Value((root,))

    # arithmetic on values
    def negate(self, a: _Value) -> _Value:
        return _Value(tuple(_nneg(c) for c in a.num), a.den)

    def bounded(self, value: _Value, op: _Token) -> _Value:
        """Return value within the degree bound, with denominator 1 when it is constant."""
        ctx = self.ctx
        num, den = value.num, value.den
        ctx.charge(5 + _weight(num) + _weight(den))
        if _degree(den) > 0 and max(_degree(num), _degree(den)) > MAX_POLY_DEGREE:
            num, den = _reduce(ctx, num, den)
        if _degree(den) == 0 and den[0] != 1:
            num, den = _pscale(ctx, num, _ninv(ctx, den[0])), (_ONE,)
        if max(_degree(num), _degree(den)) > MAX_POLY_DEGREE:
            raise self.fail(f"the degree would exceed {MAX_POLY_DEGREE}", op, limit=True)
        return _Value(tuple(_checked(ctx, c) for c in num), den)

    def add(self, a: _Value, b: _Value, op: _Token) -> _Value:
        ctx = self.ctx
        ctx.at = op.start
        if a.den == b.den:
            return self.bounded(_Value(_padd(ctx, a.num, b.num), a.den), op)
        num = _padd(ctx, _pmul(ctx, a.num, b.den), _pmul(ctx, b.num, a.den))
        return self.bounded(_Value(num, _pmul(ctx, a.den, b.den)), op)

    def mul(self, a: _Value, b: _Value, op: _Token) -> _Value:
        if max(_degree(a.num) + _degree(b.num), _degree(a.den) + _degree(b.den)) \
                > 2 * MAX_POLY_DEGREE:
            raise self.fail(f"the degree would exceed {MAX_POLY_DEGREE}", op, limit=True)
        ctx = self.ctx
        ctx.at = op.start
        return self.bounded(_Value(_pmul(ctx, a.num, b.num), _pmul(ctx, a.den, b.den)), op)

    def div(self, a: _Value, b: _Value, op: _Token) -> _Value:
        if _is_zero(b.num):
            raise self.fail("division by zero", op)
        if len(b.num) == 1:
            ctx = self.ctx
            ctx.at = op.start
            inv = _ninv(ctx, b.num[0])
            return self.bounded(_Value(_pscale(ctx, _pmul(ctx, a.num, b.den), inv), a.den), op)
        if self.mode != "rational":
            raise self.fail(f"division by an expression in {self.variable}: this field takes "
                            "a polynomial, so divide by numbers only", op)
        return self.mul(a, _Value(b.den, b.num), op)

    def pow(self, base: _Value, n: int, op: _Token) -> _Value:
        if abs(n) > MAX_EXPONENT:
            raise self.fail(f"the exponent {n} is larger than {MAX_EXPONENT}", op, limit=True)
        if n == 0:
            if _is_zero(base.num):
                raise self.fail("0^0 is undefined", op)
            return _Value((_ONE,))
        if n < 0:
            if _is_zero(base.num):
                raise self.fail("division by zero (a negative power of 0)", op)
            if not base.is_constant and self.mode != "rational":
                raise self.fail(f"a negative power of an expression in {self.variable} is not "
                                "a polynomial", op)
            self.ctx.at = op.start
            base = self.bounded(_Value(base.den, base.num), op)
            n = -n
        if max(_degree(base.num), _degree(base.den)) * n > MAX_POLY_DEGREE:
            raise self.fail(f"the degree would exceed {MAX_POLY_DEGREE}", op, limit=True)
        if base.num == (_ZERO, _ONE) and base.den == (_ONE,):
            return _Value((_ZERO,) * n + (_ONE,))     # a power of the variable itself
        if base.is_constant:
            self.ctx.at = op.start
            return _Value((_power(self.ctx, base.constant, n),))
        result = _Value((_ONE,))
        square = base
        while n:
            if n & 1:
                result = self.mul(result, square, op)
            n >>= 1
            if n:
                square = self.mul(square, square, op)
        return result


# --- entry points --------------------------------------------------------------------------

def _context(text, field: str) -> _Context:
    if not isinstance(text, str):
        raise InputError(field, f"must be text, got {type(text).__name__}")
    if len(text) > MAX_TEXT_CHARS:
        raise LimitExceeded(field, f"is {len(text)} characters long; the limit is "
                                   f"{MAX_TEXT_CHARS}")
    if not text.strip():
        raise InputError(field, "is empty")
    return _Context(text, field)


def _variable_names(variable: str, aliases) -> tuple:
    if not variable or not (variable[0].isalpha() or variable[0] == "_") or \
            variable in IMAGINARY_NAMES + FUNCTION_NAMES:
        raise ValueError(f"variable must be a name other than {IMAGINARY_NAMES + FUNCTION_NAMES}"
                         f", got {variable!r}")
    extra = VARIABLE_ALIASES.get(variable, ()) if aliases is None else tuple(aliases)
    return (variable,) + extra


def _read_one(text, field, mode, variable, aliases, allow_complex) -> tuple[_Context, _Value]:
    ctx = _context(text, field)
    names = () if variable is None else _variable_names(variable, aliases)
    tokens = _tokenize(ctx, newline_separates=False)
    reader = _Reader(ctx, tokens, mode, variable, names, allow_complex)
    return ctx, reader.read_all()


def parse_number(text: str, field: str, *, allow_complex: bool = False) -> sp.Expr:
    """Return the exact value of one number given as text.

    Parameters
    ----------
    text : str
        A constant expression: ``-4/3``, ``0.125``, ``1e-3``, ``(3 - sqrt(3))/6``, ``2^-4``.
    field : str
        Name of the input field, used in error messages.
    allow_complex : bool
        Accept the imaginary unit (``2 - 3i``) and square roots of negative numbers.

    Returns
    -------
    sympy.Expr
        A sympy Rational, or an exact sum of rational multiples of sqrt(m) and i.

    Raises
    ------
    InputError
        Naming ``field``, the place and the problem; LimitExceeded over a bound.

    Examples
    --------
    >>> parse_number("0.125", "beta_0")
    1/8
    >>> parse_number("1/2 - sqrt(3)/6", "c_1")
    1/2 - sqrt(3)/6
    """
    _, value = _read_one(text, field, "constant", None, None, allow_complex)
    return _to_sympy(value.constant)


def parse_numbers(text: str, field: str, *, allow_complex: bool = False,
                  max_count: int | None = None) -> tuple:
    """Return the exact values of a list of numbers given as text.

    Entries are separated by commas, semicolons or line breaks, and the whole list may stand in
    one pair of square brackets: ``1, -4/3, 1/3`` or ``[1; -4/3; 1/3]``. Spaces alone do not
    separate entries (``1 -1`` is refused as ambiguous, ``1 2`` as two numbers side by side).

    Parameters
    ----------
    text : str
    field : str
        Name of the input field, used in error messages ("entry 3: ..." says which one failed).
    allow_complex : bool
        As in parse_number.
    max_count : int, optional
        Refuse more entries than this.

    Returns
    -------
    tuple of sympy.Expr
        The entries in order, each as parse_number would return it.

    Examples
    --------
    >>> parse_numbers("1, -4/3, 1/3", "alpha")
    (1, -4/3, 1/3)
    """
    ctx = _context(text, field)
    tokens = _tokenize(ctx, newline_separates=True)
    body, end = _unbracket(ctx, tokens)
    entries, separators = _split_entries(ctx, body, end)
    if max_count is not None and len(entries) > max_count:
        raise ctx.error(entries[max_count][0].start,
                        f"has {len(entries)} entries; at most {max_count} are allowed",
                        limit=True)
    values = []
    for k, entry in enumerate(entries):
        stop = separators[k] if k < len(separators) else end
        entry_tokens = entry + [_Token("end", "", stop.start, stop.start, stop.space_before)]
        reader = _Reader(ctx, entry_tokens, "constant", None, (), allow_complex, in_list=True)
        try:
            values.append(_to_sympy(reader.read_all().constant))
        except InputError as exc:
            raise type(exc)(exc.field, f"entry {k + 1}: {exc.message}", position=exc.position,
                            expected=exc.expected, line=exc.line, column=exc.column) from None
    return tuple(values)


def _unbracket(ctx: _Context, tokens: list[_Token]) -> tuple[list[_Token], _Token]:
    """Return the list's tokens without one enclosing [ ], and the token that ends them."""
    body, end = tokens[:-1], tokens[-1]
    solid = [i for i, t in enumerate(body) if t.kind != "nl"]
    if solid and body[solid[0]].kind == "op" and body[solid[0]].text == "[":
        first, last = body[solid[0]], body[solid[-1]]
        if len(solid) == 1 or not (last.kind == "op" and last.text == "]"):
            closing = [i for i in solid if body[i].kind == "op" and body[i].text == "]"]
            if closing:
                after = body[next(i for i in solid if i > closing[0])]
                raise ctx.error(after.start, "nothing may follow the closing ']'")
            raise ctx.error(first.start, "'[' is not closed", expected="']' at the end")
        body = body[solid[0] + 1: solid[-1]]
        end = _Token("end", "", last.start, last.end, last.space_before)
    for t in body:
        if t.kind == "op" and t.text in "[]":
            raise ctx.error(t.start, f"unexpected {t.text!r}: a list takes at most one pair of "
                                     "[ ] around all its entries")
    return body, end


def _split_entries(ctx: _Context, body: list[_Token], end: _Token):
    """Return the tokens of each entry and the separator after each but the last.

    A line break separates only where it is not next to a comma or semicolon, so blank lines
    and a break after a comma are plain white space.
    """
    entries: list[list[_Token]] = [[]]
    separators: list[_Token] = []
    for idx, t in enumerate(body):
        if t.kind == "op" and t.text in ",;":
            if not entries[-1]:
                raise ctx.error(t.start, f"entry {len(entries)} is empty",
                                expected="a number before the separator")
            entries.append([])
            separators.append(t)
        elif t.kind == "nl":
            following = next((u for u in body[idx + 1:] if u.kind != "nl"), None)
            if entries[-1] and following is not None and \
                    not (following.kind == "op" and following.text in ",;"):
                entries.append([])
                separators.append(t)
        else:
            entries[-1].append(t)
    if not entries[-1]:
        if separators:
            raise ctx.error(separators[-1].start,
                            f"entry {len(entries)}, after the last separator, is empty",
                            expected="a number, or no trailing separator")
        raise ctx.error(end.start, "the list has no entries", expected="a number")
    return entries, separators


def parse_polynomial(text: str, field: str, variable: str = "zeta", *, aliases=None,
                     allow_complex: bool = False) -> tuple:
    """Return the exact coefficients, ascending powers, of a polynomial given as text.

    Parameters
    ----------
    text : str
        For example ``zeta^2 - zeta``, ``3/2 ζ² - 2ζ + 1/2`` or ``(zeta - 1)^3``.
    field : str
        Name of the input field, used in error messages (``rho``, ``sigma``).
    variable : str
        The polynomial's variable.
    aliases : sequence of str, optional
        Other spellings of the variable; by default VARIABLE_ALIASES[variable] (ζ for zeta).
    allow_complex : bool
        Accept complex coefficients (the imaginary unit ``i``).

    Returns
    -------
    tuple of sympy.Expr, shape (degree + 1,)
        c_0, c_1, ..., c_n with c_n nonzero; the zero polynomial is ``(0,)``.

    Examples
    --------
    >>> parse_polynomial("3/2 zeta^2 - 2 zeta + 1/2", "rho")
    (1/2, -2, 3/2)
    """
    _, value = _read_one(text, field, "polynomial", variable, aliases, allow_complex)
    return tuple(_to_sympy(c) for c in value.num)


def parse_rational_function(text: str, field: str, variable: str = "z", *, aliases=None,
                            allow_complex: bool = False) -> tuple[tuple, tuple]:
    """Return numerator and denominator coefficients of a rational function given as text.

    Common factors are cancelled, and both parts are scaled so that the denominator's constant
    term is 1 (or, where it is 0, its leading coefficient is 1).

    Parameters
    ----------
    text : str
        For example ``(1 + z/2)/(1 - z/2)`` or ``1 + z + z^2/2``.
    field : str
        Name of the input field, used in error messages.
    variable : str
        The variable, ``z`` = h lambda for a stability function R(z).
    aliases : sequence of str, optional
        Other spellings of the variable; by default VARIABLE_ALIASES[variable].
    allow_complex : bool
        Accept complex coefficients.

    Returns
    -------
    P, Q : tuple of sympy.Expr
        Ascending coefficients of numerator and denominator; R = P/Q in lowest terms.

    Examples
    --------
    >>> parse_rational_function("(1 + z/2)/(1 - z/2)", "stability")
    ((1, 1/2), (1, -1/2))
    """
    ctx, value = _read_one(text, field, "rational", variable, aliases, allow_complex)
    ctx.at = 0
    num, den = _reduce(ctx, value.num, value.den)
    inv = _ninv(ctx, den[0] if den[0] != 0 else den[-1])
    return (tuple(_to_sympy(c) for c in _pscale(ctx, num, inv)),
            tuple(_to_sympy(c) for c in _pscale(ctx, den, inv)))


def format_exact(value) -> str:
    """Return text for an exact number that parse_number reads back to the same value.

    Parameters
    ----------
    value : int, fractions.Fraction or sympy.Expr
        A rational, or a sum of rational multiples of square roots of rationals and of i, as
        the parsers here return them.

    Returns
    -------
    str
        Such as ``-1/12``, ``1/2 - sqrt(3)/6`` or ``3/4 + sqrt(2)*i/2``; complex values need
        ``allow_complex=True`` to be read back.

    Raises
    ------
    ValueError
        For anything else (floats, pi, symbols, nested roots).

    Examples
    --------
    >>> format_exact(parse_number("(3 - sqrt(3))/6", "c"))
    '1/2 - sqrt(3)/6'
    """
    c = _from_sympy(_Context("", "value"), value)
    if not isinstance(c, _Surd):
        return str(c)
    order = sorted(c.terms.items(), key=lambda item: (item[0][1], item[0][0]))
    text = ""
    for k, ((m, e), q) in enumerate(order):
        parts = [str(abs(q.numerator))] if abs(q.numerator) != 1 or (m, e) == (1, 0) else []
        parts += [f"sqrt({m})"] if m != 1 else []
        parts += ["i"] if e else []
        term = "*".join(parts) + (f"/{q.denominator}" if q.denominator != 1 else "")
        if k == 0:
            text = ("-" if q < 0 else "") + term
        else:
            text += (" - " if q < 0 else " + ") + term
    return text


def _from_sympy(ctx: _Context, x):
    """Return our exact form of a sympy (or int, Fraction) number, walking its tree."""
    if isinstance(x, bool):
        raise ValueError("a boolean is not a number")
    if isinstance(x, int):
        return Fraction(x)
    if isinstance(x, Fraction):
        return x
    if not isinstance(x, sp.Basic):
        raise ValueError(f"not an exact number: {x!r}")
    if x.is_Rational:
        return Fraction(int(x.p), int(x.q))
    if x is sp.I:
        return _Surd({(1, 1): _ONE})
    if x.is_Add or x.is_Mul:
        parts = [_from_sympy(ctx, a) for a in x.args]
        out = parts[0]
        for part in parts[1:]:
            out = _checked(ctx, _nadd(out, part) if x.is_Add else _nmul(out, part))
        return out
    if x.is_Pow and x.exp.is_Rational:
        base, exp = _from_sympy(ctx, x.base), x.exp
        if exp.q == 2 and isinstance(base, Fraction):
            root = _sqrt(ctx, base, allow_complex=True)
            return _power(ctx, root, int(exp.p))
        if exp.q == 1:
            return _power(ctx, base, int(exp.p))
    raise ValueError(f"not a rational combination of square roots of rationals and i: {x}")
