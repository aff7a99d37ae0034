"""The counting rules, by their trade abbreviations, and what each one means.

``MB`` (Maxwell–Boltzmann) counts distinguishable balls, ``BE`` (Bose–Einstein)
indistinguishable ones, ``FD`` (Fermi–Dirac) indistinguishable ones with at
most one per urn (W. Feller, *An Introduction to Probability Theory and Its
Applications*, vol. 1, 3rd ed., 1968, ch. II.5).

Every fact about a rule that the algorithms read — its full name, the kind
of generating factor an urn contributes, the weight of one configuration,
whether the balls are distinguishable — lives in one
:class:`RuleDescription` per rule (:attr:`Rule.description`), so code asks
``rule.distinguishable`` or ``rule.weight(k)`` rather than testing
``rule is Rule.MB``.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import Enum
from typing import Optional, Sequence

from .errors import InvalidParameters

__all__ = ["Rule", "RuleDescription", "multinomial"]


def multinomial(values: Sequence[int], top=None):
    r"""Return the multinomial coefficient ``(sum k)! / prod k_i!`` as an ``mpz``.

    Parameters
    ----------
    values : sequence of int
        The occupancies ``k_1, ..., k_r`` (non-negative).
    top : int, optional
        ``(sum k)!`` already computed; callers weighing many vectors of one
        model compute it once.

    Returns
    -------
    mpz
        The number of assignments of ``sum k`` labelled balls giving the
        occupancy vector ``k``, exact.

    Notes
    -----
    One factorial divided exactly by the product of the small factorials;
    GMP's ``mpz_fac_ui`` uses prime-swing factorisation (P. Luschny, "Divide,
    swing and conquer the factorial", 2008), so the cost is ``O(M(n log n))``
    for ``n = sum k`` plus ``r`` small factorials.

    Examples
    --------
    >>> int(multinomial((2, 1, 1)))
    12
    """
    import gmpy2  # here, not at the top: the rules are read on every start, the multinomial rarely

    if top is None:
        top = gmpy2.fac(sum(values))
    den = gmpy2.mpz(1)
    fac = gmpy2.fac
    for v in values:
        if v > 1:
            den *= fac(v)
    return gmpy2.divexact(top, den)


def _unit_weight(values, top=None):
    return 1


@dataclass(frozen=True)
class RuleDescription:
    """What a counting rule means, in the terms the algorithms use.

    Attributes
    ----------
    name : str
        The trade abbreviation (``"MB"``).
    title : str
        The full name (``"Maxwell–Boltzmann"``).
    generating : {"exponential", "ordinary"}
        The kind of generating factor of one urn: ``sum x^k / k!`` for
        labelled balls, ``sum x^k`` for unlabelled ones (Flajolet &
        Sedgewick, *Analytic Combinatorics*, 2009, ch. I–II).
    distinguishable : bool
        Whether the balls are labelled.
    outcomes : {"microstates", "configurations"}
        The count whose members are the rule's equally likely outcomes.
    weight_text : str
        The weight of a configuration ``k`` as a formula.
    per_urn : int or None
        The most balls one urn may hold under the rule itself (FD: 1).
    """

    name: str
    title: str
    generating: str
    distinguishable: bool
    outcomes: str
    weight_text: str
    per_urn: Optional[int] = None


_DESCRIPTIONS = {
    "MB": RuleDescription("MB", "Maxwell–Boltzmann", "exponential", True, "microstates",
                          "n! / (k_1! ... k_r!)"),
    "BE": RuleDescription("BE", "Bose–Einstein", "ordinary", False, "configurations", "1"),
    "FD": RuleDescription("FD", "Fermi–Dirac", "ordinary", False, "configurations", "1", per_urn=1),
}


class Rule(str, Enum):
    """The three counting rules, by their trade abbreviations.

    Examples
    --------
    >>> Rule.parse("mb").description.generating
    'exponential'
    >>> Rule.BE.weight((2, 0, 1)), int(Rule.MB.weight((2, 0, 1)))
    (1, 3)
    """

    MB = "MB"
    BE = "BE"
    FD = "FD"

    @property
    def description(self) -> RuleDescription:
        """The rule's :class:`RuleDescription`."""
        return _DESCRIPTIONS[self.value]

    @property
    def title(self) -> str:
        """The rule's full name."""
        return self.description.title

    @property
    def distinguishable(self) -> bool:
        """True when the balls are labelled (their assignments are the outcomes)."""
        return self.description.distinguishable

    @property
    def generating(self) -> str:
        """``"exponential"`` for labelled balls, ``"ordinary"`` otherwise."""
        return self.description.generating

    def weight(self, values: Sequence[int], top=None):
        """The number of equally likely outcomes with occupancy vector *values*.

        Parameters
        ----------
        values : sequence of int
            An admissible occupancy vector (bounds are not checked here).
        top : int, optional
            ``n!`` already computed (distinguishable balls only).

        Returns
        -------
        int or mpz
            The multinomial ``n! / prod k_i!`` for distinguishable balls, 1
            otherwise (Feller, vol. 1, ch. II.5).
        """
        if self.description.distinguishable:
            return multinomial(values, top)
        return _unit_weight(values, top)

    @classmethod
    def parse(cls, value: "Rule | str") -> "Rule":
        """Return the rule named by *value* (``MB``, ``BE``, ``FD``, any case).

        Raises
        ------
        InvalidParameters
            for any other value, naming the three choices.
        """
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
