"""Slow brute-force reference implementations, used only by the tests.

They enumerate every vector of the bounded box with ``itertools.product``
(or every microstate of particles on single-particle states), so keep the
inputs small.
"""

from __future__ import annotations

import itertools
import math
from fractions import Fraction


def box(model):
    """Every admissible occupancy vector of *model*, by brute force over the box."""
    tops = [model.balls if b is None else min(b, model.balls) for _, b in model.bounds]
    ranges = [range(a, t + 1) for (a, _), t in zip(model.bounds, tops)]
    for k in itertools.product(*ranges):
        if sum(k) == model.balls:
            yield k


def multinomial(k):
    out = math.factorial(sum(k))
    for v in k:
        out //= math.factorial(v)
    return out


def weight(model, k):
    return multinomial(k) if model.rule.value == "MB" else 1


def counts(model):
    """(configurations, microstates, profiles) by brute force."""
    conf = micro = 0
    profiles = set()
    for k in box(model):
        conf += 1
        micro += weight(model, k)
        profiles.add(tuple(sorted(k)))
    return conf, micro, len(profiles)


def probabilities(model):
    """{k: exact probability} by brute force."""
    ws = {k: weight(model, k) for k in box(model)}
    total = sum(ws.values())
    return {k: Fraction(w, total) for k, w in ws.items()}


def level_microstates(states: int, n: int, rule: str, capacity=None):
    """Yield every microstate of *n* particles on *states* single-particle states.

    A microstate is the tuple of the states the particles occupy: MB every
    assignment (``itertools.product``), BE every multiset
    (``combinations_with_replacement``, at most *capacity* in a state when
    given: Gentile statistics), FD every set (``combinations``).
    """
    index = range(states)
    if rule == "MB":
        yield from itertools.product(index, repeat=n)
    elif rule == "FD":
        yield from itertools.combinations(index, n)
    else:
        for combo in itertools.combinations_with_replacement(index, n):
            if capacity is None or max((combo.count(s) for s in set(combo)), default=0) <= capacity:
                yield combo
