r"""Single-particle spectra, presets and systems of particles on them.

A :class:`Spectrum` is a list of single-particle levels, energy ``ε_i`` and
degeneracy ``g_i`` (``g_i`` single-particle states share the energy).  Energies
are exact rationals stored as integer multiples of one common ``unit``
(``1/lcm`` of their denominators, so integer energies keep the unit ``1``); a
ladder (the harmonic oscillator and trap presets) goes on without end above
its listed levels.  A :class:`System` puts ``N`` particles on a spectrum under
a counting rule:

``MB``
    distinguishable particles (localised oscillators, tagged atoms): every
    assignment of the ``N`` labelled particles to single-particle states is one
    microstate.
``BE``
    identical bosons: a microstate is an occupancy of the single-particle
    states; with a ``capacity`` ``c`` per state (Gentile's intermediate
    statistics) each state holds at most ``c``.
``FD``
    identical fermions, at most one per state.

This module holds the description only: exact numbers read from user values
(:func:`parse_rational`), spectra and presets, systems and their ground
energy.  What is computed from them lives in
:mod:`enumerator.algorithms.levels.multiplicities` (exact ``Ω(N, E)``,
thermal contact, the microcanonical temperature) and
:mod:`enumerator.algorithms.levels.ensembles` (canonical and
grand-canonical quantities).

Units: energies share the user's energy unit, with Boltzmann's constant
``k_B = 1``.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from fractions import Fraction
from functools import cached_property
from typing import List, Optional, Tuple

import mpmath

from ...core.errors import InvalidParameters, Unsupported
from ...core.groups import MAX_DIGITS as MAX_NUMBER_DIGITS
from ...core.limits import Cost, bigint_bytes, check
from ...core.model import as_count
from ...core.rules import Rule

__all__ = [
    "Ladder",
    "PRESETS",
    "Spectrum",
    "System",
    "einstein_solid",
    "ground_energy",
    "harmonic_oscillator",
    "harmonic_trap",
    "listing_cost",
    "make_spectrum",
    "make_system",
    "parse_rational",
    "parse_temperature",
    "size_number_text",
    "two_level",
]


# --------------------------------------------------------------------------
# Input parsing
# --------------------------------------------------------------------------
#: The decimal exponent of a number as ``fractions.Fraction`` reads it (``2.5e-3``, ``1E1_000``).
_EXPONENT = re.compile(r"[eE]\s*[+-]?([\d_]+)")


def size_number_text(text: str, name: str, parameter: Optional[str] = None) -> str:
    """Refuse number text too long to expand (``1e999999999``) before ``Fraction`` reads it.

    Parameters
    ----------
    text : str
        One number as written (``"0.25"``, ``"1/3"``, ``"2.5e-3"``).
    name : str
        What the value is, for the message (``"energy 2"``, ``"temperature"``,
        ``"factor"``, or a flag such as ``"--max-energy"``).  A *name* that
        is a Python identifier is taken as the parameter itself.
    parameter : str, optional
        The library parameter the value was given as (``"energies"``); the
        message names it as ``energies=`` and lists it in ``parameters``, so
        the CLI writes its own flag there.

    Returns
    -------
    str
        *text* unchanged.

    Raises
    ------
    InvalidParameters
        Text longer than :data:`enumerator.core.groups.MAX_DIGITS` (4,000)
        characters, or a decimal exponent beyond it: ``Fraction("1e999999999")``
        would build a number of a billion digits, and the work would not end.
        The wording is the command line's (``... is too long to read exactly;
        numbers are limited to 4,000 digits``).

    Notes
    -----
    The limit and the message are those of
    :func:`enumerator.cli.options.check_exact_numbers` and
    :func:`enumerator.core.groups.parse_count`.  Exponents are read as
    ``Fraction`` reads them (underscores and any Unicode digits).  Cost:
    linear in the length of *text*.

    Examples
    --------
    >>> size_number_text("1e300", "temperature")
    '1e300'
    >>> size_number_text("1e99999999", "factor")
    Traceback (most recent call last):
    ...
    enumerator.core.errors.InvalidParameters: factor= '1e99999999' is too long to read exactly; numbers are limited to 4,000 digits
    """
    body = text.strip()
    exponent = _EXPONENT.search(body)
    digits = exponent.group(1).replace("_", "") if exponent else ""
    if len(body) <= MAX_NUMBER_DIGITS and len(digits) <= 12 and (not digits or int(digits) <= MAX_NUMBER_DIGITS):
        return text
    if parameter is None and name.isidentifier():
        parameter = name
    if parameter is None:
        subject = f"{name} {body[:40]!r}"
    elif parameter == name:
        subject = f"{parameter}= {body[:40]!r}"
    else:
        subject = f"{name} {body[:40]!r} in {parameter}="
    raise InvalidParameters(
        f"{subject} is too long to read exactly; numbers are limited to {MAX_NUMBER_DIGITS:,} digits",
        parameters=[parameter] if parameter else [],
    )


def parse_rational(value, name: str, parameter: Optional[str] = None) -> Fraction:
    """Return *value* as an exact :class:`Fraction`.

    Parameters
    ----------
    value : int, Fraction or str
        ``"3"``, ``"-1/2"`` or ``"0.25"`` (a decimal string is exact).
    name : str
        What the value is, for the error message (``"energy 2"``, ``"gap"``).
    parameter : str, optional
        The library parameter the value belongs to (``"energies"``), named
        (``energies=``) when the text is too long to read; see
        :func:`size_number_text`.

    Returns
    -------
    Fraction

    Raises
    ------
    InvalidParameters
        A float (``0.1`` is not the rational one tenth), a boolean, text
        that is not a number, or text too long to read
        (:func:`size_number_text`: more than 4,000 characters or a decimal
        exponent beyond 4,000).

    Notes
    -----
    The text is sized first (:func:`size_number_text`), then
    ``fractions.Fraction`` parses it exactly; cost quasi-linear in its
    length, at most 4,000 digits plus an exponent of at most 4,000.

    Examples
    --------
    >>> parse_rational("0.25", "gap"), parse_rational("-1/2", "gap")
    (Fraction(1, 4), Fraction(-1, 2))
    """
    if isinstance(value, bool):
        raise InvalidParameters(f"{name} must be a number, not a boolean (got {value!r})")
    if isinstance(value, Fraction):
        return value
    if isinstance(value, int):
        return Fraction(value)
    if isinstance(value, float):
        raise InvalidParameters(
            f"{name} must be exact (got the float {value!r}); write it as an integer, "
            "a fraction like '1/3' or a decimal string like '0.25'"
        )
    if isinstance(value, str):
        text = size_number_text(value, name, parameter).strip()
        try:
            number = Fraction(text)
        except (ValueError, ZeroDivisionError):
            raise InvalidParameters(
                f"{name} ({value!r}) is not a number; write an integer, a fraction like "
                "'1/3' or a decimal like '0.25'"
            ) from None
        return number
    try:
        return Fraction(int(value)) if int(value) == value else Fraction(value)
    except (TypeError, ValueError):
        raise InvalidParameters(
            f"{name} must be an integer, a fraction or a decimal string (got {value!r})"
        ) from None


def parse_temperature(value, parameter: str = "temperatures") -> Fraction:
    """Return one temperature ``k_B T`` (in the energy unit) as an exact positive :class:`Fraction`.

    Parameters
    ----------
    value : int, Fraction, str, float or mpmath.mpf
        A finite float or mpmath number is taken at its exact binary value
        (a Boltzmann factor's ``k_B T`` arrives as an mpmath number);
        anything else goes through :func:`parse_rational`.
    parameter : str
        The library parameter the temperature was given in, named when its
        text is too long to read (``temperature '1e99999999' in
        temperatures= is too long ...``); default ``"temperatures"``.

    Returns
    -------
    Fraction
        Numerator and denominator are Python ints.

    Raises
    ------
    InvalidParameters
        Not a number, text too long to read (more than 4,000 digits or a
        decimal exponent beyond 4,000, see :func:`size_number_text`), not
        finite, not positive, or outside ``1e-300 .. 1e300`` (the reported
        floats could not follow it).

    Notes
    -----
    An mpmath number ``man * 2^exp`` becomes ``Fraction(man) * 2^exp``
    exactly; a float goes through ``Fraction(float)`` (exact).  Cost linear
    in the size of the number.

    Examples
    --------
    >>> parse_temperature("0.75"), parse_temperature(0.5)
    (Fraction(3, 4), Fraction(1, 2))
    """
    if isinstance(value, mpmath.mpf) and mpmath.isfinite(value):
        man, exp = value.man_exp
        number = Fraction(int(man)) * Fraction(2) ** int(exp)
    elif isinstance(value, float):
        if not math.isfinite(value):
            raise InvalidParameters(f"temperature must be a finite positive number (got {value!r})")
        number = Fraction(value)
    else:
        number = parse_rational(value, "temperature", parameter)
    if number <= 0:
        raise InvalidParameters(f"temperature must be positive (got {value}); give k_B T in the energy unit")
    if not _TEMPERATURE_RANGE[0] <= number <= _TEMPERATURE_RANGE[1]:
        raise InvalidParameters(
            f"temperature {_short_number(number)} is outside 1e-300..1e300 (in the energy unit), where "
            "the reported floats cannot follow it; give k_B T within that range"
        )
    return number


#: Temperatures accepted by :func:`parse_temperature`: the ``*_approx`` fields
#: (temperature, energies, heat capacity) must stay inside the double range.
_TEMPERATURE_RANGE = (Fraction(1, 10**300), Fraction(10**300))


#: Most significant digits the canonical arithmetic may be asked for.
MAX_DIGITS = 10_000


def parse_digits(digits) -> int:
    """Check the significant digits asked of the canonical arithmetic: a whole number from 5 to :data:`MAX_DIGITS`.

    Raises
    ------
    InvalidParameters
        Below 5, or above :data:`MAX_DIGITS` (every canonical step would
        carry numbers that long, so the work would run without end).

    Examples
    --------
    >>> parse_digits(50)
    50
    """
    digits = as_count(digits, "digits", 5)
    if digits > MAX_DIGITS:
        raise InvalidParameters(f"digits= {digits:,} is beyond {MAX_DIGITS:,}: every canonical step would carry "
                                "numbers that long; ask for fewer digits (50 is ample for 12-digit floats)",
                                parameters=["digits"])
    return digits


def _short_number(number: Fraction) -> str:
    """A huge or tiny positive rational as a short decimal text (``1e+400``), for messages."""
    return mpmath.nstr(mpmath.mpf(number.numerator) / number.denominator, 3)


def _split_list(values, name: str) -> list:
    if isinstance(values, str):
        items = [item.strip() for item in values.split(",")]
        if any(item == "" for item in items):
            raise InvalidParameters(
                f"{name} must be a comma-separated list such as '0,1,2,3' (got {values!r})"
            )
        return items
    try:
        return list(values)
    except TypeError:
        raise InvalidParameters(f"{name} must be a list of numbers (got {values!r})") from None



# --------------------------------------------------------------------------
# Spectra
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class Ladder:
    """An infinite ladder of levels ``offset + spacing*m`` (``m = 0, 1, ...``).

    The degeneracy of rung ``m`` is ``C(m + d - 1, d - 1)``: the levels of a
    ``d``-dimensional isotropic harmonic oscillator measured from its ground
    state (``d = 1``: the plain oscillator; ``d = 3``: the 3D trap,
    ``(m + 1)(m + 2)/2``).  ``offset`` and ``spacing`` are in units.
    """

    dimension: int
    spacing: int
    offset: int = 0

    def degeneracy(self, m: int) -> int:
        """Degeneracy ``C(m + d - 1, d - 1)`` of rung *m*."""
        return math.comb(m + self.dimension - 1, self.dimension - 1)

    def energy(self, m: int) -> int:
        """Energy of rung *m*, in units."""
        return self.offset + self.spacing * m


@dataclass(frozen=True)
class Spectrum:
    """Single-particle levels: energies (integer multiples of ``unit``) and degeneracies.

    ``energies[i] * unit`` is the energy of level ``i`` and ``degeneracies[i]``
    its number of single-particle states.  When ``ladder`` is set the listed
    levels are the lowest rungs of that infinite ladder and the spectrum goes
    on above them (see :meth:`through`); otherwise it is exactly the listed
    levels.  Build one with :func:`make_spectrum` or a preset.
    """

    energies: Tuple[int, ...]
    degeneracies: Tuple[int, ...]
    unit: Fraction = Fraction(1)
    ladder: Optional[Ladder] = None
    name: str = "levels"

    @property
    def finite(self) -> bool:
        """True when the listed levels are the whole spectrum."""
        return self.ladder is None

    @cached_property
    def lowest(self) -> int:
        """The lowest single-particle energy, in units (found once: callers read it once per level)."""
        return min(self.energies)

    def level_energy(self, i: int) -> Fraction:
        """The exact energy of listed level *i*, in the user's energy unit."""
        return self.energies[i] * self.unit

    def states(self) -> Optional[int]:
        """Number of single-particle states (``None`` for an infinite ladder)."""
        return sum(self.degeneracies) if self.finite else None

    def through(self, energy_units: int) -> "Spectrum":
        """The same spectrum listing every level of energy at most *energy_units*.

        Only a ladder grows (or shrinks, keeping at least its ground level); a
        finite spectrum is returned unchanged.

        Raises
        ------
        TooLarge
            The levels to list would take longer or more memory than the
            active limits allow (:func:`listing_cost`); a ladder listed up to
            an energy of ``1e12`` would fill the memory before any other
            check ran.
        """
        if self.ladder is None:
            return self
        lad = self.ladder
        top = max(0, (energy_units - lad.offset) // lad.spacing) if energy_units >= lad.offset else 0
        if top + 1 == len(self.energies):
            return self
        if top + 1 > len(self.energies):
            check(listing_cost(lad, top + 1), f"listing {_count_text(top + 1)} levels of the {self.name}",
                  advice="ask for fewer levels (a lower maximum energy)")
        return Spectrum(
            tuple(lad.energy(m) for m in range(top + 1)),
            tuple(lad.degeneracy(m) for m in range(top + 1)),
            self.unit,
            lad,
            self.name,
        )

    def rescaled(self, unit: Fraction) -> "Spectrum":
        """The same spectrum written in the finer *unit* (``self.unit / unit`` an integer)."""
        ratio = self.unit / unit
        if ratio.denominator != 1:
            raise InvalidParameters(f"unit {unit} does not divide {self.unit}")
        r = ratio.numerator
        if r == 1:
            return self
        ladder = None
        if self.ladder is not None:
            ladder = Ladder(self.ladder.dimension, self.ladder.spacing * r, self.ladder.offset * r)
        return Spectrum(
            tuple(e * r for e in self.energies), self.degeneracies, unit, ladder, self.name
        )

    def levels_below(self, energy_units: int) -> List[Tuple[int, int]]:
        """``(energy, degeneracy)`` of every level with energy at most *energy_units*."""
        spectrum = self.through(energy_units)
        return [
            (e, g) for e, g in zip(spectrum.energies, spectrum.degeneracies) if e <= energy_units
        ]


#: Seconds to list one rung of a ladder, and more per dimension (``math.comb`` of
#: ``d - 1``); measured CPU time, one process, load 4: 0.31 s for 10^6 rungs in
#: one dimension, 0.58 s in three, 4.2 s in 64.
_RUNG_SECONDS = (3e-7, 6e-8)


def listing_cost(ladder: Ladder, rungs: int) -> Cost:
    """Time and memory of listing the lowest *rungs* rungs of *ladder* (:meth:`Spectrum.through`).

    Parameters
    ----------
    ladder : Ladder
    rungs : int
        How many rungs are listed (any size).

    Returns
    -------
    Cost
        Seconds from the measured rate per rung (:data:`_RUNG_SECONDS`);
        memory: two tuple slots, the energy and the degeneracy
        ``C(m + d - 1, d - 1) <= (m + d)^(d - 1)`` of each rung.

    Notes
    -----
    Constant cost: nothing is listed.  The number of rungs is capped at
    ``10^300`` for the float arithmetic (far beyond any limit).

    Examples
    --------
    >>> listing_cost(Ladder(3, 1), 10**12).memory > 10**13
    True
    """
    count = float(min(rungs, 10**300))
    bits = (ladder.dimension - 1) * math.log2(count + ladder.dimension)
    seconds = count * (_RUNG_SECONDS[0] + _RUNG_SECONDS[1] * ladder.dimension)
    return Cost(seconds, int(min(count * (16 + 2 * bigint_bytes(bits)), 1e300)))


def _count_text(count: int) -> str:
    """A count for a message: digits with commas, or a power of ten past 15 digits."""
    return f"{count:,}" if count < 10**15 else f"about 10^{len(str(count)) - 1}"


def make_spectrum(energies, degeneracies=None, name: str = "levels") -> Spectrum:
    """Build a finite :class:`Spectrum` from exact energies and degeneracies.

    Parameters
    ----------
    energies : sequence or str
        Integers, fractions or decimal strings (or one comma-separated string
        ``"0,1/2,3/2"``); any order, repeats allowed.
    degeneracies : sequence or str, optional
        Whole numbers ``>= 1``, one per energy (default all 1).
    name : str
        The spectrum's name in titles.

    Returns
    -------
    Spectrum
        Every energy an integer multiple of ``unit = 1 / lcm(denominators)``.

    Raises
    ------
    InvalidParameters
        Empty lists, lengths that differ, a degeneracy below 1, a float, a
        non-number, or a number longer than 4,000 digits
        (:func:`size_number_text`).

    Notes
    -----
    Cost linear in the number of levels (one lcm of the denominators).

    Examples
    --------
    >>> s = make_spectrum("0,1/2,3/2", "1,2,1")
    >>> s.energies, s.unit
    ((0, 1, 3), Fraction(1, 2))
    """
    values = [parse_rational(v, f"energy {i + 1}", "energies") for i, v in enumerate(_split_list(energies, "energies"))]
    if not values:
        raise InvalidParameters("energies must list at least one level, e.g. energies= 0,1,2", parameters=["energies"])
    if degeneracies is None:
        degs = [1] * len(values)
    else:
        raw = _split_list(degeneracies, "degeneracies")
        degs = []
        for i, g in enumerate(raw):
            if isinstance(g, str):
                size_number_text(g, f"degeneracy {i + 1}", "degeneracies")
                try:
                    g = int(g)
                except ValueError:
                    raise InvalidParameters(
                        f"degeneracy {i + 1} ({g[:40]!r}) must be a whole number >= 1"
                    ) from None
            degs.append(as_count(g, f"degeneracy {i + 1}", 1))
        if len(degs) != len(values):
            raise InvalidParameters(
                f"give one degeneracy per energy (degeneracies=): {len(values)} energies but "
                f"{len(degs)} degeneracies",
                parameters=["degeneracies"],
            )
    lcm = 1
    for v in values:
        lcm = lcm * v.denominator // math.gcd(lcm, v.denominator)
    unit = Fraction(1, lcm)
    return Spectrum(tuple(int(v * lcm) for v in values), tuple(degs), unit, None, name)


def harmonic_oscillator(levels: Optional[int] = None, spacing=1) -> Spectrum:
    """Equally spaced non-degenerate levels ``0, s, 2s, ...`` (a 1D harmonic oscillator).

    Parameters
    ----------
    levels : int, optional
        The number of levels; ``None`` for the infinite ladder (computations
        then use as many levels as the energy range needs and closed forms for
        the partition function).
    spacing : int, Fraction or str
        The level spacing ``ħω`` (exact rational, default 1).

    Returns
    -------
    Spectrum

    Notes
    -----
    :func:`harmonic_trap` in one dimension.
    """
    return harmonic_trap(levels, dimension=1, spacing=spacing)


#: Largest dimension of :func:`harmonic_trap`.
MAX_DIMENSION = 64


def harmonic_trap(levels: Optional[int] = None, dimension: int = 3, spacing=1) -> Spectrum:
    """The isotropic harmonic trap in *dimension* dimensions, from its ground state.

    Parameters
    ----------
    levels : int, optional
        Number of levels kept; ``None`` for the infinite ladder.
    dimension : int
        ``d >= 1`` (default 3).
    spacing : int, Fraction or str
        The level spacing ``ħω``, positive (default 1).

    Returns
    -------
    Spectrum

    Raises
    ------
    InvalidParameters
        A dimension or number of levels below 1, a spacing that is not positive.
    TooLarge
        Listing *levels* levels would take longer or more memory than the
        active limits allow (:func:`listing_cost`).

    Notes
    -----
    Level ``m`` has energy ``m ħω`` and degeneracy ``C(m + d - 1, d - 1)``
    (``(m + 1)(m + 2)/2`` in 3D: the number of ``(n_x, n_y, n_z)`` with
    ``n_x + n_y + n_z = m``; stars and bars).  The zero-point energy
    ``d ħω / 2`` is left out.  Cost linear in *levels* (constant for the ladder).

    Examples
    --------
    >>> harmonic_trap(4).degeneracies
    (1, 3, 6, 10)
    """
    d = as_count(dimension, "dimension", 1)
    if d > MAX_DIMENSION:
        raise InvalidParameters(
            f"dimension= {d:,} is beyond {MAX_DIMENSION}: the degeneracy C(m + d - 1, d - 1) of rung m grows "
            "like m^(d-1), so every canonical sum would hold numbers of that size; choose a smaller dimension",
            parameters=["dimension"],
        )
    step = parse_rational(spacing, "spacing")
    if step <= 0:
        raise InvalidParameters(f"spacing must be positive (got {step})")
    name = "harmonic oscillator" if d == 1 else f"{d}D harmonic trap"
    unit = Fraction(1, step.denominator)
    s = step.numerator
    if levels is None:
        return Spectrum((0,), (1,), unit, Ladder(d, s), name)
    count = as_count(levels, "levels", 1)
    lad = Ladder(d, s)
    check(listing_cost(lad, count), f"listing {_count_text(count)} levels of the {name}",
          advice="ask for fewer levels (levels=), or leave levels= out for the whole ladder", parameters=["levels"])
    return Spectrum(
        tuple(lad.energy(m) for m in range(count)),
        tuple(lad.degeneracy(m) for m in range(count)),
        unit,
        None,
        f"{name} ({count} levels)",
    )


def two_level(gap=1, degeneracies=(1, 1)) -> Spectrum:
    """Two levels ``0`` and *gap* with degeneracies ``(g_0, g_1)``.

    Parameters
    ----------
    gap : int, Fraction or str
        The energy gap, positive (default 1).
    degeneracies : pair of int or str
        ``(g_0, g_1)``, default ``(1, 1)``.

    Returns
    -------
    Spectrum

    Raises
    ------
    InvalidParameters
        A gap that is not positive, or not exactly two degeneracies.

    Notes
    -----
    :func:`make_spectrum` of ``[0, gap]``; constant cost.
    """
    delta = parse_rational(gap, "gap")
    if delta <= 0:
        raise InvalidParameters(f"gap= must be positive (got {delta})", parameters=["gap"])
    degs = _split_list(degeneracies, "degeneracies")
    if len(degs) != 2:
        raise InvalidParameters("a two-level system takes two degeneracies, e.g. degeneracies= 1,1",
                                parameters=["degeneracies"])
    spectrum = make_spectrum([Fraction(0), delta], degs, "two-level system")
    return spectrum


# --------------------------------------------------------------------------
# Systems
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class System:
    """``particles`` particles on a :class:`Spectrum` under a counting rule.

    ``capacity`` bounds the occupation of each single-particle state
    (``None``: no bound); FD means capacity 1 and BE with a capacity is
    Gentile's intermediate statistics.  MB particles are distinguishable and
    take no capacity.  Build one with :meth:`create` or :func:`make_system`.
    """

    spectrum: Spectrum
    particles: int
    rule: Rule = Rule.BE
    capacity: Optional[int] = None

    @classmethod
    def create(cls, spectrum: Spectrum, particles, rule="BE", capacity=None) -> "System":
        """Validate and normalise (FD becomes capacity 1; BE with capacity 1 is FD)."""
        n = as_count(particles, "particles")
        rule = Rule.parse(rule)
        if capacity is not None:
            capacity = as_count(capacity, "capacity", 1)
        if rule is Rule.FD:
            if capacity not in (None, 1):
                raise InvalidParameters(
                    f"FD allows at most one particle per state (got capacity {capacity}); "
                    "use rule= BE with capacity= for intermediate statistics",
                    parameters=["rule", "capacity"],
                )
            capacity = 1
        elif rule is Rule.BE and capacity == 1:
            rule = Rule.FD
        elif rule is Rule.MB and capacity is not None:
            raise Unsupported(
                "a capacity per state is available for BE (identical particles) only; "
                "drop capacity= or use rule= BE",
                parameters=["capacity", "rule"],
            )
        return cls(spectrum, n, rule, capacity)

    @property
    def has_reservoir(self) -> bool:
        """False for localised, distinguishable oscillators (an Einstein solid): no grand-canonical ensemble.

        Their number is fixed by the crystal, so a chemical potential and
        grand-canonical occupations mean nothing for them.
        """
        return self.spectrum.name != "Einstein solid"

    @property
    def label(self) -> str:
        """A short description for titles."""
        if self.spectrum.name == "Einstein solid":
            return f"Einstein solid of {self.particles} oscillators"
        rule = self.rule.value
        if self.rule is Rule.BE and self.capacity is not None:
            rule = f"BE, at most {self.capacity} per state"
        return f"{self.particles} particles ({rule}) on {self.spectrum.name}"

    def weights(self, kmax: int) -> List[int]:
        """``w_k`` of the particle-number recursion, ``k = 0..kmax`` (``w_0`` unused).

        ``k [x^k] ln ∏(per-state factor) = w_k z(t^k)``: BE ``w_k = 1``; FD
        ``(-1)^{k+1}``; capacity ``c``: ``1 - (c+1)`` when ``(c+1) | k``, else 1.
        """
        if self.capacity is None:
            return [1] * (kmax + 1)
        c1 = self.capacity + 1
        return [1 - c1 if k % c1 == 0 else 1 for k in range(kmax + 1)]


def make_system(
    particles=None,
    energies=None,
    degeneracies=None,
    rule=None,
    capacity=None,
    preset: Optional[str] = None,
    levels: Optional[int] = None,
    dimension: Optional[int] = None,
    gap=None,
    oscillators: Optional[int] = None,
) -> System:
    """Build a :class:`System` from explicit levels or a preset (what the CLI calls).

    Parameters
    ----------
    particles : int, optional
        ``N``; required except for the ``einstein`` preset (where it may stand
        for *oscillators*).
    energies, degeneracies : optional
        Explicit levels, as :func:`make_spectrum` takes them; *degeneracies*
        also gives the two of the ``two-level`` preset.
    rule : str or Rule, optional
        ``MB`` (default), ``BE`` or ``FD``.
    capacity : int, optional
        BE only: at most this many particles per state.
    preset : str, optional
        One of :data:`PRESETS` (or an alias): ``harmonic`` (*levels*), ``trap``
        (*levels*, *dimension*, default 3), ``two-level`` (*gap*,
        *degeneracies*), ``einstein`` (*oscillators*: ``N`` distinguishable
        oscillators, rule MB).
    levels, dimension, gap, oscillators : optional
        The preset's own parameters; giving *oscillators* alone means ``einstein``.

    Returns
    -------
    System

    Raises
    ------
    InvalidParameters
        Missing levels or particles, both explicit levels and a preset, a
        parameter the preset does not take, an unknown preset.
    Unsupported
        A capacity under MB.

    Notes
    -----
    Validation only; cost linear in the number of levels given.
    """
    if preset is None:
        for value, option in ((levels, "levels"), (dimension, "dimension"), (gap, "gap")):
            if value is not None:
                raise InvalidParameters(
                    f"{option}= belongs to a preset; add preset= or drop {option}=", parameters=["preset", option]
                )
        if oscillators is not None:
            preset = "einstein"
    if preset is None:
        if energies is None:
            raise InvalidParameters(
                "describe the levels: give energies= (and degeneracies=) or preset= "
                f"({', '.join(PRESETS)})",
                parameters=["energies", "degeneracies", "preset"],
            )
        if particles is None:
            raise InvalidParameters("give the number of particles (particles= N)", parameters=["particles"])
        spectrum = make_spectrum(energies, degeneracies)
        return System.create(spectrum, particles, rule or "MB", capacity)
    key = _preset_key(preset)
    if energies is not None:
        raise InvalidParameters("give either energies= or preset=, not both", parameters=["energies", "preset"])
    if key == "einstein":
        for value, option in ((levels, "levels"), (dimension, "dimension"), (gap, "gap"), (degeneracies, "degeneracies")):
            if value is not None:
                raise InvalidParameters(f"the einstein preset takes no {option}=", parameters=[option])
        if oscillators is not None and particles is not None and oscillators != particles:
            raise InvalidParameters(
                f"oscillators= ({oscillators}) and particles= ({particles}) disagree; give one",
                parameters=["oscillators", "particles"],
            )
        count = oscillators if oscillators is not None else particles
        if count is None:
            raise InvalidParameters(
                "an Einstein solid needs its number of oscillators (oscillators= N)", parameters=["oscillators"]
            )
        if rule is not None and Rule.parse(rule) is not Rule.MB:
            raise InvalidParameters(
                "the oscillators of an Einstein solid are distinguishable (localised): "
                "use rule= MB or leave rule= out",
                parameters=["rule"],
            )
        if capacity is not None:
            raise InvalidParameters("the einstein preset takes no capacity=", parameters=["capacity"])
        return einstein_solid(count)
    if oscillators is not None:
        raise InvalidParameters(
            "oscillators= belongs to the einstein preset; use particles=", parameters=["oscillators", "particles"]
        )
    if particles is None:
        raise InvalidParameters("give the number of particles (particles= N)", parameters=["particles"])
    if key == "two-level":
        for value, option in ((levels, "levels"), (dimension, "dimension")):
            if value is not None:
                raise InvalidParameters(f"the two-level preset takes no {option}=", parameters=[option])
        spectrum = two_level(1 if gap is None else gap, (1, 1) if degeneracies is None else degeneracies)
    else:
        if gap is not None:
            raise InvalidParameters(f"the {key} preset takes no gap=", parameters=["gap"])
        if degeneracies is not None:
            raise InvalidParameters(
                f"the {key} preset fixes the degeneracies; drop degeneracies=", parameters=["degeneracies"]
            )
        if key == "harmonic":
            if dimension not in (None, 1):
                raise InvalidParameters(
                    "the harmonic preset is one-dimensional; use preset= trap dimension= D",
                    parameters=["preset", "dimension"],
                )
            spectrum = harmonic_oscillator(levels)
        else:
            spectrum = harmonic_trap(levels, 3 if dimension is None else dimension)
    return System.create(spectrum, particles, rule or "MB", capacity)


def einstein_solid(oscillators) -> System:
    """``N`` distinguishable 1D oscillators sharing quanta: MB on the harmonic ladder.

    Parameters
    ----------
    oscillators : int
        ``N >= 1``.

    Returns
    -------
    System

    Notes
    -----
    The multiplicity of ``q`` quanta is ``C(q + N - 1, q)`` (stars and bars);
    Einstein's model of a solid (A. Einstein, Ann. Phys. 22, 180 (1907)).
    """
    n = as_count(oscillators, "oscillators", 1)
    spectrum = harmonic_oscillator()
    spectrum = Spectrum(spectrum.energies, spectrum.degeneracies, spectrum.unit, spectrum.ladder, "Einstein solid")
    return System(spectrum, n, Rule.MB, None)


#: Preset names and their aliases.
PRESETS = {
    "harmonic": ("harmonic", "oscillator", "harmonic-oscillator", "ho", "1d-oscillator", "ladder"),
    "trap": ("trap", "harmonic-trap", "3d-trap", "3d", "trap3d", "3d-harmonic-trap", "isotropic-trap"),
    "two-level": ("two-level", "twolevel", "two-state", "2-level", "two-level-system"),
    "einstein": ("einstein", "einstein-solid", "solid", "einstein-crystal"),
}


def _preset_key(name: str) -> str:
    text = str(name).strip().lower().replace("_", "-").replace(" ", "-")
    for key, aliases in PRESETS.items():
        if text in aliases:
            return key
    raise InvalidParameters(
        f"unknown preset {name!r}; choose one of {', '.join(PRESETS)}"
    )


# --------------------------------------------------------------------------
# Ground energy
# --------------------------------------------------------------------------
def ground_and_gap(spectrum: Spectrum):
    """``(g0, gap)``: the degeneracy of the lowest level and the distance to the next (``None``: none).

    In units of the energy grid.  A ladder counts its rungs beyond the listed
    levels (a ladder listed to rung 0 still has the gap of its spacing).
    """
    low = spectrum.lowest
    lad = spectrum.ladder
    if lad is not None and lad.offset == low:
        return lad.degeneracy(0), lad.spacing
    g0 = sum(g for e, g in zip(spectrum.energies, spectrum.degeneracies) if e == low)
    above = [e - low for e in spectrum.energies if e > low]
    if lad is not None:
        above.append(lad.energy(1) - low)
    return g0, (min(above) if above else None)


def ground_energy(system: System) -> Optional[int]:
    """The lowest total energy of *system*, in units (``None`` if no state exists).

    Parameters
    ----------
    system : System

    Returns
    -------
    int or None

    Notes
    -----
    Fill the single-particle states from the bottom, at most ``capacity`` per
    state (the ground state of an ideal gas, common practice).  Cost linear in
    the number of levels filled.

    Examples
    --------
    >>> ground_energy(System.create(harmonic_trap(), 4, "FD"))
    3
    """
    n = system.particles
    if n == 0:
        return 0
    spectrum = system.spectrum
    if system.capacity is None:
        return n * spectrum.lowest
    cap = system.capacity
    remaining, total = n, 0
    if spectrum.finite:
        levels = sorted(zip(spectrum.energies, spectrum.degeneracies))
    else:
        lad = spectrum.ladder
        levels = ((lad.energy(m), lad.degeneracy(m)) for m in _count_up())
    for e, g in levels:
        take = min(remaining, g * cap)
        total += take * e
        remaining -= take
        if remaining == 0:
            return total
    return None


def _count_up():
    m = 0
    while True:
        yield m
        m += 1


def temperature_text(temperature: Fraction) -> str:
    """A temperature for a message, as the user likely wrote it.

    A terminating decimal of at most 16 characters as a decimal (``0.005``),
    else an exact fraction of at most 16 characters (``1/3``), else six
    significant digits (``1.0e-300``).

    >>> temperature_text(Fraction(1, 200)), temperature_text(Fraction(1, 3)), temperature_text(Fraction(1, 10**300))
    ('0.005', '1/3', '1.0e-300')
    >>> temperature_text(Fraction(1, 10**6)), temperature_text(Fraction(5)), temperature_text(Fraction(25, 2))
    ('0.000001', '5', '12.5')
    """
    rest, places = temperature.denominator, 0
    for prime in (2, 5):
        count = 0
        while rest % prime == 0:
            rest //= prime
            count += 1
        places = max(places, count)
    if rest == 1:
        scaled = str(abs(temperature.numerator) * 10**places // temperature.denominator)
        if places:
            scaled = scaled.rjust(places + 1, "0")
            scaled = f"{scaled[:-places]}.{scaled[-places:]}"
        scaled = "-" + scaled if temperature < 0 else scaled
        if len(scaled) <= 16:
            return scaled
    text = str(temperature)
    if len(text) <= 16:
        return text
    with mpmath.workdps(15):
        return mpmath.nstr(mpmath.mpf(temperature.numerator) / temperature.denominator, 6)
