"""Spectra (parsers, files, models) and the command line, against independent references."""
import io
import json
import subprocess
import sys

import numpy as np
import pytest
import scipy.io
import scipy.sparse

from stepfence.errors import InputError
from stepfence.spectra import (assemble, eigenvalues_of, parse_spectrum_text, read_matrix_bytes,
                               read_spectrum_bytes, semidiscretisation)


def test_text_tokens():
    s = parse_spectrum_text("-3\n-1+2j, -1+2i ; -1 - 2.5i\n2.5e3i -1+2im (1.0,2.0) (1+2j) 1.5d-3 -j")
    assert np.allclose(s.values, [-3, -1 + 2j, -1 + 2j, -1 - 2.5j, 2500j, -1 + 2j, 1 + 2j, 1 + 2j, 1.5e-3, -1j])


def test_two_columns_and_comments():
    s = parse_spectrum_text("# exported\nre,im\n-1, 2\n-3\t4\n")
    assert np.allclose(s.values, [-1 + 2j, -3 + 4j])
    assert "two columns" in s.notes[0]


def test_bad_token_names_line_and_column():
    with pytest.raises(InputError) as e:
        parse_spectrum_text("-1\n-2, 3x\n")
    assert e.value.line == 2 and e.value.column == 5


def test_nan_rejected():
    with pytest.raises(InputError):
        parse_spectrum_text("-1, nan")


@pytest.mark.parametrize("kind,params", [("diffusion-1d", {"bc": "dirichlet"}), ("diffusion-1d", {"bc": "periodic"}),
                                         ("diffusion-2d", {}), ("advection-upwind", {}),
                                         ("advection-centred", {}), ("advection-diffusion", {})])
def test_models_match_numpy_eigenvalues_of_assembled_matrix(kind, params):
    # independent route: numpy's dense eigenvalues of the assembled difference matrix
    n = 12 if kind == "diffusion-2d" else 40
    ana = np.sort_complex(np.round(semidiscretisation(kind, n, **params).values, 9))
    num = np.sort_complex(np.round(np.linalg.eigvals(assemble(kind, n, **params).toarray()), 9))
    assert np.allclose(ana, num, atol=1e-7 * np.abs(ana).max())


def test_matrix_market_against_scipy_mmwrite():
    A = scipy.sparse.random(30, 30, density=0.2, random_state=1, format="csr")
    buf = io.BytesIO()
    scipy.io.mmwrite(buf, A)
    M = read_matrix_bytes(buf.getvalue(), "j.mtx")
    assert np.allclose(M.toarray(), A.toarray())


def test_npy_list_and_matrix_refusal():
    buf = io.BytesIO()
    np.save(buf, np.array([-1 + 1j, -2]))
    assert np.allclose(read_spectrum_bytes(buf.getvalue(), "e.npy").values, [-1 + 1j, -2])
    buf = io.BytesIO()
    np.save(buf, np.eye(3))
    with pytest.raises(InputError):
        read_spectrum_bytes(buf.getvalue(), "m.npy")


def test_sparse_partial_spectrum_contains_extreme_eigenvalue():
    n = 5000
    A = assemble("diffusion-1d", n)
    s = eigenvalues_of(A)
    assert s.partial and "partial" in s.notes[0]
    exact = semidiscretisation("diffusion-1d", n).values.real.min()
    assert np.min(s.values.real) == pytest.approx(exact, rel=1e-8)


def _cli(*args, stdin=None):
    return subprocess.run([sys.executable, "-m", "stepfence", *args], input=stdin, capture_output=True,
                          text=True, timeout=300)


def test_cli_describe_json_keys():
    r = _cli("describe", "ab3", "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    for key in ("order", "error_constant", "error_constant_value", "explicit", "zero_stable",
                "real_interval", "imag_interval", "a_stable", "a_alpha_deg"):
        assert key in d
    assert d["real_interval"][0] == pytest.approx(-6 / 11, rel=1e-12)  # Hairer & Wanner II, V.1


def test_cli_limit_from_stdin_and_matrix(tmp_path):
    r = _cli("limit", "rk4", "--eigs", "-", "--json", stdin="-1\n-10+1j\n")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert d["binding_eigenvalue"] == [-10.0, 1.0]
    A = assemble("diffusion-1d", 20).toarray()
    np.save(tmp_path / "J.npy", A)
    r = _cli("limit", "ab2", "--matrix", str(tmp_path / "J.npy"), "--json")
    d = json.loads(r.stdout)
    lam_min = np.linalg.eigvalsh(A).min()
    assert d["h_max"] == pytest.approx(1 / abs(lam_min), rel=1e-10)  # AB2 real interval [-1, 0]
    assert "per_eigenvalue" not in d


def test_cli_bad_input_exit_2_one_line():
    r = _cli("describe", "--rho", "z^2 - z", "--sigma", "3/2 z - 1/2)")
    assert r.returncode == 2
    assert r.stderr.count("\n") == 1 and "sigma" in r.stderr
    r = _cli("describe", "nosuch")
    assert r.returncode == 2 and "unknown scheme" in r.stderr


def test_cli_serve_refuses_remote_host_without_flag():
    r = _cli("serve", "--host", "0.0.0.0")
    assert r.returncode == 2 and "--allow-remote" in r.stderr


def test_enclosure_limits():
    from stepfence.analysis.steplimit import enclosure_limit
    from stepfence.schemes.catalogue import get_scheme
    from stepfence.spectra import parse_enclosure
    rk4 = get_scheme("rk4")
    # RK4 real extent -2.785293563405 (Hairer & Wanner II, section IV.2; issue text ~ -2.785)
    r = enclosure_limit(rk4, parse_enclosure({"kind": "real-interval", "lo": -400, "hi": -1}))
    assert r.h_max == pytest.approx(2.785293563405282 / 400, rel=1e-12)
    # RK4 imaginary extent 2 sqrt(2): a segment of the imaginary axis of half-length 5
    r = enclosure_limit(rk4, parse_enclosure({"kind": "imag-segment", "lo": -5, "hi": 5}))
    assert r.h_max == pytest.approx(2 * np.sqrt(2) / 5, rel=1e-12)
    # a disk centred at 0 reaches into Re > 0, where no consistent explicit scheme is stable
    assert enclosure_limit(rk4, parse_enclosure({"kind": "spectral-radius", "rho": 3})).h_max == 0.0
    # the enclosure limit never exceeds the limit of sampled eigenvalues inside it
    from stepfence.analysis.steplimit import step_limit
    ell = parse_enclosure({"kind": "ellipse", "center": [-10, 0], "semi_real": 9, "semi_imag": 4})
    inside = ell.boundary(64) * 0.999 + (-10) * 0.001
    assert enclosure_limit(rk4, ell).h_max <= step_limit(rk4, inside).h_max * (1 + 1e-12)


def test_cli_snapshots_name_the_binding_one(tmp_path):
    (tmp_path / "early.txt").write_text("-1\n-30+2j\n")
    (tmp_path / "late.txt").write_text("-50\n-3+1j\n")
    r = _cli("limit", "ab3", "--eigs", str(tmp_path / "early.txt"), "--eigs", str(tmp_path / "late.txt"), "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert d["binding_snapshot"] == "late.txt"
    assert d["h_max"] == pytest.approx(6 / 11 / 50, rel=1e-12)  # AB3 interval -6/11 (issue text)


def test_cli_accuracy_runs_and_says_which_binds():
    r = _cli("accuracy", "rk4", "--eigs", "-", "--tol", "1e-6", stdin="-1\n-30+2j\n")
    assert r.returncode == 0, r.stderr
    assert "binds" in r.stdout
