r"""The formulas the catalogue is built from: exact sides, Stirling's series, sizes.

* :func:`stirling_log_factorial` -- Stirling's series for ``ln n!`` with any
  number of terms (Abramowitz & Stegun 6.1.41);
* :func:`apportion` -- a configuration proportional to a pattern, by
  largest remainders;
* :func:`empty_urns_at_most` -- the exact law of the number of empty urns
  under MB (Feller, vol. 1, §IV.2), and :func:`empty_urns_cost`, its
  estimated time and memory;
* :func:`empty_mean` -- the mean number of empty urns under MB, exact;
* :func:`to_mpf`, :func:`decimal_digits`, :func:`ln_size` -- moving exact
  values into mpmath and sizing the working precision for them.
"""

from __future__ import annotations

import bisect
import math
from fractions import Fraction
from typing import List, Sequence, Tuple, Union

import gmpy2
import mpmath
from flint import fmpq, fmpz

from ...core import limits
from ...core.errors import InvalidParameters
from ...core.exact import coprime_fraction
from ...core.limits import Cost
from ...core.model import as_count
from ...core.workers import active_processes, map_in_processes
from ..counting import over_prime_power, power_primes

__all__ = [
    "Exact",
    "apportion",
    "decimal_digits",
    "empty_mean",
    "empty_mean_cost",
    "empty_urns_at_most",
    "empty_urns_cost",
    "ln_size",
    "stirling_log_factorial",
    "to_mpf",
]

#: An exact value: a count or a probability.
Exact = Union[int, Fraction]
mpf = mpmath.mpf


# ---------------------------------------------------------------------------
# Sizes and precision
# ---------------------------------------------------------------------------
def ln_size(value: Exact) -> float:
    """A cheap estimate of ``|ln |value||`` from bit lengths (for guard digits only)."""
    if isinstance(value, Fraction):
        bits = abs(value.numerator).bit_length() - value.denominator.bit_length()
    else:
        bits = abs(int(value)).bit_length()
    return abs(bits) * 0.6931471805599453


def decimal_digits(value) -> int:
    """The number of decimal digits of ``|int(value)|`` (estimated from the bit length above 10^18)."""
    return len(str(abs(int(value)))) if abs(int(value)) < 10**18 else int(abs(int(value)).bit_length() * 0.30103) + 1


def to_mpf(value: Exact):
    """*value* as an mpf at the current mpmath precision.

    Parameters
    ----------
    value : int or Fraction

    Returns
    -------
    mpmath.mpf

    Notes
    -----
    An integer is rounded once; a fraction is the quotient of its two
    rounded integers (at most three roundings, so within a few units in the
    last place).  Cost: one mpmath division at the working precision.
    """
    if isinstance(value, Fraction):
        return mpf(value.numerator) / mpf(value.denominator)
    return mpf(int(value))


def stirling_log_factorial(n, terms: int):
    """Stirling's series for ``ln n!`` with *terms* terms, as an mpf.

    Parameters
    ----------
    n : int
        ``n >= 0``; ``n = 0`` returns 0 (``0! = 1``; the series does not apply).
    terms : int
        ``>= 1``.

    Returns
    -------
    mpmath.mpf
        At the current mpmath precision.

    Raises
    ------
    InvalidParameters
        A negative *n* or *terms* below 1.

    Notes
    -----
    ``terms = 1``: ``n ln n - n + ½ ln(2πn)``; each further term adds
    ``B_{2i} / (2i (2i-1) n^{2i-1})`` — ``1/(12n)``, ``-1/(360 n^3)``,
    ``1/(1260 n^5)``, ... (Bernoulli numbers exact from FLINT).  For ``n > 0``
    the series is enveloping: the error has the sign of, and is smaller than,
    the first omitted term, so with *terms* terms it is ``O(n^{-(2 terms - 1)})``.
    Cost: *terms* mpmath operations.

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

    Parameters
    ----------
    balls : int
        ``n >= 0``.
    pattern : sequence of int
        Whole numbers ``w_i >= 0``, at least one positive.

    Returns
    -------
    tuple of int
        ``k`` with ``sum k = n``, and ``k = (n / s) w`` whenever ``s = sum w``
        divides ``n``.

    Raises
    ------
    InvalidParameters
        A negative entry or no positive one.

    Notes
    -----
    ``k_i = floor(n w_i / s)``; the balls left over go one each to the urns
    with the largest remainders ``n w_i mod s``, the lower index first among
    equal remainders (A. Hamilton's apportionment, 1792; M. L. Balinski and
    H. P. Young, *Fair Representation*, 2nd ed., 2001).  Exact integers; cost
    ``O(r log r)`` for ``r`` entries.

    Examples
    --------
    >>> apportion(10, (3, 2, 1))
    (5, 3, 2)
    """
    n = as_count(balls, "balls")
    weights = [as_count(w, f"pattern entry {i}") for i, w in enumerate(pattern, start=1)]
    total = sum(weights)
    if not weights or total == 0:
        raise InvalidParameters(
            "pattern must have at least one positive entry, e.g. pattern= 3,2,1", parameters=["pattern"]
        )
    base = [n * w // total for w in weights]
    left = n - sum(base)
    order = sorted(range(len(weights)), key=lambda i: (-(n * weights[i] % total), i))
    for i in order[:left]:
        base[i] += 1
    return tuple(base)


def empty_mean(balls, urns) -> Fraction:
    """The mean number of empty urns for ``n`` balls in ``r`` urns under MB, ``r (1 - 1/r)^n``, exact.

    Parameters
    ----------
    balls : int
        ``n >= 0``.
    urns : int
        ``r >= 1``.

    Returns
    -------
    Fraction
        ``(r-1)^n / r^(n-1)``, already in lowest terms.

    Notes
    -----
    Each urn is missed by all ``n`` balls with probability ``(1 - 1/r)^n``
    (W. Feller, *An Introduction to Probability Theory and Its
    Applications*, vol. 1, 3rd ed., 1968, ch. IX; the same binomial law
    of one urn as :func:`enumerator.algorithms.moments.counting_moments`,
    which also computes the variance and costs several times more).
    ``r - 1`` and ``r`` are coprime, so ``(r-1)^n / r^(n-1)`` needs no gcd.
    Cost: two powers of ``n log2 r`` bits (GMP), :func:`empty_mean_cost`.

    Examples
    --------
    >>> empty_mean(3, 2)
    Fraction(1, 4)
    """
    n = as_count(balls, "balls")
    r = as_count(urns, "urns", 1)
    if n == 0:
        return Fraction(r)
    mpz = gmpy2.mpz
    return coprime_fraction(mpz(r - 1) ** n, mpz(r) ** (n - 1))


def empty_mean_cost(balls: int, urns: int) -> Cost:
    """Estimated time and memory of :func:`empty_mean`: two powers of ``n log2 r`` bits.

    Parameters
    ----------
    balls, urns : int
        ``n`` and ``r``.

    Returns
    -------
    Cost
        Three products and four integers of ``n log2 r`` bits, rated by
        :func:`~enumerator.core.limits.product_seconds` and
        :func:`~enumerator.core.limits.bigint_bytes`.
    """
    bits = max(64.0, balls * math.log2(max(urns, 2)))
    return Cost(seconds=3 * limits.product_seconds(bits), memory=4 * limits.bigint_bytes(bits))


def _exclusion_seconds(n: int, r: int, j: int) -> float:
    """Estimated seconds of :func:`_exclusion_sum` (the inclusion–exclusion route)."""
    top = r - j - 1  # K: the bases k = 1..K
    if top < 1:
        return 1e-6
    bits = max(64.0, n * math.log2(max(r, 2)))
    primes = top / math.log(top) if top > 2 else 1.0  # about pi(K) full powers P^n, one per prime
    # measured CPU in one process (2 cores shared, load 3-5), r = n/2, j = floor(r e^-2): 5000 balls
    # 0.04 s, 10^4 0.16 s, 2*10^4 0.72 s, 3*10^4 1.8-2.4 s, 6*10^4 9.5 s, 10^5 (K = 43,233) 24-37 s:
    # 0.6 to 0.9 products of core.limits.multiply_seconds per prime (its power P^n is about 0.45 of
    # the work, the products by coefficients and cofactors the rest); one product per prime keeps
    # the estimate above them, within 2x.  The second term is the coefficient of each base: a product
    # of a number of _coefficient_bits by a short one, and a division.  Split between processes
    # (_exclusion_sum), the CPU time is the same.
    return primes * limits.multiply_seconds(bits) + top * 4 * limits.product_seconds(_coefficient_bits(r, j))


def _coefficient_bits(r: int, j: int) -> float:
    """A bound on the bits of ``c_k = r C(r-1, j) C(K, k) / (r - k)``: ``log2(r C(r-1, j)) + K``, ``K = r - j - 1``."""
    top = r - j - 1
    binomial = (math.lgamma(r) - math.lgamma(j + 1) - math.lgamma(r - j)) / math.log(2)
    return max(64.0, binomial + math.log2(max(r, 2)) + top + 1)


def _stirling_seconds(n: int, k: int) -> float:
    """Estimated seconds of one Stirling number ``S(n, k)`` from FLINT (``fmpz.stirling_s2``).

    FLINT sums about ``k/2`` powers of ``n log2 k`` bits for ``k <= 1500``
    (and for ``k`` up to about ``n/2`` when ``n < 3000``), raises a power
    series of length ``n - k + 1`` to the ``k``-th power for ``k`` above
    about ``0.97 n``, and otherwise works modulo word-size primes, about
    ``k`` steps per prime for ``log2 C(n, k) + (n - k) log2 k`` bits of
    result.  Measured (loaded machine): ``S(10^5, 100)`` 0.22 s,
    ``S(10^5, 3000)`` 1.5 s, ``S(10^5, 10^4)`` 4.2 s, ``S(6*10^4, 3*10^4)``
    4.3 s, ``S(3*10^4, 15000)`` 1.2 s, ``S(10^5, 98500)`` 4.7 s,
    ``S(3*10^4, 29500)`` 0.34 s.  Rated at the largest of the models whose
    range (a little widened) holds ``k``: two powers per odd base of
    ``max(1, bits / 50000)`` products each (measured: 1 at ``3*10^4`` bits,
    13 at ``6.6*10^5``), 40 ns per step and prime, ``4 (n - k + 1)^2``
    microseconds for the series.
    """
    if k <= 2 or k >= n - 1:
        return 1e-6
    size = (math.lgamma(n + 1) - math.lgamma(k + 1) - math.lgamma(n - k + 1)) / math.log(2) + (n - k) * math.log2(k)
    seconds = 40e-9 * k * (size / 63 + 1)
    if k <= (1500 if n >= 3000 else 0.95 * n):
        bits = max(64.0, n * math.log2(k))
        seconds = max(seconds, k * limits.product_seconds(bits) * max(1.0, bits / 50000))
    if k >= (0.9 if n < 200 else 0.94) * n:
        seconds = max(seconds, 4e-6 * (n - k + 1) ** 2)
    return seconds


def _empty_routes(n: int, r: int, j: int) -> Tuple[float, float, float]:
    """``(bits, stirling_seconds, inclusion_exclusion_seconds)`` of :func:`empty_urns_at_most`."""
    bits = max(64.0, n * math.log2(max(r, 2)))
    product = limits.product_seconds(bits)
    # j + 1 Stirling numbers S(n, r - i), each times C(r, i) (r-i)!; none when r - i > n
    low, high = r - min(j, r), min(r, n)  # the k = r - i with S(n, k) != 0
    count = max(0, high - low + 1)
    if count <= 64:
        stirling = sum(_stirling_seconds(n, k) for k in range(low, high + 1))
    else:  # the largest of 65 evenly spaced numbers, for each of them
        stirling = count * max(_stirling_seconds(n, low + (high - low) * i // 64) for i in range(65))
    stirling += count * 2 * product
    return bits, stirling, _exclusion_seconds(n, r, j)


def empty_urns_cost(balls: int, urns: int, at: int) -> Cost:
    """Estimated time and memory of :func:`empty_urns_at_most` (the cheaper of its two routes).

    Parameters
    ----------
    balls, urns, at : int
        ``n``, ``r`` and ``j``.

    Returns
    -------
    Cost

    Notes
    -----
    The Stirling route costs ``j + 1`` Stirling numbers ``S(n, k)``, each
    rated by :func:`_stirling_seconds` after the method FLINT takes for it,
    and two products of ``n log2 r`` bits.  Inclusion–exclusion (:func:`_exclusion_sum`) takes one
    full power ``P^n`` of ``n log2 r`` bits and about one product of that
    size per prime ``P <= K = r - j - 1`` (about ``K / ln K`` of them; the
    rest are products by shorter powers), rated at one product of
    :func:`~enumerator.core.limits.multiply_seconds` per prime (measured:
    0.6 to 0.9 on a loaded machine from ``5000`` to ``10^5`` balls), plus a
    short product per term for its binomial coefficient.  Memory: a few
    dozen ``n log2 r``-bit numbers (the powers in the runs of
    :func:`_exclusion_sum`), the powers ``Q^n`` of the primes
    ``Q <= sqrt(K)`` (half that size each on average), and one
    coefficient of ``log2(r C(r-1, j)) + K`` bits at most per 64 bases.
    When the sum is split between ``w`` worker processes
    (:func:`_exclusion_sum`), the seconds are ``1/w`` of these (the parts
    have equal rated costs; measured 14.5 s and 15.2 s of CPU for 29.5 s in
    one process) plus 0.2 s to start them, and the memory ``w`` times.
    """
    if at >= urns:
        return Cost(seconds=1e-6, memory=64)
    bits, stirling, exclusion = _empty_routes(balls, urns, at)
    workers = _processes(balls, urns, at) if exclusion < stirling else 1
    top = max(0, urns - at - 1)
    root = math.isqrt(top)
    small = root / math.log(root) if root > 2 else 1.0
    # measured: 2.5 MB above the start for 3*10^4 balls in 15,000 urns (numbers of 51 KB)
    memory = (48 + small / 2) * limits.bigint_bytes(bits) + (top // 64 + 1) * limits.bigint_bytes(_coefficient_bits(urns, at))
    if workers > 1:  # parts of equal rated cost side by side, each worker with its tables and working set
        return Cost(seconds=exclusion / workers + _WORKERS_START_SECONDS, memory=workers * memory)
    return Cost(seconds=min(stirling, exclusion), memory=memory)


def _smallest_factor_table(top: int):
    """``lpf[k]`` for ``0 <= k <= top``: the smallest prime factor of ``k`` (``k`` itself for a prime, 1 for 1)."""
    spf = list(range(top + 1))
    for p in range(2, math.isqrt(top) + 1):
        if spf[p] == p:
            for q in range(p * p, top + 1, p):
                if spf[q] == q:
                    spf[q] = p
    return spf


#: Widest run of bases ``k`` whose coefficients share one long factor in :func:`_exclusion_sum`.
_RUN = 128


class _ExclusionSum:
    """The sum of :func:`_exclusion_sum` in parts: the smooth bases, and the bases by their largest prime.

    ``part(lo, hi, smooth)`` is the sum of the terms ``±c_k k^n`` whose
    largest prime factor is ``primes[lo:hi]`` (the primes above
    ``sqrt(K)``, increasing), plus, with ``smooth``, those of the bases with
    no prime factor above ``sqrt(K)`` (``k = 1`` included).  The parts of a
    partition of ``range(len(primes))`` add up to the whole sum, exactly, in
    any grouping.  The smallest prime factors are tabled at once (the
    primes are needed to cut the parts, :meth:`bounds`); the coefficient
    marks and the powers of the primes up to ``sqrt(K)`` on the first
    :meth:`part`, once.
    """

    def __init__(self, n: int, r: int, j: int):
        self.n, self.r, self.j = n, r, j
        top = self.top = r - j - 1
        self.step = 64
        spf = self.spf = _smallest_factor_table(top)
        self.root = math.isqrt(top)
        self.small = [q for q in range(2, self.root + 1) if spf[q] == q]
        self.primes = [p for p in range(self.root + 1, top + 1) if spf[p] == p]
        self.marks = self.power = None

    def _tables(self):
        """The coefficient marks ``r C(r-1, j) C(K, 64 i)`` and the powers ``Q^n``, ``2 < Q <= sqrt(K)``."""
        if self.marks is not None:
            return
        n, r, j, top, step = self.n, self.r, self.j, self.top, self.step
        scaled = r * gmpy2.comb(r - 1, j)  # r C(r-1, j) = r! / (j! K!)
        marks = [scaled]
        for base in range(0, top - step + 1, step):  # r C(r-1, j) C(K, base + step), one step at a time
            marks.append(gmpy2.divexact(marks[-1] * math.prod(range(top - base - step + 1, top - base + 1)),
                                        math.prod(range(base + 1, base + step + 1))))
        self.power = {q: gmpy2.mpz(q) ** n for q in self.small if q > 2}
        self.marks = marks

    def coefficient(self, k: int):
        """``(-1)^(r-k+j) c_k``, from the nearest mark by one short product and one exact division."""
        r, j, top, step, marks = self.r, self.j, self.top, self.step, self.marks
        mark = min((k + step // 2) // step, len(marks) - 1)
        base = mark * step
        if k >= base:  # C(K, k) = C(K, base) (K-base)...(K-k+1) / ((base+1)...k)
            up, down = math.prod(range(top - k + 1, top - base + 1)), math.prod(range(base + 1, k + 1))
        else:  # C(K, k) = C(K, base) (k+1)...base / ((K-base+1)...(K-k))
            up, down = math.prod(range(k + 1, base + 1)), math.prod(range(top - base + 1, top - k + 1))
        c = gmpy2.divexact(marks[mark] * up, down * (r - k))
        return -c if (r - k + j) & 1 else c

    def node(self, m: int, largest: int):
        """``V(m) = ±c_m + sum_Q Q^n V(mQ)`` over the primes ``Q`` up to *largest* and ``K/m``."""
        n, power = self.n, self.power
        value = self.coefficient(m)
        bound = min(largest, self.top // m)
        for q in self.small:
            if q > bound:
                break
            below = self.node(m * q, q)
            value += below << n if q == 2 else below * power[q]
        return value

    def run_sum(self, run):
        """``sum ±c_k X`` over a run of ``(k, X)``, ``k`` increasing from ``a`` to ``b`` (one long product)."""
        # c_k = c_a (r-a) h_k / d with h_k = (b!/k!) ((K-a)!/(K-k)!) (prod/(r-k)) and d = (b!/a!) prod, prod
        # the r - k of the run; d/g divides every h_k (g = gcd(c_a (r-a), d), as each c_k is whole)
        r, j, top = self.r, self.j, self.top
        a, b = run[0][0], run[-1][0]
        spread = math.prod(r - k for k, _ in run)
        lead = abs(self.coefficient(a)) * (r - a)
        d = math.prod(range(a + 1, b + 1)) * spread
        common = gmpy2.gcd(lead, d)
        rest = d // common
        inner = gmpy2.mpz(0)
        for k, x in run:
            h = gmpy2.divexact(math.prod(range(k + 1, b + 1)) * math.prod(range(top - k + 1, top - a + 1))
                               * (spread // (r - k)), rest)
            inner += -h * x if (r - k + j) & 1 else h * x
        return gmpy2.divexact(lead, common) * inner

    def is_large(self, p: int) -> bool:
        """Whether the prime ``p > sqrt(K)`` goes to the runs (``p > K/4``: cofactors ``m <= 3``)."""
        return not (4 * p <= self.top or p <= 3)

    def part(self, lo: int, hi: int, smooth: bool):
        """The terms of the bases whose largest prime is ``primes[lo:hi]``, and of the smooth ones if *smooth*."""
        mpz = gmpy2.mpz
        self._tables()
        n, top, power = self.n, self.top, self.power
        total = mpz(0)
        if smooth:
            total += self.coefficient(1)
            for q in self.small:
                below = self.node(q, q)
                total += below << n if q == 2 else below * power[q]
        # the primes p > K/4 (k = m p, m <= 3): their terms go to one sum per m in runs of k spanning at most
        # RUN bases, each term a product of p^n by a number of about 16 RUN bits instead of c_k
        runs = {1: [], 2: [], 3: []}
        sums = {1: mpz(0), 2: mpz(0), 3: mpz(0)}
        for p in self.primes[lo:hi]:
            if not self.is_large(p):
                total += self.node(p, p) * mpz(p) ** n
                continue
            x = mpz(p) ** n
            for m in range(1, top // p + 1):
                run = runs[m]
                if run and m * p - run[0][0] > _RUN:
                    sums[m] += self.run_sum(run)
                    run.clear()
                run.append((m * p, x))
        for m, run in runs.items():
            if run:
                sums[m] += self.run_sum(run)
        if sums[3]:
            total += sums[3] * power.get(3, mpz(3) ** n)
        return total + sums[1] + (sums[2] << n)

    def bounds(self, parts: int) -> List[int]:
        """Indices ``0 = b_0 <= b_1 <= ... <= b_parts = len(primes)`` cutting the work in *parts* of about equal cost.

        Part ``i`` is ``part(b_i, b_{i+1}, smooth=(i == 0))``; the first may
        have no prime (when the smooth part alone is its share), the others
        have one at least (given primes enough).  Rated (at
        10^5 balls, CPU on 2 shared cores) per prime ``P > K/4`` by its
        power, ``3.3 log2 P / log2 K`` ms, and ``0.44`` ms per cofactor
        ``m <= K/P``; per prime below ``K/4`` by its power, the product by
        ``V(P)`` (2.4 ms) and 0.23 ms per cofactor; the smooth part 0.3 ms
        per base, about ``0.31 K`` of them (Dickman's ``ρ(2) = 1 - ln 2`` of
        the bases have no prime above ``sqrt(K)``).
        """
        top = self.top
        scale = 3.3 / math.log2(max(top, 2))
        prefix = [0.3 * 0.31 * top]  # the smooth part, then each prime's terms
        for p in self.primes:
            cost = 0.44 * (top // p) if self.is_large(p) else 2.4 + 0.23 * (top // p)
            prefix.append(prefix[-1] + scale * math.log2(p) + cost)
        cuts = [0]
        for i in range(1, parts):  # an equal share of what is left; after the first, a part has a prime at least
            start = cuts[-1]
            done = prefix[start] if i > 1 else 0.0  # the first part also holds the smooth bases
            target = done + (prefix[-1] - done) / (parts - i + 1)
            b = bisect.bisect_left(prefix, target, lo=start)  # prefix[b]: the cost before primes[b]
            if b > start and target - prefix[b - 1] < prefix[b] - target:
                b -= 1
            cuts.append(min(max(b, start + 1 if i > 1 else start), len(self.primes)))
        return cuts + [len(self.primes)]


def _exclusion_sum(n: int, r: int, j: int, processes=None):
    """``sum_{k=1}^{K} (-1)^(r-k+j) c_k k^n`` with ``c_k = C(r, k) C(r-k-1, j)`` and ``K = r - j - 1``, exact.

    Notes
    -----
    ``k -> k^n`` is completely multiplicative, so the terms are summed by
    Horner's rule along the tree of factorisations: node ``m`` stands for the
    ``k = m k'`` whose cofactor ``k'`` has no prime above the smallest prime
    of ``m``, and ``V(m) = ±c_m + sum_Q Q^n V(mQ)`` over the primes ``Q`` up to
    that prime and to ``K/m``.  The root's children are all primes
    ``P <= K``; each costs one power ``P^n`` and one product by ``V(P)``
    (about ``K / ln K`` of them, instead of ``K/2`` odd powers).  Below the
    root only primes ``Q <= sqrt(K)`` occur, and their powers are taken
    once; ``Q = 2`` is a shift.  ``c_k = r C(r-1, j) C(K, k) / (r - k)`` is
    read from the nearest of the values ``r C(r-1, j) C(K, 64 i)`` by one
    short product and one exact division.

    The primes ``P > K/4`` (about two thirds of them) have only the
    cofactors ``m <= 3``; their terms ``c_{mP} P^n`` are summed per ``m`` in
    runs of bases ``k = mP`` spanning at most 128: in a run from ``a`` to
    ``b``, ``c_k = c_a (r-a) h_k / d`` with ``h_k`` of about ``16 (b - a)``
    bits and ``d`` dividing ``c_a (r-a) h_k``, so each ``P^n`` is multiplied
    by a short ``h_k`` and each run once by the long ``c_a (r-a)/gcd``; the
    three sums are multiplied by ``1``, ``2^n`` (a shift) and ``3^n`` at the
    end.

    Several processes: the terms fall into parts that add up exactly in
    any grouping (:class:`_ExclusionSum`): the smooth bases with the
    smallest primes ``P``, then ranges of larger primes, cut where the
    rated costs are equal (:meth:`_ExclusionSum.bounds`).  When the
    estimate (:func:`_exclusion_seconds`) is 1 s or more, the sum is cut in
    as many parts as :func:`~enumerator.core.workers.active_processes`
    allows (at most 8; *processes* forces the number), computed by
    :func:`~enumerator.core.workers.map_in_processes`.  The answer is the
    same integer either way.  The powers ``P^n`` are almost half the work
    and cannot be shared between primes, so the CPU time is what it was
    and the elapsed time, on ``c`` free cores, about a ``c``-th of it
    (measured at 10^5 balls on 2 cores: 14.5 s and 15.2 s of CPU in two
    processes, 29.5 s in one).

    Source of the sum: W. Feller, vol. 1, 3rd ed., 1968, §IV.2; Horner's
    rule: D. E. Knuth, *The Art of Computer Programming*, vol. 2, 3rd ed.,
    1997, §4.6.4.
    """
    if r - j - 1 < 1:
        return gmpy2.mpz(0)
    terms = _ExclusionSum(n, r, j)
    if processes is None:
        processes = _processes(n, r, j)
    if processes < 2:
        return terms.part(0, len(terms.primes), smooth=True)
    cuts = terms.bounds(processes)
    parts = [(n, r, j, cuts[i], cuts[i + 1], i == 0) for i in range(processes)]
    return sum(map_in_processes(_exclusion_part, parts, processes))


#: The estimated seconds (:func:`_exclusion_seconds`) from which :func:`_exclusion_sum` works in several processes.
_SPLIT_SECONDS = 1.0
#: The most processes :func:`_exclusion_sum` works in.
_MOST_PROCESSES = 8
#: Starting the workers of :func:`_exclusion_sum`, sending the parts and answers, building the tables again.
_WORKERS_START_SECONDS = 0.2


def _processes(n: int, r: int, j: int) -> int:
    """The processes :func:`_exclusion_sum` works in: from an estimate of 1 s, as many as
    :func:`~enumerator.core.workers.active_processes` allows (at most 8), else 1."""
    workers = min(active_processes(), _MOST_PROCESSES)
    if workers <= 1 or r - j - 1 < 1 or _exclusion_seconds(n, r, j) < _SPLIT_SECONDS:
        return 1
    return workers


def _exclusion_part(task):
    """One part of :func:`_exclusion_sum` in a worker: ``task = (n, r, j, lo, hi, smooth)``.

    The worker builds the tables again (0.07 s at 10^5 balls) and returns
    ``_ExclusionSum(n, r, j).part(lo, hi, smooth)``.
    """
    n, r, j, lo, hi, smooth = task
    return _ExclusionSum(n, r, j).part(lo, hi, smooth)


def _exclusion_sum_by_odd_parts(n: int, r: int, j: int):
    """The same sum as :func:`_exclusion_sum`, one power ``o^n`` per odd ``o <= K`` (the earlier route).

    Kept as the peer of the benchmark and the tests: the terms of one odd
    part ``o`` (``k = 2^a o``) are summed with shifts and multiplied once by
    ``o^n``; each coefficient is two binomials from scratch.
    """
    mpz = gmpy2.mpz
    top = r - j - 1

    def coefficient(k):
        c = gmpy2.comb(r, k) * gmpy2.comb(r - k - 1, j)
        return -c if (r - k + j) & 1 else c

    total = mpz(0)
    for odd in range(1, top + 1, 2):
        inner = coefficient(odd)
        k, shift = 2 * odd, n
        while k <= top:
            inner += coefficient(k) << shift
            k, shift = 2 * k, shift + n
        total += inner if odd == 1 else inner * mpz(odd) ** n
    return total


def empty_urns_at_most(balls, urns, at) -> Fraction:
    """``P(at most j urns empty)`` for ``n`` balls in ``r`` urns under MB, exact.

    Parameters
    ----------
    balls : int
        ``n >= 0``.
    urns : int
        ``r >= 1``.
    at : int
        ``j >= 0``.

    Returns
    -------
    Fraction

    Raises
    ------
    InvalidParameters
        A negative count or no urns.
    TooLarge
        The cheaper route is estimated beyond the limits
        (:func:`empty_urns_cost`, :func:`enumerator.core.limits.check`).

    Notes
    -----
    Two classical forms (Feller, *An Introduction to Probability Theory and
    Its Applications*, vol. 1, 3rd ed., 1968, §IV.2):

    * ``P(exactly i empty) = C(r, i) (r-i)! S(n, r-i) / r^n`` — choose the
      empty urns, then map the balls onto the other ``r - i`` (Stirling
      numbers of the second kind from FLINT), summed over ``i <= j``;
    * inclusion–exclusion, ``P(exactly i empty) = sum_m (-1)^{m-i} C(m, i)
      C(r, m) (1 - m/r)^n``, summed over ``i <= j`` with
      ``sum_{i<=j} (-1)^i C(m, i) = (-1)^j C(m-1, j)``:
      ``r^n P(E <= j) = r^n + sum_{m>j} (-1)^{m+j} C(r, m) C(m-1, j) (r-m)^n``.
      With ``k = r - m``, the terms are summed by Horner's rule along the
      factorisations of ``k`` (:func:`_exclusion_sum`): one full power
      ``P^n`` per prime ``P <= r - j - 1`` (about ``(r-j)/ln(r-j)`` of
      them), the other ``k^n`` assembled from them and from the powers of
      the primes up to ``sqrt(r - j)`` (gmpy2).

    The cheaper route by :func:`empty_urns_cost` is taken; a large
    inclusion–exclusion sum is split between processes, one per core.  The sum is
    divided by ``r^n`` removing only the primes of ``r``
    (:func:`~enumerator.algorithms.counting.over_prime_power`), never by a
    general gcd of ``n log2 r``-bit numbers.

    Examples
    --------
    >>> empty_urns_at_most(3, 3, 0)
    Fraction(2, 9)
    """
    n = as_count(balls, "balls")
    r = as_count(urns, "urns", 1)
    j = as_count(at, "at")
    if j >= r:
        return Fraction(1)
    limits.check(empty_urns_cost(n, r, j), f"the exact law of empty urns for {n} balls in {r} urns",
                 advice="use fewer balls or urns")
    mpz = gmpy2.mpz
    _, stirling, exclusion = _empty_routes(n, r, j)
    if stirling <= exclusion:
        total = mpz(0)
        for i in range(max(0, r - n), j + 1):
            occupied = r - i
            total += gmpy2.comb(r, i) * gmpy2.fac(occupied) * mpz(int(fmpz.stirling_s2(n, occupied)))
    else:
        # k = r - m runs over 1..r-j-1: the coefficient of k^n is (-1)^(r-k+j) C(r, k) C(r-k-1, j)
        total = mpz(r) ** n + _exclusion_sum(n, r, j)
        if n == 0:  # the term k = 0 (m = r) is 0^0 = 1
            zero = gmpy2.comb(r - 1, j)
            total += -zero if (r + j) & 1 else zero
    return over_prime_power(total, mpz(r) ** n, power_primes(r, n))
