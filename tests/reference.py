"""Slow brute-force reference implementations, used only by the tests.

They enumerate every vector of the bounded box with ``itertools.product``,
so keep the inputs small.
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
