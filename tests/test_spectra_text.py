"""The eigenvalue text parser and the Spectrum type.

Expected values come from Python's own complex() reading the same number in Python syntax (an
independent parser), or from the float repr round trip, which Python guarantees exact.
"""
import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from stepfence.errors import InputError, LimitExceeded
from stepfence.spectra import Spectrum, combine_snapshots, from_frequencies, parse_spectrum_text
from stepfence.spectra.text import ONE_PAIR_NOTE, TWO_COLUMN_NOTE

FUZZ = settings(max_examples=250, deadline=None, suppress_health_check=[HealthCheck.too_slow])


# --- accepted forms ---------------------------------------------------------------------

@pytest.mark.parametrize("text,python", [
    ("-3", "-3"), ("-1+2j", "-1+2j"), ("-1+2i", "-1+2j"), ("-1 - 2.5i", "-1-2.5j"),
    ("2.5e3i", "2.5e3j"), ("-1+2im", "-1+2j"), ("i", "1j"), ("-j", "-1j"), ("+I", "1j"),
    ("(1.0,2.0)", "1+2j"), ("( -1.5 , 2e-3 )", "-1.5+0.002j"), ("(1+2j)", "1+2j"),
    ("1.5d-3", "1.5e-3"), ("1.5D+3", "1.5e3"), ("1E2", "100"), (".5", "0.5"), ("5.", "5"),
    ("-1 + i", "-1+1j"), ("-1+ 2j", "-1+2j"), ("-1.5e-3-2.5E+4j", "-1.5e-3-2.5e4j"),
    ("\u22121 \u2212 2i", "-1-2j"),  # typographic minus signs pasted from a document
])
def test_one_token_matches_python_complex(text, python):
    values = parse_spectrum_text(text).values
    assert values.dtype == np.complex128
    assert values.tolist() == [complex(python)]


def test_many_numbers_per_line_with_every_separator():
    text = "-3, -1+2j; -1 - 2.5i\t2.5e3i   -1+2im (1.0,2.0) (1+2j) 1.5d-3 -j\n-4,\n"
    expected = [complex(s) for s in ("-3", "-1+2j", "-1-2.5j", "2500j", "-1+2j", "1+2j",
                                     "1+2j", "0.0015", "-1j", "-4")]
    assert parse_spectrum_text(text).values.tolist() == expected


def test_spacing_decides_one_number_or_two():
    # '1 - 2j' is one number; '1 -2j' two, as in any space-separated list
    assert parse_spectrum_text("1 - 2j").values.tolist() == [1 - 2j]
    assert parse_spectrum_text("1 -2j").values.tolist() == [1, -2j]
    assert parse_spectrum_text("3 i").values.tolist() == [3, 1j]
    # a tab always separates
    assert parse_spectrum_text("1\t-\t2j".replace("-\t", "-")).values.tolist() == [1, -2j]


def test_comments_blank_lines_and_header():
    text = "# exported by hand\n% matlab\n// c\n\nre,im\n-1, 2  # first mode\n-3\t4\n"
    s = parse_spectrum_text(text)
    assert s.values.tolist() == [-1 + 2j, -3 + 4j]
    assert s.notes[0] == TWO_COLUMN_NOTE
    assert "header" in s.notes[1]


def test_header_only_allowed_as_first_data_line():
    with pytest.raises(InputError) as e:
        parse_spectrum_text("-1\nreal imag\n")
    assert (e.value.line, e.value.column) == (2, 1)


def test_two_columns_auto_needs_two_lines_or_a_two_word_header():
    one = parse_spectrum_text("-1, -2")
    assert one.values.tolist() == [-1, -2] and one.notes == (ONE_PAIR_NOTE,)
    assert parse_spectrum_text("re im\n-1 -2").values.tolist() == [-1 - 2j]
    assert parse_spectrum_text("-1 2\n-3 4\n-5 6 7").values.tolist() == [-1, 2, -3, 4, -5, 6, 7]


def test_columns_forced():
    assert parse_spectrum_text("-1, -2", columns="re-im").values.tolist() == [-1 - 2j]
    assert parse_spectrum_text("-1 2\n-3 4", columns="values").values.tolist() == [-1, 2, -3, 4]
    with pytest.raises(InputError) as e:
        parse_spectrum_text("-1 2\n-3 4 5", columns="re-im")
    assert (e.value.line, e.value.column) == (2, 6)
    with pytest.raises(InputError) as e:
        parse_spectrum_text("-1 2\n-3 4j", columns="re-im")
    assert (e.value.line, e.value.column) == (2, 4)
    with pytest.raises(InputError) as e:
        parse_spectrum_text("-1", columns="rows")
    assert e.value.field == "columns"


# --- refusals ---------------------------------------------------------------------------

@pytest.mark.parametrize("text,line,column,fragment", [
    ("-1\n-2, 3x\n", 2, 5, "'3x'"),
    ("-1, nan", 1, 5, "not a finite number"),
    ("1\n\n  -inf", 3, 3, "not a finite number"),
    ("(inf, 2)", 1, 1, "not a finite number"),
    ("1+nanj", 1, 1, "not a finite number"),
    ("1e999", 1, 1, "overflows"),
    ("1,,2", 1, 3, "empty field"),
    (", 1", 1, 1, "empty field"),
    ("[1, 2]", 1, 1, "brackets"),
    ("(1, 2", 1, 1, "matching"),
    ("(1, 2j)", 1, 1, "cannot read"),
    ("2j+1", 1, 1, "cannot read"),
    ("1 - 2", 1, 3, "'-'"),
    ("1_000", 1, 1, "cannot read"),
    ("\u0661", 1, 1, "cannot read"),  # an Arabic-Indic digit: float() would take it
    ("-1 \x00", 1, 4, "cannot read"),
])
def test_bad_text_names_line_and_column(text, line, column, fragment):
    with pytest.raises(InputError) as e:
        parse_spectrum_text(text, field="eigs")
    assert e.value.field == "eigs"
    assert (e.value.line, e.value.column) == (line, column)
    assert fragment in e.value.message


def test_bad_token_text_is_quoted_in_the_message():
    with pytest.raises(InputError) as e:
        parse_spectrum_text("1, 2, 3.4.5")
    assert "'3.4.5'" in str(e.value) and "line 1, column 7" in str(e.value)


@pytest.mark.parametrize("text", ["", "\n\n", "# only a comment\n", "information"])
def test_no_eigenvalues(text):
    with pytest.raises(InputError, match="no eigenvalues found"):
        parse_spectrum_text(text)


def test_not_text_and_too_long(monkeypatch):
    with pytest.raises(InputError):
        parse_spectrum_text(b"-1")
    from stepfence import limits
    monkeypatch.setattr(limits, "MAX_UPLOAD_BYTES", 10)
    with pytest.raises(LimitExceeded):
        parse_spectrum_text("-1, -2, -3, -4")


def test_count_limit(monkeypatch):
    from stepfence import limits
    monkeypatch.setattr(limits, "MAX_EIGENVALUES", 3)
    with pytest.raises(LimitExceeded):
        parse_spectrum_text("-1\n-2\n-3\n-4")


# --- round trips (hypothesis) ---------------------------------------------------------

finite = st.floats(allow_nan=False, allow_infinity=False)


def _signed(x: float) -> str:
    r = repr(x)
    return r if r.startswith("-") else "+" + r


def _d_exponent(r: str) -> str:
    return r.replace("e", "d")


STYLES = {
    "a+bj": lambda z: repr(z.real) + _signed(z.imag) + "j",
    "a+bi": lambda z: repr(z.real) + _signed(z.imag) + "i",
    "a+bim": lambda z: repr(z.real) + _signed(z.imag) + "im",
    "a + bi": lambda z: repr(z.real) + " " + _signed(z.imag)[0] + " " + _signed(z.imag)[1:] + "i",
    "(a,b)": lambda z: f"({z.real!r},{z.imag!r})",
    "(a+bj)": lambda z: "(" + repr(z.real) + _signed(z.imag) + "j)",
    "d exponents": lambda z: _d_exponent(repr(z.real)) + _d_exponent(_signed(z.imag)) + "j",
}


@FUZZ
@given(re_=st.lists(finite, min_size=1, max_size=12), data=st.data(),
       style=st.sampled_from(sorted(STYLES)), sep=st.sampled_from([", ", ";", "\t", " ", "\n", " , "]))
def test_round_trip_is_exact(re_, data, style, sep):
    im = data.draw(st.lists(finite, min_size=len(re_), max_size=len(re_)))
    z = [complex(a, b) for a, b in zip(re_, im)]
    text = sep.join(STYLES[style](v) for v in z)
    got = parse_spectrum_text(text, columns="values").values
    assert got.real.tolist() == [v.real for v in z]
    assert got.imag.tolist() == [v.imag for v in z]


@FUZZ
@given(rows=st.lists(st.tuples(finite, finite), min_size=2, max_size=12),
       sep=st.sampled_from([",", ", ", "\t", " ", ";"]), d=st.booleans())
def test_two_column_round_trip_is_exact(rows, sep, d):
    fmt = _d_exponent if d else (lambda r: r)
    text = "\n".join(fmt(repr(a)) + sep + fmt(repr(b)) for a, b in rows) + "\n"
    s = parse_spectrum_text(text)
    assert s.values.real.tolist() == [a for a, _ in rows]
    assert s.values.imag.tolist() == [b for _, b in rows]
    assert s.notes[0] == TWO_COLUMN_NOTE


GRAMMAR = st.text(alphabet="0123456789+-.eEdDijmIJ() ,;\t\n#%/naf[]x", max_size=80)


@FUZZ
@given(text=st.one_of(st.text(max_size=120), GRAMMAR),
       columns=st.sampled_from(["auto", "re-im", "values"]))
def test_arbitrary_text_raises_only_input_error(text, columns):
    try:
        s = parse_spectrum_text(text, columns=columns)
    except InputError as e:
        assert e.field == "eigenvalues" and e.message
        if e.line is not None:
            assert 1 <= e.line <= text.count("\n") + text.count("\r") + 1
    else:
        assert isinstance(s, Spectrum) and s.count >= 1
        assert np.all(np.isfinite(s.values))


# --- Spectrum and its helpers ---------------------------------------------------------

def test_spectrum_validates_and_is_read_only():
    s = Spectrum([-1, -2 + 1j], "test")
    assert s.values.dtype == np.complex128 and s.count == 2
    with pytest.raises(ValueError):
        s.values[0] = 0
    with pytest.raises(InputError, match=r"2 eigenvalue\(s\) are not finite .* index 1"):
        Spectrum([1, np.nan, np.inf], "test")
    with pytest.raises(InputError, match="1-dimensional"):
        Spectrum(np.zeros((2, 2)), "test")
    with pytest.raises(InputError, match="numbers"):
        Spectrum(np.array(["1"]), "test")


def test_spectrum_size_limit(monkeypatch):
    from stepfence import limits
    monkeypatch.setattr(limits, "MAX_EIGENVALUES", 4)
    with pytest.raises(LimitExceeded):
        Spectrum(np.zeros(5), "test")


def test_extremes_against_numpy():
    rng = np.random.default_rng(3)
    v = rng.standard_normal(50) + 1j * rng.standard_normal(50)
    e = Spectrum(v, "test").extremes()
    assert e["min_real"] == v.real.min() and e["max_real"] == v.real.max()
    assert e["max_abs_imag"] == np.abs(v.imag).max()
    assert e["max_modulus"] == e["spectral_radius"] == np.abs(v).max()
    assert complex(*e["most_negative"]) == v[np.argmin(v.real)]


def test_combine_snapshots_tags_each_eigenvalue():
    a = Spectrum([-1, -2], "a", notes=("note a",))
    b = Spectrum([-3j], "b", partial=True, notes=("note a", "note b"))
    s = combine_snapshots([a, b], ["t=0", "t=1"])
    assert s.values.tolist() == [-1, -2, -3j]
    assert s.snapshot.tolist() == [0, 0, 1] and s.snapshot_names == ("t=0", "t=1")
    assert s.partial and "frozen" in s.notes[0] and s.notes[1:] == ("note a", "note b")
    with pytest.raises(InputError, match="names"):
        combine_snapshots([a, b], ["only one"])
    with pytest.raises(InputError, match="distinct"):
        combine_snapshots([a, b], ["x", "x"])
    with pytest.raises(InputError, match="itself combined"):
        combine_snapshots([s], ["again"])
    with pytest.raises(InputError, match="snapshot"):
        Spectrum([-1, -2], "bad", snapshot=np.array([0, 1]), snapshot_names=("only",))


def test_from_frequencies():
    s = from_frequencies([0.0, 1.0, 2.5])
    assert s.values.tolist() == [0, 1j, -1j, 2.5j, -2.5j]
    hz = from_frequencies([50.0], unit="Hz")
    assert hz.values.tolist() == [2j * np.pi * 50, -2j * np.pi * 50]
    assert "damping" in hz.notes[0]
    for bad in ([-1.0], [np.nan], [[1.0]], []):
        with pytest.raises(InputError):
            from_frequencies(bad)
    with pytest.raises(InputError) as e:
        from_frequencies([1.0], unit="rpm")
    assert e.value.field == "unit"
