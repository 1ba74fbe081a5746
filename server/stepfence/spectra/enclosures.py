"""Regions known to contain the eigenvalues, for when the eigenvalues themselves are not known.

A disk, a real interval, a stretch of the imaginary axis or an ellipse; each can trace its
boundary (the extreme points included exactly) and say whether it contains the origin.

A step limit for an enclosure is a limit for every point of it: safe for the eigenvalues
inside, but possibly much smaller than theirs. Every enclosure carries that caution.
"""
from __future__ import annotations

import numbers
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .matrices import gershgorin_disks

ENCLOSURE_CAUTION = (
    "this is a region that contains the eigenvalues, not the eigenvalues: a step that keeps "
    "the whole scaled region inside the stability region is safe for every eigenvalue in it, "
    "but the limit can be much smaller than the one for the true eigenvalues. Checking the "
    "boundary alone suffices only when the stability region has no hole inside the scaled "
    "region.")
# Exact cosines and sines at the quarter turns: cos(pi/2) in floating point is 6e-17, not 0.
_QUARTERS = ((1.0, 0.0), (0.0, 1.0), (-1.0, 0.0), (0.0, -1.0))


def _real(name: str, value) -> float:
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise InputError(name, f"must be a real number, got {type(value).__name__}")
    x = float(value)
    if not np.isfinite(x):
        raise InputError(name, "must be finite")
    return x


def _complex(name: str, value) -> complex:
    if isinstance(value, numbers.Complex) and not isinstance(value, (bool, numbers.Real)):
        z = complex(value)
        if not np.isfinite(z.real) or not np.isfinite(z.imag):
            raise InputError(name, "must be finite")
        return z
    return complex(_real(name, value), 0.0)


def _count(n, least: int) -> int:
    if isinstance(n, bool) or not isinstance(n, numbers.Integral) or n < least:
        raise InputError("n", f"must be an integer >= {least}")
    return int(n)


def _fractions(s) -> np.ndarray:
    """Return s as an array of floats reduced to [0, 1): the parameter is periodic."""
    arr = np.asarray(s, dtype=float)
    if not np.all(np.isfinite(arr)):
        raise InputError("s", "must be finite")
    return np.mod(arr, 1.0)


def _cos_sin(s: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return cos and sin of 2 pi s, exact at the quarter turns."""
    c, sn = np.cos(2 * np.pi * s), np.sin(2 * np.pi * s)
    quarter = 4 * s
    exact = quarter == np.round(quarter)
    for q, (cq, sq) in enumerate(_QUARTERS):
        at = exact & (np.round(quarter) == q)
        c, sn = np.where(at, cq, c), np.where(at, sq, sn)
    return c, sn


def _loop_parameters(n: int) -> np.ndarray:
    """Return n increasing parameters in [0, 1) that include 0, 1/4, 1/2 and 3/4."""
    per = [n // 4 + (1 if q < n % 4 else 0) for q in range(4)]
    return np.concatenate([(q + np.arange(m) / m) / 4 for q, m in enumerate(per)])


def _segment_point(lo: float, hi: float, s: np.ndarray) -> np.ndarray:
    """Return points of [lo, hi] traversed there and back as s runs over [0, 1)."""
    t = np.where(s <= 0.5, 2 * s, 2 - 2 * s)
    # (1 - t) lo + t hi is exact at both ends, unlike lo + t (hi - lo)
    return (1 - t) * lo + t * hi


@dataclass(frozen=True)
class Disk:
    """The closed disk |z - center| <= radius."""

    center: complex
    radius: float

    def __post_init__(self):
        object.__setattr__(self, "center", _complex("center", self.center))
        object.__setattr__(self, "radius", _real("radius", self.radius))
        if self.radius < 0:
            raise InputError("radius", f"must be >= 0, got {self.radius:g}")

    def point(self, s):
        """Return center + radius e^{2 pi i s}: s = 0 is the rightmost point, counter-clockwise."""
        c, sn = _cos_sin(_fractions(s))
        return self.center + self.radius * (c + 1j * sn)

    def boundary(self, n: int = 256) -> np.ndarray:
        """Return n >= 4 boundary points, counter-clockwise, the four axis points exactly."""
        return self.point(_loop_parameters(_count(n, 4)))

    def contains_origin(self) -> bool:
        """Return True when 0 lies in the closed disk."""
        return abs(self.center) <= self.radius

    def describe(self) -> str:
        """Return the disk in words."""
        return f"disk centred at {_show(self.center)} with radius {self.radius:.6g}"

    caution = ENCLOSURE_CAUTION


@dataclass(frozen=True)
class _AxisSegment:
    """Points unit * y for lo <= y <= hi, unit being 1 (real axis) or 1j (imaginary axis)."""

    lo: float
    hi: float

    unit = 1.0

    def __post_init__(self):
        lo, hi = _real("lo", self.lo), _real("hi", self.hi)
        if lo > hi:
            raise InputError("lo", f"must not exceed hi ({lo:g} > {hi:g})")
        object.__setattr__(self, "lo", lo)
        object.__setattr__(self, "hi", hi)

    def point(self, s):
        """Return the point reached at s: lo to hi for s in [0, 1/2], back to lo for s in [1/2, 1)."""
        return self.unit * _segment_point(self.lo, self.hi, _fractions(s)).astype(complex)

    def boundary(self, n: int = 256) -> np.ndarray:
        """Return n >= 2 points from lo to hi (times the unit), both ends exactly."""
        return self.unit * np.linspace(self.lo, self.hi, _count(n, 2)).astype(complex)

    def contains_origin(self) -> bool:
        """Return True when lo <= 0 <= hi."""
        return self.lo <= 0 <= self.hi

    caution = ENCLOSURE_CAUTION


@dataclass(frozen=True)
class RealInterval(_AxisSegment):
    """The real numbers x with lo <= x <= hi."""

    def describe(self) -> str:
        """Return the interval in words."""
        return f"real interval [{self.lo:.6g}, {self.hi:.6g}]"


@dataclass(frozen=True)
class ImagSegment(_AxisSegment):
    """The points i*y of the imaginary axis with lo <= y <= hi."""

    unit = 1j

    def describe(self) -> str:
        """Return the segment in words."""
        return f"imaginary segment from {self.lo:.6g}i to {self.hi:.6g}i"


@dataclass(frozen=True)
class Ellipse:
    """The closed ellipse ((x - Re c) / semi_real)^2 + ((y - Im c) / semi_imag)^2 <= 1."""

    center: complex
    semi_real: float
    semi_imag: float

    def __post_init__(self):
        object.__setattr__(self, "center", _complex("center", self.center))
        for name in ("semi_real", "semi_imag"):
            value = _real(name, getattr(self, name))
            if value < 0:
                raise InputError(name, f"must be >= 0, got {value:g}")
            object.__setattr__(self, name, value)

    def point(self, s):
        """Return center + semi_real cos(2 pi s) + i semi_imag sin(2 pi s)."""
        c, sn = _cos_sin(_fractions(s))
        return self.center + self.semi_real * c + 1j * self.semi_imag * sn

    def boundary(self, n: int = 256) -> np.ndarray:
        """Return n >= 4 boundary points, counter-clockwise, the four axis ends exactly."""
        return self.point(_loop_parameters(_count(n, 4)))

    def contains_origin(self) -> bool:
        """Return True when 0 lies in the closed ellipse (degenerate ones included)."""
        x, y = -self.center.real, -self.center.imag
        a, b = self.semi_real, self.semi_imag
        if a == 0 or b == 0:
            # a segment (or a point): the origin must lie on it
            return (abs(x) <= a if b == 0 else x == 0) and (abs(y) <= b if a == 0 else y == 0)
        return (x / a) ** 2 + (y / b) ** 2 <= 1.0

    def describe(self) -> str:
        """Return the ellipse in words."""
        return (f"ellipse centred at {_show(self.center)} with semi-axes {self.semi_real:.6g} "
                f"(real) and {self.semi_imag:.6g} (imaginary)")

    caution = ENCLOSURE_CAUTION


def _show(z: complex) -> str:
    return f"{z.real:.6g}{'+' if z.imag >= 0 else '-'}{abs(z.imag):.6g}i"


def spectral_radius_disk(rho) -> Disk:
    """Return the disk |z| <= rho that a spectral radius (or any norm of A) bounds."""
    return Disk(0.0, rho)


def gershgorin_union(A) -> list[Disk]:
    """Return the scaled row Gershgorin disks of A (repeats removed); their union holds every
    eigenvalue (see matrices.gershgorin_disks)."""
    centers, radii = gershgorin_disks(A, scaled=True)
    rows = np.unique(np.column_stack([centers.real, centers.imag, radii]), axis=0)
    return [Disk(complex(re, im), r) for re, im, r in rows]


_KINDS = {"disk": ("center", "radius"), "real-interval": ("lo", "hi"),
          "imag-segment": ("lo", "hi"), "ellipse": ("center", "semi_real", "semi_imag"),
          "spectral-radius": ("rho",)}


def _spec_center(value, field: str) -> complex:
    if isinstance(value, (list, tuple)):
        if len(value) != 2:
            raise InputError(f"{field}.center", "must be [re, im] or a real number")
        return complex(_real(f"{field}.center[0]", value[0]), _real(f"{field}.center[1]", value[1]))
    return complex(_real(f"{field}.center", value), 0.0)


def parse_enclosure(spec: dict, field: str = "enclosure"):
    """Return the enclosure a JSON-like dict describes.

    Parameters
    ----------
    spec : dict
        ``{"kind": "disk", "center": [re, im], "radius": r}``,
        ``{"kind": "real-interval", "lo": a, "hi": b}``, ``{"kind": "imag-segment", "lo": a,
        "hi": b}``, ``{"kind": "ellipse", "center": [re, im], "semi_real": a, "semi_imag": b}``
        or ``{"kind": "spectral-radius", "rho": r}``; a center may also be one real number.
        Numbers must be JSON numbers, not text.
    field : str
        Name of the input; errors name ``field.key``.

    Returns
    -------
    Disk, RealInterval, ImagSegment or Ellipse
    """
    if not isinstance(spec, dict):
        raise InputError(field, f"must be an object with a 'kind', got {type(spec).__name__}")
    kind = spec.get("kind")
    if kind not in _KINDS:
        raise InputError(f"{field}.kind", f"unknown enclosure kind {kind!r}",
                         expected=", ".join(_KINDS))
    keys = _KINDS[kind]
    extra = [k for k in spec if k not in keys and k != "kind"]
    if extra:
        raise InputError(f"{field}.{extra[0]}", f"is not a field of a {kind}",
                         expected=", ".join(keys))
    missing = [k for k in keys if k not in spec]
    if missing:
        raise InputError(f"{field}.{missing[0]}", f"is missing from the {kind}")
    values = {k: (_spec_center(spec[k], field) if k == "center" else _real(f"{field}.{k}", spec[k]))
              for k in keys}
    try:
        if kind == "spectral-radius":
            return spectral_radius_disk(values["rho"])
        cls = {"disk": Disk, "real-interval": RealInterval, "imag-segment": ImagSegment,
               "ellipse": Ellipse}[kind]
        return cls(**values)
    except InputError as e:
        name = "rho" if kind == "spectral-radius" else e.field
        raise InputError(f"{field}.{name}", e.message) from None
