"""The inclusion–exclusion route of the exact law of empty urns (``formulas._exclusion_sum``).

References, outside the project:

* brute force: every one of the ``r^n`` maps of ``n`` labelled balls to ``r``
  urns, counted by its number of empty urns (written here);
* W. Feller, *An Introduction to Probability Theory and Its Applications*,
  vol. 1, 3rd ed., 1968, §IV.2: ``r^n P(E <= j) = r^n + sum_{m>j} (-1)^{m+j}
  C(r, m) C(m-1, j) (r-m)^n``, evaluated here term by term with Python
  integers and ``math.comb``;
* the same book's other form, ``P(E = i) = C(r, i) (r-i)! S(n, r-i) / r^n``
  with Stirling numbers from SymPy.
"""

from __future__ import annotations

import itertools
import math
from fractions import Fraction

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sympy.functions.combinatorial.numbers import stirling

from enumerator import TooLarge
from enumerator.algorithms.asymptotics import formulas
from enumerator.core.limits import limited
from enumerator.core.workers import processes


def _feller_sum(n, r, j):
    """``sum_{m=j+1}^{r} (-1)^{m+j} C(r, m) C(m-1, j) (r-m)^n`` term by term (Feller vol. 1, §IV.2)."""
    return sum((-1) ** (m + j) * math.comb(r, m) * math.comb(m - 1, j) * (r - m) ** n for m in range(j + 1, r + 1))


def _brute_at_most(n, r, j):
    """``P(E <= j)`` by listing the ``r^n`` maps of labelled balls to urns."""
    hits = sum(1 for urns in itertools.product(range(r), repeat=n) if r - len(set(urns)) <= j)
    return Fraction(hits, r**n)


def _forced_exclusion(monkeypatch):
    # (bits, stirling seconds, exclusion seconds): the planner then always takes inclusion-exclusion
    monkeypatch.setattr(formulas, "_empty_routes", lambda n, r, j: (64.0, 1.0, 0.0))


@pytest.mark.parametrize("n,r", [(0, 1), (0, 4), (1, 1), (1, 3), (3, 3), (5, 2), (6, 4), (7, 5), (4, 6), (2, 5)])
def test_exclusion_route_matches_brute_force(monkeypatch, n, r):
    _forced_exclusion(monkeypatch)
    for j in range(0, r + 2):
        assert formulas.empty_urns_at_most(n, r, j) == _brute_at_most(n, r, j), (n, r, j)


@settings(max_examples=150, deadline=None)
@given(n=st.integers(1, 90), r=st.integers(1, 70), data=st.data())
def test_sum_matches_feller_term_by_term(n, r, data):
    # the k = 0 term (m = r) is 0^n = 0 for n >= 1, so both sums have the same terms
    j = data.draw(st.integers(0, r - 1))
    assert formulas._exclusion_sum(n, r, j) == _feller_sum(n, r, j), (n, r, j)


@pytest.mark.parametrize("n,r,j", [
    (300, 150, 0), (300, 150, 1), (300, 150, 20), (300, 150, 148), (300, 150, 149),
    (1000, 500, 67), (1000, 499, 70), (1200, 1500, 400), (800, 64, 3), (2000, 1000, 135),
    (500, 1000, 600), (97, 97, 0), (5000, 2500, 338),
])
def test_sum_matches_feller_medium(n, r, j):
    # sizes where the Horner tree has many levels (K up to 2161: primes to 2161, cofactors to 46)
    assert formulas._exclusion_sum(n, r, j) == _feller_sum(n, r, j), (n, r, j)


@pytest.mark.parametrize("n,r,j", [(40, 20, 0), (40, 20, 3), (60, 25, 24), (120, 60, 8), (200, 90, 12)])
def test_law_by_exclusion_matches_stirling_form(monkeypatch, n, r, j):
    # Feller vol. 1, §IV.2, Stirling numbers of the second kind from SymPy
    _forced_exclusion(monkeypatch)
    expected = Fraction(sum(math.comb(r, i) * math.factorial(r - i) * int(stirling(n, r - i)) for i in range(j + 1)),
                        r**n)
    assert formulas.empty_urns_at_most(n, r, j) == expected


@pytest.mark.parametrize("n,r,j", [(3000, 1500, 203), (4000, 1000, 10), (2500, 3000, 900)])
def test_new_and_earlier_routes_agree(n, r, j):
    # the earlier route (one power per odd base, binomials from gmpy2) and Feller's sum term by term
    new = formulas._exclusion_sum(n, r, j)
    assert new == formulas._exclusion_sum_by_odd_parts(n, r, j)
    assert new == _feller_sum(n, r, j)


def test_every_j_of_one_law_is_a_distribution(monkeypatch):
    # P(E <= j) is nondecreasing in j, 0 below r - n empty urns and 1 at j = r (brute force of the support)
    _forced_exclusion(monkeypatch)
    n, r = 9, 12
    law = [formulas.empty_urns_at_most(n, r, j) for j in range(r + 1)]
    assert all(a <= b for a, b in zip(law, law[1:]))
    assert law[r - n - 1] == 0 and law[r - n] > 0 and law[r] == 1
    # n >= 1 balls leave at most r - 1 urns empty, exactly r - 1 when all share one urn: r / r^n
    assert law[r - 1] == 1 and law[r - 1] - law[r - 2] == Fraction(r, r**n)


def test_cost_estimate_grows_with_the_number_of_prime_bases():
    # one full power per prime P <= r - j - 1: fewer bases, less time; the planner refuses 10^5 at 1 s
    small = formulas.empty_urns_cost(10**5, 5 * 10**4, 4 * 10**4).seconds
    large = formulas.empty_urns_cost(10**5, 5 * 10**4, 6766).seconds
    assert small < large
    with limited(seconds=1.0):
        with pytest.raises(TooLarge, match="the exact law of empty urns"):
            formulas.empty_urns_at_most(10**5, 5 * 10**4, 6766)


def test_planner_takes_stirling_numbers_for_few_empty_urns(monkeypatch):
    # j = 0 at 3000 balls in 1500 urns: one Stirling number S(n, r) from FLINT beats 1499 bases; the
    # answer is r! S(n, r) / r^n (Feller vol. 1, §IV.2; S from SymPy)
    n, r = 3000, 1500
    expected = Fraction(math.factorial(r) * int(stirling(n, r)), r**n)

    def refuse(*args):
        raise AssertionError("inclusion-exclusion taken")

    monkeypatch.setattr(formulas, "_exclusion_sum", refuse)
    assert formulas.empty_urns_at_most(n, r, 0) == expected


def test_planner_takes_inclusion_exclusion_near_the_mean(monkeypatch):
    # j = floor(r e^-2) = 203 empty urns: 204 Stirling numbers against 1296 bases, 210 of them prime
    n, r, j = 3000, 1500, 203
    calls = []
    real = formulas._exclusion_sum
    monkeypatch.setattr(formulas, "_exclusion_sum", lambda *a: calls.append(a) or real(*a))
    value = formulas.empty_urns_at_most(n, r, j)
    assert calls == [(n, r, j)]
    assert value == Fraction(r**n + _feller_sum(n, r, j), r**n)


@pytest.mark.parametrize("processes", [2, 3, 8])
@pytest.mark.parametrize("n,r,j", [(3000, 1500, 203), (2000, 1000, 135), (1200, 1500, 400), (300, 150, 20),
                                   (40, 20, 3), (12, 10, 0), (5, 3, 0)])
def test_several_processes_give_feller_sum(n, r, j, processes):
    # the parts computed by worker processes add up to the sum term by term
    assert formulas._exclusion_sum(n, r, j, processes=processes) == _feller_sum(n, r, j), (n, r, j)


def test_the_cuts_share_the_work():
    # every part after the first has primes to do (the first holds the smooth bases), and the parts cover them all
    terms = formulas._ExclusionSum(30000, 15000, 2030)
    for parts in (2, 3, 8):
        cuts = terms.bounds(parts)
        assert cuts[0] == 0 and cuts[-1] == len(terms.primes) and len(cuts) == parts + 1
        assert cuts[0] <= cuts[1] and all(a < b for a, b in zip(cuts[1:], cuts[2:]))
    assert terms.marks is None  # cutting needs the primes only


def test_processes_as_many_as_allowed_once_the_estimate_is_a_second(monkeypatch):
    # the sum is split once the estimate reaches 1 s, in as many parts as active_processes() allows (at most 8),
    # and the estimate of the route is shared out among them
    calls = []
    real = formulas.map_in_processes
    monkeypatch.setattr(formulas, "map_in_processes", lambda f, parts, w: calls.append((len(parts), w)) or real(f, parts, w))
    n, r, j = 500, 250, 33
    assert formulas._exclusion_sum(n, r, j) == _feller_sum(n, r, j) and calls == []  # 0.01 s estimated
    monkeypatch.setattr(formulas, "_exclusion_seconds", lambda n, r, j: 100.0)
    with processes(1):
        one = formulas.empty_urns_cost(10**4, 5000, 676)
    for allowed, expected in ((1, 1), (2, 2), (3, 3), (64, 8)):
        calls.clear()
        with processes(allowed):
            assert formulas._exclusion_sum(n, r, j) == _feller_sum(n, r, j)
            cost = formulas.empty_urns_cost(10**4, 5000, 676)
        assert calls == ([(expected, expected)] if expected > 1 else [])
        assert cost.seconds <= one.seconds / expected + 0.2 and cost.memory == expected * one.memory


def test_an_error_in_a_part_is_raised_here(monkeypatch):
    # the workers are forked after the patch, so the part they compute raises
    def refuse(self, lo, hi, smooth):
        raise ValueError("part failed")

    monkeypatch.setattr(formulas._ExclusionSum, "part", refuse)
    with pytest.raises(ValueError, match="part failed"):
        formulas._exclusion_sum(2000, 1000, 135, processes=2)


def _complete_homogeneous(d, xs):
    """``h_d(xs)``, the sum of all monomials of degree *d* in *xs*, by adding one variable at a time."""
    row = [1] + [0] * d
    for x in xs:
        for i in range(1, d + 1):
            row[i] += x * row[i - 1]
    return row[d] if d >= 0 else 0


@pytest.mark.parametrize("n,r,j,processes", [(9, 4, 1, 1), (30, 12, 2, 1), (60, 30, 3, 2), (400, 200, 27, 2),
                                             (400, 200, 27, 3), (250, 300, 120, 2)])
def test_law_is_a_complete_homogeneous_polynomial(monkeypatch, n, r, j, processes):
    # the partial fractions of prod 1/(1 - x t) give h_d(x_1..x_m) = sum_i x_i^(d+m-1) / prod_{l != i} (x_i - x_l)
    # (complete homogeneous symmetric polynomials; I. G. Macdonald, Symmetric Functions and Hall Polynomials,
    # 2nd ed., 1995, ch. I §2, from memory); on the nodes 0..K and r Feller's sum becomes
    # r^n P(E <= j) = r!/j! h_{n-K-1}(1, 2, ..., K, r), K = r - j - 1, with h here by its recurrence
    _forced_exclusion(monkeypatch)
    real = formulas._exclusion_sum
    monkeypatch.setattr(formulas, "_exclusion_sum", lambda n, r, j: real(n, r, j, processes=processes))
    K = r - j - 1
    expected = math.factorial(r) // math.factorial(j) * _complete_homogeneous(n - K - 1, [*range(1, K + 1), r])
    assert formulas.empty_urns_at_most(n, r, j) == Fraction(expected, r**n)
