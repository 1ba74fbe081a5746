"""Eigenvalue lists and matrices from uploaded bytes, read in memory by our own readers.

Lists: text (.txt, .csv, .dat, .tsv; see stepfence.spectra.text), NumPy .npy and .npz.
Matrices: MatrixMarket .mtx (our reader, checked against scipy.io.mmread in the tests), dense
text, .npy, and .npz holding a dense array or a scipy.sparse.save_npz matrix. Nothing is
written to disk; np.load never unpickles (allow_pickle=False), and every .npy header is read
and checked against the bytes actually present before any array is allocated.

References
----------
.. [1] R. F. Boisvert, R. Pozo, K. A. Remington, "The Matrix Market Exchange Formats: Initial
   Design", NIST Interagency Report 5935, 1996.
"""
from __future__ import annotations

import io
import math
import os
import re
import zipfile

import numpy as np
import scipy.sparse

from .. import limits
from ..errors import InputError, LimitExceeded
from .matrices import check_order, checked_dense
from .spectrum import Spectrum, checked_values, combine_snapshots
from .text import UNSIGNED_REAL, parse_spectrum_text, scan_number_lines

TEXT_EXTENSIONS = (".txt", ".csv", ".dat", ".tsv")
LIST_EXTENSIONS = TEXT_EXTENSIONS + (".npy", ".npz")
MATRIX_EXTENSIONS = (".mtx",) + TEXT_EXTENSIONS + (".npy", ".npz")
PREFERRED_ARRAY_NAMES = ("eigenvalues", "eigs", "values")
# A compressed .npz expands; this bounds what one upload may unpack to (a complex dense matrix
# at MAX_DENSE_N takes 16 * 4000**2 = 256 MB, a sparse one at MAX_SPARSE_NNZ more).
MAX_UNPACKED_BYTES = 8 * limits.MAX_UPLOAD_BYTES
MAX_ARCHIVE_MEMBERS = 1000
SPARSE_NPZ_KEYS = ("format", "shape", "data")

_NPY_MAGIC = b"\x93NUMPY"
_ZIP_MAGIC = b"PK\x03\x04"
_MM_BANNER = "%%matrixmarket"
_MM_FORMATS = ("coordinate", "array")
_MM_FIELDS = ("real", "complex", "integer", "pattern")
_MM_SYMMETRIES = ("general", "symmetric", "skew-symmetric", "hermitian")
_MM_REAL = rf"[+-]?{UNSIGNED_REAL}"
_MM_VALUE = {"real": rf"({_MM_REAL})", "integer": r"([+-]?[0-9]+)",
             "complex": rf"({_MM_REAL})[ \t]+({_MM_REAL})", "pattern": ""}
_MM_INDEX = r"[ \t]*([0-9]+)[ \t]+([0-9]+)"
_MM_END = r"[ \t\r]*"
_MM_GROUPS = {"real": 1, "integer": 1, "complex": 2, "pattern": 0}
_MM_MAX_INTEGER_DIGITS = 300  # beyond this an integer entry cannot be a finite double


# --- shared pieces ---------------------------------------------------------------------

def _display_name(filename: str) -> str:
    """Return the base name of an uploaded file, shortened for messages."""
    name = os.path.basename(str(filename).replace("\\", "/")) or "upload"
    return name if len(name) <= 80 else name[:77] + "..."


def _file_kind(data: bytes, filename: str, field: str, accepted: tuple[str, ...]) -> str:
    """Return 'text', 'npy', 'npz' or 'mtx' from the file's first bytes and its extension."""
    if len(data) > limits.MAX_UPLOAD_BYTES:
        raise LimitExceeded(field, f"file of {len(data)} bytes; at most {limits.MAX_UPLOAD_BYTES}")
    if not data:
        raise InputError(field, f"{_display_name(filename)} is empty")
    ext = os.path.splitext(str(filename).lower())[1]
    sniffed = ("npy" if data.startswith(_NPY_MAGIC) else "npz" if data.startswith(_ZIP_MAGIC)
               else "mtx" if data[:14].lower() == _MM_BANNER.encode() else "text")
    # why: a binary file sent under a text name (stdin.txt) is still recognised by its bytes
    if ext in TEXT_EXTENSIONS or ext == "":
        return sniffed
    if ext not in accepted:
        raise InputError(field, f"cannot read files of type {ext!r}",
                         expected=", ".join(accepted))
    return ext[1:]


def _decode_text(data: bytes, field: str) -> str:
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as e:
        line = data.count(b"\n", 0, e.start) + 1
        column = e.start - (data.rfind(b"\n", 0, e.start) + 1) + 1
        raise InputError(field, f"is not UTF-8 text: byte 0x{data[e.start]:02x} cannot be "
                                f"decoded", line=line, column=column) from None


def _npy_array(raw: bytes, field: str, name: str, allow_bytes: bool = False) -> np.ndarray:
    """Return the array in .npy bytes after checking its header against the bytes present."""
    f = io.BytesIO(raw)
    try:
        version = np.lib.format.read_magic(f)
        if version == (1, 0):
            shape, _, dtype = np.lib.format.read_array_header_1_0(f)
        elif version == (2, 0):
            shape, _, dtype = np.lib.format.read_array_header_2_0(f)
        else:
            raise InputError(field, f"{name}: .npy format version {version} is not supported")
    except InputError:
        raise
    except Exception as e:  # noqa: BLE001 - numpy raises several types for a malformed header
        raise InputError(field, f"{name} is not a valid .npy array ({e})") from None
    if dtype.hasobject or dtype.fields is not None:
        raise InputError(field, f"{name} holds {dtype} values; numbers expected")
    if dtype.kind not in ("iufc" + ("S" if allow_bytes else "")):
        raise InputError(field, f"{name} holds {dtype} values; numbers expected")
    expected = math.prod(shape) * dtype.itemsize
    present = len(raw) - f.tell()
    if expected != present:
        raise InputError(field, f"{name} is damaged: its header announces shape {shape} "
                                f"({expected} bytes) but {present} bytes follow")
    try:
        return np.load(io.BytesIO(raw), allow_pickle=False)
    except Exception as e:  # noqa: BLE001
        raise InputError(field, f"{name} is not a valid .npy array ({e})") from None


def _npz_arrays(data: bytes, field: str, name: str) -> dict[str, np.ndarray]:
    """Return the arrays of .npz bytes by member name, in archive order, within the bounds."""
    try:
        archive = zipfile.ZipFile(io.BytesIO(data))
        members = archive.infolist()
    except Exception as e:  # noqa: BLE001 - zipfile raises several types for a damaged archive
        raise InputError(field, f"{name} is not a valid .npz archive ({e})") from None
    if len(members) > MAX_ARCHIVE_MEMBERS:
        raise LimitExceeded(field, f"{name} holds {len(members)} arrays; at most "
                                   f"{MAX_ARCHIVE_MEMBERS}")
    unpacked = sum(m.file_size for m in members)
    if unpacked > MAX_UNPACKED_BYTES:
        raise LimitExceeded(field, f"{name} unpacks to {unpacked} bytes; at most "
                                   f"{MAX_UNPACKED_BYTES}")
    arrays: dict[str, np.ndarray] = {}
    for member in members:
        key = member.filename[:-4] if member.filename.endswith(".npy") else None
        if key is None or key in arrays:
            raise InputError(field, f"{name}: member {member.filename[:60]!r} is not a .npy "
                                    f"array or is repeated")
        try:
            raw = archive.read(member)
        except Exception as e:  # noqa: BLE001 - encrypted, damaged, bad CRC ...
            raise InputError(field, f"{name}: cannot unpack {member.filename[:60]!r} ({e})") from None
        arrays[key] = _npy_array(raw, field, f"{name}:{key}", allow_bytes=(key == "format"))
    if not arrays:
        raise InputError(field, f"{name} holds no arrays")
    return arrays


def _is_sparse_archive(arrays: dict) -> bool:
    return all(k in arrays for k in SPARSE_NPZ_KEYS)


# --- eigenvalue lists ------------------------------------------------------------------

def _spectrum_from_array(arr: np.ndarray, field: str, name: str, source: str) -> Spectrum:
    """Return the Spectrum an eigenvalue array holds: (n,), a row or column, or (n, 2) re/im."""
    if arr.dtype.kind not in "iufc":
        raise InputError(field, f"{name} holds {arr.dtype} values; numbers expected")
    if arr.size == 0:
        raise InputError(field, f"{name} holds no eigenvalues")
    if arr.ndim == 0 or arr.ndim == 1 or (arr.ndim == 2 and 1 in arr.shape):
        return Spectrum(checked_values(arr.ravel(), field), source=source)
    if arr.ndim == 2 and arr.shape[0] == arr.shape[1]:
        raise InputError(field, f"{name} holds a square {arr.shape[0]}x{arr.shape[1]} array: that "
                                f"is a matrix; use the matrix input to take its eigenvalues")
    if arr.ndim == 2 and arr.shape[1] == 2 and arr.dtype.kind != "c":
        values = checked_values(arr[:, 0].astype(float) + 1j * arr[:, 1].astype(float), field)
        return Spectrum(values, source=source, notes=(
            f"read the {arr.shape[0]}x2 array as two columns (real, imaginary)",))
    raise InputError(field, f"{name} has shape {arr.shape}",
                     expected="shape (n,) of eigenvalues or (n, 2) of real, imaginary parts")


def read_spectrum_bytes(data: bytes, filename: str, field: str = "file") -> Spectrum:
    """Return the Spectrum stored in an uploaded eigenvalue list.

    Parameters
    ----------
    data : bytes
        The file's content; at most limits.MAX_UPLOAD_BYTES.
    filename : str
        Its name; the extension chooses the reader (.txt/.csv/.dat/.tsv text, .npy, .npz),
        and a text or missing extension lets the first bytes decide.
    field : str
        Name of the input, for error messages.

    Returns
    -------
    Spectrum
        From an .npz: its only array, or the one named ``eigenvalues``, ``eigs`` or
        ``values``; several other arrays are read as snapshots (see combine_snapshots).

    Raises
    ------
    InputError
        Damaged or unsupported files, matrices (use read_matrix_bytes), bad numbers.
    """
    name = _display_name(filename)
    kind = _file_kind(data, filename, field, LIST_EXTENSIONS + (".mtx",))
    source = f"file {name}"
    if kind == "text":
        return parse_spectrum_text(_decode_text(data, field), field, source=source)
    if kind == "mtx":
        raise InputError(field, f"{name} is a MatrixMarket matrix; use the matrix input to take "
                                f"its eigenvalues")
    if kind == "npy":
        return _spectrum_from_array(_npy_array(data, field, name), field, name, source)
    arrays = _npz_arrays(data, field, name)
    if _is_sparse_archive(arrays):
        raise InputError(field, f"{name} holds a sparse matrix; use the matrix input to take its "
                                f"eigenvalues")
    if len(arrays) == 1:
        key, arr = next(iter(arrays.items()))
        return _spectrum_from_array(arr, field, f"{name}:{key}", f"{source}, array {key!r}")
    preferred = [k for k in PREFERRED_ARRAY_NAMES if k in arrays]
    if len(preferred) > 1:
        raise InputError(field, f"{name} holds arrays named {' and '.join(map(repr, preferred))}; "
                                f"keep one")
    if preferred:
        key = preferred[0]
        spec = _spectrum_from_array(arrays[key], field, f"{name}:{key}", f"{source}, array {key!r}")
        ignored = ", ".join(k for k in arrays if k != key)
        return Spectrum(spec.values, source=spec.source,
                        notes=spec.notes + (f"used the array {key!r}; ignored {ignored}",))
    parts = [_spectrum_from_array(a, field, f"{name}:{k}", f"{source}, array {k!r}")
             for k, a in arrays.items()]
    combined = combine_snapshots(parts, list(arrays), field=field)
    return Spectrum(combined.values, source=f"{source}: {combined.source}", notes=combined.notes,
                    snapshot=combined.snapshot, snapshot_names=combined.snapshot_names)


# --- matrices --------------------------------------------------------------------------

def _checked_order_at(shape, field: str, name: str, line: int, sparse: bool, nnz: int = 0) -> int:
    """Return check_order(...) with the error placed at the given line."""
    try:
        return check_order(shape, field, name, sparse=sparse, nnz=nnz)
    except InputError as e:
        raise type(e)(e.field, e.message, line=line) from None


def _integer_vector(arrays: dict, key: str, field: str, name: str) -> np.ndarray:
    if key not in arrays:
        raise InputError(field, f"{name}: the sparse matrix lacks its {key!r} array")
    a = arrays[key]
    if a.ndim != 1 or a.dtype.kind not in "iu":
        raise InputError(field, f"{name}: {key!r} must be a 1-dimensional integer array")
    return a.astype(np.int64)


def _sparse_from_arrays(arrays: dict, field: str, name: str) -> scipy.sparse.csr_matrix:
    """Return the csr matrix of scipy.sparse.save_npz arrays, every index range checked."""
    fmt_arr, shape_arr = arrays["format"], arrays["shape"]
    if fmt_arr.dtype.kind != "S" or fmt_arr.size != 1:
        raise InputError(field, f"{name}: 'format' must name the sparse format")
    fmt = fmt_arr.reshape(-1)[0].decode("ascii", "replace")
    if fmt not in ("csr", "csc", "coo"):
        raise InputError(field, f"{name}: sparse format {fmt!r} is not supported",
                         expected="csr, csc or coo (convert with .tocsr() before save_npz)")
    if shape_arr.dtype.kind not in "iu" or shape_arr.shape != (2,):
        raise InputError(field, f"{name}: 'shape' must hold two integers")
    data = arrays["data"]
    if data.ndim != 1 or data.dtype.kind not in "iufc":
        raise InputError(field, f"{name}: 'data' must be a 1-dimensional array of numbers")
    n = check_order(tuple(int(s) for s in shape_arr), field, name, sparse=True, nnz=data.size)
    if fmt in ("csr", "csc"):
        indices = _integer_vector(arrays, "indices", field, name)
        indptr = _integer_vector(arrays, "indptr", field, name)
        if (indptr.size != n + 1 or indptr[0] != 0 or np.any(np.diff(indptr) < 0)
                or indptr[-1] != indices.size or indices.size != data.size):
            raise InputError(field, f"{name}: 'indptr' does not describe {data.size} entries of "
                                    f"an order-{n} {fmt} matrix")
        coords = (indices,)
    else:
        if "coords" in arrays:
            rc = arrays["coords"]
            if rc.ndim != 2 or rc.shape[0] != 2 or rc.dtype.kind not in "iu":
                raise InputError(field, f"{name}: 'coords' must be a 2 x nnz integer array")
            coords = (rc[0].astype(np.int64), rc[1].astype(np.int64))
        else:
            coords = (_integer_vector(arrays, "row", field, name),
                      _integer_vector(arrays, "col", field, name))
        if any(c.size != data.size for c in coords):
            raise InputError(field, f"{name}: row and column arrays must match 'data' in length")
    for c in coords:
        if c.size and (c.min() < 0 or c.max() >= n):
            raise InputError(field, f"{name}: an index lies outside 0..{n - 1}")
    values = np.array(data, dtype=np.complex128 if data.dtype.kind == "c" else np.float64)
    if not np.all(np.isfinite(values)):
        raise InputError(field, f"{name} has NaN or infinite entries")
    if fmt == "csr":
        m = scipy.sparse.csr_matrix((values, indices, indptr), shape=(n, n))
    elif fmt == "csc":
        m = scipy.sparse.csc_matrix((values, indices, indptr), shape=(n, n)).tocsr()
    else:
        m = scipy.sparse.coo_matrix((values, coords), shape=(n, n)).tocsr()
    m.sum_duplicates()
    return m


def _read_text_matrix(data: bytes, field: str, name: str) -> np.ndarray:
    """Return the dense matrix written as rows of numbers (CSV, tabs or spaces)."""
    scanned = scan_number_lines(_decode_text(data, field), field,
                                max_numbers=limits.MAX_DENSE_N ** 2)
    if not scanned.rows:
        raise InputError(field, f"{name} holds no matrix rows")
    first_line, first = scanned.rows[0]
    width = len(first)
    if width > limits.MAX_DENSE_N:
        raise LimitExceeded(field, f"rows of {width} numbers; a dense matrix may have order at "
                                   f"most {limits.MAX_DENSE_N}", line=first_line)
    for line_no, tokens in scanned.rows:
        if len(tokens) != width:
            column = tokens[width].column if len(tokens) > width else None
            raise InputError(field, f"this row has {len(tokens)} numbers, the first row (line "
                                    f"{first_line}) {width}", line=line_no, column=column)
    if len(scanned.rows) != width:
        hint = ("; a single row or column looks like a list of eigenvalues: use the eigenvalue "
                "input") if 1 in (width, len(scanned.rows)) else ""
        raise InputError(field, f"{name} has {len(scanned.rows)} rows of {width} numbers; a "
                                f"Jacobian is a square matrix{hint}")
    mat = np.array([[t.value for t in tokens] for _, tokens in scanned.rows],
                   dtype=np.complex128)
    return mat.real.copy() if all(t.plain_real for _, ts in scanned.rows for t in ts) else mat


def _mm_header(lines: list[str], field: str) -> tuple[str, str, str]:
    words = lines[0].split()
    if not words or words[0].lower() != _MM_BANNER:
        raise InputError(field, "a MatrixMarket file must start with its banner", line=1,
                         column=1, expected="%%MatrixMarket matrix coordinate real general")
    words = [w.lower() for w in words]
    if len(words) != 5 or words[1] != "matrix":
        raise InputError(field, "the banner must read '%%MatrixMarket matrix FORMAT FIELD "
                                "SYMMETRY'", line=1)
    fmt, kind, symmetry = words[2:]
    for value, allowed, what in ((fmt, _MM_FORMATS, "format"), (kind, _MM_FIELDS, "field"),
                                 (symmetry, _MM_SYMMETRIES, "symmetry")):
        if value not in allowed:
            raise InputError(field, f"unknown MatrixMarket {what} {value!r}", line=1,
                             expected=" or ".join(allowed))
    if kind == "pattern" and (fmt == "array" or symmetry in ("skew-symmetric", "hermitian")):
        raise InputError(field, f"'pattern' cannot go with '{fmt}' '{symmetry}'", line=1)
    return fmt, kind, symmetry


def _mm_data_lines(lines: list[str], start: int):
    """Yield (line number, text) of the non-blank, non-comment lines from index start on."""
    for i in range(start, len(lines)):
        text = lines[i]
        stripped = text.strip()
        if stripped and not stripped.startswith("%"):
            yield i + 1, text


def _mm_bad_line(text: str, line: int, expected: str, field: str) -> InputError:
    shown = text.strip()
    shown = shown if len(shown) <= 60 else shown[:57] + "..."
    return InputError(field, f"cannot read the entry {shown!r}", line=line, expected=expected)


def _read_matrix_market(data: bytes, field: str, name: str):
    """Return the matrix of a MatrixMarket file: csr for coordinate, ndarray for array."""
    # latin-1 never fails; data lines are then checked character by character by the patterns
    lines = data.decode("latin-1").split("\n")
    fmt, kind, symmetry = _mm_header(lines, field)
    body = _mm_data_lines(lines, 1)
    size = next(body, None)
    if size is None:
        last = max((i for i, t in enumerate(lines) if t.strip()), default=0) + 1
        raise InputError(field, "the size line is missing", line=last)
    size_line, size_text = size
    want = 3 if fmt == "coordinate" else 2
    words = size_text.split()
    if len(words) != want or not all(w.isascii() and w.isdigit() for w in words):
        raise InputError(field, f"the size line must hold {want} non-negative integers",
                         line=size_line, expected="ROWS COLUMNS ENTRIES" if want == 3 else "ROWS COLUMNS")
    shape = (int(words[0]), int(words[1]))
    nnz = int(words[2]) if fmt == "coordinate" else 0
    n = _checked_order_at(shape, field, name, size_line, sparse=(fmt == "coordinate"), nnz=nnz)
    dtype = np.complex128 if kind == "complex" else np.float64
    expected = {"real": "ROW COLUMN VALUE", "integer": "ROW COLUMN INTEGER", "pattern": "ROW COLUMN",
                "complex": "ROW COLUMN REAL IMAG"}[kind]
    if fmt == "array":
        count = {"general": n * n, "symmetric": n * (n + 1) // 2, "hermitian": n * (n + 1) // 2,
                 "skew-symmetric": n * (n - 1) // 2}[symmetry]
        line_re = r"[ \t]*" + _MM_VALUE[kind] + _MM_END
        lines_at, columns = _mm_columns(lines, body, size_line, line_re, _MM_GROUPS[kind], count,
                                        "values", expected.split(" ", 2)[-1], field)
        values = _mm_values(columns, kind, lines_at, field)
        return _mm_dense(values, n, symmetry, dtype, field)
    line_re = _MM_INDEX + ("" if kind == "pattern" else r"[ \t]+" + _MM_VALUE[kind]) + _MM_END
    lines_at, columns = _mm_columns(lines, body, size_line, line_re, 2 + _MM_GROUPS[kind], nnz,
                                    "entries", expected, field)
    r_idx, c_idx = (_mm_indices(c, n, lines_at, field) for c in columns[:2])
    values = _mm_values(columns[2:], kind, lines_at, field)
    _mm_check_triangle(r_idx, c_idx, values, symmetry, lines_at, field)
    if symmetry != "general":
        off = r_idx != c_idx
        mirror = {"symmetric": values[off], "skew-symmetric": -values[off],
                  "hermitian": np.conj(values[off])}[symmetry]
        r_idx, c_idx = np.concatenate([r_idx, c_idx[off]]), np.concatenate([c_idx, r_idx[off]])
        values = np.concatenate([values, mirror])
    mat = scipy.sparse.coo_matrix((values, (r_idx, c_idx)), shape=(n, n)).tocsr()
    mat.sum_duplicates()
    return mat


def _mm_columns(lines: list[str], body, size_line: int, line_re: str, groups: int, count: int,
                what: str, expected: str, field: str) -> tuple[np.ndarray, list]:
    """Return (line numbers, one sequence of matched strings per group) of the data lines.

    Fast path: when the lines after the size line hold nothing but entries, one regular
    expression checks them all at once and str.split cuts the tokens. Otherwise (comments,
    blank lines, or an error to locate) every line is matched on its own.
    """
    rest = lines[size_line:]
    while rest and not rest[-1].strip():
        rest = rest[:-1]
    plain = line_re.replace("(?:", "\0").replace("(", "(?:").replace("\0", "(?:")
    if len(rest) == count and re.fullmatch(rf"(?:{plain}\n)*(?:{plain})?", "\n".join(rest)):
        tokens = "\n".join(rest).split()
        if len(tokens) == count * groups:
            lines_at = np.arange(size_line + 1, size_line + 1 + count, dtype=np.int64)
            return lines_at, [tokens[g::groups] for g in range(groups)]
    entries = list(body)
    if len(entries) > count:
        raise InputError(field, f"more than the {count} {what} the size line announces",
                         line=entries[count][0])
    if len(entries) < count:
        raise InputError(field, f"the size line announces {count} {what}, the file holds "
                                f"{len(entries)}", line=entries[-1][0] if entries else size_line)
    pattern = re.compile(line_re)
    matches = [pattern.fullmatch(text) for _, text in entries]
    for (line_no, text), m in zip(entries, matches):
        if m is None:
            raise _mm_bad_line(text, line_no, expected, field)
    lines_at = np.fromiter((line_no for line_no, _ in entries), dtype=np.int64, count=len(entries))
    return lines_at, [[m.group(g + 1) for m in matches] for g in range(groups)]


def _mm_indices(column: tuple, n: int, lines_at: np.ndarray, field: str) -> np.ndarray:
    """Return 0-based indices of a column of 1-based index strings, each within 1..n."""
    too_long = [i for i, s in enumerate(column) if len(s) > 18]
    if too_long:
        raise InputError(field, f"an index lies outside the {n}x{n} matrix", line=int(lines_at[too_long[0]]))
    idx = np.array(column, dtype=np.int64)
    bad = (idx < 1) | (idx > n)
    if bad.any():
        raise InputError(field, f"an index lies outside the {n}x{n} matrix",
                         line=int(lines_at[np.argmax(bad)]))
    return idx - 1


def _mm_values(columns: list, kind: str, lines_at: np.ndarray, field: str) -> np.ndarray:
    """Return the entry values of the matched value columns (ones for a pattern file)."""
    if kind == "pattern":
        return np.ones(lines_at.size)
    parts = []
    for column in columns:
        if kind == "integer":
            long = [i for i, s in enumerate(column) if len(s.lstrip("+-")) > _MM_MAX_INTEGER_DIGITS]
            if long:
                raise InputError(field, "an integer entry is too large for a double",
                                 line=int(lines_at[long[0]]))
        elif any(("d" in s or "D" in s) for s in column):
            column = [s.replace("d", "e").replace("D", "e") for s in column]
        # the strings were matched by the patterns, so numpy reads each exactly as float() would
        part = np.array(column, dtype=np.float64)
        bad = ~np.isfinite(part)
        if bad.any():
            raise InputError(field, "a value is too large: it overflows to infinity",
                             line=int(lines_at[np.argmax(bad)]))
        parts.append(part)
    return parts[0] + 1j * parts[1] if kind == "complex" else parts[0]


def _mm_check_triangle(rows, cols, values, symmetry: str, lines_at, field: str) -> None:
    """Refuse entries a symmetric, skew-symmetric or Hermitian file may not store [1]_."""
    if symmetry == "general":
        return
    checks = [(rows < cols, f"a {symmetry} file stores only the lower triangle; an entry lies "
                            f"above the diagonal")]
    diagonal = rows == cols
    if symmetry == "skew-symmetric":
        checks.append((diagonal & (values != 0), "a skew-symmetric matrix has a zero diagonal"))
    if symmetry == "hermitian":
        checks.append((diagonal & (np.imag(values) != 0), "a Hermitian matrix has a real diagonal"))
    for bad, message in checks:
        if bad.any():
            raise InputError(field, message, line=int(lines_at[np.argmax(bad)]))


def _mm_dense(values: np.ndarray, n: int, symmetry: str, dtype, field: str) -> np.ndarray:
    """Return the n x n matrix of MatrixMarket array values (column-major, lower triangle)."""
    if symmetry == "general":
        return values.reshape((n, n), order="F").astype(dtype, copy=False)
    # the upper triangle of the transpose in row-major order is the lower one column by column
    cols, rows = np.triu_indices(n, k=1 if symmetry == "skew-symmetric" else 0)
    mat = np.zeros((n, n), dtype=dtype)
    mat[rows, cols] = values
    if symmetry == "hermitian" and np.any(np.diag(mat).imag != 0):
        raise InputError(field, "a Hermitian matrix has a real diagonal")
    off = rows != cols
    mirror = {"symmetric": values[off], "skew-symmetric": -values[off],
              "hermitian": np.conj(values[off])}[symmetry]
    mat[cols[off], rows[off]] = mirror
    return mat


def read_matrix_bytes(data: bytes, filename: str, field: str = "matrix"):
    """Return the square matrix stored in an uploaded file.

    Parameters
    ----------
    data : bytes
        The file's content; at most limits.MAX_UPLOAD_BYTES.
    filename : str
        Its name; the extension chooses the reader: .mtx (MatrixMarket [1]_), .npy, .npz
        (scipy.sparse.save_npz, or one dense array), or .txt/.csv/.dat/.tsv dense rows.
    field : str
        Name of the input, for error messages.

    Returns
    -------
    ndarray, shape (N, N), float64 or complex128; or scipy.sparse.csr_matrix, shape (N, N)
        Sparse for MatrixMarket coordinate files and sparse .npz archives (duplicates summed,
        symmetric storage expanded), dense otherwise. All entries are finite.

    Raises
    ------
    InputError
        A damaged or malformed file (with its line for text formats), a non-square matrix, a
        list of eigenvalues sent as a matrix.
    LimitExceeded
        Over MAX_UPLOAD_BYTES, MAX_DENSE_N (dense), MAX_SPARSE_N or MAX_SPARSE_NNZ (sparse).
    """
    name = _display_name(filename)
    kind = _file_kind(data, filename, field, MATRIX_EXTENSIONS)
    if kind == "mtx":
        return _read_matrix_market(data, field, name)
    if kind == "text":
        return _read_text_matrix(data, field, name)
    if kind == "npy":
        return checked_dense(_npy_array(data, field, name), field, name)
    arrays = _npz_arrays(data, field, name)
    if _is_sparse_archive(arrays):
        return _sparse_from_arrays(arrays, field, name)
    if len(arrays) == 1:
        key, arr = next(iter(arrays.items()))
        return checked_dense(arr, field, f"{name}:{key}")
    raise InputError(field, f"{name} holds the arrays {', '.join(list(arrays)[:10])}",
                     expected="one dense array or a scipy.sparse.save_npz matrix")
