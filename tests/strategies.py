"""Shared hypothesis strategies: small problems every test module draws from.

One place describes what a "small model" is, so every brute-force comparison
covers the same shapes: uniform urns, per-urn bounds, run-length groups and
weights, under every rule.  Sizes stay small because the references they are
compared with enumerate every occupancy vector.
"""

from __future__ import annotations

from fractions import Fraction

from hypothesis import strategies as st

from enumerator import Occupancy

RULES = ("MB", "BE", "FD")


def _bound(draw, rule: str, lows: int, span: int):
    """One (lower, upper) pair valid for *rule* (FD: at most one ball per urn)."""
    if rule == "FD":
        a = draw(st.integers(0, 1))
        return a, draw(st.sampled_from([None, 1]))
    a = draw(st.integers(0, lows))
    return a, draw(st.one_of(st.none(), st.integers(a, a + span)))


@st.composite
def small_models(draw, max_urns: int = 4, max_balls: int = 7, rules=RULES, shapes=("free", "uniform", "per-urn"),
                 lows: int = 2, span: int = 4, admissible: bool = False):
    """Draw an :class:`~enumerator.Occupancy` small enough to enumerate.

    Parameters
    ----------
    max_urns, max_balls : int
        Largest ``r`` and ``n``.
    rules : sequence of str
        Rules to draw from.
    shapes : sequence of str
        ``"free"`` (no bounds), ``"uniform"`` (one capacity and minimum),
        ``"per-urn"`` (a bound per urn), ``"groups"`` (run-length groups of
        urns), ``"weighted"`` (per-urn rational weights, free or bounded).
    lows, span : int
        Largest lower bound, and largest gap between a lower and an upper bound.
    admissible : bool
        Redraw until the model has at least one configuration.
    """
    rule = draw(st.sampled_from(list(rules)))
    n = draw(st.integers(0, max_balls))
    shape = draw(st.sampled_from(list(shapes)))
    if shape == "free":
        model = Occupancy(balls=n, urns=draw(st.integers(1, max_urns)), rule=rule)
    elif shape == "uniform":
        a, b = _bound(draw, rule, lows, span)
        model = Occupancy(balls=n, urns=draw(st.integers(1, max_urns)), rule=rule, minimum=a, capacity=b)
    elif shape == "per-urn":
        r = draw(st.integers(1, max_urns))
        model = Occupancy(balls=n, bounds=[_bound(draw, rule, lows, span) for _ in range(r)], rule=rule)
    elif shape == "groups":
        runs, total = [], 0
        while total < 1 or (total < max_urns and draw(st.booleans())):
            count = draw(st.integers(1, max_urns - total))
            runs.append((count, *_bound(draw, rule, lows, span), draw(weights())))
            total += count
        model = Occupancy(balls=n, groups=runs, rule=rule)
    elif shape == "weighted":
        r = draw(st.integers(1, max_urns))
        bounds = [_bound(draw, rule, lows, span) for _ in range(r)] if draw(st.booleans()) else None
        model = Occupancy(balls=n, urns=None if bounds else r, bounds=bounds, rule=rule,
                          weights=[draw(weights()) for _ in range(r)])
    else:  # pragma: no cover - a typo in a test's shapes
        raise ValueError(f"unknown shape {shape!r}")
    if admissible:
        total_low = sum(g.count * g.lower for g in model.groups)
        top = sum(g.count * (g.upper if g.upper is not None else n) for g in model.groups)
        if not (total_low <= n <= top):
            return draw(small_models(max_urns, max_balls, rules, shapes, lows, span, admissible))
    return model


def weights():
    """A positive exact weight: small integers and simple fractions (1 most often)."""
    return st.one_of(st.just(Fraction(1)), st.fractions(min_value=Fraction(1, 3), max_value=5, max_denominator=3)
                     .filter(lambda w: w > 0))
