"""Tests of enumerator.algorithms.listing: lexicographic listing, ranges, blocks, rank and unrank.

The slow reference here is brute force: every vector of the bounded box from
``itertools.product``, kept when it sums to ``n``, then sorted.  Inputs stay
small because of it.  Each test that depends on the listing's internal layout
runs under three table budgets: none (the last two urns are ranges), tiny
(a shallow suffix table and a long prefix walk) and the default.
"""

from __future__ import annotations

import collections
import contextlib
import itertools
import math
import random
import tracemalloc

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from strategies import small_models as shared_small_models

import enumerator.algorithms.listing as listing
import enumerator.algorithms.listing_tables as listing_tables
from enumerator import InvalidConfiguration, InvalidParameters, Occupancy, TooLarge


# -- slow references --------------------------------------------------------
def brute(model):
    """All admissible vectors of *model*, sorted, by brute force over the box."""
    n = model.balls
    ranges = [range(a, (n if b is None else min(b, n)) + 1) for a, b in model.bounds]
    return sorted(k for k in itertools.product(*ranges) if sum(k) == n)


def as_rows(blocks):
    return [tuple(int(v) for v in row) for block in blocks for row in block.tolist()]


# -- model strategies ---------------------------------------------------------
def models(max_urns=5, max_balls=10):
    """Small uniform or per-urn models of every rule (the shared strategy, at this module's sizes)."""
    return shared_small_models(max_urns=max_urns, max_balls=max_balls, shapes=("uniform", "per-urn"), lows=3, span=4)
BUDGETS = {"ranges": 0, "tiny": 40, "default": None}


@contextlib.contextmanager
def tables(budget):
    """Run under one table budget; models made inside (see ``fresh``) build fresh tables."""
    with pytest.MonkeyPatch.context() as patch:
        value = BUDGETS[budget]
        if value is not None:
            patch.setattr(listing_tables, "TUPLE_TABLE_BUDGET", value)
            patch.setattr(listing_tables, "BLOCK_TABLE_BUDGET", value)
            patch.setattr(listing_tables, "_SLICE_COPIES", 2)  # exercise the gather path too
        yield


each_budget = pytest.mark.parametrize("budget", sorted(BUDGETS))


def fresh(model):
    """A new model equal to *model*, with an empty cache."""
    return Occupancy(balls=model.balls, bounds=model.bounds, rule=model.rule)


# -- the listing against brute force ------------------------------------------
@each_budget
@settings(max_examples=60, deadline=None)
@given(model=models())
def test_listing_equals_brute_force(budget, model):
    with tables(budget):
        model = fresh(model)
        expected = brute(model)
        got = list(model.iter_configurations())
        assert got == expected
        assert all(type(v) is int for k in got for v in k)
        # the lead's counting module is an independent method for the count
        assert len(got) == model.configurations()


@each_budget
@settings(max_examples=40, deadline=None)
@given(model=models(), size=st.integers(1, 7))
def test_blocks_equal_tuples(budget, model, size):
    with tables(budget):
        model = fresh(model)
        blocks = list(model.iter_blocks(size))
        assert as_rows(blocks) == brute(model)
        for block in blocks[:-1]:
            assert block.shape == (size, model.urns)
        for block in blocks:
            assert block.dtype == listing.block_dtype(model)
            assert 1 <= len(block) <= size


@each_budget
@settings(max_examples=40, deadline=None)
@given(model=models(), data=st.data())
def test_rank_ranges_concatenate(budget, model, data):
    with tables(budget):
        model = fresh(model)
        expected = brute(model)
        count = len(expected)
        a = data.draw(st.integers(0, count + 1))
        b = data.draw(st.integers(a, count + 2))
        pieces = (
            list(model.iter_configurations(0, a))
            + list(model.iter_configurations(a, b))
            + list(model.iter_configurations(b))
        )
        assert pieces == expected
        assert list(model.iter_configurations(a, b)) == expected[a:b]
        size = data.draw(st.integers(1, 5))
        assert as_rows(model.iter_blocks(size, a, b)) == expected[a:b]
        assert as_rows(model.iter_blocks(size, b)) == expected[b:]


@settings(max_examples=40, deadline=None)
@given(model=models())
def test_rank_and_unrank_are_inverse_bijections(model):
    expected = brute(model)
    for i, k in enumerate(expected):
        assert model.rank(k) == i
        assert model.unrank(i) == k


@pytest.mark.parametrize(
    "model",
    [
        Occupancy(balls=9, bounds=[(1, None), (0, None), (2, None), (0, None)], rule="BE"),  # closed form
        Occupancy(balls=4, bounds=[(0, 1), (1, 1), (0, 1), (0, 0), (0, 1), (1, 2)], rule="BE"),  # caps 0/1
        Occupancy(balls=4, urns=7, rule="FD"),
        Occupancy(balls=10, bounds=[(0, 2), (1, None), (0, 4), (0, 0), (2, 5)], rule="MB"),  # table
    ],
    ids=["stars", "binary", "FD", "table"],
)
def test_every_ranking_method_matches_brute_force(model):
    expected = brute(model)
    assert expected
    assert [model.rank(k) for k in expected] == list(range(len(expected)))
    assert [model.unrank(i) for i in range(len(expected))] == expected
    for start in range(len(expected) + 1):
        assert list(model.iter_configurations(start)) == expected[start:]


def test_small_order_example():
    # the order stated in the design: n=2, r=2 lists (0,2), (1,1), (2,0)
    model = Occupancy(balls=2, urns=2, rule="BE")
    assert list(model.iter_configurations()) == [(0, 2), (1, 1), (2, 0)]
    assert [model.rank(k) for k in [(0, 2), (1, 1), (2, 0)]] == [0, 1, 2]


@pytest.mark.parametrize(
    "model",
    [
        Occupancy(balls=12, urns=5, rule="BE"),
        Occupancy(balls=12, urns=7, rule="BE", capacity=3),
        Occupancy(balls=11, bounds=[(0, None), (1, 3), (0, 0), (2, None), (0, 5), (0, 2), (1, 4)], rule="MB"),
        Occupancy(balls=6, urns=12, rule="FD"),
    ],
    ids=["unbounded", "capacity", "per-urn", "FD"],
)
@each_budget
def test_order_is_strictly_lexicographic(budget, model):
    with tables(budget):
        model = fresh(model)
        got = list(model.iter_configurations())
        assert all(a < b for a, b in zip(got, got[1:]))
        assert got == brute(model)
        assert len(got) == model.configurations()
        assert as_rows(model.iter_blocks(97)) == got


@each_budget
def test_ranges_of_a_bigger_listing_concatenate(budget):
    with tables(budget):
        model = fresh(Occupancy(balls=14, urns=7, rule="BE", capacity=4))
        whole = list(model.iter_configurations())
        rng = random.Random(7)
        cuts = sorted(rng.sample(range(1, len(whole)), 9))
        edges = [0] + cuts + [None]
        parts = []
        for a, b in zip(edges, edges[1:]):
            parts += list(model.iter_configurations(a, b))
        assert parts == whole
        blocks = []
        for a, b in zip(edges, edges[1:]):
            blocks += as_rows(model.iter_blocks(rng.randint(1, 300), a, b))
        assert blocks == whole


# -- edge cases ---------------------------------------------------------------
def test_zero_configuration_models_list_nothing():
    empty = [
        Occupancy(balls=5, urns=2, rule="BE", capacity=2),  # 5 > 2 * 2
        Occupancy(balls=1, urns=3, rule="BE", minimum=1),  # 1 < 3 * 1
        Occupancy(balls=3, urns=2, rule="FD"),
        Occupancy(balls=4, bounds=[(0, 1), (4, 4), (1, None)], rule="MB"),  # 4 + 1 > 4
    ]
    for model in empty:
        assert brute(model) == []
        assert list(model.iter_configurations()) == []
        assert list(model.iter_blocks(4)) == []
        assert list(model.iter_configurations(0, 10)) == []
        assert list(model.iter_configurations(3)) == []
        assert model.configurations() == 0


def test_forced_bounds_leave_one_configuration():
    model = Occupancy(balls=4, bounds=[(0, 1), (3, 3), (1, None)], rule="MB")
    assert list(model.iter_configurations()) == [(0, 3, 1)] == brute(model)
    assert model.rank((0, 3, 1)) == 0 and model.unrank(0) == (0, 3, 1)


def test_no_balls_gives_the_vector_of_lower_bounds():
    assert list(Occupancy(balls=0, urns=4, rule="BE").iter_configurations()) == [(0, 0, 0, 0)]
    assert list(Occupancy(balls=0, urns=1, rule="MB").iter_configurations()) == [(0,)]
    assert as_rows(Occupancy(balls=0, urns=3, rule="FD").iter_blocks(5)) == [(0, 0, 0)]
    # when the minimums use every ball, the minimums are the only configuration
    model = Occupancy(balls=3, bounds=[(1, None), (0, 2), (2, 4)], rule="BE")
    assert list(model.iter_configurations()) == [(1, 0, 2)] == brute(model)
    assert Occupancy(balls=6, urns=3, rule="BE", minimum=2).unrank(0) == (2, 2, 2)


def test_single_urn():
    model = Occupancy(balls=7, urns=1, rule="BE")
    assert list(model.iter_configurations()) == [(7,)]
    assert model.rank((7,)) == 0 and model.unrank(0) == (7,)
    assert list(Occupancy(balls=7, urns=1, rule="BE", capacity=6).iter_configurations()) == []


def test_start_past_the_end_is_clamped_and_stop_before_start_is_empty():
    model = Occupancy(balls=4, urns=3, rule="BE")  # 15 configurations
    whole = list(model.iter_configurations())
    assert len(whole) == math.comb(6, 2)  # stars and bars, common practice
    assert list(model.iter_configurations(15)) == []
    assert list(model.iter_configurations(99, 200)) == []
    assert list(model.iter_configurations(10, 1000)) == whole[10:]
    assert list(model.iter_configurations(5, 5)) == []
    assert list(model.iter_configurations(6, 2)) == []
    assert list(model.iter_blocks(4, 14, 99)) and as_rows(model.iter_blocks(4, 14, 99)) == whole[14:]
    assert list(model.iter_blocks(4, 15)) == []


def test_listed_tuples_survive_being_kept():
    # tuples may be recycled by CPython only when the consumer drops them
    model = Occupancy(balls=9, urns=5, rule="BE")
    kept = []
    for k in model.iter_configurations():
        kept.append(k)
    assert kept == brute(model)
    assert len(set(kept)) == len(kept)


def test_recycled_blocks_never_overwrite_what_the_consumer_holds():
    model = Occupancy(balls=9, urns=6, rule="BE")
    expected = brute(model)
    size = 37
    # dropping each block before the next: contents copied out as they come
    seen = []
    for block in model.iter_blocks(size):
        seen += [tuple(row) for row in block.tolist()]
    assert seen == expected
    # holding only a view (the first row) of each block
    firsts = [block[0] for block in model.iter_blocks(size)]
    assert [tuple(int(v) for v in row) for row in firsts] == expected[::size]
    # holding every block
    held = list(model.iter_blocks(size))
    assert len({id(b) for b in held}) == len(held)
    assert as_rows(held) == expected


def test_block_dtype_is_the_smallest_unsigned_type_holding_n():
    assert listing.block_dtype(Occupancy(balls=255, urns=2, rule="BE")) == np.uint8
    assert listing.block_dtype(Occupancy(balls=256, urns=2, rule="BE")) == np.uint16
    assert listing.block_dtype(Occupancy(balls=2**16, urns=2, rule="BE")) == np.uint32
    assert listing.block_dtype(Occupancy(balls=2**32, urns=2, rule="BE")) == np.uint64
    assert listing.block_dtype(Occupancy(balls=2**64, urns=2, rule="BE")).kind == "O"
    block = next(Occupancy(balls=300, urns=3, rule="BE").iter_blocks(10))
    assert block.dtype == np.uint16 and block.shape == (10, 3)


def test_huge_ball_counts_list_exactly():
    n = 2**70
    model = Occupancy(balls=n, urns=3, rule="BE")
    count = math.comb(n + 2, 2)  # stars and bars, common practice
    assert list(model.iter_configurations(0, 3)) == [(0, 0, n), (0, 1, n - 1), (0, 2, n - 2)]
    assert list(model.iter_configurations(count - 2)) == [(n - 1, 1, 0), (n, 0, 0)]
    assert as_rows(model.iter_blocks(5, count - 2)) == [(n - 1, 1, 0), (n, 0, 0)]
    middle = count // 2
    a, b = list(model.iter_configurations(middle, middle + 2))
    assert model.rank(a) == middle and model.rank(b) == middle + 1 and a < b
    assert model.unrank(middle) == a


@pytest.mark.parametrize(
    "bounds",
    [
        [(0, None)] * 3 + [(2**63 + 1, None)],  # uint64 blocks, a lower bound above 2^63 in the table
        [(2**63 + 1, None)] + [(0, None)] * 3,
        [(0, 3), (0, 3), (2**70, None), (0, None)],  # object blocks
    ],
)
def test_huge_lower_bounds_with_few_free_balls(bounds):
    n = sum(a for a, _ in bounds) + 6
    model = Occupancy(balls=n, bounds=bounds, rule="BE")
    # brute force over the free part only: each urn holds a + 0..6
    boxes = [range(a, a + 7) if b is None else range(a, min(b, a + 6) + 1) for a, b in bounds]
    expected = sorted(k for k in itertools.product(*boxes) if sum(k) == n)
    assert list(model.iter_configurations()) == expected
    assert as_rows(model.iter_blocks(7)) == expected
    assert [model.rank(k) for k in expected] == list(range(len(expected)))
    assert model.unrank(len(expected) - 1) == expected[-1]
    assert list(model.iter_configurations(5, 9)) == expected[5:9]


# -- rank and unrank at scale ---------------------------------------------------
def test_unrank_near_the_end_of_a_count_of_hundreds_of_digits():
    n, r = 300, 100
    model = Occupancy(balls=n, urns=r, rule="BE")
    count = math.comb(n + r - 1, r - 1)  # stars and bars, common practice
    assert len(str(count)) > 80
    assert model.configurations() == count
    assert model.unrank(count - 1) == (n,) + (0,) * (r - 1)
    assert model.unrank(0) == (0,) * (r - 1) + (n,)
    assert model.rank((n,) + (0,) * (r - 1)) == count - 1
    assert model.unrank(count - 2) == (n - 1, 1) + (0,) * (r - 2)
    rng = random.Random(2024)
    for _ in range(30):
        # a uniform random composition: bars among n + r - 1 places
        bars = sorted(rng.sample(range(n + r - 1), r - 1))
        k = tuple(b - a - 1 for a, b in zip([-1] + bars, bars + [n + r - 1]))
        assert sum(k) == n
        i = model.rank(k)
        assert 0 <= i < count
        assert model.unrank(i) == k
    for i in [count - 1 - d for d in range(0, 40, 7)] + [rng.randrange(count) for _ in range(10)]:
        assert model.rank(model.unrank(i)) == i
    tail = list(model.iter_configurations(count - 5))
    assert len(tail) == 5 and tail[-1] == (n,) + (0,) * (r - 1)
    assert all(a < b for a, b in zip(tail, tail[1:]))
    assert tail == [model.unrank(i) for i in range(count - 5, count)]


def test_rank_table_for_bounded_urns_agrees_with_the_count():
    n, r, c = 300, 100, 5
    model = Occupancy(balls=n, urns=r, rule="BE", capacity=c)
    count = model.configurations()  # inclusion-exclusion, the lead's counting module
    last = (c,) * (n // c) + (0,) * (r - n // c)
    first = (0,) * (r - n // c) + (c,) * (n // c)
    assert model.rank(first) == 0 and model.unrank(0) == first
    assert model.rank(last) == count - 1 and model.unrank(count - 1) == last
    rng = random.Random(5)
    for i in [rng.randrange(count) for _ in range(20)] + [count - 2, count - 3]:
        k = model.unrank(i)
        assert sum(k) == n and max(k) <= c
        assert model.rank(k) == i
    two = list(model.iter_configurations(count - 2))
    assert two == [model.unrank(count - 2), last]


def test_fermi_dirac_ranks_are_binomial():
    n, r = 50, 100
    model = Occupancy(balls=n, urns=r, rule="FD")
    count = math.comb(r, n)  # FD count C(r, n), common practice
    assert model.unrank(count - 1) == (1,) * n + (0,) * (r - n)
    assert model.unrank(0) == (0,) * (r - n) + (1,) * n
    rng = random.Random(3)
    for _ in range(20):
        ones = set(rng.sample(range(r), n))
        k = tuple(int(i in ones) for i in range(r))
        assert model.unrank(model.rank(k)) == k


def test_listing_counts_match_outside_sequences():
    # OEIS A002426, central trinomial coefficients: r urns of capacity 2 holding r balls
    # (values from memory: 1, 1, 3, 7, 19, 51, 141, 393, 1107, 3139)
    central = [1, 1, 3, 7, 19, 51, 141, 393, 1107, 3139]
    for r in range(1, 10):
        model = Occupancy(balls=r, urns=r, rule="BE", capacity=2)
        assert sum(1 for _ in model.iter_configurations()) == central[r]
    # OEIS A000217, triangular numbers: 3 urns, n - 1 balls gives C(n + 1, 2)
    # (values from memory: 1, 3, 6, 10, 15, 21, 28, 36, 45, 55)
    triangular = [1, 3, 6, 10, 15, 21, 28, 36, 45, 55]
    for n, expected in enumerate(triangular):
        assert sum(len(b) for b in Occupancy(balls=n, urns=3, rule="BE").iter_blocks(4)) == expected
    # compositions of n into r positive parts: C(n - 1, r - 1) (common practice)
    for n, r in [(9, 4), (12, 5), (7, 7)]:
        model = Occupancy(balls=n, urns=r, rule="BE", minimum=1)
        assert sum(1 for _ in model.iter_configurations()) == math.comb(n - 1, r - 1)


def test_listing_of_n16_r10_has_the_stars_and_bars_count():
    # the benchmark model: as many configurations as combinations_with_replacement(range(10), 16)
    model = Occupancy(balls=16, urns=10, rule="BE")
    expected = sum(1 for _ in itertools.combinations_with_replacement(range(10), 16))
    assert expected == math.comb(25, 9)  # stars and bars, common practice
    deque = collections.deque(model.iter_configurations(), maxlen=1)
    assert deque[0] == (16,) + (0,) * 9
    assert sum(len(b) for b in model.iter_blocks(1 << 14)) == expected
    blocks = list(model.iter_blocks(1 << 16, 1_000_000, 1_000_050))
    assert as_rows(blocks) == list(model.iter_configurations(1_000_000, 1_000_050))
    assert as_rows(blocks)[0] == model.unrank(1_000_000)


def test_block_listing_memory_is_independent_of_the_count():
    model = Occupancy(balls=16, urns=11, rule="BE")  # 5,311,735 configurations
    tracemalloc.start()
    try:
        seen = 0
        for block in model.iter_blocks(1 << 14):
            seen += len(block)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert seen == math.comb(26, 10)  # stars and bars, common practice
    # the suffix table (BLOCK_TABLE_BUDGET) plus a few blocks, far below the 53 MB of the listing
    assert peak < listing_tables.BLOCK_TABLE_BUDGET + 8 * 2**20


def test_tables_go_when_the_memo_drops_them_without_the_cyclic_collector():
    # the cache must hold no reference cycle, or megabytes of tables would
    # outlive their memo entry wherever the garbage collector is off
    import gc
    import weakref

    enabled = gc.isenabled()
    gc.disable()
    try:
        model = Occupancy(balls=16, urns=10, rule="BE", capacity=9)
        collections.deque(model.iter_blocks(1000), maxlen=0)
        collections.deque(model.iter_configurations(5), maxlen=0)
        slots = listing_tables.MEMO.slots(model)
        cached = [v[1] if isinstance(v, tuple) else v for k, v in slots.items() if k.startswith("listing.")]
        cached += [t.rows for t in cached if isinstance(getattr(t, "rows", None), np.ndarray)]
        assert len(cached) >= 4  # plan, tuple and block tables (maybe shared), ranker, a table's rows
        held = [weakref.ref(v) for v in cached if v is not None]
        del model, cached, slots
        listing_tables.MEMO.clear()
        assert all(ref() is None for ref in held)
    finally:
        if enabled:
            gc.enable()


# -- errors -----------------------------------------------------------------------
def test_rank_rejects_malformed_and_inadmissible_configurations():
    model = Occupancy(balls=4, urns=3, rule="BE", capacity=2)
    with pytest.raises(InvalidConfiguration, match="3 urns"):
        model.rank((2, 2))
    with pytest.raises(InvalidConfiguration, match="sums to 3"):
        model.rank((1, 1, 1))
    with pytest.raises(InvalidConfiguration, match="cannot be negative"):
        model.rank((5, -1, 0))
    with pytest.raises(InvalidConfiguration, match="urn 1 holds at most 2"):
        model.rank((3, 1, 0))
    with pytest.raises(InvalidConfiguration, match="not the string"):
        model.rank("220")
    with pytest.raises(InvalidConfiguration, match="whole numbers"):
        model.rank((2.0, 2, 0))
    low = Occupancy(balls=4, urns=2, rule="BE", minimum=1)
    with pytest.raises(InvalidConfiguration, match="urn 2 must hold at least 1"):
        low.rank((4, 0))
    with pytest.raises(InvalidConfiguration, match="at most 1"):
        Occupancy(balls=2, urns=3, rule="FD").rank((2, 0, 0))


def test_unrank_out_of_range_names_the_valid_range():
    model = Occupancy(balls=4, urns=3, rule="BE")  # ranks 0..14
    with pytest.raises(InvalidParameters, match=r"valid ranks are 0 to 14"):
        model.unrank(15)
    with pytest.raises(InvalidParameters, match=r"valid ranks are 0 to 14"):
        model.unrank(-1)
    with pytest.raises(InvalidParameters, match="whole number"):
        model.unrank(1.0)
    with pytest.raises(InvalidParameters, match="boolean"):
        model.unrank(True)
    with pytest.raises(InvalidParameters, match="admits no configuration"):
        Occupancy(balls=5, urns=2, rule="BE", capacity=2).unrank(0)


def test_bad_sizes_and_ranges_are_rejected_at_the_call():
    model = Occupancy(balls=4, urns=3, rule="BE")
    for size in (0, -3):
        with pytest.raises(InvalidParameters, match="block size must be at least 1"):
            model.iter_blocks(size)
    with pytest.raises(InvalidParameters, match="block size must be a whole number"):
        model.iter_blocks(2.5)
    with pytest.raises(InvalidParameters, match="start must be at least 0"):
        model.iter_configurations(-1)
    with pytest.raises(InvalidParameters, match="stop must be at least 0"):
        model.iter_configurations(0, -2)
    with pytest.raises(InvalidParameters, match="start must be a whole number"):
        model.iter_configurations("3")
    with pytest.raises(InvalidParameters, match="stop must be an integer, not a boolean"):
        model.iter_blocks(3, 0, True)


def test_a_rank_table_too_large_says_what_to_reduce():
    model = Occupancy(balls=10**5, urns=10**4, rule="BE", capacity=30)
    with pytest.raises(TooLarge, match="reduce the number of balls or urns"):
        model.unrank(1)
    with pytest.raises(TooLarge, match="RANK_TABLE_LIMIT"):
        model.rank((10,) * 10**4)
    # listing from the start needs no rank table, so it still streams
    first = next(model.iter_configurations())
    assert sum(first) == 10**5 and max(first) <= 30 and first[0] == 0


# ---------------------------------------------------------------------------
# sparse rank/unrank by groups, and listings refused before they start
# ---------------------------------------------------------------------------

from enumerator.algorithms.sparse_ranking import SparseRanker  # noqa: E402
from enumerator.core.limits import limited  # noqa: E402
from enumerator.core.model import UrnModel  # noqa: E402


def sparse_of(k):
    return tuple((i, v) for i, v in enumerate(k, start=1) if v)


GROUPED = [
    UrnModel(balls=4, groups=[(2, 0, None, 1), (1, 1, 2, 1), (3, 0, 1, 2)], rule="BE"),
    UrnModel(balls=5, urns=4, rule="BE", capacity=2),
    UrnModel(balls=3, urns=5, rule="FD"),
    UrnModel(balls=6, groups=[(2, 1, 3, 1), (2, 0, 2, 1)], rule="MB"),
    UrnModel(balls=0, urns=3, rule="BE"),
    UrnModel(balls=5, groups=[(1, 0, 0, 1), (3, 0, None, 1), (1, 2, 2, 1)], rule="BE"),
]


@pytest.mark.parametrize("model", GROUPED, ids=repr)
def test_sparse_rank_and_unrank_match_brute_force(model):
    vectors = brute(model)
    for index, k in enumerate(vectors):
        listed = dict(sparse_of(k))
        for g, group in enumerate(model.groups):  # urns with a positive minimum are always listed
            first = sum(h.count for h in model.groups[:g]) + 1
            if group.lower:
                for u in range(first, first + group.count):
                    listed.setdefault(u, k[u - 1])
        expected = tuple(sorted(listed.items()))
        assert listing.unrank_sparse(model, index) == expected
        assert listing.rank_sparse(model, expected) == index
        assert listing.rank_sparse(model, dict(expected)) == index
    with pytest.raises(InvalidParameters, match="out of range"):
        listing.unrank_sparse(model, len(vectors))


def test_sparse_rank_is_the_dense_rank_of_a_model_given_per_urn():
    per_urn = Occupancy(balls=5, bounds=[(0, 2), (0, 2), (0, 2), (1, None), (0, 1), (0, 1)], rule="BE")
    grouped = UrnModel(balls=5, groups=[(3, 0, 2, 1), (1, 1, None, 1), (2, 0, 1, 1)], rule="BE")
    for index, k in enumerate(per_urn.iter_configurations()):
        assert per_urn.rank(k) == index
        assert listing.rank_sparse(grouped, {u: v for u, v in enumerate(k, start=1) if v}) == index
        assert dict(listing.unrank_sparse(grouped, index)) == {u: v for u, v in enumerate(k, start=1) if v}


def test_sparse_rank_and_unrank_at_2_to_the_40_urns():
    # BE, n = 3, r = 2^40: C(r + 2, 3) vectors (stars and bars, Feller vol. 1 §II.5).
    r = 2**40
    model = UrnModel(balls=3, urns=r, rule="BE")
    count = math.comb(r + 2, 3)
    assert listing.unrank_sparse(model, 0) == ((r, 3),)  # lexicographically first: all in the last urn
    assert listing.unrank_sparse(model, count - 1) == ((1, 3),)
    with pytest.raises(InvalidParameters, match="out of range"):
        listing.unrank_sparse(model, count)
    # rank of (0, ..., 0, 1, 2) is 1 in the order (0,..,0,3) < (0,..,1,2) < ...
    assert listing.rank_sparse(model, {r - 1: 1, r: 2}) == 1
    rng = random.Random(40)
    previous = None
    for index in sorted(rng.randrange(count) for _ in range(20)):
        config = listing.unrank_sparse(model, index)
        assert listing.rank_sparse(model, config) == index
        assert sum(k for _, k in config) == 3
        # lexicographic order on the dense vectors: compare the first urn where they differ
        if previous is not None and previous != config:
            a, b = dict(previous), dict(config)
            first = min(u for u in set(a) | set(b) if a.get(u, 0) != b.get(u, 0))
            assert a.get(first, 0) < b.get(first, 0)
        previous = config


def test_sparse_rank_with_capacities_at_huge_r():
    # FD, n = 2, r = 2^64: C(r, 2) vectors; rank of urns {1, 2} is the last one.
    r = 2**64
    model = UrnModel(balls=2, urns=r, rule="FD")
    assert listing.rank_sparse(model, {1: 1, 2: 1}) == math.comb(r, 2) - 1
    assert listing.unrank_sparse(model, 0) == ((r - 1, 1), (r, 1))
    bounded = UrnModel(balls=4, urns=r, rule="BE", capacity=2)
    index = 10**30
    assert listing.rank_sparse(bounded, listing.unrank_sparse(bounded, index)) == index


def test_sparse_configurations_are_checked():
    model = UrnModel(balls=3, groups=[(2, 1, 2, 1), (3, 0, 1, 1)], rule="BE")
    with pytest.raises(InvalidConfiguration, match="sums to 2"):
        listing.rank_sparse(model, {1: 1, 2: 1})
    with pytest.raises(InvalidConfiguration, match="out of range"):
        listing.rank_sparse(model, {1: 1, 2: 1, 9: 1})
    with pytest.raises(InvalidConfiguration, match="must hold at least 1"):
        listing.rank_sparse(model, {1: 1, 3: 1, 4: 1})
    with pytest.raises(InvalidConfiguration, match="urn 3 holds 2 but must hold at most 1"):
        listing.rank_sparse(model.with_balls(4), {1: 1, 2: 1, 3: 2})
    with pytest.raises(InvalidConfiguration, match="listed twice"):
        listing.rank_sparse(model, [(1, 1), (1, 1), (2, 1)])


def test_a_listing_too_wide_is_refused_before_it_starts():
    # n = 5, r = 50000: C(50004, 5) rows of 50000 entries, and a block of 16384
    # rows would hold 819,200,000 entries.
    model = Occupancy(balls=5, urns=50000, rule="MB")
    with pytest.raises(TooLarge, match="size=") as caught:
        listing.check_listing(model, size=16384)  # as int64 rows: 26 GB of blocks
    assert "size" in caught.value.parameters
    with limited(memory=10**9):  # blocks of uint8: 4 x 819 MB
        with pytest.raises(TooLarge, match="size="):
            listing.iter_blocks(model, 16384)
    # a short listing needs only short blocks: its 3 rows are counted first (stars and bars: C(3, 1))
    short = Occupancy(balls=1, urns=3, rule="BE")
    with limited(memory=10**4):
        assert as_rows(listing.iter_blocks(short, 10**6)) == [(0, 0, 1), (0, 1, 0), (1, 0, 0)]
    with pytest.raises(TooLarge, match="stop="):
        listing.check_listing(model)
    with pytest.raises(TooLarge, match="stop="):
        listing.iter_configurations(model, 0, 10**15)
    assert listing.listing_cost(model).seconds > 10**9
    first = list(listing.iter_configurations(model, 0, 2))
    assert first[0][-1] == 5 and sum(first[1]) == 5
    assert as_rows(listing.iter_blocks(model, 2, 0, 2)) == first
    listing.check_listing(model, 0, 2, size=16384)  # two rows are fine
    with limited(memory=10**5):
        with pytest.raises(TooLarge, match="memory"):
            listing.check_listing(model, 0, 2, size=2)


def test_dense_unrank_beyond_the_per_urn_limit_points_at_the_sparse_form():
    model = UrnModel(balls=2, urns=2**64, rule="BE")
    with pytest.raises(TooLarge, match=r"unrank_sparse\(model, index\)"):
        listing.unrank(model, 0)
    assert listing.unrank_sparse(model, 0) == ((2**64, 2),)


@settings(max_examples=40, deadline=None)
@given(
    st.lists(st.tuples(st.integers(1, 3), st.integers(0, 2), st.one_of(st.none(), st.integers(0, 3))),
             min_size=1, max_size=3),
    st.integers(0, 6),
)
def test_sparse_ranks_are_brute_force_positions(raw, n):
    groups = [(c, a, None if b is None else a + b) for c, a, b in raw]
    model = UrnModel(balls=n, groups=groups, rule="BE")
    vectors = brute(model)
    assert SparseRanker(model).count == len(vectors)
    for index, k in enumerate(vectors):
        config = {u: v for u, v in enumerate(k, start=1) if v}
        assert listing.rank_sparse(model, config) == index
        assert dict(listing.unrank_sparse(model, index)) == config
