"""The sparse listing iterator (enumerator.algorithms.listing.iter_sparse).

References: brute-force enumeration written in the test (every occupancy
vector within the bounds, in lexicographic order, urn 1 most significant);
for huge ``r``, the first vectors of the listing written out by hand from
that order (common practice: the smallest vector pushes the balls as far
right as they go).
"""

from __future__ import annotations

import itertools

from hypothesis import given, settings
from strategies import small_models

from enumerator.algorithms.listing import iter_sparse, unrank_sparse
from enumerator.core.model import UrnModel


def _brute_force(model):
    """Every admissible occupancy vector, in lexicographic order (written out)."""
    n = model.balls
    ranges = [range(a, (n if b is None else min(b, n)) + 1) for a, b in model.bounds]
    return [v for v in itertools.product(*ranges) if sum(v) == n]


def _dense(sparse, r):
    v = [0] * r
    for urn, k in sparse:
        v[urn - 1] = k
    return tuple(v)


@settings(max_examples=80, deadline=None)
@given(small_models(max_urns=5, max_balls=6, shapes=("free", "uniform", "per-urn", "groups")))
def test_sparse_listing_is_the_brute_force_order(model):
    expected = _brute_force(model)
    got = [_dense(s, model.urns) for s in iter_sparse(model)]
    assert got == expected
    # a range starting inside the listing: the same slice
    if len(expected) > 2:
        assert [_dense(s, model.urns) for s in iter_sparse(model, 1, len(expected) - 1)] == expected[1:-1]


@settings(max_examples=25, deadline=None)
@given(small_models(max_urns=5, max_balls=6, shapes=("per-urn", "groups"), admissible=True))
def test_urns_with_a_lower_bound_are_always_listed(model):
    for s in iter_sparse(model, 0, 5):
        listed = {urn for urn, _ in s}
        bounds = model.bounds
        assert all(urn in listed for urn in range(1, model.urns + 1) if bounds[urn - 1][0] > 0)
        assert all(k > 0 or bounds[urn - 1][0] > 0 for urn, k in s)


def test_huge_number_of_urns_lists_from_the_right():
    r = 2 ** 64
    model = UrnModel(balls=3, urns=r, rule="BE")
    first = list(iter_sparse(model, 0, 4))
    # the lexicographic order written out: (..., 0, 3), (..., 1, 2), (..., 2, 1), (..., 3, 0)
    assert first == [((r, 3),), ((r - 1, 1), (r, 2)), ((r - 1, 2), (r, 1)), ((r - 1, 3),)]
    # the next vector moves one ball to urn r - 2 and pushes the rest right: (..., 1, 0, 2)
    assert list(iter_sparse(model, 4, 5)) == [((r - 2, 1), (r, 2))]


def test_a_range_deep_in_a_huge_listing_matches_unranking_each_rank():
    model = UrnModel(balls=6, groups=[(2 ** 40, 0, 2, 1), (3, 1, None, 1), (2 ** 30, 0, None, 1)], rule="MB")
    start = 10 ** 20
    got = list(iter_sparse(model, start, start + 300))
    assert got == [unrank_sparse(model, i) for i in range(start, start + 300)]
    assert len(got) == 300
