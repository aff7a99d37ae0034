"""The public face of the library: :class:`Occupancy`, a problem that answers questions.

An :class:`Occupancy` is an :class:`~enumerator.core.model.UrnModel` (the
immutable problem description) whose methods answer through the result store:
each remembered quantity is looked up under the model's canonical key and
computed by the algorithms only when it is missing
(:func:`enumerator.store.context.remember`).  The store is the one active in
the current context (:func:`enumerator.store.context.using`,
:func:`~enumerator.store.context.bypass`), or the one passed as ``store=``.

Imports of the algorithms and of the store are deferred to the first call, so
``import enumerator`` stays cheap.
"""

from __future__ import annotations

from fractions import Fraction
from functools import partial
from typing import Any, Callable, Iterator, Optional, Tuple

from .core.model import UrnModel, as_count
from .core.rules import Rule

__all__ = ["Occupancy"]


class Occupancy(UrnModel):
    """``n`` balls in ``r`` labelled urns with bounds, under a counting rule, answering through the store.

    Parameters
    ----------
    balls : int
        ``n >= 0``.
    urns : int, optional
        ``r >= 1``; required unless *bounds* is given (then it must match).
    rule : {"MB", "BE", "FD"}
        The counting rule (default ``"MB"``).
    capacity : int, optional
        A uniform upper bound per urn; ``None`` means unbounded (FD: 1).
    minimum : int
        A uniform lower bound per urn (default 0).
    bounds : sequence of (a, b) pairs, optional
        Per-urn bounds, ``b = None`` for no upper bound.  Excludes
        *capacity* and *minimum*.

    Examples
    --------
    >>> Occupancy(balls=3, urns=2, rule="BE").configurations()
    4
    >>> Occupancy(balls=3, urns=2, rule="MB").microstates()
    8
    >>> Occupancy(balls=3, bounds=[(0, 1), (1, None)], rule="BE").configurations()
    2

    Notes
    -----
    Each instance keeps the answers it already fetched from the store, so
    asking one model twice touches the database once.
    """

    __slots__ = ("_answers",)

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        object.__setattr__(self, "_answers", {})

    def _remembered(self, quantity: str, compute: Callable[[], Any], *, params: str = "",
                    model: Optional[UrnModel] = None, store=None):
        """*compute*'s value for *quantity*, through the store (see :func:`~enumerator.store.context.remember`)."""
        from .store.context import cache_enabled, remember

        if store is None and not cache_enabled():
            return compute()
        slot = (quantity, params, None if store is None else str(getattr(store, "location", store)))
        if slot in self._answers:
            return self._answers[slot]
        value = remember(quantity, self if model is None else model, compute, params=params, store=store)
        self._answers[slot] = value
        return value

    # -- counts ------------------------------------------------------------
    def configurations(self, *, store=None) -> int:
        """The number of admissible occupancy vectors (exact ``int``).

        Remembered in the result store; the pure computation is
        :func:`enumerator.algorithms.counting.count_configurations` (imported
        only on a miss, so a stored answer loads no series kernel).
        """
        return self._remembered("configurations", partial(_count, "count_configurations", self), store=store)

    def microstates(self, *, store=None) -> int:
        """The normaliser of the law: with equal weights, the number of equally likely outcomes.

        MB: the admissible assignments of the balls (``int``); BE/FD: the
        admissible vectors, and BE/FD without weights share the entry of
        :meth:`configurations`.  With weights it is the total weight
        ``sum_k W(k)`` (an ``int``, or a ``Fraction`` when weights are
        fractions).  Remembered in the result store.  Pure:
        :func:`enumerator.algorithms.counting.count_microstates`.
        """
        if self.rule is not Rule.MB and not self.weighted:
            return self.configurations(store=store)
        return self._remembered("microstates", partial(_count, "count_microstates", self), store=store)

    def weight(self, config) -> int:
        """The weight of *config*: with equal weights, the number of equally likely outcomes giving it.

        MB: ``n!/prod k_i! * prod w_i^{k_i}``; BE/FD: ``prod w_i^{k_i}`` (``int``,
        or ``Fraction`` with fractional weights).
        """
        from .algorithms.counting import configuration_weight

        return configuration_weight(self, config)

    def probability(self, config, *, store=None) -> Fraction:
        """The exact probability of the occupancy vector *config*.

        Where the law needs its normaliser (bounds, or BE/FD weights), the
        normaliser is :meth:`microstates`, remembered in the store;
        otherwise :func:`enumerator.algorithms.counting.configuration_probability`
        answers from closed forms.
        """
        from .algorithms.counting import configuration_probability, configuration_weight

        free = all(g.lower == 0 and g.upper is None for g in self.groups)
        if free and (self.rule is Rule.MB or not self.weighted):
            return configuration_probability(self, config)
        weight = configuration_weight(self, config)
        if not weight:
            return Fraction(0)
        return Fraction(weight) / Fraction(self.microstates(store=store))

    def profiles(self, *, store=None) -> int:
        """The number of distinct occupancy profiles (multisets of entries).

        Remembered in the result store; pure:
        :func:`enumerator.algorithms.counting.count_profiles`.
        """
        from .algorithms.counting import count_profiles

        return self._remembered("profiles", partial(count_profiles, self), store=store)

    # -- laws ----------------------------------------------------------------
    def distribution(self, statistic, limit=None, *, store=None, compute=None):
        """The exact distribution of *statistic* (``"max"``, ``"empty"``, ``"urn:1"``, ...).

        Remembered in the result store under the statistic's canonical name;
        pure: :func:`enumerator.algorithms.statistics.distribution`.
        *compute*, if given, is called as ``compute(name)`` with the
        statistic's canonical name on a miss, instead of the library's
        planner, and must return the same exact
        :class:`~enumerator.algorithms.statistics.Distribution` (the CLI
        passes rank shards on a cluster,
        :func:`enumerator.store.cluster.distribution_distributed`); a
        remembered law is returned without calling it.
        """
        from .algorithms.statistics import DEFAULT_LIMIT, Distribution, parse_statistic

        stat = parse_statistic(statistic)
        bound = DEFAULT_LIMIT if limit is None else limit

        def compute_here():
            if compute is not None:
                return _law_record(compute(stat.name))
            return _stored_law(self, stat.name, bound)

        register_recomputers()
        stored = self._remembered("distribution", compute_here, params=stat.name, store=store)
        pmf = {}
        for value, p in stored["pmf"]:
            pmf[tuple(value) if isinstance(value, list) else value] = p
        return Distribution(stat.name, pmf, stored["mean"], stored["variance"])

    def event_probability(self, event: str, limit=None, *, store=None, compute=None) -> Fraction:
        """The exact probability of an event such as ``"max <= 2 and k1 >= 1"``.

        Remembered in the result store under the event's canonical text; see
        :mod:`enumerator.algorithms.events` for the language.  *compute*, if
        given, is called as ``compute(text)`` with the canonical text on a
        miss, instead of the library's planner, and must return the same
        exact probability (the CLI passes rank shards on a cluster,
        :func:`enumerator.store.cluster.event_count_distributed`); a
        remembered answer is returned without calling it.
        """
        from .algorithms.event_language import parse_event
        from .algorithms.events import event_probability

        text = str(parse_event(event))

        def compute_here():
            if compute is not None:
                return compute(text)
            return event_probability(self, text) if limit is None else event_probability(self, text, limit=limit)

        _register_event_probability()
        return self._remembered("event_probability", compute_here, params=text, store=store)

    def coefficient_row(self, upto=None, *, store=None):
        """Counts for every ball number ``0..upto`` at once (one series pass).

        BE/FD: configurations; MB: microstates.  Remembered in the result
        store; pure: :func:`enumerator.algorithms.generating.coefficient_row`.
        """
        from .algorithms.generating import coefficient_row

        top = self.balls if upto is None else as_count(upto, "upto")
        register_recomputers()
        return list(self._remembered("coefficient_row", lambda: coefficient_row(self, top),
                                     params=f"upto={top}", model=self.with_balls(0), store=store))

    def sample(self, size, seed=None):
        """Draw *size* configurations exactly from the rule's law (reproducible by *seed*)."""
        from .algorithms.sampling import sample

        return sample(self, size, seed)

    # -- listing -------------------------------------------------------------
    def iter_configurations(self, start=0, stop=None) -> Iterator[Tuple[int, ...]]:
        """Yield admissible configurations of ranks ``[start, stop)`` in lexicographic order."""
        from .algorithms.listing import iter_configurations

        return iter_configurations(self, start, stop)

    def iter_blocks(self, size, start=0, stop=None):
        """Yield numpy arrays of at most *size* configurations each, in lexicographic order."""
        from .algorithms.listing import iter_blocks

        return iter_blocks(self, size, start, stop)

    def rank(self, config) -> int:
        """The lexicographic rank of an admissible configuration."""
        from .algorithms.listing import rank

        return rank(self, config)

    def unrank(self, index) -> Tuple[int, ...]:
        """The admissible configuration of lexicographic rank *index*."""
        from .algorithms.listing import unrank

        return unrank(self, index)


def _count(name: str, model: UrnModel):
    """Run ``enumerator.algorithms.counting.<name>(model)``, importing the kernel only when called."""
    from .algorithms import counting

    return getattr(counting, name)(model)


def _stored_law(model: UrnModel, statistic: str, limit: int) -> dict:
    """The law of *statistic* in the form the store keeps (pmf pairs, mean, variance)."""
    from .algorithms.statistics import distribution

    return _law_record(distribution(model, statistic, limit=limit))


def _law_record(law) -> dict:
    """A :class:`~enumerator.algorithms.statistics.Distribution` in the form the store keeps."""
    return {
        "pmf": [[list(v) if isinstance(v, tuple) else v, p] for v, p in law.pmf.items()],
        "mean": law.mean,
        "variance": law.variance,
    }


def register_recomputers() -> None:
    """Tell the store how ``cache verify`` recomputes every quantity the facade remembers.

    Laws (``distribution``), generating rows (``coefficient_row``) and event
    probabilities (``event_probability``); counts and normalisers register
    themselves when the counting kernel is imported.  Idempotent.
    """
    from .store.keys import ALGORITHM_VERSIONS, recomputer, register_quantity

    _register_event_probability()

    if recomputer("distribution") is None:
        def law(model, params):
            from .algorithms.statistics import DEFAULT_LIMIT

            return _stored_law(model, params, DEFAULT_LIMIT)

        register_quantity("distribution", ALGORITHM_VERSIONS["distribution"], law)
    if recomputer("coefficient_row") is None:
        def row(model, params):
            from .algorithms.generating import coefficient_row

            return coefficient_row(model, int(params.partition("=")[2]))

        register_quantity("coefficient_row", ALGORITHM_VERSIONS["coefficient_row"], row)


_EVENT_VERSION = 1


def _register_event_probability() -> None:
    """Declare the stored quantity ``event_probability`` (its version, and how verify recomputes it)."""
    from .store.keys import ALGORITHM_VERSIONS, register_quantity

    if "event_probability" not in ALGORITHM_VERSIONS:
        def recompute(model, params):
            from .algorithms.events import event_probability

            return event_probability(model, params)

        register_quantity("event_probability", _EVENT_VERSION, recompute)
