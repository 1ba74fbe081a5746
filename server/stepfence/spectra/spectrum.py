"""A spectrum: the eigenvalues a step limit is computed for, where they came from, and cautions."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import limits
from ..errors import InputError, LimitExceeded

FREQUENCY_UNITS = {"rad/s": 1.0, "Hz": 2.0 * np.pi}

SNAPSHOT_CAUTION = (
    "combined from {count} snapshots of the Jacobian frozen at different states: a step that is "
    "stable for every frozen Jacobian is not proven stable for the nonlinear problem, which "
    "moves between them.")
FREQUENCY_CAUTION = (
    "eigenvalues on the imaginary axis built from undamped frequencies: any damping moves them "
    "into the left half-plane, and a scheme with no stable stretch of the imaginary axis "
    "(forward Euler, the Adams-Bashforth methods beyond AB2... ) is reported unstable for them "
    "at every step.")


def checked_values(values, field: str) -> np.ndarray:
    """Return values as a read-only complex128 1-D array, refusing anything else.

    Parameters
    ----------
    values : array_like, shape (n,)
        Real or complex numbers.
    field : str
        Name of the input, for error messages.

    Returns
    -------
    ndarray of complex128, shape (n,)

    Raises
    ------
    InputError
        Not numbers, not 1-D, or not finite (the message gives the count and the first index).
    LimitExceeded
        More than limits.MAX_EIGENVALUES values.
    """
    arr = np.asarray(values)
    if arr.dtype.kind not in "iufc":
        raise InputError(field, f"eigenvalues must be numbers, got an array of {arr.dtype}")
    if arr.ndim != 1:
        raise InputError(field, f"eigenvalues must be a 1-dimensional array, got shape {arr.shape}")
    if arr.size > limits.MAX_EIGENVALUES:
        raise LimitExceeded(field, f"{arr.size} eigenvalues; at most {limits.MAX_EIGENVALUES}")
    out = np.array(arr, dtype=np.complex128)
    bad = ~np.isfinite(out)
    if bad.any():
        first = int(np.flatnonzero(bad)[0])
        raise InputError(field, f"{int(bad.sum())} eigenvalue(s) are not finite (NaN or "
                                f"infinity), the first at index {first}")
    out.flags.writeable = False
    return out


@dataclass(frozen=True)
class Spectrum:
    """Eigenvalues with their origin and the cautions that go with them.

    Attributes
    ----------
    values : ndarray of complex128, shape (n,)
        The eigenvalues (read-only); repeated eigenvalues appear as often as they occur.
    source : str
        Where they came from, in words (``"pasted text"``, ``"matrix j.mtx (dense, N=400)"``).
    partial : bool
        True when only part of the spectrum was computed (extreme eigenvalues of a large matrix).
    notes : tuple of str
        Cautions and reading notes in plain words, most important first.
    snapshot : ndarray of int, shape (n,), or None
        Index into snapshot_names for each eigenvalue when several snapshots were combined.
    snapshot_names : tuple of str
        Names of the combined snapshots.
    """

    values: np.ndarray
    source: str
    partial: bool = False
    notes: tuple[str, ...] = ()
    snapshot: np.ndarray | None = None
    snapshot_names: tuple[str, ...] = ()

    def __post_init__(self):
        object.__setattr__(self, "values", checked_values(self.values, "eigenvalues"))
        object.__setattr__(self, "notes", tuple(str(n) for n in self.notes))
        object.__setattr__(self, "snapshot_names", tuple(str(n) for n in self.snapshot_names))
        if self.snapshot is None:
            if self.snapshot_names:
                raise InputError("snapshot", "snapshot names were given without snapshot indices")
            return
        snap = np.asarray(self.snapshot)
        if snap.dtype.kind not in "iu" or snap.shape != self.values.shape:
            raise InputError("snapshot", f"snapshot must hold one integer per eigenvalue "
                                         f"(shape {self.values.shape}), got {snap.dtype} {snap.shape}")
        if snap.size and (snap.min() < 0 or snap.max() >= len(self.snapshot_names)):
            raise InputError("snapshot", f"snapshot indices must lie in 0..{len(self.snapshot_names) - 1}")
        snap = np.array(snap, dtype=np.int64)
        snap.flags.writeable = False
        object.__setattr__(self, "snapshot", snap)

    @property
    def count(self) -> int:
        """Number of eigenvalues, repeats included."""
        return int(self.values.size)

    def extremes(self) -> dict:
        """Return the extents of the spectrum as a dict of floats (None for an empty one).

        Keys: ``min_real``, ``max_real``, ``max_abs_imag``, ``max_modulus``,
        ``spectral_radius`` (the same number as max_modulus, under the trade's name), and
        ``most_negative`` and ``largest_modulus``, the eigenvalues [re, im] where they occur.
        """
        v = self.values
        if v.size == 0:
            return dict.fromkeys(("min_real", "max_real", "max_abs_imag", "max_modulus",
                                  "spectral_radius", "most_negative", "largest_modulus"))
        modulus = np.abs(v)
        i_left, i_far = int(np.argmin(v.real)), int(np.argmax(modulus))
        return {"min_real": float(v.real[i_left]), "max_real": float(v.real.max()),
                "max_abs_imag": float(np.abs(v.imag).max()), "max_modulus": float(modulus[i_far]),
                "spectral_radius": float(modulus[i_far]),
                "most_negative": [float(v[i_left].real), float(v[i_left].imag)],
                "largest_modulus": [float(v[i_far].real), float(v[i_far].imag)]}


def combine_snapshots(spectra, names, field: str = "snapshots") -> Spectrum:
    """Return one Spectrum holding several snapshots, each eigenvalue tagged by its snapshot.

    Parameters
    ----------
    spectra : sequence of Spectrum
        One spectrum per snapshot (Jacobians frozen at different times or states).
    names : sequence of str
        One distinct, non-empty name per snapshot.
    field : str
        Name of the input, for error messages.

    Returns
    -------
    Spectrum
        ``partial`` if any part is partial; notes keep every part's notes once, after a
        caution that frozen Jacobians do not prove stability of the nonlinear problem.
    """
    spectra, names = list(spectra), [str(n) for n in names]
    if not spectra:
        raise InputError(field, "no snapshots given")
    if len(names) != len(spectra):
        raise InputError(field, f"{len(spectra)} snapshots but {len(names)} names")
    if any(not n.strip() for n in names) or len(set(names)) != len(names):
        raise InputError(field, "snapshot names must be distinct and not blank")
    for name, s in zip(names, spectra):
        if not isinstance(s, Spectrum):
            raise InputError(field, f"snapshot {name!r} is not a Spectrum")
        if s.snapshot is not None:
            raise InputError(field, f"snapshot {name!r} is itself combined from snapshots")
    values = np.concatenate([s.values for s in spectra])
    index = np.concatenate([np.full(s.count, i, dtype=np.int64) for i, s in enumerate(spectra)])
    notes = [SNAPSHOT_CAUTION.format(count=len(spectra))]
    for s in spectra:
        notes.extend(n for n in s.notes if n not in notes)
    return Spectrum(values, source=f"{len(spectra)} snapshots: " + ", ".join(names),
                    partial=any(s.partial for s in spectra), notes=tuple(notes),
                    snapshot=index, snapshot_names=tuple(names))


def from_frequencies(omegas, unit: str = "rad/s", field: str = "frequencies") -> Spectrum:
    """Return the eigenvalues +i*omega, -i*omega of undamped oscillations.

    Parameters
    ----------
    omegas : array_like of float, shape (m,)
        Non-negative frequencies; a zero frequency gives the single eigenvalue 0.
    unit : {"rad/s", "Hz"}
        Angular frequency, or cycles per second (multiplied by 2*pi).
    field : str
        Name of the input, for error messages.

    Returns
    -------
    Spectrum
        +i*omega_k, -i*omega_k for each k in turn, with a caution about damping.
    """
    if unit not in FREQUENCY_UNITS:
        raise InputError("unit", f"unknown frequency unit {unit!r}", expected="'rad/s' or 'Hz'")
    arr = np.asarray(omegas)
    if arr.ndim != 1 or arr.dtype.kind not in "iuf":
        raise InputError(field, "frequencies must be a 1-dimensional list of real numbers")
    if arr.size == 0:
        raise InputError(field, "no frequencies given")
    if 2 * arr.size > limits.MAX_EIGENVALUES:
        raise LimitExceeded(field, f"{arr.size} frequencies give {2 * arr.size} eigenvalues; "
                                   f"at most {limits.MAX_EIGENVALUES}")
    omega = np.array(arr, dtype=float) * FREQUENCY_UNITS[unit]
    bad = ~np.isfinite(omega) | (omega < 0)
    if bad.any():
        first = int(np.flatnonzero(bad)[0])
        raise InputError(field, f"{int(bad.sum())} frequencies are negative or not finite, the "
                                f"first at index {first}")
    pairs = np.column_stack([1j * omega, -1j * omega]).ravel()
    # a zero frequency is one eigenvalue 0, not two
    values = pairs[np.repeat(omega > 0, 2) | np.tile([True, False], omega.size)]
    return Spectrum(values, source=f"{arr.size} frequencies ({unit})", notes=(FREQUENCY_CAUTION,))
