"""Where eigenvalues come from: pasted text, uploaded files, matrices, standard models, enclosures."""
from .enclosures import (ENCLOSURE_CAUTION, Disk, Ellipse, ImagSegment, RealInterval,
                         gershgorin_union, parse_enclosure, spectral_radius_disk)
from .files import read_matrix_bytes, read_spectrum_bytes
from .matrices import (DENSE_EIG_THREADS, DIRECTIONS, dense_eigvals, eigenvalues_of,
                       generalized_from_pair, gershgorin_disks)
from .models import MODELS, ModelInfo, ParamInfo, assemble, semidiscretisation
from .spectrum import Spectrum, combine_snapshots, from_frequencies
from .text import parse_spectrum_text

__all__ = [
    "Spectrum", "combine_snapshots", "from_frequencies",
    "parse_spectrum_text",
    "read_spectrum_bytes", "read_matrix_bytes",
    "eigenvalues_of", "generalized_from_pair", "dense_eigvals", "gershgorin_disks",
    "DENSE_EIG_THREADS", "DIRECTIONS",
    "Disk", "RealInterval", "ImagSegment", "Ellipse", "spectral_radius_disk",
    "parse_enclosure", "gershgorin_union", "ENCLOSURE_CAUTION",
    "MODELS", "ModelInfo", "ParamInfo", "semidiscretisation", "assemble",
]
