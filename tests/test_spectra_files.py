"""Eigenvalue lists and matrices from bytes: our readers against scipy's and numpy's writers.

The independent reference for MatrixMarket is scipy.io.mmread on files written by
scipy.io.mmwrite; for .npy/.npz it is numpy's own np.save / np.savez and
scipy.sparse.save_npz.
"""
import io

import numpy as np
import pytest
import scipy.io
import scipy.sparse
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from stepfence import limits
from stepfence.errors import InputError, LimitExceeded
from stepfence.spectra import read_matrix_bytes, read_spectrum_bytes
from stepfence.spectra import files as files_module

FUZZ = settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def _npy(arr) -> bytes:
    buf = io.BytesIO()
    np.save(buf, arr)
    return buf.getvalue()


def _npz(compressed=False, **arrays) -> bytes:
    buf = io.BytesIO()
    (np.savez_compressed if compressed else np.savez)(buf, **arrays)
    return buf.getvalue()


def _mm(matrix, **kw) -> bytes:
    buf = io.BytesIO()
    scipy.io.mmwrite(buf, matrix, **kw)
    return buf.getvalue()


def _dense(m):
    return m.toarray() if scipy.sparse.issparse(m) else np.asarray(m)


# --- MatrixMarket against scipy.io.mmread -----------------------------------------------

def _test_matrix(field: str, symmetry: str, n: int = 9, seed: int = 0) -> np.ndarray:
    rng = np.random.default_rng(seed)
    mask = rng.random((n, n)) < 0.4
    A = np.where(mask, rng.standard_normal((n, n)), 0.0)
    if field == "complex":
        A = A + 1j * np.where(mask, rng.standard_normal((n, n)), 0.0)
    if field == "integer":
        A = np.round(5 * A)
    return {"general": A, "symmetric": A + A.T, "skew-symmetric": A - A.T,
            "hermitian": A + A.conj().T}[symmetry]


CASES = [(f, s) for f in ("real", "complex", "integer")
         for s in ("general", "symmetric", "skew-symmetric", "hermitian")
         if not (s == "hermitian" and f != "complex")]


@pytest.mark.parametrize("layout", ["coordinate", "array"])
@pytest.mark.parametrize("field,symmetry", CASES)
def test_matrix_market_matches_scipy_mmread(field, symmetry, layout):
    A = _test_matrix(field, symmetry)
    source = scipy.sparse.coo_matrix(A) if layout == "coordinate" else A
    data = _mm(source, symmetry=symmetry, field=field)
    assert data.split(b"\n")[0].decode().split()[2:] == [layout, field, symmetry]
    ours = read_matrix_bytes(data, "j.mtx")
    theirs = scipy.io.mmread(io.BytesIO(data))
    assert scipy.sparse.issparse(ours) == (layout == "coordinate")
    assert np.array_equal(_dense(ours), _dense(theirs))
    assert np.array_equal(_dense(ours), A)


def test_matrix_market_pattern_and_duplicates_as_scipy():
    text = (b"%%MatrixMarket matrix coordinate pattern general\n% a comment\n\n3 3 4\n"
            b"1 1\n2 3\n3 1\n2 3\n")
    ours = read_matrix_bytes(text, "p.mtx")
    theirs = scipy.io.mmread(io.BytesIO(text))
    assert np.array_equal(ours.toarray(), _dense(theirs))  # duplicates summed, as scipy does


def test_matrix_market_comments_between_entries_are_skipped():
    # scipy's reader refuses these; ours skips them (checked against the same file without them)
    clean = b"%%MatrixMarket matrix coordinate real general\n3 3 3\n1 1 -2.5\n2 3 1e-3\n3 1 4\n"
    noisy = clean.replace(b"2 3 1e-3\n", b"% a note\n\n2 3 1e-3\n")
    assert np.array_equal(read_matrix_bytes(noisy, "n.mtx").toarray(),
                          scipy.io.mmread(io.BytesIO(clean)).toarray())


def test_matrix_market_fortran_exponents_and_crlf():
    text = b"%%MatrixMarket matrix coordinate real general\r\n2 2 2\r\n1 1 -1.5D+02\r\n2 2 2.5d-1\r\n"
    assert np.array_equal(read_matrix_bytes(text, "f.mtx").toarray(), [[-150.0, 0], [0, 0.25]])


MM_HEAD = "%%MatrixMarket matrix coordinate real general\n"


@pytest.mark.parametrize("text,line,fragment", [
    ("%%MatrixMarket vector coordinate real general\n1 1 1\n", 1, "banner"),
    ("%%MatrixMarket matrix coordinate double general\n", 1, "field"),
    ("%%MatrixMarket matrix array pattern general\n", 1, "pattern"),
    ("hello\n", 1, "banner"),
    (MM_HEAD, 1, "size line is missing"),
    (MM_HEAD + "3 3\n", 2, "size line"),
    (MM_HEAD + "2 3 1\n1 1 1\n", 2, "square"),
    (MM_HEAD + "2 2 2\n1 1 1.0\n", 3, "holds 1"),
    (MM_HEAD + "2 2 1\n1 1 1.0\n2 2 2.0\n", 4, "more than"),
    (MM_HEAD + "2 2 1\n3 1 1.0\n", 3, "outside"),
    (MM_HEAD + "2 2 1\n0 1 1.0\n", 3, "outside"),
    (MM_HEAD + "2 2 1\n1 1 nan\n", 3, "cannot read"),
    (MM_HEAD + "2 2 1\n1 1 1e999\n", 3, "overflows"),
    (MM_HEAD + "2 2 1\n1 1\n", 3, "cannot read"),
    (MM_HEAD + "2 2 1\n1 1 1.0 2.0\n", 3, "cannot read"),
    ("%%MatrixMarket matrix coordinate real symmetric\n2 2 1\n1 2 1.0\n", 3, "lower triangle"),
    ("%%MatrixMarket matrix coordinate real skew-symmetric\n2 2 1\n1 1 1.0\n", 3, "zero diagonal"),
    ("%%MatrixMarket matrix coordinate complex hermitian\n2 2 1\n1 1 1.0 2.0\n", 3, "real diagonal"),
    ("%%MatrixMarket matrix array real general\n2 2\n1\n2\n3\n", 5, "holds 3"),
    ("%%MatrixMarket matrix array real general\n2 2\n1\n2\n3\n4\n5\n", 7, "more than"),
    ("%%MatrixMarket matrix coordinate integer general\n1 1 1\n1 1 " + "9" * 400 + "\n", 3,
     "too large"),
])
def test_matrix_market_errors_name_the_line(text, line, fragment):
    with pytest.raises(InputError) as e:
        read_matrix_bytes(text.encode(), "bad.mtx", field="jac")
    assert e.value.field == "jac"
    assert e.value.line == line
    assert fragment in e.value.message


def test_matrix_market_limits_checked_before_reading(monkeypatch):
    monkeypatch.setattr(limits, "MAX_SPARSE_NNZ", 10)
    with pytest.raises(LimitExceeded) as e:
        read_matrix_bytes((MM_HEAD + "5 5 11\n").encode(), "big.mtx")
    assert e.value.line == 2
    monkeypatch.setattr(limits, "MAX_DENSE_N", 3)
    with pytest.raises(LimitExceeded):
        read_matrix_bytes(b"%%MatrixMarket matrix array real general\n4 4\n", "big.mtx")


# --- other matrix formats -------------------------------------------------------------

def test_npy_and_dense_npz_matrices_round_trip():
    A = np.random.default_rng(1).standard_normal((6, 6))
    assert np.array_equal(read_matrix_bytes(_npy(A), "a.npy"), A)
    assert np.array_equal(read_matrix_bytes(_npz(jac=A + 1j), "a.npz"), A + 1j)
    assert read_matrix_bytes(_npy(np.eye(3, dtype=np.int32)), "i.npy").dtype == np.float64


@pytest.mark.parametrize("fmt", ["csr", "csc", "coo"])
@pytest.mark.parametrize("compressed", [False, True])
def test_sparse_npz_matches_scipy_load_npz(fmt, compressed):
    A = scipy.sparse.random(40, 40, density=0.1, random_state=2, format=fmt)
    buf = io.BytesIO()
    scipy.sparse.save_npz(buf, A, compressed=compressed)
    ours = read_matrix_bytes(buf.getvalue(), "s.npz")
    assert isinstance(ours, scipy.sparse.csr_matrix)
    assert np.array_equal(ours.toarray(), scipy.sparse.load_npz(io.BytesIO(buf.getvalue())).toarray())


def test_sparse_npz_with_bad_indices_is_refused():
    A = scipy.sparse.random(5, 5, density=0.5, random_state=3, format="csr")
    indices = A.indices.copy()
    indices[0] = 7  # outside the matrix: scipy's constructor would not check this
    data = _npz(format=np.array(b"csr"), shape=np.array([5, 5]), data=A.data,
                indices=indices, indptr=A.indptr)
    with pytest.raises(InputError, match="outside"):
        read_matrix_bytes(data, "s.npz")
    dia = io.BytesIO()
    scipy.sparse.save_npz(dia, scipy.sparse.eye(4, format="dia"))
    with pytest.raises(InputError, match="not supported"):
        read_matrix_bytes(dia.getvalue(), "d.npz")


def test_text_matrix():
    A = read_matrix_bytes(b"# J\n-2, 1, 0\n1 -2 1\n0\t1\t-2\n", "j.csv")
    assert np.array_equal(A, [[-2, 1, 0], [1, -2, 1], [0, 1, -2]]) and A.dtype == np.float64
    assert read_matrix_bytes(b"1 2j\n3 4\n", "c.txt").dtype == np.complex128
    with pytest.raises(InputError) as e:
        read_matrix_bytes(b"1 2 3\n4 5\n6 7 8\n", "j.csv")
    assert e.value.line == 2
    with pytest.raises(InputError, match="list of eigenvalues"):
        read_matrix_bytes(b"1 2 3\n", "row.csv")
    with pytest.raises(InputError, match="square"):
        read_matrix_bytes(b"1 2 3\n4 5 6\n", "wide.csv")


def test_matrix_refusals():
    with pytest.raises(InputError, match="list of eigenvalues"):
        read_matrix_bytes(_npy(np.array([1.0, 2.0])), "v.npy")
    with pytest.raises(InputError, match="NaN or infinite.*row 2, column 1"):
        read_matrix_bytes(_npy(np.array([[1.0, 0.0], [np.nan, 1.0]])), "n.npy")
    with pytest.raises(InputError, match="square"):
        read_matrix_bytes(_npy(np.zeros((2, 3))), "r.npy")
    with pytest.raises(InputError, match="arrays"):
        read_matrix_bytes(_npz(a=np.eye(2), b=np.eye(2)), "two.npz")
    with pytest.raises(InputError, match="type"):
        read_matrix_bytes(b"1", "j.xlsx")


def test_dense_limit(monkeypatch):
    monkeypatch.setattr(limits, "MAX_DENSE_N", 3)
    with pytest.raises(LimitExceeded):
        read_matrix_bytes(_npy(np.eye(4)), "e.npy")


def test_upload_size_limit(monkeypatch):
    monkeypatch.setattr(limits, "MAX_UPLOAD_BYTES", 5)
    with pytest.raises(LimitExceeded):
        read_spectrum_bytes(b"-1, -2, -3", "e.txt")
    with pytest.raises(LimitExceeded):
        read_matrix_bytes(b"-1, -2, -3", "e.txt")


# --- eigenvalue lists -----------------------------------------------------------------

def test_text_list_file():
    s = read_spectrum_bytes("\ufeff-1+2i\n\u22123\n".encode(), "dir/eigs.txt")
    assert s.values.tolist() == [-1 + 2j, -3] and s.source == "file eigs.txt"
    with pytest.raises(InputError) as e:
        read_spectrum_bytes(b"-1\n-2\xff\n", "e.csv")
    assert (e.value.line, e.value.column) == (2, 3)


def test_npy_lists():
    v = np.array([-1 + 1j, -2, -3.5j])
    assert read_spectrum_bytes(_npy(v), "e.npy").values.tolist() == v.tolist()
    assert read_spectrum_bytes(_npy(v.reshape(-1, 1)), "e.npy").values.tolist() == v.tolist()
    two = read_spectrum_bytes(_npy(np.array([[-1.0, 2.0], [-3.0, 4.0], [-5.0, 0.0]])), "c.npy")
    assert two.values.tolist() == [-1 + 2j, -3 + 4j, -5] and "two columns" in two.notes[0]
    with pytest.raises(InputError, match="matrix input"):
        read_spectrum_bytes(_npy(np.eye(3)), "m.npy")
    with pytest.raises(InputError, match="shape"):
        read_spectrum_bytes(_npy(np.zeros((2, 3, 4))), "t.npy")
    # a binary file under a text name is still recognised by its bytes (CLI reads stdin.txt)
    assert read_spectrum_bytes(_npy(v), "stdin.txt").values.tolist() == v.tolist()


def test_npz_lists_and_snapshots():
    v = np.array([-1.0, -2.0])
    assert read_spectrum_bytes(_npz(x=v), "e.npz").values.tolist() == [-1, -2]
    named = read_spectrum_bytes(_npz(eigenvalues=v, mesh=np.arange(3.0)), "e.npz")
    assert named.values.tolist() == [-1, -2] and "ignored mesh" in named.notes[-1]
    snap = read_spectrum_bytes(_npz(compressed=True, t0=v, t1=np.array([-5j, 5j])), "s.npz")
    assert snap.values.tolist() == [-1, -2, -5j, 5j]
    assert snap.snapshot.tolist() == [0, 0, 1, 1] and snap.snapshot_names == ("t0", "t1")
    assert "frozen" in snap.notes[0]
    with pytest.raises(InputError, match="keep one"):
        read_spectrum_bytes(_npz(eigs=v, values=v), "e.npz")
    buf = io.BytesIO()
    scipy.sparse.save_npz(buf, scipy.sparse.eye(3, format="csr"))
    with pytest.raises(InputError, match="sparse matrix"):
        read_spectrum_bytes(buf.getvalue(), "s.npz")
    with pytest.raises(InputError, match="MatrixMarket"):
        read_spectrum_bytes(_mm(scipy.sparse.eye(2)), "m.mtx")


def test_pickles_are_never_loaded():
    data = _npy(np.array([{"a": 1}], dtype=object))
    with pytest.raises(InputError, match="numbers expected"):
        read_spectrum_bytes(data, "o.npy")
    with pytest.raises(InputError):
        read_matrix_bytes(_npz(o=np.array([[None]], dtype=object)), "o.npz")


def test_npy_header_checked_against_bytes_present():
    data = _npy(np.arange(10.0))
    with pytest.raises(InputError, match="damaged"):
        read_spectrum_bytes(data[:-8], "cut.npy")
    # a header announcing 10**13 values in a few bytes must not allocate them
    buf = io.BytesIO()
    np.lib.format.write_array_header_1_0(buf, {"descr": "<f8", "fortran_order": False,
                                               "shape": (10 ** 13,)})
    with pytest.raises(InputError, match="damaged"):
        read_spectrum_bytes(buf.getvalue() + bytes(16), "forged.npy")


def test_archive_unpack_bound(monkeypatch):
    monkeypatch.setattr(files_module, "MAX_UNPACKED_BYTES", 1000)
    with pytest.raises(LimitExceeded):
        read_spectrum_bytes(_npz(compressed=True, x=np.zeros(1000)), "bomb.npz")


@FUZZ
@given(data=st.binary(max_size=600),
       name=st.sampled_from(["e.txt", "e.csv", "e.npy", "e.npz", "e.mtx", "e", "e.dat"]))
def test_arbitrary_bytes_raise_only_input_error(data, name):
    for reader in (read_spectrum_bytes, read_matrix_bytes):
        try:
            reader(data, name)
        except InputError:
            pass


VALID = [_npy(np.array([-1.0, -2.0 + 1j])), _npz(x=np.eye(3)),
         _mm(scipy.sparse.random(4, 4, density=0.5, random_state=0)),
         b"%%MatrixMarket matrix array complex hermitian\n2 2\n1 0\n2 3\n4 0\n"]


@FUZZ
@given(which=st.integers(0, len(VALID) - 1), flips=st.lists(st.tuples(st.integers(0, 10_000),
                                                                     st.integers(0, 255)),
                                                           min_size=1, max_size=4))
def test_damaged_files_raise_only_input_error(which, flips):
    data = bytearray(VALID[which])
    for pos, byte in flips:
        data[pos % len(data)] = byte
    for name in ("x.npy", "x.npz", "x.mtx", "x.txt"):
        for reader in (read_spectrum_bytes, read_matrix_bytes):
            try:
                reader(bytes(data), name)
            except InputError:
                pass
