"""enumerator: exact counts, probabilities and listings for occupancy problems.

``n`` balls into ``r`` labelled urns under the Maxwell–Boltzmann, Bose–Einstein
and Fermi–Dirac counting rules, with uniform or per-urn bounds.  Results are
exact ``int`` and ``fractions.Fraction``.
"""

from .errors import (
    EnumeratorError,
    InvalidConfiguration,
    InvalidParameters,
    StoreError,
    TooLarge,
    Unsupported,
)
from .model import Occupancy, Rule

__version__ = "0.1.0"

__all__ = [
    "EnumeratorError",
    "InvalidConfiguration",
    "InvalidParameters",
    "Occupancy",
    "Rule",
    "StoreError",
    "TooLarge",
    "Unsupported",
    "__version__",
]
