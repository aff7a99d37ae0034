r"""Asymptotic approximations, and how far each is from the exact value.

A catalogue of classical approximations of occupancy quantities, each one a
named :class:`Approximation` that pairs

* the **exact quantity** — an exact ``int`` (a count) or
  ``fractions.Fraction`` (a probability, a mean), computed by the engine;
* the **approximation** — a formula evaluated with mpmath at a working
  precision chosen so that the error shown is the formula's, not rounding;
* the **published source** of the approximation, in its docstring.

:func:`compare` evaluates one approximation at a list of :class:`Point`\ s and
returns a :class:`Comparison`: per point the exact value, the approximation,
the absolute and relative errors, and overall the observed convergence order
(least-squares slope of ``ln |relative error|`` against ``ln x``, ``x`` the
varied parameter, sign flipped so that an error ``~ x^{-p}`` gives ``p``).
:func:`sweep` builds the points from a range of one parameter with the other
parameters fixed or tied to it by a tiny integer arithmetic
(:func:`parse_tie`; never ``eval``).

Conventions
-----------
*Exact side stays exact.*  Every approximation names an exact count or
probability (never an irrational number): the Stirling and entropy entries
approximate a **count** ``W``, so ``exact`` is ``W`` itself and ``approx`` is
the approximation of ``W`` (``exp`` of the approximated logarithm).

*Scale.*  An approximation on the ``"linear"`` scale is judged by
``|approx - exact| / |exact|``.  One on the ``"log"`` scale claims only to
approximate ``ln W`` (``ln W ≈ n H``, which misses ``W`` by a polynomial
factor), so it is judged by ``|ln approx - ln exact| / |ln exact|`` and its
absolute error is ``|ln approx - ln exact|`` (in nats).  For the Stirling
entries the linear relative error of the count, ``|exp(Δ) - 1|``, is the
error ``Δ`` of ``ln W`` to first order, so the orders agree.

*Honest numbers.*  The working precision starts at 30 digits plus guard
digits for the size of the numbers involved (digits of ``n``, ``r`` and of
``|ln exact|``: the formulas lose about that many digits, e.g. in
``exp``) and is doubled until the relative error is at least ``10^10`` times
the rounding bound, so about ten leading digits of every printed error are
the approximation's.  Floats appear only in fields named ``approx``.

*Undefined errors.*  When the exact value is 0 (say no collision is
impossible because there are more balls than urns), the relative error is
``None`` and the point is left out of the order fit, as are points with an
error of exactly 0.

Cost: one exact count or probability per point (see :mod:`enumerator.counting`)
plus ``O(1)`` mpmath operations at ``P`` digits (``O(c)`` for the saddle
point with capacity ``c``, ``O(j)`` for the empty-urn entries).
"""

from __future__ import annotations

import csv
import io
import math
import re
from dataclasses import dataclass, replace
from fractions import Fraction
from typing import Dict, Iterable, List, Optional, Sequence, Tuple, Union

import gmpy2
import mpmath
from flint import fmpq, fmpz

from ..core.errors import InvalidParameters, TooLarge, Unsupported
from ..core.exact import exact_text
from ..core.model import UrnModel, as_count
from ..core.rules import Rule
from .counting import configuration_weight, count_configurations, count_microstates

__all__ = [
    "Approximation",
    "CATALOGUE",
    "Comparison",
    "Point",
    "Row",
    "Tie",
    "apportion",
    "approximation",
    "catalogue_rows",
    "compare",
    "compare_sweep",
    "comparison_table",
    "comparisons_csv",
    "describe_order",
    "empty_urns_at_most",
    "observed_order",
    "parse_factor",
    "parse_pattern",
    "parse_range",
    "parse_tie",
    "plot_comparisons",
    "stirling_log_factorial",
    "sweep",
]

Exact = Union[int, Fraction]
mpf = mpmath.mpf

#: Largest working precision (decimal digits) the error evaluation may use.
MAX_DPS = 200_000
#: Most points one sweep may hold.
MAX_POINTS = 10_000
#: Required ratio of a printed relative error to its rounding bound.
_HONEST = 10


# ---------------------------------------------------------------------------
# Points
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class Point:
    """The parameters of one comparison.

    ``balls`` (``n``) and ``urns`` (``r``) as in :class:`~enumerator.model.UrnModel`;
    ``rule``, ``capacity`` and ``minimum`` for the saddle-point entry; ``at``
    the ``j`` of the empty-urn and profile entries; ``pattern`` the shape of
    the configurations of the entropy entry; ``factor`` the Boltzmann factor
    ``e^{-ε/T}`` (a ``Fraction`` in ``(0, 1)``) of the grand-canonical entry.
    Fields an approximation does
    not use stay ``None``.
    """

    balls: int
    urns: Optional[int] = None
    rule: Optional[str] = None
    capacity: Optional[int] = None
    minimum: Optional[int] = None
    at: Optional[int] = None
    pattern: Optional[Tuple[int, ...]] = None
    factor: Optional[Fraction] = None

    def value(self, name: str) -> Optional[int]:
        """The parameter *name* (``"balls"``, ``"urns"``, ...)."""
        return getattr(self, name)


#: Parameters that a tie may set and a sweep may vary.
NUMERIC = ("balls", "urns", "capacity", "minimum", "at")


# ---------------------------------------------------------------------------
# Exact helpers
# ---------------------------------------------------------------------------
def _ln_size(value: Exact) -> float:
    """A cheap estimate of ``|ln |value||`` from bit lengths (for guard digits only)."""
    if isinstance(value, Fraction):
        bits = abs(value.numerator).bit_length() - value.denominator.bit_length()
    else:
        bits = abs(int(value)).bit_length()
    return abs(bits) * 0.6931471805599453


def _digits(value) -> int:
    return len(str(abs(int(value)))) if abs(int(value)) < 10**18 else int(abs(int(value)).bit_length() * 0.30103) + 1


def _to_mpf(value: Exact):
    """*value* as an mpf at the current precision (one rounding)."""
    if isinstance(value, Fraction):
        return mpf(value.numerator) / mpf(value.denominator)
    return mpf(int(value))


def stirling_log_factorial(n, terms: int):
    r"""Stirling's series for ``ln n!`` with *terms* terms, as an mpf.

    ``terms = 1``: ``n ln n - n + ½ ln(2πn)``; each further term adds
    ``B_{2i} / (2i (2i-1) n^{2i-1})`` — ``1/(12n)``, ``-1/(360 n^3)``,
    ``1/(1260 n^5)``, ... (Bernoulli numbers exact from FLINT).  For ``n > 0``
    the series is enveloping: the error has the sign of, and is smaller than,
    the first omitted term, so with *terms* terms it is ``O(n^{-(2 terms - 1)})``.
    ``n = 0`` returns 0 (``0! = 1``; the series does not apply).  Evaluated at
    the current mpmath precision.

    References: Abramowitz & Stegun, *Handbook of Mathematical Functions*,
    1964, 6.1.41 (with ``ln n! = ln Γ(n) + ln n``) and 6.1.42; NIST DLMF
    §5.11(i)–(ii) (error bounds).
    """
    n = as_count(n, "n")
    terms = as_count(terms, "terms", 1)
    if n == 0:
        return mpf(0)
    x = mpf(n)
    total = x * mpmath.log(x) - x + mpmath.log(2 * mpmath.pi * x) / 2
    for i in range(1, terms):
        b = fmpq.bernoulli(2 * i)
        coefficient = mpf(int(b.p)) / (int(b.q) * 2 * i * (2 * i - 1))
        total += coefficient / x ** (2 * i - 1)
    return total


def apportion(balls: int, pattern: Sequence[int]) -> Tuple[int, ...]:
    """Split *balls* in proportion to *pattern* by largest remainders (Hamilton's method).

    ``k_i = floor(n w_i / s)`` with ``s = sum w``; the balls left over go one
    each to the urns with the largest remainders ``n w_i mod s``, the lower
    index first among equal remainders.  Exact integers; ``sum k = n``, and
    ``k = (n / s) w`` whenever ``s`` divides ``n``.
    """
    n = as_count(balls, "balls")
    weights = [as_count(w, f"pattern entry {i}") for i, w in enumerate(pattern, start=1)]
    total = sum(weights)
    if not weights or total == 0:
        raise InvalidParameters("pattern must have at least one positive entry, e.g. --pattern 3,2,1")
    base = [n * w // total for w in weights]
    left = n - sum(base)
    order = sorted(range(len(weights)), key=lambda i: (-(n * weights[i] % total), i))
    for i in order[:left]:
        base[i] += 1
    return tuple(base)


def empty_urns_at_most(balls, urns, at) -> Fraction:
    r"""``P(at most j urns empty)`` for ``n`` balls in ``r`` urns under MB, exact.

    Two classical forms (Feller, *An Introduction to Probability Theory and
    Its Applications*, vol. 1, 3rd ed., 1968, §IV.2):

    * ``P(exactly i empty) = C(r, i) (r-i)! S(n, r-i) / r^n`` — choose the
      empty urns, then map the balls onto the other ``r - i`` (Stirling
      numbers of the second kind from FLINT); used for ``j < 4``, cost
      ``j + 1`` Stirling numbers;
    * inclusion–exclusion, ``P(exactly i empty) = sum_m (-1)^{m-i} C(m, i)
      C(r, m) (1 - m/r)^n``, summed over ``i <= j`` with
      ``sum_{i<=j} (-1)^i C(m, i) = (-1)^j C(m-1, j)``:
      ``r^n P(E <= j) = r^n + sum_{m>j} (-1)^{m+j} C(r, m) C(m-1, j) (r-m)^n``;
      used for larger ``j``, cost ``r - j`` exact powers (gmpy2).
    """
    n = as_count(balls, "balls")
    r = as_count(urns, "urns", 1)
    j = as_count(at, "at")
    mpz = gmpy2.mpz
    if j < 4:
        total = mpz(0)
        for i in range(0, min(j, r) + 1):
            occupied = r - i
            total += gmpy2.comb(r, i) * gmpy2.fac(occupied) * mpz(int(fmpz.stirling_s2(n, occupied)))
    else:
        total = mpz(r) ** n
        for m in range(j + 1, r + 1):
            term = gmpy2.comb(r, m) * gmpy2.comb(m - 1, j) * mpz(r - m) ** n
            total += -term if (m + j) & 1 else term
    return Fraction(int(total), r**n)


# ---------------------------------------------------------------------------
# The catalogue
# ---------------------------------------------------------------------------
class Approximation:
    """One approximation paired with the exact quantity it approximates.

    Attributes: ``name`` (the catalogue key), ``quantity`` (the exact
    quantity, in words), ``formula`` (the approximation, in words),
    ``source`` (author, title, year), ``scale`` (``"linear"`` or ``"log"``,
    see the module docstring), ``order`` (the convergence order theory gives
    in ``regime``, or ``None`` when none is claimed) and ``uses`` (the
    :class:`Point` fields beyond ``balls`` that it reads).
    """

    name: str = ""
    quantity: str = ""
    formula: str = ""
    source: str = ""
    scale: str = "linear"
    order: Optional[Fraction] = None
    regime: str = ""
    uses: Tuple[str, ...] = ("urns",)
    #: The value of ``at`` when none is given (``None``: no default here).
    default_at: Optional[int] = None

    def check(self, point: Point) -> Point:
        """Validate *point* and fill this approximation's defaults."""
        n = as_count(point.balls, "balls")
        r = point.urns
        if "urns" in self.uses:
            if r is None:
                raise InvalidParameters(
                    f"{self.name} needs urns: give a number or an expression of the varied "
                    "parameter (e.g. --urns 365 or --urns balls//2)"
                )
            r = as_count(r, "urns", 1)
        at = point.at
        if at is None:
            at = self.default_at
        elif "at" in self.uses:
            at = as_count(at, "at")
        return replace(point, balls=n, urns=r, at=at)

    def exact(self, point: Point) -> Exact:  # pragma: no cover - abstract
        """The exact quantity at *point* (``int`` or ``Fraction``)."""
        raise NotImplementedError

    def approximate(self, point: Point):  # pragma: no cover - abstract
        """The approximation at *point*, an mpf at the current mpmath precision."""
        raise NotImplementedError

    def guard(self, point: Point) -> int:
        """Digits the evaluation may lose to the size of the numbers involved."""
        sizes = [point.balls, point.urns or 1, point.capacity or 1, point.at or 1]
        return 5 + max(_digits(max(1, s)) for s in sizes)

    def __repr__(self) -> str:
        return f"<Approximation {self.name}: {self.quantity} ≈ {self.formula}>"


class StirlingBE(Approximation):
    r"""Stirling's series applied to the Bose–Einstein count ``C(n+r-1, n)``.

    Exact: the number of occupancy vectors of ``n`` identical balls in ``r``
    urns, ``W = (n+r-1)! / (n! (r-1)!)`` (the BE count; ``r = 1`` gives 1).
    Approximation: every factorial ``m!`` with ``m >= 1`` replaced by
    ``exp`` of Stirling's series with ``terms`` terms
    (:func:`stirling_log_factorial`; ``0! = 1`` kept exact), i.e.
    ``W ≈ exp(S(n+r-1) - S(n) - S(r-1))``.

    The count is compared on the linear scale, so the relative error is the
    error of ``ln W`` to first order: ``~ n^{-(2k-1)}`` with ``k`` terms when
    ``r`` grows in proportion to ``n`` (``--urns balls``, ``--urns balls//2``).
    With ``r`` fixed the error of the ``(r-1)!`` factor does not shrink, so
    the relative error tends to a constant.

    Source: J. Stirling, *Methodus Differentialis*, 1730; the series with its
    Bernoulli-number terms and error bounds in Abramowitz & Stegun,
    *Handbook of Mathematical Functions*, 1964, 6.1.41, and NIST DLMF §5.11.
    """

    scale = "linear"
    uses = ("urns",)

    def __init__(self, terms: int):
        self.terms = terms
        self.name = f"stirling{terms}"
        self.quantity = "the BE count C(n+r-1, n) of occupancy vectors"
        kept = ["n ln n - n + ½ ln(2πn)", "+ 1/(12n)", "- 1/(360n³)", "+ 1/(1260n⁵)"][:terms]
        self.formula = "each m! replaced by exp(" + " ".join(kept) + ")"
        self.source = "Stirling 1730; Abramowitz & Stegun 1964, 6.1.41; DLMF §5.11"
        self.order = Fraction(2 * terms - 1)
        self.regime = "urns proportional to balls (e.g. --urns balls)"

    def exact(self, point):
        return count_configurations(UrnModel(balls=point.balls, urns=point.urns, rule="BE"))

    def approximate(self, point):
        n, r = point.balls, point.urns
        s = stirling_log_factorial
        return mpmath.exp(s(n + r - 1, self.terms) - s(n, self.terms) - s(r - 1, self.terms))


class Entropy(Approximation):
    r"""``ln W ≈ n H(k/n)``: the entropy approximation of a configuration's weight.

    Exact: the MB weight of the configuration ``k``, ``W = n! / (k_1! ... k_r!)``
    (the number of assignments of ``n`` distinguishable balls with that
    occupancy; Boltzmann's ``W``).  Approximation: ``exp(n H)`` with
    ``H = -sum (k_i/n) ln(k_i/n)`` (natural logarithms), so
    ``n H = n ln n - sum k_i ln k_i``.

    The family of configurations as ``n`` grows: ``k`` proportional to a
    fixed ``pattern`` (``--pattern 3,2,1``; default: ``r`` equal entries,
    the most probable configuration), made whole by largest remainders
    (:func:`apportion`), so ``r = len(pattern)``.

    Compared on the **log** scale: ``n H`` overestimates ``ln W`` by
    ``((r'-1)/2) ln(2πn) + ½ sum ln(k_i/n) + O(1/n)`` (``r'`` urns with
    ``k_i > 0``), so ``W`` itself is missed by a polynomial factor while the
    relative error of ``ln W`` falls like ``ln n / n`` (order 1 up to a
    logarithm).  Bounds: ``(n+1)^{-r} e^{nH} <= W <= e^{nH}``.

    Sources: L. Boltzmann, *Über die Beziehung zwischen dem zweiten
    Hauptsatze der mechanischen Wärmetheorie und der
    Wahrscheinlichkeitsrechnung*, 1877; T. M. Cover & J. A. Thomas,
    *Elements of Information Theory*, 2nd ed., 2006, Theorem 11.1.3 (the
    method of types).
    """

    name = "entropy"
    quantity = "the MB weight W = n!/(k1!...kr!) of k proportional to a pattern"
    formula = "W ≈ exp(n H(k/n)), judged on ln W"
    source = "Boltzmann 1877; Cover & Thomas 2006, Thm 11.1.3"
    scale = "log"
    order = Fraction(1)
    regime = "k proportional to a fixed pattern (order 1 up to a log factor)"
    uses = ("urns", "pattern")

    def check(self, point):
        n = as_count(point.balls, "balls")
        pattern = point.pattern
        if pattern is None:
            if point.urns is None:
                raise InvalidParameters(
                    "entropy needs urns (equal shares) or a pattern, e.g. --urns 4 or --pattern 3,2,1"
                )
            pattern = (1,) * as_count(point.urns, "urns", 1)
        pattern = tuple(as_count(w, f"pattern entry {i}") for i, w in enumerate(pattern, start=1))
        if point.urns is not None and as_count(point.urns, "urns", 1) != len(pattern):
            raise InvalidParameters(
                f"urns is {point.urns} but the pattern has {len(pattern)} entries; "
                "give one entry per urn or leave urns out"
            )
        apportion(0, pattern)  # validates the pattern
        return replace(point, balls=n, urns=len(pattern), pattern=pattern)

    def configuration(self, point) -> Tuple[int, ...]:
        """The configuration ``k`` of the family at *point*."""
        return apportion(point.balls, point.pattern)

    def exact(self, point):
        k = self.configuration(point)
        return configuration_weight(UrnModel(balls=point.balls, urns=len(k), rule="MB"), k)

    def approximate(self, point):
        k = self.configuration(point)
        n = point.balls
        nh = mpf(0)
        if n:
            nh = n * mpmath.log(n) - mpmath.fsum(v * mpmath.log(v) for v in k if v)
        return mpmath.exp(nh)


class Birthday(Approximation):
    r"""The birthday approximation ``P(no shared urn) ≈ exp(-n(n-1)/(2r))``.

    Exact: under MB, the probability that ``n`` balls land in ``n`` different
    urns, ``r (r-1) ... (r-n+1) / r^n`` (the MB count with capacity 1 over
    the MB count); 0 when ``n > r``.  Approximation: ``exp(-n(n-1)/(2r))``,
    from ``ln(1 - i/r) ≈ -i/r``.

    The neglected terms give ``ln(exact/approx) ≈ -n^3/(6r^2)``, so the
    relative error falls like ``1/n`` when ``r`` grows like ``n^2``
    (``--urns "balls*balls"``) and grows when ``r`` is fixed.

    Source: W. Feller, *An Introduction to Probability Theory and Its
    Applications*, vol. 1, 3rd ed., 1968, §II.3; R. von Mises, *Über
    Aufteilungs- und Besetzungs-Wahrscheinlichkeiten*, 1939.
    """

    name = "birthday"
    quantity = "P(no two balls share an urn) under MB"
    formula = "exp(-n(n-1)/(2r))"
    source = "Feller 1968, vol. 1, §II.3; von Mises 1939"
    order = Fraction(1)
    regime = 'urns proportional to balls squared (e.g. --urns "balls*balls")'

    def exact(self, point):
        n, r = point.balls, point.urns
        # the MB count with capacity 1 is the falling factorial r(r-1)...(r-n+1)
        return Fraction(math.perm(r, n), r**n)

    def approximate(self, point):
        n, r = point.balls, point.urns
        return mpmath.exp(-mpf(n * (n - 1)) / (2 * r))


class EmptyMean(Approximation):
    r"""The mean number of empty urns, ``r (1 - 1/r)^n ≈ r e^{-n/r}``.

    Exact: under MB, ``E[number of empty urns] = r (1 - 1/r)^n`` (each urn is
    missed by all ``n`` balls with probability ``(1 - 1/r)^n``).
    Approximation: ``r e^{-n/r}``.  ``ln`` of their ratio is
    ``n (ln(1 - 1/r) + 1/r) ≈ -n/(2r^2)``: relative error ``~ 1/n`` when
    ``n/r`` is fixed.

    Source: W. Feller, *An Introduction to Probability Theory and Its
    Applications*, vol. 1, 3rd ed., 1968, ch. IX (the expected
    number of empty cells); V. F. Kolchin, B. A. Sevast'yanov &
    V. P. Chistyakov, *Random Allocations*, 1978, ch. I–II.
    """

    name = "empty-mean"
    quantity = "the mean number of empty urns r(1-1/r)^n under MB"
    formula = "r e^{-n/r}"
    source = "Feller 1968, vol. 1, ch. IX; Kolchin, Sevast'yanov & Chistyakov 1978"
    order = Fraction(1)
    regime = "balls proportional to urns (e.g. --urns balls//2)"

    def exact(self, point):
        n, r = point.balls, point.urns
        return Fraction(r * (r - 1) ** n, r**n)

    def approximate(self, point):
        n, r = point.balls, point.urns
        return r * mpmath.exp(-mpf(n) / r)


class EmptyPoisson(Approximation):
    r"""Poisson approximation of the number of empty urns: ``P(at most j empty)``.

    Exact: under MB, ``P(E <= j)`` with ``E`` the number of empty urns
    (:func:`empty_urns_at_most`; ``j`` is ``at``, default 0, so by default
    the probability that every urn is occupied).  Approximation: ``E`` is
    close to Poisson with mean ``λ = r e^{-n/r}``:
    ``sum_{i<=j} e^{-λ} λ^i / i!``.

    Valid in the right-hand domain ``n, r -> ∞`` with ``λ`` bounded (``n ≈
    r ln(r/λ)``); there the error falls like ``ln r / r`` (order 1 up to a
    log factor).  With ``n/r`` fixed (``λ -> ∞``) the variance of ``E``
    is only a fraction of ``λ`` and the Poisson law does not fit.

    Sources: R. von Mises, *Über Aufteilungs- und
    Besetzungs-Wahrscheinlichkeiten*, 1939; V. F. Kolchin,
    B. A. Sevast'yanov & V. P. Chistyakov, *Random Allocations*, 1978,
    ch. II; A. D. Barbour, L. Holst & S. Janson, *Poisson Approximation*,
    1992, ch. 6.
    """

    name = "poisson"
    quantity = "P(at most j urns empty) under MB (j = --at, default 0)"
    formula = "Poisson law with mean r e^{-n/r}"
    source = "von Mises 1939; Kolchin et al. 1978, ch. II; Barbour, Holst & Janson 1992, ch. 6"
    order = Fraction(1)
    regime = "n, r -> ∞ with r e^{-n/r} fixed (order 1 up to a log factor)"
    uses = ("urns", "at")
    default_at = 0

    def exact(self, point):
        return empty_urns_at_most(point.balls, point.urns, point.at)

    def approximate(self, point):
        lam = point.urns * mpmath.exp(-mpf(point.balls) / point.urns)
        term = mpmath.exp(-lam)
        total = term
        for i in range(1, point.at + 1):
            term = term * lam / i
            total += term
        return total


class EmptyNormal(Approximation):
    r"""Normal approximation of the number of empty urns: ``P(at most j empty)``.

    Exact: under MB, ``P(E <= j)`` (:func:`empty_urns_at_most`), with ``j``
    from ``at`` or by default ``floor(r e^{-n/r})``, the integer at or just
    below the asymptotic mean.  Approximation (with continuity correction):
    ``Φ((j + ½ - μ) / σ)``, ``μ = r e^{-α}``,
    ``σ² = r e^{-α} (1 - (1 + α) e^{-α})``, ``α = n/r``.

    Valid in the central domain, ``n, r -> ∞`` with ``α`` fixed; the skewness
    of ``E`` and the ``O(1)`` offset of the exact mean make the error fall
    like ``r^{-1/2}`` (order ½).

    Sources: I. Weiss, *Limiting distributions in some occupancy problems*,
    Ann. Math. Statist. 29, 1958; A. Rényi, *Three new proofs and a
    generalization of a theorem of Irving Weiss*, 1962; V. F. Kolchin,
    B. A. Sevast'yanov & V. P. Chistyakov, *Random Allocations*, 1978, ch. II.
    """

    name = "normal"
    quantity = "P(at most j urns empty) under MB (j = --at, default floor(r e^{-n/r}))"
    formula = "Φ((j + ½ - μ)/σ), μ = r e^{-α}, σ² = r e^{-α}(1 - (1+α)e^{-α}), α = n/r"
    source = "Weiss 1958; Rényi 1962; Kolchin et al. 1978, ch. II"
    order = Fraction(1, 2)
    regime = "balls proportional to urns (e.g. --urns balls//2)"
    uses = ("urns", "at")

    def check(self, point):
        point = super().check(point)
        if point.balls < 1 or point.urns < 2:
            raise InvalidParameters(
                "normal needs at least 1 ball and 2 urns (the variance r e^{-α}(1-(1+α)e^{-α}) is 0 otherwise)"
            )
        at = point.at
        if at is None:
            with mpmath.workdps(30 + _digits(point.urns) + _digits(point.balls)):
                at = int(mpmath.floor(point.urns * mpmath.exp(-mpf(point.balls) / point.urns)))
        return replace(point, at=as_count(at, "at"))

    def exact(self, point):
        return empty_urns_at_most(point.balls, point.urns, point.at)

    def approximate(self, point):
        n, r, j = point.balls, point.urns, point.at
        alpha = mpf(n) / r
        e = mpmath.exp(-alpha)
        mu = r * e
        sigma = mpmath.sqrt(r * e * (1 - (1 + alpha) * e))
        return mpmath.ncdf((j + mpf(1) / 2 - mu) / sigma)


class Saddle(Approximation):
    r"""Saddle-point ("large powers") approximation of a bounded count.

    Exact: the count of ``n`` balls in ``r`` urns, each holding ``a..c``
    (``minimum`` ``a``, default 0; ``capacity`` ``c``, required): BE/FD the
    number of occupancy vectors ``[x^n] B(x)^r`` with ``B = x^a + ... + x^c``;
    MB the number of assignments ``n! [x^n] B(x)^r`` with the exponential
    ``B = sum_{k=a}^{c} x^k / k!``.

    Approximation (Flajolet & Sedgewick, Thm VIII.8 with ``A = 1``):
    ``[x^n] B(x)^r ≈ B(ζ)^r / (ζ^n sqrt(2π r σ²))``, where ``ζ > 0`` solves
    ``ζ B'(ζ)/B(ζ) = n/r`` and ``σ² = ζ² (ln B(z) - (n/r) ln z)''|_{z=ζ}`` is
    the variance of the law ``w_k ζ^k / B(ζ)`` on ``a..c``.  ``ζ`` is found
    by Newton's method in ``ln ζ`` safeguarded by bisection (the mean of the
    tilted law increases with ``ln ζ`` at rate ``σ²``).  Needs
    ``a r < n < c r``.  Relative error ``O(1/r)`` with ``n/r`` fixed.

    Source: P. Flajolet & R. Sedgewick, *Analytic Combinatorics*, Cambridge
    University Press, 2009, Theorem VIII.8 (saddle-point estimates of large
    powers), and §II.2 for the exponential generating function.
    """

    name = "saddle"
    quantity = "the bounded count [x^n] B(x)^r (BE/FD: vectors; MB: n! times, EGF)"
    formula = "B(ζ)^r / (ζ^n sqrt(2π r σ²)), ζ B'(ζ)/B(ζ) = n/r"
    source = "Flajolet & Sedgewick 2009, Analytic Combinatorics, Thm VIII.8"
    order = Fraction(1)
    regime = "balls proportional to urns, minimum < balls/urns < capacity"
    uses = ("urns", "rule", "capacity", "minimum")

    def check(self, point):
        point = super().check(point)
        rule = Rule.parse(point.rule or "BE")
        capacity = point.capacity
        if capacity is None and rule is Rule.FD:
            capacity = 1
        if capacity is None:
            raise InvalidParameters(
                "saddle approximates a bounded count: give --capacity (at most that many balls per urn)"
            )
        capacity = as_count(capacity, "capacity")
        minimum = as_count(point.minimum or 0, "minimum")
        # the model validates FD capacities and minimum <= capacity
        UrnModel(balls=point.balls, urns=point.urns, rule=rule, capacity=capacity, minimum=minimum)
        n, r = point.balls, point.urns
        if not minimum * r < n < capacity * r:
            raise InvalidParameters(
                f"saddle needs minimum*urns < balls < capacity*urns, but balls={n} with urns={r}, "
                f"minimum={minimum}, capacity={capacity} is outside ({minimum * r}, {capacity * r}); "
                "at the ends the count is a single term and there is no saddle point"
            )
        return replace(point, rule=rule.value, capacity=capacity, minimum=minimum)

    def model(self, point) -> UrnModel:
        return UrnModel(
            balls=point.balls, urns=point.urns, rule=point.rule,
            capacity=point.capacity, minimum=point.minimum,
        )

    def exact(self, point):
        model = self.model(point)
        return count_microstates(model)

    def _weights(self, point):
        a, c = point.minimum, point.capacity
        if point.rule == "MB":
            return [(k, 1 / mpmath.factorial(k)) for k in range(a, c + 1)]
        return [(k, mpf(1)) for k in range(a, c + 1)]

    def approximate(self, point):
        n, r = point.balls, point.urns
        weights = self._weights(point)
        lam = mpf(n) / r

        def moments(s):
            top = max(k for k, _ in weights)
            # scale by exp(-top*s) on the right, exp(-a*s) on the left: no overflow either way
            shift = top * s if s > 0 else weights[0][0] * s
            terms = [(k, w * mpmath.exp(k * s - shift)) for k, w in weights]
            total = mpmath.fsum(t for _, t in terms)
            mean = mpmath.fsum(k * t for k, t in terms) / total
            square = mpmath.fsum(k * k * t for k, t in terms) / total
            return total, shift, mean, square - mean * mean

        s = self.solve(moments, lam)
        total, shift, _, variance = moments(s)
        log_b = mpmath.log(total) + shift
        log_value = r * log_b - n * s - mpmath.log(2 * mpmath.pi * r * variance) / 2
        if point.rule == "MB":
            log_value += mpmath.loggamma(n + 1)
        return mpmath.exp(log_value)

    @staticmethod
    def solve(moments, lam):
        """``s = ln ζ`` with ``mean(s) = lam``: Newton's method kept inside a bisection bracket."""
        lo, hi = mpf(-1), mpf(1)
        while moments(lo)[2] >= lam:
            lo *= 2
        while moments(hi)[2] <= lam:
            hi *= 2
        s = (lo + hi) / 2
        tolerance = mpmath.mpf(10) ** (-(mpmath.mp.dps - 5))
        for _ in range(10 * mpmath.mp.prec):
            _, _, mean, variance = moments(s)
            if mean < lam:
                lo = s
            else:
                hi = s
            step = (mean - lam) / variance
            candidate = s - step
            if not lo < candidate < hi:
                candidate = (lo + hi) / 2
                step = s - candidate
            s = candidate
            if abs(step) <= tolerance * max(1, abs(s)) or hi - lo <= tolerance * max(1, abs(s)):
                break
        return s


class Boltzmann(Approximation):
    r"""The occupancy profile under equally likely vectors against the Boltzmann (geometric) law.

    Boltzmann's 1877 counting: ``r`` labelled molecules (the urns) share
    ``n`` identical energy quanta (the balls) and every distribution — every
    occupancy vector, i.e. the BE rule of this package — is one equally
    likely complexion.  The fraction of molecules holding ``j`` quanta in the
    most probable (and, in the limit, the mean) profile follows the
    Boltzmann law ``e^{-βj}``, i.e. the geometric law
    ``(1 - q) q^j`` with ``q = n / (n + r)`` (mean ``n/r``).

    Exact: the **mean** fraction of urns holding exactly ``j`` balls
    (``j`` = ``at``, default 0), ``C(n-j+r-2, r-2) / C(n+r-1, r-1)`` — the
    BE count of the other ``r-1`` urns over the BE count.  The mean profile is
    compared because it is exact and cheap for any size; the most probable
    profile has the same limit.  Approximation: ``(1 - q) q^j``.
    Relative error ``O(1/r)`` with ``n/r`` fixed.

    (Under the MB rule the profile tends to the Poisson law instead,
    ``α^j e^{-α} / j!``.)

    Sources: L. Boltzmann, *Über die Beziehung zwischen dem zweiten
    Hauptsatze der mechanischen Wärmetheorie und der
    Wahrscheinlichkeitsrechnung*, 1877; W. Feller, *An Introduction to
    Probability Theory and Its Applications*, vol. 1, 3rd ed., 1968, §II.5
    (BE occupancy of one cell and its geometric limit).
    """

    name = "boltzmann"
    quantity = "the mean fraction of urns holding exactly j balls, BE rule (j = --at, default 0)"
    formula = "geometric (Boltzmann) law (1-q) q^j, q = n/(n+r)"
    source = "Boltzmann 1877; Feller 1968, vol. 1, §II.5"
    order = Fraction(1)
    regime = "balls proportional to urns (e.g. --urns balls//2)"
    uses = ("urns", "at")
    default_at = 0

    def exact(self, point):
        n, r, j = point.balls, point.urns, point.at
        if j > n:
            return Fraction(0)
        if r == 1:
            return Fraction(1 if j == n else 0)
        rest = count_configurations(UrnModel(balls=n - j, urns=r - 1, rule="BE"))
        return Fraction(rest, count_configurations(UrnModel(balls=n, urns=r, rule="BE")))

    def approximate(self, point):
        n, r, j = point.balls, point.urns, point.at
        q = mpf(n) / (n + r)
        return (1 - q) * q**j


class GrandCanonical(Approximation):
    r"""Grand-canonical occupation formulas against the exact canonical occupations.

    The system: ``N`` identical particles (the balls) on ``r`` equally spaced
    non-degenerate single-particle levels ``ε_i = i`` (the urns; a harmonic
    oscillator truncated to ``r`` levels), at the temperature whose Boltzmann
    factor ``t = e^{-1/T}`` is the rational ``factor`` (default ½, i.e.
    ``T = 1/ln 2`` in units of the level spacing).  Rule BE (default) or FD.

    Exact: the canonical mean occupation of level ``j`` (``at``, default 0),
    ``<n_j> = sum_k w_k t^{kj} Z_{N-k} / Z_N`` with the particle-number
    recursion ``M Z_M = sum_{k=1}^{M} w_k Z_1(t^k) Z_{M-k}`` (``w_k = 1`` for
    BE, ``(-1)^{k+1}`` for FD; P. Borrmann & G. Franke, *Recursion formulas
    for quantum statistical partition functions*, J. Chem. Phys. 98, 1993;
    P. Borrmann, J. Harting, O. Mülken & E. Hilf, Phys. Rev. A 60, 1999).
    With ``t = p/q`` every ``q^{M(r-1)} Z_M`` is an integer, so the
    recursion runs in exact integers (one exact division by ``M`` per step)
    and ``<n_j>`` is an exact fraction.  Cost ``O(N^2)`` products of
    ``N r log q``-bit integers.

    Approximation: the grand-canonical formula ``1/(e^{(ε_j - μ)/T} ∓ 1)``
    at the ``μ`` that makes the mean total ``N``
    (:func:`enumerator.levels.grand_canonical`, given ``T`` as a fraction
    within ``10^{-(P+10)}`` of ``1/ln(1/t)`` at working precision ``P``).

    Expected, and observed: bosons with ``r`` tied to ``N`` (``--urns
    balls``) converge; the grand-canonical fugacity is ``1 - O(1/N)``, which
    shifts each excited occupation by ``O(1/N)`` (order 1 at ``j >= 1``) and
    the ground level by ``O(1/N)`` out of ``N`` (order 2 at ``j = 0``).
    Fermions in this one-dimensional spectrum at fixed ``T`` do not
    converge: the grand-canonical number fluctuation stays ``O(1)`` however
    large ``N`` is, so the ensembles stay apart at the Fermi level.

    Source of the approximation: the Bose–Einstein and Fermi–Dirac
    distributions of the grand canonical ensemble, R. K. Pathria &
    P. D. Beale, *Statistical Mechanics*, 3rd ed., 2011, ch. 6.
    """

    name = "grand-canonical"
    quantity = "the canonical mean occupation of level j (--at, default 0), N particles on r levels ε_i = i"
    formula = "grand-canonical 1/(e^{(ε_j-μ)/T} ∓ 1), μ fixed by mean N, T = 1/ln(1/factor)"
    source = "Pathria & Beale 2011, ch. 6; exact side: Borrmann & Franke 1993, Borrmann et al. 1999"
    order = Fraction(2)
    regime = "BE ground level, urns tied to balls (e.g. --urns balls), fixed --factor"
    uses = ("urns", "rule", "at", "factor")
    default_at = 0
    #: Largest ``N^3 r log2(q)`` (bit operations, roughly) of the exact recursion.
    WORK_LIMIT = 6 * 10**9

    def check(self, point):
        point = super().check(point)
        rule = Rule.parse(point.rule or "BE")
        if rule is Rule.MB:
            raise InvalidParameters(
                "for MB the grand-canonical occupation equals the canonical one exactly; choose --rule BE or FD"
            )
        factor = Fraction(1, 2) if point.factor is None else parse_factor(point.factor)
        at = point.at
        n, r = point.balls, point.urns
        if at >= r:
            raise InvalidParameters(f"at is {at} but the levels are 0..{r - 1}; give --at below urns")
        if n < 1:
            raise InvalidParameters("grand-canonical needs at least 1 particle (balls >= 1)")
        if rule is Rule.FD and n >= r:
            raise InvalidParameters(
                f"{n} fermions fill {r} levels completely (every occupation is exactly 1); give urns > balls"
            )
        work = n**3 * r * max(1, factor.denominator.bit_length())
        if work > self.WORK_LIMIT:
            raise TooLarge(
                f"the exact canonical recursion for {n} particles on {r} levels is too large "
                f"(about {work:.1e} bit operations, limit {self.WORK_LIMIT:.0e}); use fewer balls or urns"
            )
        return replace(point, rule=rule.value, at=at, factor=factor)

    def exact(self, point):
        n, r, j, t = point.balls, point.urns, point.at, point.factor
        p, q = gmpy2.mpz(t.numerator), gmpy2.mpz(t.denominator)
        top = r - 1
        fermions = point.rule == "FD"
        weights = [0] + [(-1 if fermions and k % 2 == 0 else 1) for k in range(1, n + 1)]
        # S_k = q^{k(r-1)} Z_1(t^k) = sum_i p^{ki} q^{k(r-1-i)}
        singles = [gmpy2.mpz(0)]
        for k in range(1, n + 1):
            pk, qk = p**k, q**k
            term = total = qk**top
            for _ in range(top):
                term = gmpy2.divexact(term, qk) * pk
                total += term
            singles.append(total)
        scaled = [gmpy2.mpz(1)]  # q^{M(r-1)} Z_M
        for m in range(1, n + 1):
            acc = gmpy2.mpz(0)
            for k in range(1, m + 1):
                acc += weights[k] * singles[k] * scaled[m - k]
            scaled.append(gmpy2.divexact(acc, m))
        numerator = gmpy2.mpz(0)
        for k in range(1, n + 1):
            numerator += weights[k] * p ** (k * j) * q ** (k * (top - j)) * scaled[n - k]
        return Fraction(int(numerator), int(scaled[n]))

    def approximate(self, point):
        from . import levels

        dps = mpmath.mp.dps
        t = point.factor
        temperature = 1 / mpmath.log(mpf(t.denominator) / t.numerator)
        as_fraction = Fraction(mpmath.nstr(temperature, dps + 10, min_fixed=-mpmath.inf, max_fixed=mpmath.inf))
        system = levels.System.create(levels.harmonic_oscillator(point.urns), point.balls, point.rule)
        _, occupations = levels.grand_canonical(system, as_fraction, digits=dps, levels=point.at + 1)
        return +occupations[point.at]


def parse_factor(value) -> Fraction:
    """A Boltzmann factor ``e^{-ε/T}``: an exact fraction strictly between 0 and 1 (``"1/2"``, ``"0.3"``)."""
    if isinstance(value, Fraction):
        number = value
    elif isinstance(value, (int, str)) and not isinstance(value, bool):
        try:
            number = Fraction(str(value).strip())
        except (ValueError, ZeroDivisionError):
            raise InvalidParameters(
                f"factor must be a fraction like 1/2 or 0.3 (got {value!r})"
            ) from None
    else:
        raise InvalidParameters(f"factor must be an exact fraction like 1/2, not {type(value).__name__}")
    if not 0 < number < 1:
        raise InvalidParameters(
            f"factor is e^(-spacing/T), so it must lie strictly between 0 and 1 (got {number})"
        )
    return number


def _build_catalogue() -> Dict[str, Approximation]:
    entries: List[Approximation] = [StirlingBE(k) for k in (1, 2, 3)]
    entries += [Entropy(), Birthday(), EmptyMean(), EmptyPoisson(), EmptyNormal(), Saddle(), Boltzmann(),
                GrandCanonical()]
    return {entry.name: entry for entry in entries}


#: Every approximation by name.
CATALOGUE: Dict[str, Approximation] = _build_catalogue()


def approximation(name: str) -> Approximation:
    """The catalogue entry called *name* (case-insensitive)."""
    key = str(name).strip().lower()
    if key not in CATALOGUE:
        raise InvalidParameters(
            f"unknown approximation {name!r}; choose one of {', '.join(CATALOGUE)}"
        )
    return CATALOGUE[key]


# ---------------------------------------------------------------------------
# Comparing
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class Row:
    """One point of a comparison.

    ``exact`` is exact (``int`` or ``Fraction``); ``approx``,
    ``absolute_error_approx`` and ``relative_error_approx`` are mpf values at
    ``dps`` digits (errors on the approximation's scale; ``None`` when the
    relative error is undefined because the exact value is 0).
    """

    point: Point
    exact: Exact
    approx: object
    absolute_error_approx: object
    relative_error_approx: object
    dps: int

    def approx_text(self) -> str:
        """The approximation as a decimal string with enough digits to show its error."""
        rel = self.relative_error_approx
        wanted = 20
        if rel is not None and rel > 0:
            wanted = max(wanted, int(-mpmath.log10(rel)) + 15)
        return mpmath.nstr(self.approx, min(wanted, self.dps - 5), min_fixed=-5, max_fixed=20)

    def relative_float(self) -> Optional[float]:
        """The relative error as a float; ``None`` when undefined or beyond float range."""
        rel = self.relative_error_approx
        if rel is None:
            return None
        value = float(rel)
        return None if math.isinf(value) else value


@dataclass(frozen=True)
class Comparison:
    """The result of :func:`compare`: rows, the varied parameter and the observed order."""

    approximation: Approximation
    rows: Tuple[Row, ...]
    variable: str = "balls"
    order_approx: Optional[float] = None

    def to_json(self) -> dict:
        """The machine-readable form (the ``--json`` contract of ``enumerator compare``)."""
        return {
            "approximation": self.approximation.name,
            "rows": [
                {
                    "balls": row.point.balls,
                    "urns": row.point.urns,
                    "exact": exact_text(row.exact),
                    "approx": row.approx_text(),
                    "relative_error_approx": row.relative_float(),
                }
                for row in self.rows
            ],
            "order_approx": self.order_approx,
        }

    def local_orders(self) -> List[Optional[float]]:
        """Per row, the order between it and the row before (``None`` where undefined)."""
        out: List[Optional[float]] = [None]
        for before, after in zip(self.rows, self.rows[1:]):
            out.append(observed_order(
                [before.point.value(self.variable), after.point.value(self.variable)],
                [before.relative_error_approx, after.relative_error_approx],
            ))
        return out


def _evaluate(entry: Approximation, point: Point) -> Row:
    exact = entry.exact(point)
    if entry.scale == "log" and exact <= 0:
        raise Unsupported(f"{entry.name} compares logarithms but the exact value is {exact}")
    guard = entry.guard(point) + _digits(max(1, int(_ln_size(exact)) + 1))
    dps = 30 + guard
    while True:
        with mpmath.workdps(dps):
            value = entry.approximate(point)
            e = _to_mpf(exact)
            if entry.scale == "log":
                scale = mpmath.log(e)
                absolute = abs(mpmath.log(value) - scale)
            else:
                scale = e
                absolute = abs(value - e)
            if scale != 0:
                relative = absolute / abs(scale)
            else:
                relative = mpf(0) if absolute == 0 else None
            bound = mpf(10) ** (guard + _HONEST - dps)
            honest = relative is None or relative >= bound or (relative == 0 and dps >= 4 * (30 + guard))
            if honest or dps >= MAX_DPS:
                if not honest:
                    raise TooLarge(
                        f"{entry.name} at {point.balls} balls: the error is below what {MAX_DPS} "
                        "digits resolve; use smaller parameters"
                    )
                return Row(point, exact, +value, +absolute, None if relative is None else +relative, dps)
        dps = min(2 * dps, MAX_DPS)


def observed_order(xs: Sequence, errors: Sequence) -> Optional[float]:
    """Minus the least-squares slope of ``ln |error|`` against ``ln x``.

    An error ``~ C x^{-p}`` gives ``p``.  Points with an error of 0 or
    ``None`` are left out; ``None`` unless two distinct ``x`` remain.  The
    logarithms come from mpmath (errors may be below float range) and the
    fit is done in floats: the result is an approximation.
    """
    pairs = [
        (float(mpmath.log(x)), float(mpmath.log(abs(mpf(e)))))
        for x, e in zip(xs, errors)
        if e is not None and e != 0 and x is not None and x > 0
    ]
    if len({u for u, _ in pairs}) < 2:
        return None
    mean_u = sum(u for u, _ in pairs) / len(pairs)
    mean_v = sum(v for _, v in pairs) / len(pairs)
    num = sum((u - mean_u) * (v - mean_v) for u, v in pairs)
    den = sum((u - mean_u) ** 2 for u, _ in pairs)
    return -num / den


def compare(name: Union[str, Approximation], points: Iterable[Point], variable: str = "balls") -> Comparison:
    """Evaluate approximation *name* against the exact quantity at every point.

    Returns a :class:`Comparison` whose ``order_approx`` is
    :func:`observed_order` of the relative errors against the parameter
    *variable* (``None`` for a single point).

    >>> result = compare("birthday", [Point(balls=23, urns=365)])
    >>> float(result.rows[0].exact)
    0.4927027656760146
    >>> result.rows[0].approx_text()[:8]
    '0.499998'
    """
    entry = name if isinstance(name, Approximation) else approximation(name)
    if variable not in NUMERIC:
        raise InvalidParameters(f"the varied parameter must be one of {', '.join(NUMERIC)} (got {variable!r})")
    rows = tuple(_evaluate(entry, entry.check(point)) for point in points)
    if not rows:
        raise InvalidParameters("compare needs at least one point")
    order = observed_order([row.point.value(variable) for row in rows],
                           [row.relative_error_approx for row in rows])
    return Comparison(entry, rows, variable, order)


# ---------------------------------------------------------------------------
# Sweeps and ties: a tiny integer arithmetic, never eval
# ---------------------------------------------------------------------------
_TOKEN = re.compile(r"\s*(?:(\d+)|([A-Za-z_]\w*)|(//|[-+*/()]))")


@dataclass(frozen=True)
class Tie:
    """A parameter given as a number or an arithmetic expression of the varied parameter.

    Grammar (integers, one name, ``+ - * / //``, unary minus, parentheses;
    usual precedence, left to right)::

        expr  := term (("+" | "-") term)*
        term  := unary (("*" | "/" | "//") unary)*
        unary := ("+" | "-") unary | INT | NAME | "(" expr ")"

    Evaluated exactly with ``Fraction``: ``/`` is exact division and ``//``
    rounds down.  The value at every point must be a whole number (write
    ``balls//2`` to round down).  A recursive-descent parser builds a small
    tree; nothing is passed to ``eval``.
    """

    text: str
    tree: tuple
    variable: Optional[str]

    def __call__(self, value: Optional[int] = None) -> int:
        result = _evaluate_tree(self.tree, value, self)
        if result.denominator != 1:
            raise InvalidParameters(
                f"{self.text!r} is {result} at {self.variable}={value}, not a whole number; "
                "use // to round down (e.g. balls//2) or a --step that keeps it whole"
            )
        return int(result)

    @property
    def constant(self) -> bool:
        """True when the expression does not mention the varied parameter."""
        return not _mentions(self.tree)


def _mentions(tree) -> bool:
    kind = tree[0]
    if kind == "name":
        return True
    if kind == "int":
        return False
    return any(_mentions(t) for t in tree[1:] if isinstance(t, tuple))


def _evaluate_tree(tree, value, tie) -> Fraction:
    kind = tree[0]
    if kind == "int":
        return Fraction(tree[1])
    if kind == "name":
        if value is None:
            raise InvalidParameters(
                f"{tie.text!r} uses {tree[1]} but nothing is varied; add --vary {tree[1]}=START..STOP"
            )
        return Fraction(value)
    if kind == "neg":
        return -_evaluate_tree(tree[1], value, tie)
    left = _evaluate_tree(tree[1], value, tie)
    right = _evaluate_tree(tree[2], value, tie)
    if kind == "+":
        return left + right
    if kind == "-":
        return left - right
    if kind == "*":
        return left * right
    if right == 0:
        raise InvalidParameters(f"{tie.text!r} divides by zero at {tie.variable}={value}")
    if kind == "/":
        return left / right
    return Fraction(math.floor(left / right))


def parse_tie(text, variable: Optional[str] = None) -> Tie:
    """Parse a parameter value: an integer or an expression of *variable* (see :class:`Tie`)."""
    if isinstance(text, bool):
        raise InvalidParameters("a parameter must be a whole number or an expression, not a boolean")
    if isinstance(text, int):
        return Tie(str(text), ("int", int(text)), variable)
    source = str(text)
    tokens = []
    position = 0
    while position < len(source):
        if source[position:].strip() == "":
            break
        match = _TOKEN.match(source, position)
        if not match:
            raise InvalidParameters(
                f"cannot read {source!r} at column {position + 1}: use whole numbers, "
                f"{variable or 'the varied parameter'}, + - * / // and parentheses"
            )
        number, name, op = match.groups()
        column = match.start(match.lastindex) + 1
        if name is not None and name != variable:
            allowed = f"only {variable} may appear" if variable else "nothing is varied, so only numbers may appear"
            raise InvalidParameters(f"{source!r} mentions {name!r} at column {column}; {allowed}")
        tokens.append((("int", int(number)) if number else ("name", name) if name else ("op", op), column))
        position = match.end()
    if not tokens:
        raise InvalidParameters("a parameter value is empty; give a whole number or an expression")
    index = 0

    def peek():
        return tokens[index][0] if index < len(tokens) else ("end", None)

    def fail(message):
        column = tokens[index][1] if index < len(tokens) else len(source) + 1
        raise InvalidParameters(f"cannot read {source!r} at column {column}: {message}")

    def expr():
        nonlocal index
        tree = term()
        while peek() in (("op", "+"), ("op", "-")):
            op = peek()[1]
            index += 1
            tree = (op, tree, term())
        return tree

    def term():
        nonlocal index
        tree = unary()
        while peek() in (("op", "*"), ("op", "/"), ("op", "//")):
            op = peek()[1]
            index += 1
            tree = (op, tree, unary())
        return tree

    def unary():
        nonlocal index
        token = peek()
        if token in (("op", "-"), ("op", "+")):
            index += 1
            inner = unary()
            return ("neg", inner) if token[1] == "-" else inner
        if token[0] in ("int", "name"):
            index += 1
            return token
        if token == ("op", "("):
            index += 1
            inner = expr()
            if peek() != ("op", ")"):
                fail("expected ')'")
            index += 1
            return inner
        fail("expected a number, a name or '('")

    tree = expr()
    if index != len(tokens):
        fail("unexpected text after the expression")
    return Tie(source, tree, variable)


_RANGE = re.compile(r"\s*([A-Za-z_]\w*)\s*=\s*(\d+)\s*\.\.\s*(\d+)\s*")


def parse_range(text: str) -> Tuple[str, int, int]:
    """Parse ``"balls=10..1000"`` into ``("balls", 10, 1000)``."""
    match = _RANGE.fullmatch(str(text))
    if not match:
        raise InvalidParameters(
            f"--vary must look like balls=10..1000 (a parameter, =, START..STOP with whole numbers); got {text!r}"
        )
    name, start, stop = match.group(1), int(match.group(2)), int(match.group(3))
    if name not in NUMERIC:
        raise InvalidParameters(f"--vary names one of {', '.join(NUMERIC)} (got {name!r})")
    if start > stop:
        raise InvalidParameters(f"--vary {text}: START {start} is above STOP {stop}; give START <= STOP")
    return name, start, stop


def _grid(start: int, stop: int, step: Optional[int], geometric: Optional[int]) -> List[int]:
    if step is not None and geometric is not None:
        raise InvalidParameters("give --step or --geometric, not both")
    if step is not None:
        step = as_count(step, "step", 1)
        count = (stop - start) // step + 1
        if count > MAX_POINTS:
            raise TooLarge(f"the sweep has {count} points, above {MAX_POINTS}; use a larger --step")
        return list(range(start, stop + 1, step))
    points = 10 if geometric is None else as_count(geometric, "geometric", 1)
    if points > MAX_POINTS:
        raise TooLarge(f"--geometric {points} is above {MAX_POINTS} points; ask for fewer")
    if start == stop or points == 1:
        return [start] if points == 1 or start == stop else [start, stop]
    if start < 1:
        raise InvalidParameters("--geometric spaces points on a log scale, so START must be at least 1")
    with mpmath.workdps(40):
        ratio = mpf(stop) / start
        values = [int(mpmath.nint(start * ratio ** (mpf(i) / (points - 1)))) for i in range(points)]
    return sorted(set(values))


def parse_pattern(value) -> Tuple[int, ...]:
    """A pattern ``"3,2,1"`` (or a sequence of whole numbers) as a tuple of ints."""
    items = value.split(",") if isinstance(value, str) else list(value)
    out = []
    for i, item in enumerate(items, start=1):
        if isinstance(item, str):
            if not re.fullmatch(r"\s*\d+\s*", item):
                raise InvalidParameters(
                    f"pattern entry {i} ({item.strip()!r}) is not a whole number; write e.g. --pattern 3,2,1"
                )
            item = int(item)
        out.append(as_count(item, f"pattern entry {i}"))
    return tuple(out)


def sweep(vary: Optional[str] = None, step=None, geometric=None, **parameters) -> Tuple[str, List[Point]]:
    """Build the points of a comparison: one parameter varied, the others fixed or tied.

    *vary* is ``"NAME=START..STOP"`` (NAME one of ``balls``, ``urns``,
    ``capacity``, ``minimum``, ``at``); the values are ``START, START+step,
    ...`` with *step*, or *geometric* points spaced evenly on a log scale
    from START to STOP (rounded, duplicates dropped; the default is 10 such
    points).  Every other keyword (``balls``, ``urns``, ``capacity``,
    ``minimum``, ``at``) is an ``int`` or a :class:`Tie` expression of the
    varied name (``urns="balls//2"``); ``rule`` (a rule name), ``pattern``
    (whole numbers, ``"3,2,1"``) and ``factor`` (a fraction, ``"1/2"``) are
    fixed.  Without *vary* the
    result is the single point of fixed values.

    Returns ``(variable, points)``.

    >>> variable, points = sweep("balls=10..40", step=10, urns="balls//2")
    >>> variable, [(p.balls, p.urns) for p in points]
    ('balls', [(10, 5), (20, 10), (30, 15), (40, 20)])
    """
    fixed = {k: v for k, v in parameters.items() if v is not None}
    unknown = set(fixed) - set(NUMERIC) - {"rule", "pattern", "factor"}
    if unknown:
        raise InvalidParameters(f"unknown parameter(s) {', '.join(sorted(unknown))}")
    if vary is None:
        if step is not None or geometric is not None:
            raise InvalidParameters("--step and --geometric need --vary NAME=START..STOP")
        variable, values = "balls", [None]
    else:
        variable, start, stop = parse_range(vary)
        if variable in fixed:
            raise InvalidParameters(f"{variable} is varied by --vary; do not also give it a value")
        values = _grid(start, stop, step, geometric)
    ties = {k: parse_tie(fixed[k], None if vary is None else variable) for k in NUMERIC if k in fixed}
    pattern = None if fixed.get("pattern") is None else parse_pattern(fixed["pattern"])
    if vary is None and "balls" not in ties:
        raise InvalidParameters("give --balls N, or --vary balls=START..STOP")
    points = []
    for value in values:
        numbers = {k: tie(value) for k, tie in ties.items()}
        if value is not None:
            numbers[variable] = value
        for k, v in numbers.items():
            if v < 0:
                raise InvalidParameters(f"{k} is {v} at {variable}={value}; it must be at least 0")
        points.append(Point(
            balls=numbers["balls"],
            urns=numbers.get("urns"),
            rule=fixed.get("rule"),
            capacity=numbers.get("capacity"),
            minimum=numbers.get("minimum"),
            at=numbers.get("at"),
            pattern=pattern,
            factor=None if fixed.get("factor") is None else parse_factor(fixed["factor"]),
        ))
    return variable, points


def _split_names(names) -> List[Approximation]:
    if isinstance(names, str):
        names = [part for part in names.split(",")]
    entries = []
    for part in names:
        if isinstance(part, Approximation):
            entries.append(part)
        elif str(part).strip():
            entries.append(approximation(part))
    if not entries:
        raise InvalidParameters(f"name at least one approximation: {', '.join(CATALOGUE)}")
    return entries


def compare_sweep(names, vary: Optional[str] = None, step=None, geometric=None, **parameters) -> List[Comparison]:
    """Compare one or more approximations over one :func:`sweep`.

    *names* is ``"stirling1,stirling2"`` or a list of names.  Every
    parameter given (and the varied one) must be one that each named
    approximation uses (``balls`` always; the rest as listed in its
    ``uses``), so that a forgotten or misspelt option is an error rather
    than silently ignored.  Returns one :class:`Comparison` per name.

    >>> [c.approximation.name for c in compare_sweep("stirling1,stirling2", "balls=10..20", step=10, urns="balls")]
    ['stirling1', 'stirling2']
    """
    entries = _split_names(names)
    given = {k for k, v in parameters.items() if v is not None}
    if vary is not None:
        given.add(parse_range(vary)[0])
    for entry in entries:
        unused = sorted(given - {"balls"} - set(entry.uses))
        if unused:
            options = ", ".join(f"--{name}" for name in unused)
            raise InvalidParameters(
                f"{entry.name} does not use {options}; leave it out (it uses balls"
                + "".join(f", {u}" for u in entry.uses) + ")"
            )
    variable, points = sweep(vary, step=step, geometric=geometric, **parameters)
    return [compare(entry, points, variable) for entry in entries]


# ---------------------------------------------------------------------------
# Output helpers shared by the CLI and scripts
# ---------------------------------------------------------------------------
def _short(value, digits: int = 10) -> str:
    return mpmath.nstr(value, digits, min_fixed=-5, max_fixed=digits)


def comparison_table(comparison: Comparison) -> Tuple[List[str], List[List[str]]]:
    """Column names and text rows of *comparison* for people.

    An exact value longer than 16 characters is shown rounded to 10 digits
    and marked ``≈`` (the ``--json`` and ``--csv`` forms carry it whole);
    the approximation is shown to 10 digits, the errors to 4.
    """
    entry = comparison.approximation
    extra = [name for name in ("capacity", "minimum", "at", "factor") if name in entry.uses]
    log = entry.scale == "log"
    columns = ["balls", "urns"] + extra + [
        "exact", "approx",
        "abs error of ln" if log else "abs error",
        "rel error of ln" if log else "rel error",
        "local order",
    ]
    rows = []
    for row, local in zip(comparison.rows, comparison.local_orders()):
        text = exact_text(row.exact)
        if len(text) > 16:
            with mpmath.workdps(row.dps):
                text = "≈" + _short(_to_mpf(row.exact))
        rel = row.relative_error_approx
        rows.append(
            [str(row.point.balls), str(row.point.urns)]
            + [str(row.point.value(name)) for name in extra]
            + [
                text,
                _short(row.approx),
                mpmath.nstr(row.absolute_error_approx, 4),
                "undefined" if rel is None else mpmath.nstr(rel, 4),
                "" if local is None else f"{local:.2f}",
            ]
        )
    return columns, rows


def describe_order(comparison: Comparison) -> str:
    """One line: the observed order and what theory says."""
    entry = comparison.approximation
    seen = "n/a (needs two points with a nonzero error)" if comparison.order_approx is None else f"{comparison.order_approx:.3f}"
    theory = "" if entry.order is None else f"; theory: {exact_text(entry.order)} when {entry.regime}"
    return f"observed order (slope of ln|rel error| vs ln {comparison.variable}, sign flipped) ≈ {seen}{theory}"


def catalogue_rows() -> List[dict]:
    """The catalogue as plain dicts (name, quantity, formula, scale, order, regime, uses, source)."""
    return [
        {
            "name": entry.name,
            "quantity": entry.quantity,
            "formula": entry.formula,
            "scale": entry.scale,
            "order": None if entry.order is None else exact_text(entry.order),
            "regime": entry.regime,
            "uses": ["balls", *entry.uses],
            "source": entry.source,
        }
        for entry in CATALOGUE.values()
    ]


CSV_COLUMNS = (
    "approximation", "balls", "urns", "capacity", "minimum", "at", "factor", "exact", "approx",
    "absolute_error_approx", "relative_error_approx", "local_order_approx",
)


def _float_text(value) -> str:
    # mpmath's decimal text: no overflow to inf for errors of counts beyond 1e308
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value)
    return mpmath.nstr(value, 17, min_fixed=-5, max_fixed=17)


def comparisons_csv(comparisons: Sequence[Comparison]) -> str:
    """All rows of *comparisons* as CSV text with a header (:data:`CSV_COLUMNS`).

    ``exact`` is exact (``p`` or ``p/q``); ``approx`` and the ``*_approx``
    error and order columns are decimal numbers (17 significant digits for
    the errors, never overflowing to ``inf``); parameters a comparison does
    not use, and undefined errors or orders, are empty.
    """
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(CSV_COLUMNS)
    for comparison in comparisons:
        uses = comparison.approximation.uses
        for row, local in zip(comparison.rows, comparison.local_orders()):
            p = row.point
            writer.writerow([
                comparison.approximation.name, p.balls, p.urns,
                p.capacity if "capacity" in uses else "",
                p.minimum if "minimum" in uses else "",
                p.at if "at" in uses else "",
                p.factor if "factor" in uses else "",
                exact_text(row.exact), row.approx_text(),
                _float_text(row.absolute_error_approx), _float_text(row.relative_error_approx),
                _float_text(local),
            ])
    return out.getvalue()


def plot_comparisons(comparisons: Sequence[Comparison], path: str) -> None:
    """Draw the relative errors of *comparisons* against the varied parameter, log-log, to *path*.

    One line per approximation, labelled with its observed order; points
    with a zero or undefined error are left out.  Uses matplotlib's
    non-interactive Agg backend (install the ``plot`` extra).
    """
    try:
        import matplotlib

        matplotlib.use("Agg", force=True)
        import matplotlib.pyplot as plt
    except ImportError:  # pragma: no cover - depends on the environment
        raise Unsupported("--plot needs matplotlib; install enumerator[plot]") from None
    figure, axes = plt.subplots(figsize=(7, 4.5), dpi=110)
    drawn = 0
    variable = comparisons[0].variable if comparisons else "balls"
    for comparison in comparisons:
        pairs = [
            (row.point.value(comparison.variable), float(row.relative_error_approx))
            for row in comparison.rows
            if row.relative_error_approx is not None and row.relative_error_approx > 0
            and float(row.relative_error_approx) > 0
        ]
        if not pairs:
            continue
        order = comparison.order_approx
        label = comparison.approximation.name + ("" if order is None else f" (order ≈ {order:.2f})")
        axes.loglog([x for x, _ in pairs], [y for _, y in pairs], marker="o", markersize=3, label=label)
        drawn += 1
    if not drawn:
        plt.close(figure)
        raise InvalidParameters("nothing to plot: every relative error is zero or undefined")
    scale = {c.approximation.scale for c in comparisons}
    axes.set_xlabel(variable)
    axes.set_ylabel("relative error" + (" of ln W" if scale == {"log"} else ""))
    axes.set_title("exact vs approximate: " + ", ".join(c.approximation.name for c in comparisons))
    axes.grid(True, which="both", linewidth=0.3)
    axes.legend()
    figure.tight_layout()
    try:
        figure.savefig(path)
    except OSError as error:
        raise InvalidParameters(f"cannot write the plot to {path!r}: {error.strerror or error}") from None
    finally:
        plt.close(figure)
