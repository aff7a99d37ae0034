"""Work limits: every route estimates its cost, and work beyond the limits is refused before it starts.

Each exact route (a closed form, a series power, a recursion, a listing) states
its cost as a :class:`Cost` — the seconds and the bytes it would need, from
the sizes at hand (``n``, the number of urn groups, the digits of the answer),
never from the number of urns — and calls :func:`check` before computing.
Past the active limits, :func:`check` raises
:class:`~enumerator.core.errors.TooLarge` with one sentence saying what the
work would take and how to proceed.

The limits in force
    1. those of the innermost :func:`limited` block (a
       :class:`contextvars.ContextVar`, so threads and tasks each see their
       own);
    2. else the environment: ``ENUMERATOR_MAX_MEMORY`` (bytes, or with a
       suffix ``K``, ``M``, ``G``, ``T``) and ``ENUMERATOR_MAX_SECONDS``;
    3. else :data:`DEFAULT_LIMITS`: 4 GiB and 10 minutes, sized for a
       machine of 2 cores and 24 GiB with room to spare.

Estimates are deliberately rough (a factor of a few either way): they exist
to refuse work that is out of reach by orders of magnitude, not to predict
run times.  The rates below were measured on the reference machine
(``scripts/bench.py``).

Examples
--------
>>> check(Cost(seconds=1.0, memory=10**6), "a small count")
>>> with limited(memory=1000):
...     check(Cost(seconds=0.1, memory=10**6), "a count of 10^6 digits")
Traceback (most recent call last):
...
enumerator.core.errors.TooLarge: a count of 10^6 digits would need about 1.0 MB of memory, above the limit of 1.0 kB; raise max_memory= (or ENUMERATOR_MAX_MEMORY), or make the problem smaller
"""

from __future__ import annotations

import math
import os
import re
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass, replace
from typing import Iterator, Optional, Sequence

from .errors import InvalidParameters, TooLarge

__all__ = [
    "DEFAULT_LIMITS",
    "ENV_MAX_MEMORY",
    "ENV_MAX_SECONDS",
    "Cost",
    "Limits",
    "active_limits",
    "DECIMAL_PRODUCTS",
    "GCD_PRODUCTS",
    "TEXT_BYTES_PER_DIGIT",
    "bigint_bytes",
    "check",
    "decimal_seconds",
    "gcd_seconds",
    "limited",
    "multiply_seconds",
    "parse_size",
    "product_seconds",
]

#: Environment variable: the most memory one computation may plan to use.
ENV_MAX_MEMORY = "ENUMERATOR_MAX_MEMORY"
#: Environment variable: the most seconds one computation may plan to take.
ENV_MAX_SECONDS = "ENUMERATOR_MAX_SECONDS"

#: Machine rates for the estimates: bits of GMP/FLINT multiplication per
#: second on operands of a million bits (FFT range), and simple big-number
#: steps (an addition or a small multiplication of a word-sized number) per second.
MULTIPLY_BITS_PER_SECOND = 2.0e9
STEPS_PER_SECOND = 5.0e6


@dataclass(frozen=True)
class Limits:
    """How much one computation may plan to use.

    Attributes
    ----------
    memory : int
        Bytes.
    seconds : float
        Seconds of computation.
    """

    memory: int
    seconds: float


#: The limits when neither a :func:`limited` block nor the environment sets them.
DEFAULT_LIMITS = Limits(memory=4 * 2**30, seconds=600.0)

_active: ContextVar[Optional[Limits]] = ContextVar("enumerator_limits", default=None)


@dataclass(frozen=True)
class Cost:
    """The estimated cost of one route: seconds and bytes.

    Costs add (routes run one after the other, memory is the larger peak
    unless stated otherwise): ``a + b`` sums the seconds and keeps the larger
    memory.
    """

    seconds: float = 0.0
    memory: int = 0

    def __add__(self, other: "Cost") -> "Cost":
        return Cost(self.seconds + other.seconds, max(self.memory, other.memory))

    def times(self, factor: float) -> "Cost":
        """This cost repeated *factor* times (seconds scale; memory is reused)."""
        return replace(self, seconds=self.seconds * factor)


def bigint_bytes(bits: float) -> int:
    """Bytes held by an integer of *bits* bits (GMP limbs, plus a small header)."""
    return int(bits // 8) + 32


def product_seconds(bits: float) -> float:
    """Seconds for one multiplication of two numbers of *bits* bits (GMP's FFT, ``O(b log b)``): a nominal rate.

    This is a unit of work, not a prediction: one GMP product of two
    ``b``-bit numbers measured (CPU time, 2 cores under a load of 4-5,
    2026-12) 1.8x this at ``b = 10^4``, 8x at ``10^6``, 13x at ``10^7``
    and ``10^8``, 16x at ``10^9``.  The routes priced with it carry
    factors calibrated against their own measured CPU times (counting
    powers, ensembles, asymptotic sides), so its value stays; a new
    estimate should use :func:`multiply_seconds`, which follows the
    measurement.
    """
    if bits <= 64:
        return 1.0 / STEPS_PER_SECOND
    return bits * max(1.0, math.log2(bits) / 20.0) / MULTIPLY_BITS_PER_SECOND


#: A GMP gcd of two ``b``-bit numbers (``mpq`` canonicalisation), in products
#: of ``b``-bit numbers: measured 16x at ``b = 10^6``, 19x at ``10^7``, 23x at
#: ``4 10^7`` (CPU time, same machine as :func:`multiply_seconds`).
GCD_PRODUCTS = 24
#: Writing a ``b``-bit number in decimal (GMP ``mpz_get_str``), in products:
#: measured 2.4x at ``10^6`` bits, 3.7x at ``10^7``, 3.8x at ``4 10^7``.
DECIMAL_PRODUCTS = 5
#: Bytes held per decimal digit of an exact answer the command line writes:
#: the ``str`` of digits, its JSON text, that text with its newline and its
#: UTF-8 encoding on the way out, about six copies at a byte each (measured
#: with ``threshold --vary urns``: 269 MB of peak RSS above the interpreter
#: for 4 numbers of 12.5 million digits, 68 MB for 4 of 2.8 million).
TEXT_BYTES_PER_DIGIT = 6


def multiply_seconds(bits: float) -> float:
    """CPU seconds of one GMP product of two numbers of *bits* bits, as measured on the reference machine.

    Parameters
    ----------
    bits : float
        The size of each factor.

    Returns
    -------
    float
        ``b log2(b)^2 1.5e-11`` seconds, at least one small step: above
        the measured CPU time of ``gmpy2`` products (2 cores under a load
        of 4-5): ``9e-6`` s at ``b = 10^4`` (formula ``2.6e-5``),
        ``0.004`` s at ``10^6`` (``0.006``), ``0.075`` s at ``10^7``
        (``0.08``), ``0.87`` s at ``10^8`` (``1.06``), ``12.3`` s at
        ``10^9`` (``13.4``).

    Notes
    -----
    GMP multiplies by Toom–Cook and Schönhage–Strassen's FFT,
    ``O(b log b log log b)`` in theory (T. Granlund et al., *GNU MP
    manual*, "Multiplication Algorithms"); the extra ``log b`` fits the
    cache misses of the large sizes.  Wall time under load is longer still:
    the limits are about CPU time.

    Examples
    --------
    >>> 0.5 < multiply_seconds(1e8) < 2
    True
    """
    if bits <= 64:
        return 1.0 / STEPS_PER_SECOND
    return max(1.0 / STEPS_PER_SECOND, bits * math.log2(bits) ** 2 * 1.5e-11)


def gcd_seconds(bits: float) -> float:
    """CPU seconds of one GMP gcd of two *bits*-bit numbers (:data:`GCD_PRODUCTS` products).

    Examples
    --------
    >>> gcd_seconds(1e7) == GCD_PRODUCTS * multiply_seconds(1e7)
    True
    """
    return GCD_PRODUCTS * multiply_seconds(bits)


def decimal_seconds(bits: float) -> float:
    """CPU seconds of writing a *bits*-bit number in decimal (:data:`DECIMAL_PRODUCTS` products).

    Examples
    --------
    >>> decimal_seconds(1e7) == DECIMAL_PRODUCTS * multiply_seconds(1e7)
    True
    """
    return DECIMAL_PRODUCTS * multiply_seconds(bits)


_SIZE = re.compile(r"\s*([0-9]+(?:\.[0-9]+)?)\s*([kKmMgGtT]?)(?:i?[bB])?\s*")
_UNITS = {"": 1, "k": 2**10, "m": 2**20, "g": 2**30, "t": 2**40}


def parse_size(text: str, name: str = "max_memory") -> int:
    """Read a memory size: bytes, or a number with ``K``, ``M``, ``G`` or ``T`` (powers of 1024).

    Examples
    --------
    >>> parse_size("512M"), parse_size("2G"), parse_size("1000")
    (536870912, 2147483648, 1000)
    """
    match = _SIZE.fullmatch(str(text)) if len(str(text)) < 40 else None
    if not match:
        raise InvalidParameters(f"{name} must be a size such as 512M, 8G or a number of bytes (got {text!r})")
    value = float(match.group(1)) * _UNITS[match.group(2).lower()]
    if value < 1:
        raise InvalidParameters(f"{name} must be at least one byte (got {text!r})")
    return int(value)


def _parse_seconds(text: str, name: str) -> float:
    try:
        value = float(text)
    except ValueError:
        value = float("nan")
    if not (value > 0 and math.isfinite(value)):
        raise InvalidParameters(f"{name} must be a positive number of seconds (got {text!r})")
    return value


def active_limits() -> Limits:
    """The limits in force here (see the module docstring for the order)."""
    chosen = _active.get()
    if chosen is not None:
        return chosen
    memory, seconds = DEFAULT_LIMITS.memory, DEFAULT_LIMITS.seconds
    env_memory = os.environ.get(ENV_MAX_MEMORY, "").strip()
    if env_memory:
        memory = parse_size(env_memory, ENV_MAX_MEMORY)
    env_seconds = os.environ.get(ENV_MAX_SECONDS, "").strip()
    if env_seconds:
        seconds = _parse_seconds(env_seconds, ENV_MAX_SECONDS)
    return Limits(memory, seconds)


@contextmanager
def limited(memory=None, seconds=None) -> Iterator[Limits]:
    """Within the block, plan against these limits (``None`` keeps the one in force).

    Parameters
    ----------
    memory : int or str, optional
        Bytes, or a size text such as ``"8G"``.
    seconds : float, optional
        Seconds.
    """
    current = active_limits()
    if isinstance(memory, str):
        memory = parse_size(memory)
    if seconds is not None and not (float(seconds) > 0 and math.isfinite(float(seconds))):
        raise InvalidParameters(f"max_seconds must be a positive number of seconds (got {seconds!r})")
    chosen = Limits(current.memory if memory is None else int(memory),
                    current.seconds if seconds is None else float(seconds))
    token = _active.set(chosen)
    try:
        yield chosen
    finally:
        _active.reset(token)


def size_text(value: float) -> str:
    """A number of bytes in its largest decimal unit, up to exabytes, beyond them in powers of ten.

    >>> size_text(512), size_text(4 * 2**30), size_text(6.4e22), size_text(2e25)
    ('512 bytes', '4.3 GB', '64000.0 EB', '2.0e+25 bytes')
    """
    if value >= 1e23:
        return f"{value:.1e} bytes"
    for unit, scale in (("EB", 1e18), ("PB", 1e15), ("TB", 1e12), ("GB", 1e9), ("MB", 1e6), ("kB", 1e3)):
        if value >= scale:
            return f"{value / scale:.1f} {unit}"
    return f"{int(value)} bytes"


def _time_text(value: float) -> str:
    """A duration in its largest whole unit, singular where the number is exactly 1.

    >>> _time_text(60), _time_text(600), _time_text(90), _time_text(86400 * 730)
    ('1 minute', '10 minutes', '1.5 minutes', '2 years')
    """
    for unit, scale in (("year", 86400 * 365), ("day", 86400), ("hour", 3600), ("minute", 60)):
        if value >= scale:
            number = f"{value / scale:.3g}"
            return f"{number} {unit}" if number == "1" else f"{number} {unit}s"
    return f"{value:.3g} s"


def check(cost: Cost, what: str, *, advice: str = "make the problem smaller",
          parameters: Sequence[str] = ()) -> None:
    """Refuse *what* when its estimated *cost* exceeds the active limits.

    Parameters
    ----------
    cost : Cost
        The route's estimate.
    what : str
        The work, as the message should name it (``"the count"``).
    advice : str
        What else the user may change (after raising the limit).
    parameters : sequence of str
        Library parameters the advice names (see
        :class:`~enumerator.core.errors.EnumeratorError`).

    Raises
    ------
    TooLarge
        With one sentence: what the work would take, the limit, and what to do.
    """
    limits = active_limits()
    if cost.memory > limits.memory:
        raise TooLarge(
            f"{what} would need about {size_text(cost.memory)} of memory, above the limit of "
            f"{size_text(limits.memory)}; raise max_memory= (or {ENV_MAX_MEMORY}), or {advice}",
            parameters=("max_memory", *parameters),
        )
    if cost.seconds > limits.seconds:
        raise TooLarge(
            f"{what} would take about {_time_text(cost.seconds)}, above the limit of "
            f"{_time_text(limits.seconds)}; raise max_seconds= (or {ENV_MAX_SECONDS}), or {advice}",
            parameters=("max_seconds", *parameters),
        )
