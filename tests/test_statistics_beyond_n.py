"""Counting statistics whose threshold passes the number of balls: answers, not internal errors.

Reference: brute force over the 3^6 equally likely assignments of 6 balls to
3 urns (itertools), and the fact that no urn can hold more than n balls
(common practice).
"""

from __future__ import annotations

import itertools
from collections import Counter
from fractions import Fraction

import pytest
from cli_helpers import run_json


def brute(stat, threshold):
    law = Counter()
    for outcome in itertools.product(range(3), repeat=6):
        loads = [outcome.count(u) for u in range(3)]
        value = sum(1 for k in loads if (k == threshold if stat == "exactly" else k >= threshold))
        law[value] += 1
    return {str(k): str(Fraction(v, 3**6)) for k, v in sorted(law.items())}


@pytest.mark.parametrize("stat", ["exactly", "atleast"])
@pytest.mark.parametrize("threshold", [6, 7, 99999999999999999999])
def test_thresholds_at_and_past_n(stat, threshold):
    # 10^20 - 1 was an OverflowError (J! and a window of J terms), exit 1
    payload = run_json("dist", "-n", "6", "-r", "3", "--stat", f"{stat}:{threshold}")
    assert payload["pmf"] == brute(stat, threshold)
