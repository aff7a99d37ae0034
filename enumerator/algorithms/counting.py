r"""Exact counts of an occupancy model: configurations, microstates (the normaliser), profiles.

Every route works on the model's urn groups (``count`` urns sharing bounds
and a weight), never on the urns one by one, so its cost is stated in ``n``,
the number of groups ``G`` and the size of the answer — ``r = 2**64`` costs
what ``r = 100`` does.  Each route estimates its cost
(:func:`counting_cost`) and calls :func:`enumerator.core.limits.check`
before computing.  Methods, cheapest first (each cited where it is used):

* closed forms — BE ``C(n+r-1, n)``, FD ``C(r, n)``, MB ``r^n`` (with
  weights ``(sum_g c_g w_g)^n``); a lower bound ``a`` shifts ``n`` by
  ``sum_g c_g a_g``; MB with ``a = 1`` is ``r! S(n, r)`` (Feller, *An
  Introduction to Probability Theory*, vol. 1, §II.5; Stanley,
  *Enumerative Combinatorics* vol. 1, §1.9, the twelvefold way);
* inclusion–exclusion for a uniform capacity,
  ``sum_j (-1)^j C(r, j) C(n - j(c+1) + r - 1, r - 1)`` (Riordan,
  *An Introduction to Combinatorial Analysis*, 1958, ch. 5), each term from
  the previous by exact small multiplications and one exact division;
* several groups — ``[x^n']`` of ``prod_g (1 - x^{s_g+1})^{c_g} (1 - x)^{-R}``:
  one sparse binomial power per distinct span, a FLINT truncated product,
  then one dot product with a row of binomials;
* the normaliser with bounds or weights — MB
  ``n! [x^n] prod_g (sum_{k=a}^{b} (w_g x)^k / k!)^{c_g}`` (Flajolet &
  Sedgewick, *Analytic Combinatorics*, 2009, §II.2), BE/FD
  ``[x^n] prod_g (sum_{k=a}^{b} (w_g x)^k)^{c_g}``, each group's power by
  FLINT or by J. C. P. Miller's recurrence (Knuth, *TAOCP* vol. 2, §4.7),
  whatever the size of its count.

All arithmetic is exact (gmpy2 / FLINT inside); public functions return
``int`` and ``fractions.Fraction`` (a normaliser with fractional weights is
a ``Fraction``).

The routes live in modules of their own, re-exported here so that callers
import them from this module: closed forms and configurations
(:mod:`~enumerator.algorithms.configurations`), normalisers and MB generating
functions (:mod:`~enumerator.algorithms.normalisers`), profiles and the
twelvefold way (:mod:`~enumerator.algorithms.profiles`) and the cost
estimates (:mod:`~enumerator.algorithms.counting_costs`).
"""

from __future__ import annotations

from ..core.rules import multinomial
from .configurations import binomial, count_configurations, exact_fraction
from .counting_costs import PROFILE_ENUMERATION_LIMIT, counting_cost  # noqa: F401
from .normalisers import (
    configuration_probability,
    configuration_weight,
    count_microstates,
    over_prime_power,
    power_primes,
)
from .profiles import WAYS_ORDER, count_profiles, partitions_at_most, twelvefold  # noqa: F401

__all__ = [
    "binomial",
    "configuration_probability",
    "configuration_weight",
    "count_configurations",
    "count_microstates",
    "count_profiles",
    "counting_cost",
    "exact_fraction",
    "multinomial",
    "over_prime_power",
    "partitions_at_most",
    "power_primes",
    "twelvefold",
]
