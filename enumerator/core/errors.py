"""The project's one exception family.

Every error a user can cause is an :class:`EnumeratorError`; the CLI turns it
into a one-line message and exit code 2.  Messages name the parameter, the rule
that was broken and what to change.
"""

from __future__ import annotations

__all__ = [
    "EnumeratorError",
    "InvalidConfiguration",
    "InvalidParameters",
    "StoreError",
    "TooLarge",
    "Unsupported",
]


class EnumeratorError(Exception):
    """Base class of every error raised on purpose by enumerator."""


class InvalidParameters(EnumeratorError, ValueError):
    """A model parameter is malformed (negative, non-integer, inconsistent)."""


class InvalidConfiguration(EnumeratorError, ValueError):
    """An occupancy vector is malformed for its model (length, sum, sign)."""


class TooLarge(EnumeratorError):
    """The request is well formed but exceeds a size limit the user can raise."""


class Unsupported(EnumeratorError):
    """The request is well formed but this combination is not implemented."""


class StoreError(EnumeratorError):
    """The result store cannot be opened, read or written."""
