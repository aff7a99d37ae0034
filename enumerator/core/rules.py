"""The counting rules, by their trade abbreviations.

``MB`` (Maxwell–Boltzmann) counts distinguishable balls, ``BE`` (Bose–Einstein)
indistinguishable ones, ``FD`` (Fermi–Dirac) indistinguishable ones with at
most one per urn (W. Feller, *An Introduction to Probability Theory and Its
Applications*, vol. 1, 3rd ed., 1968, ch. II.5).
"""

from __future__ import annotations

from enum import Enum

from .errors import InvalidParameters

__all__ = ["Rule"]


class Rule(str, Enum):
    """The three counting rules, by their trade abbreviations."""

    MB = "MB"
    BE = "BE"
    FD = "FD"

    @property
    def title(self) -> str:
        """The rule's full name."""
        return {"MB": "Maxwell–Boltzmann", "BE": "Bose–Einstein", "FD": "Fermi–Dirac"}[self.value]

    @classmethod
    def parse(cls, value: "Rule | str") -> "Rule":
        """Return the rule named by *value* (``MB``, ``BE``, ``FD``, any case)."""
        if isinstance(value, Rule):
            return value
        if isinstance(value, str):
            key = value.strip().upper()
            if key in cls.__members__:
                return cls[key]
        raise InvalidParameters(
            f"rule must be one of MB, BE, FD (got {value!r}); MB counts distinguishable "
            "balls, BE indistinguishable ones, FD at most one ball per urn"
        )
