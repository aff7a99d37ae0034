r"""The catalogue of approximations, each paired with the exact quantity it approximates.

Every entry is an :class:`Approximation` with

* the **exact quantity** -- an exact ``int`` (a count) or
  ``fractions.Fraction`` (a probability, a mean), computed by the engine;
* the **approximation** -- a formula evaluated with mpmath at the working
  precision the caller sets (see :mod:`enumerator.algorithms.asymptotics.comparison`);
* the **published source** of the approximation, in its docstring.

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

Cost: one exact count or probability per point (see
:mod:`enumerator.algorithms.counting`) plus ``O(1)`` mpmath operations at
``P`` digits (``O(c)`` for the saddle point with capacity ``c``, ``O(j)``
for the empty-urn entries).  Each entry states the cost of its exact side at
a point (:meth:`Approximation.cost`, a :class:`~enumerator.core.limits.Cost`)
so that a comparison can refuse, and report as skipped, a point beyond the
limits before computing it.
"""

from __future__ import annotations

import math
from dataclasses import replace
from fractions import Fraction
from typing import Dict, List, Optional, Tuple

import gmpy2
import mpmath

from ...core import limits
from ...core.errors import InvalidParameters
from ...core.limits import Cost
from ...core.model import UrnModel, as_count
from ...core.rules import Rule
from ..counting import (
    configuration_weight,
    count_configurations,
    count_microstates,
    counting_cost,
    over_prime_power,
    power_primes,
)
from ..levels.ensembles import grand_canonical
from ..levels.spectra import System, harmonic_oscillator
from .formulas import (
    Exact,
    apportion,
    decimal_digits,
    empty_mean,
    empty_mean_cost,
    empty_urns_at_most,
    empty_urns_cost,
    stirling_log_factorial,
)
from .sweeps import Point, parse_factor

__all__ = [
    "Approximation",
    "CATALOGUE",
    "approximation",
]

mpf = mpmath.mpf


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
                    "parameter (e.g. urns= 365 or urns= balls//2)",
                    parameters=["urns"],
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

    def cost(self, point: Point) -> Cost:
        """Estimated time and memory of the exact side at a checked *point*.

        The default rates an answer of about ``n log2(n + r)`` bits: a few
        products of that size.  Entries with a costlier exact side say so.
        """
        bits = max(64.0, point.balls * math.log2(point.balls + (point.urns or 1) + 2))
        return Cost(seconds=4 * limits.product_seconds(bits), memory=6 * limits.bigint_bytes(bits))

    #: True for an entry whose exact side is a fraction over ``r^n`` (a probability, or a mean such as
    #: ``(r-1)^n / r^(n-1)``), whose decimal text can cost more than computing it.
    over_power = False

    def answer_bits(self, point: Point) -> float:
        """About how many bits the exact side's numerator and denominator hold together (it is written out).

        0 where writing is within :meth:`cost`'s margin; for the entries
        :attr:`over_power`, two numbers of about ``n log2 r`` bits.
        """
        if not self.over_power:
            return 0.0
        return max(64.0, 2 * point.balls * math.log2(max(point.urns, 2)))

    def guard(self, point: Point) -> int:
        """Digits the evaluation may lose to the size of the numbers involved."""
        sizes = [point.balls, point.urns or 1, point.capacity or 1, point.at or 1]
        return 5 + max(decimal_digits(max(1, s)) for s in sizes)

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

    def cost(self, point):
        return counting_cost(UrnModel(balls=point.balls, urns=point.urns, rule="BE"))

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
                    "entropy needs urns (equal shares) or a pattern, e.g. urns= 4 or pattern= 3,2,1",
                    parameters=["urns", "pattern"],
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
    over_power = True
    quantity = "P(no two balls share an urn) under MB"
    formula = "exp(-n(n-1)/(2r))"
    source = "Feller 1968, vol. 1, §II.3; von Mises 1939"
    order = Fraction(1)
    regime = 'urns proportional to balls squared (e.g. --urns "balls*balls")'

    def exact(self, point):
        n, r = point.balls, point.urns
        if n > r:
            return Fraction(0)
        # the MB count with capacity 1 is the falling factorial r(r-1)...(r-n+1), over r^n;
        # only the primes of r can cancel
        falling = count_microstates(UrnModel(balls=n, urns=r, rule="MB", capacity=1))
        return over_prime_power(falling, gmpy2.mpz(r) ** n, power_primes(r, n))

    def cost(self, point):
        n, r = point.balls, point.urns
        if n > r:
            return Cost(seconds=1e-6, memory=64)
        bits = max(64.0, n * math.log2(max(r, 2)))
        falling = counting_cost(UrnModel(balls=n, urns=r, rule="MB", capacity=1), "microstates")
        return falling + Cost(seconds=6 * limits.product_seconds(bits), memory=6 * limits.bigint_bytes(bits))

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
    over_power = True
    quantity = "the mean number of empty urns r(1-1/r)^n under MB"
    formula = "r e^{-n/r}"
    source = "Feller 1968, vol. 1, ch. IX; Kolchin, Sevast'yanov & Chistyakov 1978"
    order = Fraction(1)
    regime = "balls proportional to urns (e.g. --urns balls//2)"

    def exact(self, point):
        return empty_mean(point.balls, point.urns)

    def cost(self, point):
        return empty_mean_cost(point.balls, point.urns)

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
    over_power = True
    quantity = "P(at most j urns empty) under MB (j = --at, default 0)"
    formula = "Poisson law with mean r e^{-n/r}"
    source = "von Mises 1939; Kolchin et al. 1978, ch. II; Barbour, Holst & Janson 1992, ch. 6"
    order = Fraction(1)
    regime = "n, r -> ∞ with r e^{-n/r} fixed (order 1 up to a log factor)"
    uses = ("urns", "at")
    default_at = 0

    def exact(self, point):
        return empty_urns_at_most(point.balls, point.urns, point.at)

    def cost(self, point):
        # the law, then j + 1 Poisson terms per precision step of the approximation
        return empty_urns_cost(point.balls, point.urns, point.at) + Cost(seconds=2e-5 * (point.at + 1))

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
    over_power = True
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
            with mpmath.workdps(30 + decimal_digits(point.urns) + decimal_digits(point.balls)):
                at = int(mpmath.floor(point.urns * mpmath.exp(-mpf(point.balls) / point.urns)))
        return replace(point, at=as_count(at, "at"))

    def exact(self, point):
        return empty_urns_at_most(point.balls, point.urns, point.at)

    def cost(self, point):
        return empty_urns_cost(point.balls, point.urns, point.at)

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
                "saddle approximates a bounded count: give capacity= (at most that many balls per urn)",
                parameters=["capacity"],
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

    def cost(self, point):
        # the count, then O(c) mpmath terms per Newton step of the approximation
        return counting_cost(self.model(point), "microstates") + Cost(seconds=2e-4 * (point.capacity + 1))

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
        # C(n-j+r-2, r-2) / C(n+r-1, r-1) = (r-1) n(n-1)...(n-j+1) / ((n+r-1)(n+r-2)...(n+r-1-j)):
        # j + 1 small factors on each side instead of two binomials of r log n bits
        top = gmpy2.mpz(r - 1)
        bottom = gmpy2.mpz(n + r - 1)
        for i in range(j):
            top *= n - i
            bottom *= n + r - 2 - i
        q = gmpy2.mpq(top, bottom)
        return Fraction(int(q.numerator), int(q.denominator))

    def cost(self, point):
        j = min(point.at, point.balls)
        bits = max(64.0, (j + 1) * math.log2(point.balls + point.urns + 2))
        return Cost(seconds=(j + 1) / limits.STEPS_PER_SECOND + 4 * limits.product_seconds(bits),
                    memory=6 * limits.bigint_bytes(bits))

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
    (:func:`enumerator.algorithms.levels.ensembles.grand_canonical`, given ``T`` as a fraction
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
    #: Rate of the exact recursion in ``N^3 r log2(q)`` "bit operations" per second (measured:
    #: 160 bosons on 160 levels at t = 1/2, 6.6e8 of them, in 0.26 s), for :meth:`cost`.
    BIT_OPERATIONS_PER_SECOND = 1e9

    def check(self, point):
        point = super().check(point)
        rule = Rule.parse(point.rule or "BE")
        if rule is Rule.MB:
            raise InvalidParameters(
                "for MB the grand-canonical occupation equals the canonical one exactly; choose rule= BE or FD",
                parameters=["rule"],
            )
        factor = Fraction(1, 2) if point.factor is None else parse_factor(point.factor)
        at = point.at
        n, r = point.balls, point.urns
        if at >= r:
            raise InvalidParameters(
                f"at is {at} but the levels are 0..{r - 1}; give at= below urns", parameters=["at"]
            )
        if n < 1:
            raise InvalidParameters("grand-canonical needs at least 1 particle (balls >= 1)")
        if rule is Rule.FD and n >= r:
            raise InvalidParameters(
                f"{n} fermions fill {r} levels completely (every occupation is exactly 1); give urns > balls"
            )
        return replace(point, rule=rule.value, at=at, factor=factor)

    def cost(self, point):
        n, r = point.balls, point.urns
        work = n**3 * r * max(1, point.factor.denominator.bit_length())
        bits = max(64.0, n * r * max(1, point.factor.denominator.bit_length()))
        return Cost(seconds=work / self.BIT_OPERATIONS_PER_SECOND, memory=(n + 4) * limits.bigint_bytes(bits))

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
        dps = mpmath.mp.dps
        t = point.factor
        temperature = 1 / mpmath.log(mpf(t.denominator) / t.numerator)
        as_fraction = Fraction(mpmath.nstr(temperature, dps + 10, min_fixed=-mpmath.inf, max_fixed=mpmath.inf))
        system = System.create(harmonic_oscillator(point.urns), point.balls, point.rule)
        _, occupations = grand_canonical(system, as_fraction, digits=dps, levels=point.at + 1)
        return +occupations[point.at]


def _build_catalogue() -> Dict[str, Approximation]:
    entries: List[Approximation] = [StirlingBE(k) for k in (1, 2, 3)]
    entries += [Entropy(), Birthday(), EmptyMean(), EmptyPoisson(), EmptyNormal(), Saddle(), Boltzmann(),
                GrandCanonical()]
    return {entry.name: entry for entry in entries}


#: Every approximation by name.
CATALOGUE: Dict[str, Approximation] = _build_catalogue()


def approximation(name: str) -> Approximation:
    """The catalogue entry called *name* (case-insensitive).

    Parameters
    ----------
    name : str

    Returns
    -------
    Approximation

    Raises
    ------
    InvalidParameters
        No entry has that name (the message lists the catalogue).

    Notes
    -----
    A dictionary lookup in :data:`CATALOGUE`.

    Examples
    --------
    >>> approximation(" Birthday ").name
    'birthday'
    """
    key = str(name).strip().lower()
    if key not in CATALOGUE:
        raise InvalidParameters(
            f"unknown approximation {name!r}; choose one of {', '.join(CATALOGUE)}"
        )
    return CATALOGUE[key]


