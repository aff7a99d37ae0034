"""The core layer: what every other layer builds on.

- :mod:`~enumerator.core.model` — the immutable problem description
  (:class:`~enumerator.core.model.UrnModel`) and its validation;
- :mod:`~enumerator.core.rules` — the counting rules;
- :mod:`~enumerator.core.exact` — exact numbers to text and back (one codec);
- :mod:`~enumerator.core.errors` — the one exception family;
- :mod:`~enumerator.core.series` — the exact truncated power-series kernel;
- :mod:`~enumerator.core.memo` — bounded per-model working memory.

Nothing here imports from the other layers.
"""
