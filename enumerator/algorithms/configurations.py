r"""Closed forms and the number of configurations (admissible occupancy vectors) of a model.

Methods, cheapest first, on the model's urn groups (never urn by urn):

* closed forms — BE ``C(n+r-1, n)``, FD ``C(r, n)``; a lower bound ``a``
  shifts ``n`` by ``sum_g c_g a_g`` (Feller, *An Introduction to
  Probability Theory*, vol. 1, §II.5);
* inclusion–exclusion for a uniform capacity,
  ``sum_j (-1)^j C(r, j) C(n - j(c+1) + r - 1, r - 1)`` (Riordan,
  *An Introduction to Combinatorial Analysis*, 1958, ch. 5), each term from
  the previous by exact small multiplications and one exact division;
* several groups — ``[x^n']`` of ``prod_g (1 - x^{s_g+1})^{c_g} (1 - x)^{-R}``:
  one sparse binomial power per distinct span, a FLINT truncated product,
  then one dot product with a row of binomials.

Also the small exact helpers :func:`binomial` and :func:`exact_fraction`
(GMP), and the per-model memo the counting modules share (:data:`MEMO`).  All arithmetic
is exact (gmpy2 / FLINT inside); public functions return ``int`` and
``fractions.Fraction``.
"""

from __future__ import annotations

import math
from collections import Counter
from fractions import Fraction

import gmpy2

from ..core import series
from ..core.errors import TooLarge
from ..core.exact import coprime_fraction
from ..core.memo import ModelMemo
from ..core.model import UrnModel
from .counting_costs import check_counting_cost, free_balls

__all__ = ["MEMO", "binomial", "count_configurations", "count_configurations_mpz", "exact_fraction"]

#: Working data kept per model between calls (see enumerator.core.memo),
#: shared by the counting modules (normalisers, profiles) under their own keys.
MEMO = ModelMemo("counting")

mpz = gmpy2.mpz


# ---------------------------------------------------------------------------
# small exact helpers
# ---------------------------------------------------------------------------

def binomial(n: int, k: int):
    """``C(n, k)`` as an ``mpz``; 0 outside ``0 <= k <= n`` (GMP ``mpz_bin_ui``).

    Taken from its small side ``min(k, n - k)``, so ``n`` may have any size
    (``C(2^64 + 1, 2^64) = 2^64 + 1``).

    Raises
    ------
    TooLarge
        When both sides exceed a machine word: the answer would have more
        than about 10^19 bits.
    """
    if k < 0 or n < 0 or k > n:
        return mpz(0)
    small = min(k, n - k)
    if small >= 1 << 64:
        raise TooLarge("C(n, k) with both k and n - k above 2^64 has more digits than any machine holds; "
                       "make the problem smaller")
    return gmpy2.comb(n, small)


def exact_fraction(num, den) -> Fraction:
    """Return ``num / den`` in lowest terms, reduced by GMP.

    Parameters
    ----------
    num, den : int or mpz
        The numerator and a positive denominator.

    Returns
    -------
    Fraction
        The exact quotient.

    Notes
    -----
    GMP's ``mpq`` canonicalisation uses a subquadratic gcd (T. Granlund et
    al., *GNU MP manual*, "Greatest Common Divisor Algorithms"), then
    :func:`~enumerator.core.exact.coprime_fraction` wraps the pair without
    CPython's quadratic gcd: ``O(M(b) log b)`` for ``b``-bit numbers.

    Examples
    --------
    >>> exact_fraction(6, 4)
    Fraction(3, 2)
    """
    q = gmpy2.mpq(num, den)
    return coprime_fraction(q.numerator, q.denominator)


# ---------------------------------------------------------------------------
# configurations (BE counting; also the set MB weights)
# ---------------------------------------------------------------------------

def _uniform_capacity_count(r: int, n: int, span: int):
    """Vectors of ``r`` entries in ``0..span`` summing to ``n`` (exact ``mpz``).

    Inclusion–exclusion over the urns forced above ``span`` (Riordan 1958,
    ch. 5):  ``sum_j (-1)^j C(r, j) C(n - j s + r - 1, r - 1)``, ``s = span+1``.
    The term ratio is a product of ``s + 1`` small factors, so term ``j + 1``
    comes from term ``j`` by one multiplication by a short integer and one
    exact division, ``O(J s)`` word operations per digit in all with
    ``J = min(r, n // s)`` terms; the symmetry ``n -> r span - n`` halves ``J``.
    Nothing loops over the urns: ``r = 2**64`` costs what ``r = 100`` does.
    """
    if n < 0 or n > r * span:
        return mpz(0)
    if span == 0:
        return mpz(1) if n == 0 else mpz(0)
    n = min(n, r * span - n)
    if span >= n:
        return gmpy2.comb(n + r - 1, min(n, r - 1))
    if span == 1:
        return gmpy2.comb(r, n)
    s = span + 1
    terms = min(r, n // s)
    m = n + r - 1
    term = gmpy2.comb(m, min(n, r - 1))  # C(m, r - 1), taken from its small side
    plus = term
    minus = mpz(0)
    perm = math.perm
    divexact = gmpy2.divexact
    k = r - 1
    for j in range(terms):
        # C(r, j+1)/C(r, j) = (r-j)/(j+1);  C(m-s, k)/C(m, k) = (m-k)_s / (m)_s
        num = (r - j) * perm(m - k, s)
        den = (j + 1) * perm(m, s)
        term = divexact(term * num, den)
        m -= s
        if j & 1:
            plus += term
        else:
            minus += term
    return plus - minus


def _grouped_product_count(target: int, model: UrnModel) -> "mpz":
    """``[x^{n'}] prod_g (1 - x^{s_g+1})^{c_g} (1 - x)^{-R}`` for urn groups.

    Each group's factor ``x^{a}(1 - x^{d})/(1 - x)`` (``d = b - a + 1``,
    raised to the group's count) puts its numerator into one binomial power
    ``(1 - x^d)^e`` per distinct ``d`` (sparse, built term by term with
    ``C(e, i)`` updated incrementally, ``i <= n'/d``); the product of the
    distinct ones is a FLINT truncated product, and ``(1 - x)^{-R}``
    contributes the binomial row ``C(m + R - 1, R - 1)``, so the answer is
    one dot product.  Cost ``O(G M(n'))`` for ``G`` distinct bounds plus
    ``O(n')`` big operations; never a pass over the urns.
    """
    R = model.urns
    steps: Counter = Counter()
    top = 0
    bounded = True
    for g in model.groups:
        if g.upper is None:
            bounded = False
            continue
        d = g.upper - g.lower + 1
        top += g.count * (d - 1)
        if d <= target:
            steps[d] += g.count
    if bounded and target > top:
        return mpz(0)
    if not steps:
        return binomial(target + R - 1, target)
    numerators = [series.one_minus_power(d, e, target) for d, e in sorted(steps.items())]
    numerator = series.product(numerators, target)
    row = series.binomial_row(R, target)
    return series.dot_reversed(numerator, row, target)


def count_configurations_mpz(model: UrnModel):
    """The number of configurations of *model* as an ``mpz``, kept in :data:`MEMO`.

    Parameters
    ----------
    model : UrnModel
        The problem.

    Returns
    -------
    mpz
        What :func:`count_configurations` returns as an ``int``; the other
        counting modules compute on it without a conversion.

    Raises
    ------
    TooLarge
        When :func:`~enumerator.algorithms.counting_costs.counting_cost` is beyond the active limits.

    Notes
    -----
    The routes and costs of :func:`count_configurations` (Feller vol. 1,
    §II.5; Riordan 1958, ch. 5); a second call for an equal model is a
    lookup.

    Examples
    --------
    >>> count_configurations_mpz(UrnModel(balls=4, urns=3, rule="BE"))
    mpz(15)
    """
    memo = MEMO.slots(model)
    if "configurations" in memo:
        return memo["configurations"]
    target = free_balls(model)
    r = model.urns
    if target < 0:
        value = mpz(0)
    else:
        check_counting_cost(model, "configurations", "counting the configurations")
        if model.is_uniform:
            b = model.groups[0].upper
            if b is None:
                value = binomial(target + r - 1, target)
            else:
                value = _uniform_capacity_count(r, target, b - model.groups[0].lower)
        else:
            value = _grouped_product_count(target, model)
    memo["configurations"] = value
    return value


def count_configurations(model: UrnModel) -> int:
    r"""Return the number of admissible occupancy vectors of *model*, exact.

    Parameters
    ----------
    model : UrnModel
        The problem (urn groups of any size; weights do not change the count).

    Returns
    -------
    int
        The number of vectors ``k`` with ``a_i <= k_i <= b_i`` and sum ``n``.

    Raises
    ------
    TooLarge
        When :func:`~enumerator.algorithms.counting_costs.counting_cost` is beyond the active limits.

    Notes
    -----
    After the shift ``n' = n - sum_g c_g a_g``: one group without a capacity
    is ``C(n' + r - 1, n')`` (stars and bars, Feller vol. 1, §II.5); one
    group with a capacity is inclusion–exclusion with ``O(n'/(c+1))``
    incrementally updated terms (Riordan 1958, ch. 5); several groups are
    ``[x^{n'}] prod_g (1 - x^{s_g+1})^{c_g} (1 - x)^{-R}`` by sparse binomial
    powers, one FLINT truncated product and a dot product with a binomial
    row.  Cost polynomial in ``n'`` and the number of groups, whatever ``r``.

    Examples
    --------
    >>> count_configurations(UrnModel(balls=4, urns=3, rule="BE"))
    15
    >>> count_configurations(UrnModel(balls=4, urns=3, rule="BE", capacity=2))
    6
    >>> count_configurations(UrnModel(balls=2, urns=2**64, rule="FD")) == 2**63 * (2**64 - 1)
    True
    """
    return int(count_configurations_mpz(model))
