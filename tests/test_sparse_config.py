"""Probabilities of sparse configurations (``{urn: count}``, ``prob --config "URN:COUNT ..."``).

References: the multinomial law, ``P = n!/prod k_i! * r^-n`` for equal
urns under MB (Feller, vol. 1, §II.5), closed form at ``r = 2^64``; brute
force over every assignment of the balls for small weighted and bounded
models (``tests.reference``-style enumeration written out here); and the
dense vector of the same configuration, which must give the same answer.
"""

from __future__ import annotations

import itertools
import random
from fractions import Fraction
from math import factorial, prod

import pytest
from cli_helpers import run, run_json

from enumerator.core.errors import InvalidConfiguration
from enumerator.facade import Occupancy


def brute_mb(weights, bounds, n, target):
    """P(occupancy == target) for n balls thrown with probabilities ∝ weights, conditioned on bounds."""
    total = hit = Fraction(0)
    for balls in itertools.product(range(len(weights)), repeat=n):
        counts = tuple(balls.count(i) for i in range(len(weights)))
        if all(lo <= k and (hi is None or k <= hi) for k, (lo, hi) in zip(counts, bounds)):
            w = prod(Fraction(weights[i]) for i in balls)
            total += w
            if counts == target:
                hit += w
    return hit / total


def test_sixty_four_bit_buckets_closed_form():
    model = Occupancy(balls=3, urns=2**64)
    urns = {241657929493527028: 1, 7911831589969107176: 1, 2**64: 1}
    assert model.probability(urns) == Fraction(factorial(3), 2 ** (64 * 3))
    assert model.probability({17: 3}) == Fraction(1, 2 ** (64 * 3))


def test_sparse_equals_dense_and_brute_force():
    rng = random.Random(5)
    for _ in range(60):
        r = rng.randint(1, 4)
        n = rng.randint(0, 4)
        weights = [rng.choice([1, 2, Fraction(1, 3)]) for _ in range(r)]
        bounds = [(rng.choice([0, 0, 1]), rng.choice([None, 1, 2, 3])) for _ in range(r)]
        bounds = [(lo, hi if hi is None or hi >= lo else lo) for lo, hi in bounds]
        try:
            model = Occupancy(balls=n, bounds=bounds, weights=weights, rule="MB")
            dense_all = [c for c in itertools.product(range(n + 1), repeat=r) if sum(c) == n]
            if not any(all(lo <= k and (hi is None or k <= hi) for k, (lo, hi) in zip(c, bounds))
                       for c in dense_all):
                continue
        except Exception:
            continue
        for config in dense_all:
            sparse = {i + 1: k for i, k in enumerate(config) if k}
            expected = brute_mb(weights, bounds, n, config)
            assert model.probability(sparse) == model.probability(config) == expected


@pytest.mark.parametrize("rule", ["BE", "FD"])
def test_sparse_equals_dense_for_identical_particles(rule):
    model = Occupancy(balls=3, urns=5, rule=rule, weights=[1, 2, 3, 1, 2])
    for config in itertools.product(range(4), repeat=5):
        if sum(config) == 3:
            sparse = {i + 1: k for i, k in enumerate(config) if k}
            assert model.probability(sparse) == model.probability(config)


@pytest.mark.parametrize("bad", [{0: 3}, {6: 3}, {1: -1, 2: 4}, {1: 2}, {"a": 3}])
def test_malformed_sparse_configurations(bad):
    with pytest.raises(InvalidConfiguration):
        Occupancy(balls=3, urns=5).probability(bad)


def test_cli_round_trip_of_a_sparse_sample():
    draw = run("sample", "-n", "3", "-r", "2^40", "--size", "1", "--seed", "4")
    assert draw.exit_code == 0
    pairs = draw.stdout.splitlines()[1].split(",", 1)[1]
    payload = run_json("prob", "-n", "3", "-r", "2^40", "--config", pairs)
    counts = [int(p.split(":")[1]) for p in pairs.split()]
    expected = Fraction(factorial(3), prod(factorial(k) for k in counts) * 2 ** 120)
    assert Fraction(payload["probability"]) == expected and payload["config"] == pairs
    repeated = run("prob", "-n", "3", "-r", "5", "--config", "1:1 1:2")
    assert repeated.exit_code == 2 and "twice" in repeated.stderr


def test_weighted_generating_row_is_labelled_as_count_labels_it():
    # with weights a BE row is the total weight of the vectors, which count calls "microstates"
    # (here sum over vectors of 2 balls of prod w_i^k_i, by brute force)
    weights = [1, 2, Fraction(1, 2)]
    payload = run_json("gf", "-n", "2", "--weights", "1,2,1/2", "--rule", "BE")
    total = sum(prod(Fraction(w) ** k for w, k in zip(weights, c))
                for c in itertools.product(range(3), repeat=3) if sum(c) == 2)
    assert payload["counts"] == "microstates" and Fraction(payload["coefficients"][2]) == total
    assert run_json("count", "-n", "2", "--weights", "1,2,1/2", "--rule", "BE")["microstates"] == str(total)
