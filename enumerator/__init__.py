"""enumerator: exact counts, probabilities and listings for occupancy problems.

``n`` balls into ``r`` labelled urns under the Maxwell–Boltzmann, Bose–Einstein
and Fermi–Dirac counting rules, with uniform or per-urn bounds.  Results are
exact ``int`` and ``fractions.Fraction``.

The package is layered (each layer imports only from those below it):
:mod:`enumerator.core` (the problem description, rules, exact arithmetic,
errors, the series kernel) ← :mod:`enumerator.algorithms` ←
:mod:`enumerator.store` ← :mod:`enumerator.facade` (:class:`Occupancy`) ←
:mod:`enumerator.cli`.
"""

from .core.errors import (
    EnumeratorError,
    InvalidConfiguration,
    InvalidParameters,
    StoreError,
    TooLarge,
    Unsupported,
)
from .core.rules import Rule
from .core.version import __version__
from .facade import Occupancy

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
