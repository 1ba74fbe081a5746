"""Where eigenvalues come from: text, files, matrices and standard semi-discretisations."""
from .files import read_matrix_bytes, read_spectrum_bytes
from .matrices import dense_eigvals, eigenvalues_of, gershgorin_disks
from .models import MODELS, assemble, semidiscretisation
from .spectrum import Spectrum, from_frequencies
from .text import parse_spectrum_text

__all__ = ["Spectrum", "from_frequencies", "parse_spectrum_text", "read_spectrum_bytes",
           "read_matrix_bytes", "eigenvalues_of", "dense_eigvals", "gershgorin_disks",
           "MODELS", "semidiscretisation", "assemble"]
