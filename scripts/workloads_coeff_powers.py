"""Benchmark workloads of ``enumerator coeff`` powers by Miller's recurrence.

``scripts/bench.py`` loads this file and calls :func:`register`.

* ``coeff-sqrt-10^4``: ``(1 + x)^(1/2)`` to ``x^10000`` through
  :func:`enumerator.algorithms.expressions.extract_coefficients` (Miller's
  recurrence in GMP rationals, the row kept as ``mpq``), against FLINT's
  ``fmpq_series.sqrt`` (Newton's iteration) and a plain gmpy2 loop of the
  binomial series ``C(1/2, k) = C(1/2, k - 1) (3/2 - k) / k``.
  ``--quick``: to ``x^2000``.
* ``coeff-trinomial-2^64``: ``(1 + x + x^2)^(2^64)`` to ``x^2000`` (coefficients
  of up to ``2000 * 64`` bits), against FLINT's truncated binary power
  ``fmpz_poly.pow_trunc`` (64 truncated squarings).  ``--quick``: to ``x^400``.
"""

from __future__ import annotations

from fractions import Fraction


def register(bench) -> None:
    """Declare the workloads of this file in *bench* (``scripts/bench.py``)."""
    Method = bench.Method

    def fractions(values):
        return tuple(Fraction(int(v.numerator), int(v.denominator)) if not isinstance(v, int) else Fraction(v)
                     for v in values)

    @bench.workload("coeff-sqrt-10^4",
                    "coeff (1+x)^(1/2) to x^10^4: Miller's recurrence in mpq vs FLINT fmpq_series.sqrt "
                    "(Newton) and the binomial series in gmpy2")
    def _sqrt(ctx):
        import flint
        import gmpy2
        from flint import fmpq_series

        from enumerator.algorithms.expressions import extract_coefficients

        top = 2000 if ctx.quick else 10**4

        def ours():
            return extract_coefficients("(1+x)^(1/2)", top)

        def newton():
            cap = flint.ctx.cap  # python-flint truncates every series at ctx.cap terms (10 by default)
            flint.ctx.cap = top + 1
            try:
                return fmpq_series([1, 1], prec=top + 1).sqrt().coeffs()
            finally:
                flint.ctx.cap = cap

        def binomial():
            c = gmpy2.mpq(1)
            row = [c]
            half = gmpy2.mpq(1, 2)
            for k in range(1, top + 1):
                c = c * (half - k + 1) / k
                row.append(c)
            return row

        return ctx.compare(
            Method("enumerator extract_coefficients (Miller, mpq)", ours, normalise=fractions),
            [Method("FLINT fmpq_series.sqrt (Newton)", newton, normalise=fractions),
             Method("gmpy2 binomial series loop", binomial, normalise=fractions)],
            items=top + 1,
            notes=[f"{top + 1:,} coefficients; the last has a denominator of about {2 * top:,} bits"],
        )

    @bench.workload("coeff-trinomial-2^64",
                    "coeff (1+x+x^2)^(2^64) to x^2000: Miller's recurrence vs FLINT pow_trunc")
    def _trinomial(ctx):
        from flint import fmpz_poly

        from enumerator.algorithms.expressions import extract_coefficients

        top = 400 if ctx.quick else 2000
        e = 2**64

        def ours():
            return extract_coefficients("(1 + x + x^2)^(2^64)", top)

        def pow_trunc():
            return fmpz_poly([1, 1, 1]).pow_trunc(e, top + 1).coeffs()

        def scaled(s):
            size = max(10, int(top * s))
            return lambda: fmpz_poly([1, 1, 1]).pow_trunc(e, size + 1)

        return ctx.compare(
            Method("enumerator extract_coefficients (Miller)", ours, normalise=lambda v: tuple(int(c) for c in v)),
            [Method("FLINT fmpz_poly.pow_trunc (binary powering)", pow_trunc, scaled=scaled,
                    normalise=lambda v: tuple(int(c) for c in v))],
            items=top + 1,
            notes=[f"{top + 1:,} coefficients of up to about {top * 64:,} bits"],
        )
