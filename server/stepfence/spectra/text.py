"""Eigenvalues written as text: our own tokenizer, nothing is ever evaluated.

Accepted numbers: ``-3``, ``2.5``, ``.5``, ``1.5e3``, ``1.5d-3`` (Fortran exponent), ``-1+2j``,
``-1+2i``, ``-1+2im``, ``-1 - 2.5i`` (spaces on both sides of the inner sign), ``2.5e3i``,
``i``, ``-j``, ``(1.0, 2.0)`` (a pair is real, imaginary) and ``(1+2j)``. Numbers are
separated by commas, semicolons, tabs or spaces; a line may end with a comment (``#``, ``%``
or ``//``). A first line of words (``re,im``, ``real imag``) is a header and is skipped.

Spacing decides: ``1 - 2j`` and ``1-2j`` are one number, ``1 -2j`` is two (1 and -2j) as in
any space-separated list, and ``3 i`` is two (3 and i). Empty fields (``1,,2``) are refused;
one trailing comma or semicolon at the end of a line is allowed.
"""
from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from .. import limits
from ..errors import InputError, LimitExceeded
from .spectrum import Spectrum

COLUMN_MODES = ("auto", "re-im", "values")
EXAMPLES = "a number such as -3, -1+2j, -1 - 2.5i, 2.5e3i, (1.0, 2.0) or 1.5d-3"
TWO_COLUMN_NOTE = ("read as two columns (real, imaginary): every line held exactly two real "
                   "numbers; pass columns='values' to read them as separate real eigenvalues")
ONE_PAIR_NOTE = ("the single line of two real numbers was read as two real eigenvalues; pass "
                 "columns='re-im' if it is one complex number (real, imaginary)")

# Digits are spelled [0-9]: \d would also accept other scripts' digits, which float() takes.
# The other readers (MatrixMarket) share this pattern.
UNSIGNED_REAL = r"(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eEdD][+-]?[0-9]+)?"
_UNIT = r"(?:im|[iIjJ])"
# Alternatives are tried in order: a complex number before a real that starts it. Spaces may
# stand on both sides of the inner sign or after it only: '1 -2j' is two numbers, as in any
# space-separated list. Only plain spaces count; a tab always separates two numbers.
_NUMBER = re.compile(
    rf"(?P<cre>[+-]?{UNSIGNED_REAL})(?: +(?=[+-] ))?(?P<csign>[+-]) *(?P<cim>{UNSIGNED_REAL})?{_UNIT}"
    rf"|(?P<isign>[+-]?)(?P<iim>{UNSIGNED_REAL})?{_UNIT}"
    rf"|(?P<real>[+-]?{UNSIGNED_REAL})")
_PAIR = re.compile(rf"[ \t]*(?P<re>[+-]?{UNSIGNED_REAL})[ \t]*,[ \t]*(?P<im>[+-]?{UNSIGNED_REAL})[ \t]*")
_SPACE = " \t"
_HARD = ",;"
_COMMENT = re.compile(r"#|%|//")
_WORD = re.compile(r"""["']?[A-Za-z_][^\s,;]*""")
_FIELD_SPLIT = re.compile(r"[\s,;]+")
_NONFINITE = re.compile(r"(?<![a-z])(?:nan|inf(?:inity)?)(?:im|[ij])?(?![a-z])", re.IGNORECASE)
# Characters pasted from typeset documents that mean plain ASCII ones, one for one, so that
# columns in error messages still match the user's text.
_LOOKALIKES = str.maketrans({"\u2212": "-", "\u00a0": " ", "\u2009": " ", "\u202f": " "})


@dataclass(frozen=True)
class Token:
    """One number read from a line: its value, 1-based column, and whether it was a plain real."""

    value: complex
    column: int
    plain_real: bool


@dataclass(frozen=True)
class ScannedText:
    """Numbers of a text by line: rows of (line number, tokens), and the skipped header if any."""

    rows: list
    header: str | None
    header_fields: int


def read_float(s: str, field: str, line: int, column: int | None = None) -> float:
    """Return the float a token already matched by UNSIGNED_REAL (with sign) spells."""
    x = float(s.replace("d", "e").replace("D", "e"))
    if not np.isfinite(x):
        raise InputError(field, f"{s!r} is too large: it overflows to infinity", line=line,
                         column=column)
    return x


def _bad_token(line_text: str, pos: int, field: str, line: int) -> InputError:
    chunk = _FIELD_SPLIT.split(line_text[pos:], maxsplit=1)[0] or line_text[pos]
    shown = chunk if len(chunk) <= 40 else chunk[:37] + "..."
    if _NONFINITE.search(chunk):
        return InputError(field, f"{shown!r} is not a finite number: NaN and infinity are not "
                                 f"eigenvalues", line=line, column=pos + 1)
    if chunk[0] in "[]{}":
        return InputError(field, f"brackets are not accepted ({shown!r}); list the numbers "
                                 f"separated by commas or spaces", line=line, column=pos + 1)
    return InputError(field, f"cannot read {shown!r} as a number", line=line, column=pos + 1,
                      expected=EXAMPLES)


def _number_value(m: re.Match, field: str, line: int, column: int) -> tuple[complex, bool]:
    """Return (value, plain_real) of a _NUMBER match."""
    if m.group("real") is not None:
        return complex(read_float(m.group("real"), field, line, column), 0.0), True
    if m.group("csign") is not None:
        im = 1.0 if m.group("cim") is None else read_float(m.group("cim"), field, line, column)
        re_ = read_float(m.group("cre"), field, line, column)
        return complex(re_, -im if m.group("csign") == "-" else im), False
    im = 1.0 if m.group("iim") is None else read_float(m.group("iim"), field, line, column)
    return complex(0.0, -im if m.group("isign") == "-" else im), False


def _scan_parenthesised(text: str, pos: int, field: str, line: int) -> tuple[complex, int]:
    """Return (value, end) of '(re, im)' or '(a+bj)' starting at text[pos] == '('."""
    close = text.find(")", pos)
    if close < 0:
        raise InputError(field, "'(' has no matching ')'", line=line, column=pos + 1)
    inner = text[pos + 1:close]
    col = pos + 1
    pair = _PAIR.fullmatch(inner)
    if pair:
        return complex(read_float(pair.group("re"), field, line, col),
                       read_float(pair.group("im"), field, line, col)), close + 1
    m = _NUMBER.fullmatch(inner.strip(_SPACE))
    if m is None:
        shown = text[pos:close + 1] if close - pos < 40 else text[pos:pos + 37] + "..."
        if _NONFINITE.search(inner):
            raise InputError(field, f"{shown!r} is not a finite number: NaN and infinity are "
                                    f"not eigenvalues", line=line, column=col)
        raise InputError(field, f"cannot read {shown!r} as a number", line=line, column=col,
                         expected="(re, im) or (a+bj)")
    return _number_value(m, field, line, col)[0], close + 1


def _scan_line(text: str, field: str, line: int) -> list[Token]:
    """Return the numbers of one line (comment already removed), refusing anything else."""
    tokens: list[Token] = []
    pos, n = 0, len(text)
    after_hard, started = False, False  # empty fields between commas are refused
    while pos < n:
        ch = text[pos]
        if ch in _SPACE:
            pos += 1
            continue
        if ch in _HARD:
            if after_hard or not started:
                raise InputError(field, f"empty field before {ch!r}", line=line, column=pos + 1)
            after_hard = True
            pos += 1
            continue
        start = pos
        if ch == "(":
            value, pos = _scan_parenthesised(text, pos, field, line)
            plain = False
        else:
            m = _NUMBER.match(text, pos)
            if m is None:
                raise _bad_token(text, pos, field, line)
            value, plain = _number_value(m, field, line, start + 1)
            pos = m.end()
        if pos < n and text[pos] not in _SPACE and text[pos] not in _HARD:
            raise _bad_token(text, start, field, line)
        tokens.append(Token(value, start + 1, plain))
        after_hard, started = False, True
    return tokens


def _is_header(text: str) -> bool:
    fields = [f for f in _FIELD_SPLIT.split(text.strip()) if f]
    # hardening fix: 'nan' or 'inf' alone on the first line is a non-finite value, not a
    # header; it was skipped with only a note, silently dropping the eigenvalue
    return bool(fields) and all(_WORD.fullmatch(f) and not _NONFINITE.fullmatch(f)
                                for f in fields)


def scan_number_lines(text: str, field: str = "eigenvalues",
                      max_numbers: int = limits.MAX_EIGENVALUES) -> ScannedText:
    """Return the numbers of every data line of text, with line numbers and columns.

    Parameters
    ----------
    text : str
        The user's text; at most limits.MAX_UPLOAD_BYTES characters.
    field : str
        Name of the input, for error messages.
    max_numbers : int
        Bound on the count of numbers (LimitExceeded beyond it).

    Returns
    -------
    ScannedText
        Blank and comment lines are dropped; a first data line made only of words is returned
        as ``header`` instead of raising.
    """
    if not isinstance(text, str):
        raise InputError(field, f"must be text, got {type(text).__name__}")
    if len(text) > limits.MAX_UPLOAD_BYTES:
        raise LimitExceeded(field, f"text of {len(text)} characters; at most "
                                   f"{limits.MAX_UPLOAD_BYTES}")
    text = text.translate(_LOOKALIKES)
    if text.startswith("\ufeff"):
        text = " " + text[1:]  # keep the columns of line 1
    rows, header, header_fields, count = [], None, 0, 0
    for line_no, raw in enumerate(re.split(r"\r\n|\r|\n", text), start=1):
        comment = _COMMENT.search(raw)
        body = raw if comment is None else raw[:comment.start()]
        if not body.strip(_SPACE):
            continue
        try:
            tokens = _scan_line(body, field, line_no)
        except InputError:
            if rows or header is not None or not _is_header(body):
                raise
            header = body.strip()
            header_fields = len([f for f in _FIELD_SPLIT.split(header) if f])
            continue
        count += len(tokens)
        if count > max_numbers:
            raise LimitExceeded(field, f"more than {max_numbers} numbers (line {line_no})")
        rows.append((line_no, tokens))
    return ScannedText(rows, header, header_fields)


def parse_spectrum_text(text: str, field: str = "eigenvalues", columns: str = "auto",
                        source: str = "pasted text") -> Spectrum:
    """Return the Spectrum written in text.

    Parameters
    ----------
    text : str
        Eigenvalues, one or many per line (see the module docstring for the accepted forms).
    field : str
        Name of the input, for error messages.
    columns : {"auto", "re-im", "values"}
        "values": every number is an eigenvalue. "re-im": every line holds exactly two real
        numbers, the real and imaginary parts of one eigenvalue. "auto": "re-im" when every
        line holds exactly two real numbers and there are at least two such lines (or the
        header names two columns), "values" otherwise; the choice is stated in a note.
    source : str
        Where the text came from, for the Spectrum's ``source``.

    Returns
    -------
    Spectrum

    Raises
    ------
    InputError
        A token that is not a number (with its line, column and text), NaN or infinity, an
        ambiguous spacing, a line that does not fit forced "re-im" columns, or no numbers.
    """
    if columns not in COLUMN_MODES:
        raise InputError("columns", f"unknown column mode {columns!r}",
                         expected="'auto', 're-im' or 'values'")
    scanned = scan_number_lines(text, field)
    if not scanned.rows:
        hint = "" if scanned.header is None else \
            f" (the only line, {scanned.header[:40]!r}, was read as a header of words)"
        raise InputError(field, "no eigenvalues found" + hint)
    two_real = all(len(t) == 2 and t[0].plain_real and t[1].plain_real for _, t in scanned.rows)
    notes: list[str] = []
    if columns == "re-im" or (columns == "auto" and two_real and
                              (len(scanned.rows) >= 2 or scanned.header_fields == 2)):
        for line_no, tokens in scanned.rows:
            if len(tokens) != 2:
                raise InputError(field, f"expected two real numbers (real, imaginary) on the "
                                        f"line, found {len(tokens)}", line=line_no,
                                 column=tokens[min(2, len(tokens) - 1)].column)
            for t in tokens:
                if not t.plain_real:
                    raise InputError(field, "expected a real number in (real, imaginary) "
                                            "columns", line=line_no, column=t.column)
        values = np.array([complex(t[0].value.real, t[1].value.real) for _, t in scanned.rows])
        if columns == "auto":
            notes.append(TWO_COLUMN_NOTE)
    else:
        values = np.array([t.value for _, tokens in scanned.rows for t in tokens],
                          dtype=np.complex128)
        if columns == "auto" and two_real:
            notes.append(ONE_PAIR_NOTE)
    if scanned.header is not None:
        notes.append(f"skipped the header line {scanned.header[:60]!r}")
    return Spectrum(values, source=source, notes=tuple(notes))
