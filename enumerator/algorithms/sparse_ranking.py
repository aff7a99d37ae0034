r"""Rank and unrank configurations given sparsely, by urn groups, for any number of urns.

The order is the lexicographic order of :mod:`enumerator.algorithms.listing`
(ascending, urn 1 most significant), in the shifted coordinates
``x_i = k_i - a_i``.  With ``N_j(m)`` the number of ways the urns
``j, j+1, ...`` (0-based) hold ``m`` shifted balls, the rank is (ranking by
counting: Nijenhuis & Wilf, *Combinatorial Algorithms*, 2nd ed., 1978)

.. math:: \operatorname{rank}(x) = \sum_{i:\,x_i > 0} \sum_{u < x_i} N_{i+1}(m_i - u),

``m_i`` being the balls left for urns ``i, ...``: urns holding ``x_i = 0``
contribute nothing, so only the occupied urns are visited.  ``N_j`` comes
from rows by groups (:mod:`enumerator.algorithms.group_rows`): the suffix
of a group, ``c'`` urns, times the suffix rows of the whole groups after it.
Unranking finds each next occupied urn by binary search on ``j``, since
``N_{j+1}(m)`` never increases with ``j``.

Cost: the suffix rows (``G`` products of ``n' + 1`` counts), then per
occupied urn one row of ``n' + 1`` counts (rank), or ``log2 r`` of them
(unrank, the binary search) — never per urn.
"""

from __future__ import annotations

import bisect
import operator
from typing import Dict, List, Tuple

from ..core.errors import InvalidConfiguration, InvalidParameters
from ..core.limits import STEPS_PER_SECOND, Cost, check
from .group_rows import combine, ordinary_group_row, row_bits, rows_cost, suffix_rows

__all__ = ["SparseRanker", "parse_sparse"]

Sparse = Tuple[Tuple[int, int], ...]


def parse_sparse(model, occupied) -> Dict[int, int]:
    """Read ``{urn: count}`` or ``((urn, count), ...)`` (1-based urns) into a dict, checking its shape.

    Raises
    ------
    InvalidConfiguration
        For an urn outside ``1..r``, a repeated urn, a negative or non-whole
        count, or counts that do not add up to ``n``.
    """
    items = occupied.items() if isinstance(occupied, dict) else occupied
    r = model.urns
    out: Dict[int, int] = {}
    try:
        pairs = [(operator.index(u), operator.index(k)) for u, k in items]
    except (TypeError, ValueError):
        raise InvalidConfiguration(
            "a sparse configuration is a mapping {urn: count} or pairs (urn, count) of whole numbers, "
            f"urns numbered 1 to {r}"
        ) from None
    for u, k in pairs:
        if not 1 <= u <= r:
            raise InvalidConfiguration(f"urn {u} is out of range; urns are numbered 1 to {r}")
        if u in out:
            raise InvalidConfiguration(f"urn {u} is listed twice; give each occupied urn once")
        if k < 0:
            raise InvalidConfiguration(f"urn {u} holds {k}; occupancies cannot be negative")
        out[u] = k
    total = sum(out.values())
    if total != model.balls:
        raise InvalidConfiguration(
            f"configuration sums to {total} but the model has {model.balls} balls; "
            "the occupancies must add up to the number of balls"
        )
    return out


class SparseRanker:
    """Suffix rows of a model's groups, for rank and unrank of sparse configurations.

    Raises
    ------
    TooLarge
        When the suffix rows exceed the active limits.
    """

    def __init__(self, model):
        self.model = model
        self.r = model.urns
        eff = model.effective_groups()
        self.lows = [a for _, a, _, _ in eff]
        self.counts = [c for c, _, _, _ in eff]
        self.spans = [b - a for _, a, b, _ in eff]
        self.firsts: List[int] = []
        first = 0
        for c in self.counts:
            self.firsts.append(first)
            first += c
        self.N = model.balls - sum(c * a for c, a, _, _ in eff)
        self.empty = self.N < 0 or min(self.spans) < 0
        if self.empty:
            self.rows = None
            self.count = 0
            return
        spec = [(c, 0, s, 1) for c, s in zip(self.counts, self.spans)]
        check(rows_cost("ordinary", spec, self.N), "the suffix counts for ranking",
              advice="use fewer balls or groups")
        self.rows = suffix_rows("ordinary", spec, self.N)
        self.count = int(self.rows[0][self.N])

    # -- suffix counts -------------------------------------------------------
    def _locate(self, j: int) -> Tuple[int, int]:
        """``(g, c')``: urn *j* (0-based) is in group ``g``, which has ``c'`` urns from *j* on."""
        g = bisect.bisect_right(self.firsts, j) - 1
        return g, self.firsts[g] + self.counts[g] - j

    def suffix_row(self, j: int, top: int) -> List:
        """``N_j(m)`` for ``m = 0..top``: the urns ``j, ...`` (0-based) holding ``m`` shifted balls."""
        if j >= self.r:
            return [1] + [0] * top
        g, rest = self._locate(j)
        after = self.rows[g + 1]
        if rest == self.counts[g]:
            return list(self.rows[g][: top + 1])
        head = ordinary_group_row(rest, 0, self.spans[g], top)
        return combine("ordinary", head, after, top)

    def suffix_count(self, j: int, m: int) -> int:
        """``N_j(m)`` alone."""
        if j >= self.r:
            return 1 if m == 0 else 0
        g, rest = self._locate(j)
        after = self.rows[g + 1]
        if rest == self.counts[g]:
            return self.rows[g][m]
        head = ordinary_group_row(rest, 0, self.spans[g], m)
        return sum(h * after[m - t] for t, h in enumerate(head) if h)

    def _cost(self, searches: int) -> Cost:
        bits = row_bits("ordinary", self.r, self.N)
        steps = max(1, self.N) * searches * (self.N + 1) * max(1, bits // 640)
        return Cost(seconds=steps / STEPS_PER_SECOND, memory=0)

    # -- rank --------------------------------------------------------------
    def rank(self, occupied) -> int:
        """The lexicographic rank of the sparse configuration *occupied* (see :func:`parse_sparse`)."""
        model = self.model
        values = parse_sparse(model, occupied)
        listed = [0] * len(self.counts)
        shifted = []
        for u in sorted(values):
            k = values[u]
            g, _ = self._locate(u - 1)
            group = model.groups[g]
            if k < group.lower or (group.upper is not None and k > group.upper):
                what = f"at least {group.lower}" if k < group.lower else f"at most {group.upper}"
                raise InvalidConfiguration(
                    f"urn {u} holds {k} but must hold {what}; only admissible configurations have a rank"
                )
            listed[g] += 1
            if k > group.lower:
                shifted.append((u - 1, k - group.lower))
        for g, group in enumerate(model.groups):
            if group.lower and listed[g] < group.count:
                raise InvalidConfiguration(
                    f"every urn of urns {self.firsts[g] + 1} to {self.firsts[g] + group.count} must hold at least "
                    f"{group.lower}; list each of them with its count"
                )
        if self.empty:  # pragma: no cover - the checks above refuse every vector of an empty model
            raise InvalidConfiguration("this model admits no configuration, so nothing has a rank")
        check(self._cost(len(shifted)), "the rank", advice="use fewer balls")
        index, m = 0, self.N
        for i, x in shifted:
            row = self.suffix_row(i + 1, m)
            index += sum(row[m - u] for u in range(x))
            m -= x
        return int(index)

    # -- unrank ------------------------------------------------------------
    def unrank(self, index) -> Sparse:
        """The sparse configuration ``((urn, count), ...)`` of rank *index*: occupied urns, 1-based."""
        if isinstance(index, bool):
            raise InvalidParameters(f"rank must be a whole number, not a boolean (got {index!r})")
        try:
            index = operator.index(index)
        except TypeError:
            raise InvalidParameters(
                f"rank must be a whole number (got {index!r} of type {type(index).__name__})"
            ) from None
        if self.count == 0:
            raise InvalidParameters(
                f"rank {index} is out of range: this model admits no configuration, so no rank is valid; "
                "loosen the bounds or change the number of balls"
            )
        if not 0 <= index < self.count:
            raise InvalidParameters(
                f"rank {index} is out of range; valid ranks are 0 to {self.count - 1} "
                f"(the model has {self.count} configurations)"
            )
        check(self._cost(self.N * max(1, self.r.bit_length())), "the unrank", advice="use fewer balls")
        x: Dict[int, int] = {}
        m, i = self.N, 0
        while m > 0:
            lo, hi = i, self.r - 1  # the first j >= i with index >= N_{j+1}(m): urn j is occupied
            while lo < hi:
                mid = (lo + hi) // 2
                if index >= self.suffix_count(mid + 1, m):
                    hi = mid
                else:
                    lo = mid + 1
            j = lo
            row = self.suffix_row(j + 1, m)
            v = 0
            while index >= row[m - v]:
                index -= row[m - v]
                v += 1
            x[j] = v
            m -= v
            i = j + 1
        out: List[Tuple[int, int]] = []
        for g, (c, a) in enumerate(zip(self.counts, self.lows)):
            if a:
                for j in range(self.firsts[g], self.firsts[g] + c):
                    out.append((j + 1, a + x.pop(j, 0)))
        out.extend((j + 1, v) for j, v in x.items())
        return tuple(sorted(out))

