"""The algorithms layer: every computation on a problem description.

Each module takes an :class:`~enumerator.core.model.UrnModel` and returns exact
``int`` / ``Fraction`` values; none of them reads or writes the result store
(that is the facade's job, one layer up).

- :mod:`~enumerator.algorithms.counting` — counts of configurations and microstates;
- :mod:`~enumerator.algorithms.listing` — lexicographic listing, rank and unrank;
- :mod:`~enumerator.algorithms.sampling` — exact random draws;
- :mod:`~enumerator.algorithms.statistics` — exact laws of statistics;
- :mod:`~enumerator.algorithms.events` — the event language and its planner;
- :mod:`~enumerator.algorithms.generating` — generating functions and coefficient rows;
- :mod:`~enumerator.algorithms.levels` — energy levels, ensembles;
- :mod:`~enumerator.algorithms.asymptotics` — approximations beside their exact values.
"""
