"""Local worker processes: the same answers as one process, errors and limits carried across.

References: the canonical ensemble at several temperatures computed in one
process by the same library (the processes must not change an answer of the
exact routes); the limits are the project's own contract (DESIGN.md,
"Refused before it breaks").
"""

from __future__ import annotations

from fractions import Fraction

import pytest
from cli_helpers import run

from enumerator.algorithms.levels import canonical, ensembles, make_system
from enumerator.core.errors import TooLarge
from enumerator.core.limits import Cost, active_limits, check, limited
from enumerator.core.workers import available_cores, map_in_processes


def _square(x):
    return x * x


def _memory_limit(_):
    return active_limits().memory


def _refuse(x):
    if x == 3:
        check(Cost(seconds=1e9), "the third piece")
    return x


def test_results_come_back_in_the_order_of_the_pieces():
    assert map_in_processes(_square, range(20), 2) == [x * x for x in range(20)]
    assert map_in_processes(_square, [7], 4) == [49]  # one piece: computed here
    assert available_cores() >= 1


def test_each_worker_plans_against_its_share_of_the_memory_limit():
    with limited(memory=8 * 2**20):
        assert map_in_processes(_memory_limit, [0, 1], 2) == [4 * 2**20, 4 * 2**20]


def test_a_refusal_in_a_worker_is_raised_here_with_its_message():
    with pytest.raises(TooLarge, match="the third piece would take"):
        map_in_processes(_refuse, [1, 2, 3, 4], 2)


@pytest.mark.parametrize("rule, route", [("FD", "recursion"), ("BE", "recursion"), ("FD", "particle-hole")])
def test_canonical_in_processes_equals_one_process(monkeypatch, rule, route):
    # Force the processes even for this small system (the lowest temperature is fast).
    monkeypatch.setattr(ensembles, "PROCESSES_AFTER_SECONDS", 0.0)
    system = make_system(12, preset="trap", rule=rule)
    temperatures = [Fraction(3), Fraction(1, 2), Fraction(2), Fraction(5), Fraction(1)]
    together = canonical(system, temperatures, digits=20, levels=3, route=route)
    apart = canonical(system, temperatures, digits=20, levels=3, route=route, processes=2)
    assert [p.temperature for p in apart] == temperatures
    for a, b in zip(together, apart):
        assert a == b


def test_the_command_line_refuses_zero_processes():
    result = run("levels", "--preset", "trap", "--particles", "5", "--rule", "BE", "--temperatures", "1,2",
                 "--processes", "0")
    assert result.exit_code == 2 and result.stderr.count("\n") == 1 and "--processes" in result.stderr


def test_the_maximum_load_law_shared_among_processes_equals_one_process(monkeypatch):
    # MB 300 balls in 20 urns: every A_m = #(max <= m) by the plan's steps in two processes against one;
    # the suffix sums above n/2 against the closed form r^n - r sum_{s>m} C(n,s)(r-1)^(n-s) (Feller,
    # vol. 1, ch. IV, inclusion-exclusion with one term).
    from math import comb

    from enumerator.algorithms import extremes
    from enumerator.core.workers import processes

    monkeypatch.setattr(extremes, "PROCESSES_AFTER_SECONDS", 0.0)
    with processes(1):
        alone = extremes.mb_max_cumulative(300, 20, 300)
    with processes(2):
        shared = extremes.mb_max_cumulative(300, 20, 300)
    assert alone == shared
    m = 200
    assert shared[m] == 20**300 - 20 * sum(comb(300, s) * 19 ** (300 - s) for s in range(m + 1, 301))


def test_the_process_count_comes_from_a_block_or_the_environment(monkeypatch):
    from enumerator.core.errors import InvalidParameters
    from enumerator.core.workers import ENV_PROCESSES, active_processes, processes

    monkeypatch.setenv(ENV_PROCESSES, "3")
    assert active_processes() == 3
    with processes(1):
        assert active_processes() == 1
    monkeypatch.setenv(ENV_PROCESSES, "none")
    with pytest.raises(InvalidParameters, match=ENV_PROCESSES):
        active_processes()
    result = run("levels", "--preset", "trap", "--particles", "5", "--rule", "BE", "--temperatures", "1,2")
    assert result.exit_code == 2 and result.stderr.count("\n") == 1 and ENV_PROCESSES in result.stderr


def test_the_weighted_maximum_law_shared_among_processes_equals_brute_force(monkeypatch):
    # MB, 6 balls in 6 urns of weights 1,1,2,2,3,3: P(max = m) by brute force over the 6^6 outcomes
    # (each outcome weighs the product of its urns' weights over 12^6), against the law of max by groups
    # with its plan's steps shared among two processes (the planner forced to share).
    import itertools
    from collections import Counter
    from fractions import Fraction

    from cli_helpers import run_json

    from enumerator.algorithms import group_laws

    weights = [1, 1, 2, 2, 3, 3]
    law = Counter()
    for outcome in itertools.product(range(6), repeat=6):
        weight = 1
        for urn in outcome:
            weight *= weights[urn]
        law[max(outcome.count(u) for u in range(6))] += weight
    expected = {str(m): str(Fraction(w, 12**6)) for m, w in sorted(law.items())}
    monkeypatch.setattr(group_laws, "PROCESSES_AFTER_SECONDS", 0.0)
    monkeypatch.setenv("ENUMERATOR_PROCESSES", "2")
    shared = run_json("dist", "-n", "6", "--weights", "2x1,2x2,2x3", "--stat", "max", "--no-cache")
    assert shared["pmf"] == expected


def test_occupation_laws_in_processes_equal_one_process(monkeypatch):
    # The canonical law of the ground occupation of 12 trap bosons at four temperatures: the same numbers when
    # the temperatures go to two processes (the lowest first, here), and each law sums to 1 (common practice).
    import mpmath

    from enumerator.algorithms.levels import occupation_law

    monkeypatch.setattr(ensembles, "PROCESSES_AFTER_SECONDS", 0.0)
    from enumerator.algorithms.levels import occupation as occupation_module

    monkeypatch.setattr(occupation_module, "PROCESSES_AFTER_SECONDS", 0.0)
    system = make_system(12, preset="trap", rule="BE")
    temperatures = [Fraction(1), Fraction(1, 2), Fraction(3), Fraction(2)]
    alone = occupation_law(system, 0, temperatures, digits=20)
    shared = occupation_law(system, 0, temperatures, digits=20, processes=2)
    assert alone == shared
    for law in shared:
        assert abs(mpmath.fsum(law.law) - 1) < 1e-18
