r"""Exact random configurations under each rule's law.

BE and FD draw uniformly from the admissible occupancy vectors; MB draws a
vector with probability ``n! / (k_1! ... k_r!)`` over the microstates (each
ball independently uniform among the urns, conditioned on the bounds).  The
laws are exact: every random choice is a uniform integer from NumPy's
``Generator.integers`` (Lemire's unbiased bounded integers, no floating point),
or a comparison of a uniform random real, revealed 64 bits at a time, with
exact integer thresholds.

Methods, chosen per model by :func:`sampling_method`:

``stars-and-bars``
    BE without upper bounds (after removing the lower bounds): a uniform
    ``(r-1)``-subset of ``n + r - 1`` positions are the bars (Feller, vol. 1,
    §II.5); the subset comes from Floyd's algorithm (Bentley & Floyd,
    *A sample of brilliance*, CACM 1987), run for all rows at once.
``subset``
    FD, and BE where no urn has room for more than one extra ball: a uniform
    subset of the free urns, by Floyd's algorithm.
``uniform-balls``
    MB without bounds: each ball uniform among the urns (several balls per
    32-bit draw), occupancies by ``numpy.bincount``.
``rejection``
    Bounded models whose admissible share of the unbounded proposal above
    (computed exactly) is at least :data:`REJECTION_MIN`: draw from the
    proposal and keep the vectors inside the bounds — exact, since the
    proposal is uniform (BE) or multinomial (MB) on a superset.
``sequential``
    Everything else: the urns are halved recursively and each half's share
    of the balls is drawn with its exact conditional weights
    ``S_L(j) S_R(m - j)`` (BE) or ``C(m, j) S_L(j) S_R(m - j)`` (MB), where
    ``S`` counts the ways to place balls in a group of urns (products of
    the urns' generating functions, built up the tree).  The inverse
    distribution function is evaluated with 64-bit thresholds
    ``floor(2^64 F_j / F)``; only when the first 64 random bits come within
    one unit of a threshold (probability about ``K 2^-63``) are more bits
    drawn and compared exactly with the whole row (the interval method of
    Han & Hoshi, *Interval algorithm for random number generation*, IEEE
    Trans. Inf. Theory, 1997).

``groups``
    Weighted models (and any model on request): group by group from exact
    weighted suffix counts, then inside each group of interchangeable urns
    (:mod:`enumerator.algorithms.sampling_groups`).  The same draws come
    sparse from :func:`iter_sample_sparse` — the occupied urns and their
    counts only — which works for any number of urns (``2**64`` is
    ordinary); dense rows are for models whose rows fit in memory
    (:func:`dense_sample_cost`).

Weights: under MB a ball lands in urn ``i`` with probability ``w_i / W``
(conditioned on the bounds); under BE/FD ``P(k)`` is proportional to
``prod w_i^{k_i}``.

Reproducibility: the same model, seed and size give the same rows, and
``sample(m, 10, seed)`` is the first 10 rows of ``sample(m, 1000, seed)``:
rows come in blocks of fixed sizes, block ``j`` from the child ``j`` of
``numpy.random.SeedSequence(seed)`` (PCG64).

This module plans (chooses the method per model) and holds the public
interface; the samplers themselves are in
:mod:`enumerator.algorithms.exact_samplers`.
"""

from __future__ import annotations

from fractions import Fraction
from typing import Iterator, List, Optional, Tuple

import gmpy2
import numpy as np

from ..core.errors import InvalidParameters, TooLarge
from ..core.limits import Cost, check
from ..core.memo import ModelMemo
from ..core.model import PER_URN_LIMIT, UrnModel, as_count
from .counting import count_configurations, count_microstates
from .exact_samplers import (  # noqa: F401 (the cell budgets are re-exported)
    BALL_CELLS,
    BLOCK_CELLS,
    FIRST_BLOCK,
    MAX_TABLE_BITS,
    SEQUENTIAL_CELLS,
    RejectionSampler,
    Sampler,
    SequentialSampler,
    StarsAndBarsSampler,
    SubsetSampler,
    UniformBallsSampler,
)
from .sampling_groups import GroupSampler, RandomWords

__all__ = [
    "METHODS",
    "REJECTION_MIN",
    "dense_sample_cost",
    "iter_sample_blocks",
    "iter_sample_sparse",
    "sample",
    "sample_array",
    "sampling_method",
]

# Working data kept per model between calls (see enumerator.core.memo).
_MEMO = ModelMemo("sampling")

mpz = gmpy2.mpz

#: Use rejection from the unbounded proposal when at least this share of
#: its draws is admissible (below it the halving sampler is faster; measured
#: at n = 1000, r = 100).
REJECTION_MIN = Fraction(1, 2)
#: A forced rejection sampler refuses when fewer than this share of draws is kept.
REJECTION_FLOOR = Fraction(1, 10**6)


# ---------------------------------------------------------------------------
# public interface
# ---------------------------------------------------------------------------

#: The method names, in the order :func:`sampling_method` prefers them.
METHODS = ("stars-and-bars", "subset", "uniform-balls", "rejection", "sequential", "groups")
#: Bytes per dense cell a block may touch at once (the int64 rows and the
#: temporaries of the vectorised samplers), for :func:`dense_sample_cost`.
DENSE_CELL_BYTES = 32


def dense_sample_cost(model: UrnModel) -> Cost:
    """The memory of dense sampling: one block of at least :data:`FIRST_BLOCK` rows of ``r`` int64 cells.

    Parameters
    ----------
    model : UrnModel
        The model (only its number of urns matters; never expanded).

    Returns
    -------
    Cost
        ``memory`` about ``FIRST_BLOCK * r * DENSE_CELL_BYTES`` bytes; the
        seconds are left to each method.

    Notes
    -----
    A caller that prefers to switch rather than be refused compares this
    with :func:`enumerator.core.limits.active_limits` and calls
    :func:`iter_sample_sparse` instead.
    """
    return Cost(seconds=0.0, memory=FIRST_BLOCK * model.urns * DENSE_CELL_BYTES)


def _check_dense(model: UrnModel) -> None:
    check(dense_sample_cost(model), f"dense samples of {model.urns:,} urns",
          advice="draw sparse rows (iter_sample_sparse, or sample(..., sparse=True)) that list only the occupied urns",
          parameters=["sparse"])


def _block_rows(r: int) -> int:
    """The largest block of the sequence 64, 128, ... for *r* urns (a power of two in [64, 65536])."""
    cap = BLOCK_CELLS // max(1, r)
    cap = 1 << max(0, cap.bit_length() - 1)
    return max(FIRST_BLOCK, min(1 << 16, cap))


def sampling_method(model: UrnModel) -> str:
    """The name of the exact method :func:`sample` uses for *model* (see the module docstring).

    ``"groups"`` for weighted models and for models of more than
    :data:`~enumerator.core.model.PER_URN_LIMIT` urns (whose draws are
    sparse), without building anything.
    """
    if model.weighted or model.urns > PER_URN_LIMIT:
        return "groups"
    return _plan(model).method


def iter_sample_blocks(model: UrnModel, size, seed=None, method: Optional[str] = None) -> Iterator[np.ndarray]:
    """Yield ``size`` random configurations as int64 arrays of shape ``(rows, r)``.

    The laws and methods are described in the module docstring; *seed*
    (a whole number, or ``None`` for fresh operating-system entropy) makes
    the output reproducible.  *method* forces one of :data:`METHODS` where it
    applies (all give the same law; the default picks the fastest; weighted
    models use ``"groups"``, the only one that reads weights).

    Raises
    ------
    InvalidParameters
        For a model that admits no configuration, or a method that does not
        apply.
    TooLarge
        Before anything is allocated, when a block of rows of ``r`` entries
        would exceed the memory limit (:func:`dense_sample_cost`; draw
        sparse rows with :func:`iter_sample_sparse` instead), or when the
        group method's draws would exceed the limits.
    """
    size = as_count(size, "size")
    if seed is not None:
        seed = as_count(seed, "seed")
    _check_dense(model)
    plan = _plan(model) if method is None else _forced(model, method)
    if isinstance(plan, _Groups):
        check(plan.sampler.draw_cost(size), f"{size:,} draws", advice="draw fewer rows (size=)",
              parameters=["size"])
    root = np.random.SeedSequence(seed)
    produced = 0
    index = 0
    rows = FIRST_BLOCK
    while produced < size:
        rng = np.random.Generator(
            np.random.PCG64(np.random.SeedSequence(root.entropy, spawn_key=(index,)))
        )
        block = plan.draw(rng, rows)
        take = min(rows, size - produced)
        yield block[:take]
        produced += take
        index += 1
        rows = min(2 * rows, plan.cap)


def sample_array(model: UrnModel, size, seed=None, method: Optional[str] = None) -> np.ndarray:
    """Return ``size`` random configurations as one int64 array of shape ``(size, r)``.

    >>> sample_array(UrnModel(balls=3, urns=2, rule="BE"), 4, seed=1).shape
    (4, 2)
    """
    blocks = list(iter_sample_blocks(model, size, seed, method))
    if not blocks:
        return np.zeros((0, model.urns), dtype=np.int64)
    return np.concatenate(blocks) if len(blocks) > 1 else blocks[0]


def iter_sample_sparse(model: UrnModel, size, seed=None) -> Iterator[Tuple[Tuple[int, int], ...]]:
    r"""Yield ``size`` random configurations sparsely: per draw, the occupied urns and their counts.

    Parameters
    ----------
    model : UrnModel
        Any model, with groups and weights and any number of urns.
    size : int
        How many draws.
    seed : int, optional
        Same seed, same draws (``None``: fresh operating-system entropy).

    Yields
    ------
    tuple of (int, int)
        ``((urn, count), ...)``: the urns (1-based, ascending) holding at
        least one ball, with their counts; the other urns are empty.

    Raises
    ------
    InvalidParameters
        For a model that admits no configuration, or a bad *size*/*seed*.
    TooLarge
        When the count rows or the draws exceed the active limits (the
        estimate is checked before the first draw).

    Notes
    -----
    Exact sequential sampling by groups
    (:class:`enumerator.algorithms.sampling_groups.GroupSampler`: weighted
    suffix counts between groups, Floyd's algorithm or exact halving
    inside; Nijenhuis & Wilf, *Combinatorial Algorithms*, 1978).  Cost:
    the rows (``O(G)`` products of ``n + 1`` counts), then ``O(G n)``
    big-integer steps per draw, more for groups with biting capacities;
    never per urn.  The draws equal the rows of
    ``iter_sample_blocks(model, size, seed, method="groups")``.

    Examples
    --------
    >>> draws = list(iter_sample_sparse(UrnModel(balls=3, urns=2**64, rule="BE"), 2, seed=1))
    >>> [sum(k for _, k in d) for d in draws]
    [3, 3]
    """
    size = as_count(size, "size")
    if seed is not None:
        seed = as_count(seed, "seed")
    sampler = _group_sampler(model)
    check(sampler.draw_cost(size), f"{size:,} draws", advice="draw fewer rows (size=)", parameters=["size"])
    root = np.random.SeedSequence(seed)
    produced = index = 0
    rows = FIRST_BLOCK
    cap = _block_rows(model.urns)
    while produced < size:
        rng = np.random.Generator(
            np.random.PCG64(np.random.SeedSequence(root.entropy, spawn_key=(index,)))
        )
        take = min(rows, size - produced)
        words = RandomWords(rng)
        for _ in range(take):
            yield sampler.draw(words)
        produced += take
        index += 1
        rows = min(2 * rows, cap)


def sample(model: UrnModel, size, seed=None, method: Optional[str] = None, sparse: bool = False) -> List[tuple]:
    """Return ``size`` random configurations as tuples of ints, exactly from the rule's law.

    BE/FD: ``P(k)`` proportional to ``prod w_i^{k_i}`` over the admissible
    vectors (uniform without weights); MB: probability ``n!/(k_1!...k_r!)
    prod (w_i/W)^{k_i}`` conditioned on the bounds.  Same *seed*, same rows.
    With ``sparse=True`` each draw is ``((urn, count), ...)`` over the
    occupied urns only (:func:`iter_sample_sparse`, any number of urns).

    >>> rows = sample(UrnModel(balls=2, urns=3, rule="FD"), 3, seed=7)
    >>> all(sum(k) == 2 and max(k) <= 1 for k in rows)
    True
    """
    if sparse:
        if method not in (None, "groups"):
            raise InvalidParameters(f"sparse draws use method 'groups' (got method={method!r})",
                                    parameters=["method", "sparse"])
        return list(iter_sample_sparse(model, size, seed))
    return [tuple(row) for row in sample_array(model, size, seed, method).tolist()]


# ---------------------------------------------------------------------------
# planning
# ---------------------------------------------------------------------------
def _plan(model: UrnModel) -> Sampler:
    memo = _MEMO.slots(model)
    plan = memo.get("sampling.plan")
    if plan is not None:
        return plan
    if count_configurations(model) == 0:
        raise InvalidParameters(
            f"the model of {model} admits no configuration (its bounds cannot hold {model.balls} balls), "
            "so there is nothing to sample; change the balls or the bounds"
        )
    plan = _choose(model)
    memo["sampling.plan"] = plan
    return plan


def _forced(model: UrnModel, method: str) -> Sampler:
    """The plan for an explicitly requested *method*, or a clear error if it does not apply."""
    if method not in METHODS:
        raise InvalidParameters(f"method must be one of {', '.join(METHODS)} (got {method!r})")
    _plan(model)  # the emptiness check
    key = f"sampling.plan.{method}"
    plan = _MEMO.slots(model).get(key)
    if plan is not None:
        return plan
    if method == "groups":
        plan = _MEMO.slots(model)[key] = _Groups(model)
        return plan
    if model.weighted:
        raise InvalidParameters(
            f"method {method!r} does not apply to {model}: it ignores weights; use method 'groups' (or the default)",
            parameters=["method"],
        )
    bounds = model.effective_bounds()
    lows = [a for a, _ in bounds]
    free = model.balls - sum(lows)
    spans = [b - a for a, b in bounds]
    mb = model.rule.distinguishable  # labelled balls: multinomial samplers
    unbounded_mb = all(a == 0 and b >= model.balls for a, b in bounds)
    why = None
    if method == "sequential":
        plan = SequentialSampler(model)
    elif method == "subset":
        if mb or max(spans) > 1:
            why = "it needs BE or FD urns with room for at most one ball above their minimum"
        else:
            plan = SubsetSampler(model, lows, spans, free)
    elif method == "stars-and-bars":
        if mb or not all(s >= free for s in spans):
            why = "it needs BE without upper bounds"
        else:
            plan = StarsAndBarsSampler(model, lows, free)
    elif method == "uniform-balls":
        if not (mb and unbounded_mb):
            why = "it needs MB without bounds"
        else:
            plan = UniformBallsSampler(model)
    else:
        if mb:
            proposal = UrnModel(balls=model.balls, urns=model.urns, rule="MB")
            share = Fraction(count_microstates(model), count_microstates(proposal))
            base: Sampler = UniformBallsSampler(proposal)
        else:
            proposal = UrnModel(balls=model.balls, bounds=[(a, None) for a in lows], rule="BE")
            share = Fraction(count_configurations(model), count_configurations(proposal))
            base = StarsAndBarsSampler(proposal, lows, free)
        if share < REJECTION_FLOOR:
            raise TooLarge(
                f"method 'rejection' would keep only about 1 in {-(-share.denominator // share.numerator):,} "
                f"draws for {model}; use the default method (sequential) instead"
            )
        plan = RejectionSampler(model, base, share)
    if why:
        raise InvalidParameters(f"method {method!r} does not apply to {model}: {why}")
    _MEMO.slots(model)[key] = plan
    return plan


def _group_sampler(model: UrnModel) -> GroupSampler:
    memo = _MEMO.slots(model)
    sampler = memo.get("sampling.groups")
    if sampler is None:
        sampler = memo["sampling.groups"] = GroupSampler(model)
    return sampler


class _Groups(Sampler):
    """Dense rows from the sparse group sampler (weighted models, or on request)."""

    method = "groups"

    def __init__(self, model: UrnModel):
        super().__init__(model)
        self.sampler = _group_sampler(model)
        self.cap = _block_rows(self.r)

    def draw(self, rng, rows):
        return self.sampler.draw_dense(rng, rows, self.r)


def _choose(model: UrnModel) -> Sampler:
    if model.weighted or model.urns > PER_URN_LIMIT:
        return _Groups(model)
    bounds = model.effective_bounds()
    lows = [a for a, _ in bounds]
    free = model.balls - sum(lows)
    spans = [b - a for a, b in bounds]
    if model.rule.distinguishable:
        # labelled balls: the draws are balls thrown one by one, not vectors
        unbounded = all(a == 0 and b >= model.balls for a, b in bounds)
        if unbounded:
            return UniformBallsSampler(model)
        proposal = UrnModel(balls=model.balls, urns=model.urns, rule="MB")
        share = Fraction(count_microstates(model), count_microstates(proposal))
        if share >= REJECTION_MIN:
            return RejectionSampler(model, UniformBallsSampler(proposal), share)
        return SequentialSampler(model)
    if max(spans) <= 1:
        return SubsetSampler(model, lows, spans, free)
    if all(s >= free for s in spans):
        return StarsAndBarsSampler(model, lows, free)
    proposal = UrnModel(balls=model.balls, bounds=[(a, None) for a in lows], rule="BE")
    share = Fraction(count_configurations(model), count_configurations(proposal))
    if share >= REJECTION_MIN:
        return RejectionSampler(model, StarsAndBarsSampler(proposal, lows, free), share)
    return SequentialSampler(model)
