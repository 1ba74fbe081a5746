"""stepfence: absolute-stability regions and exact step limits for time-stepping schemes.

The Python API: the same operations as the command line, as plain functions.

>>> import stepfence
>>> s = stepfence.get_scheme("ab2")
>>> stepfence.step_limit(s, [-4.0]).h_max
0.25
"""
__version__ = "0.1.0"

from .analysis.accuracy import Accuracy, accuracy
from .analysis.region import RegionMetrics, boundary_locus, region_metrics
from .analysis.roots import RootCondition, root_condition
from .analysis.steplimit import EnclosureLimit, StepLimit, enclosure_limit, step_limit
from .analysis.verify import VerifyResult, verify, verify_around_limit
from .errors import InputError, LimitExceeded
from .report import describe, limit_report
from .schemes.base import Scheme
from .schemes.catalogue import get_scheme, listed_schemes
from .specs import scheme_from_spec
from .spectra import (Spectrum, eigenvalues_of, parse_enclosure, parse_spectrum_text,
                      read_matrix_bytes, read_spectrum_bytes, semidiscretisation)

__all__ = [
    "Accuracy", "accuracy", "RegionMetrics", "boundary_locus", "region_metrics",
    "RootCondition", "root_condition", "StepLimit", "step_limit", "EnclosureLimit",
    "enclosure_limit", "VerifyResult", "verify", "verify_around_limit", "InputError",
    "LimitExceeded", "describe", "limit_report", "Scheme", "get_scheme", "listed_schemes",
    "scheme_from_spec", "Spectrum", "eigenvalues_of", "parse_enclosure", "parse_spectrum_text",
    "read_matrix_bytes", "read_spectrum_bytes", "semidiscretisation",
]
