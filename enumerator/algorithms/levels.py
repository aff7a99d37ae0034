r"""Energy levels with degeneracies: exact statistical mechanics of small systems.

A :class:`Spectrum` is a list of single-particle levels, energy ``ε_i`` and
degeneracy ``g_i`` (``g_i`` single-particle states share the energy).  Energies
are exact rationals stored as integer multiples of one common ``unit``
(``1/lcm`` of their denominators, so integer energies keep the unit ``1``).
A :class:`System` puts ``N`` particles on a spectrum under a counting rule:

``MB``
    distinguishable particles (localised oscillators, tagged atoms): every
    assignment of the ``N`` labelled particles to single-particle states is one
    microstate, so ``Ω_N(t) = (Σ_i g_i t^{ε_i})^N``.
``BE``
    identical bosons: a microstate is an occupancy of the single-particle
    states, ``Σ_N Ω_N(t) x^N = ∏_i (1 - x t^{ε_i})^{-g_i}``; with a
    ``capacity`` ``c`` per state (Gentile's intermediate statistics) each state
    holds at most ``c``: ``∏_i ((1 - x^{c+1} t^{(c+1)ε_i}) / (1 - x t^{ε_i}))^{g_i}``.
``FD``
    identical fermions, at most one per state: ``∏_i (1 + x t^{ε_i})^{g_i}``.

The coefficient ``Ω(N, E) = [x^N t^E]`` is the multiplicity of the total energy
``E``; the polynomial ``Z_N(t) = Σ_E Ω(N, E) t^E`` is the canonical partition
function with ``t = e^{-β·unit}``, so its coefficients are exact integers.

What is computed, and how:

* :func:`multiplicities` -- ``Ω(N, E)`` for every ``E`` up to a maximum, exact,
  with FLINT integer polynomials (:mod:`enumerator.series`).  MB is one
  truncated power; BE/FD/Gentile use the recursion over the particle number
  ``N Z_N(t) = Σ_{k=1}^{N} w_k z(t^k) Z_{N-k}(t)``, ``z(t) = Σ g_i t^{ε_i}``
  (Newton's identities between complete/elementary symmetric functions and
  power sums, Macdonald, *Symmetric Functions and Hall Polynomials*, 1995,
  I.2), whose divisions by ``N`` are exact.
* :func:`thermal_contact` -- two systems sharing a total energy: the exact table
  ``Ω_A(E_A) Ω_B(E - E_A)``, the most probable split and the exact
  probabilities.
* :func:`microcanonical` -- ``ln Ω(E)`` and the temperature from central finite
  differences of ``ln Ω`` (approximations, so named).
* :func:`canonical` -- ``Z``, mean energy, heat capacity, free energy, entropy
  and mean level occupations at given temperatures, from the recursion for the
  canonical partition function of ideal quantum gases (P. Borrmann and
  G. Franke, *Recursion formulas for quantum statistical partition functions*,
  J. Chem. Phys. 98, 2484 (1993); P. Borrmann, J. Harting, O. Mülken and
  E. Hilf, *Calculation of thermodynamic properties of finite Bose-Einstein
  systems*, Phys. Rev. A 60, 1519 (1999)) to a requested number of digits:
  mpmath for the exponentials, logarithms and root finding, the recursion
  itself in exact fixed-point integers (FLINT products, divide and conquer),
  with the precision raised until an error bound meets the request.  Beside
  them, the grand-canonical occupation formulas at the chemical potential that
  gives mean ``N``.

Units: energies and temperatures share the user's energy unit, with
Boltzmann's constant ``k_B = 1`` (a temperature ``T`` means ``k_B T = T``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Dict, Iterable, List, Optional, Sequence, Tuple

import mpmath
from flint import fmpz_poly

from ..core import series
from ..core.errors import InvalidParameters, TooLarge, Unsupported
from ..core.model import as_count
from ..core.rules import Rule

__all__ = [
    "CanonicalPoint",
    "Contact",
    "Ladder",
    "MicroPoint",
    "Spectrum",
    "System",
    "canonical",
    "canonical_occupations",
    "contact_payload",
    "einstein_solid",
    "grand_canonical",
    "ground_energy",
    "harmonic_oscillator",
    "harmonic_trap",
    "levels_payload",
    "make_spectrum",
    "make_system",
    "microcanonical",
    "multiplicities",
    "multiplicity_table",
    "parse_rational",
    "plot_contact",
    "plot_levels",
    "PRESETS",
    "thermal_contact",
    "two_level",
]

#: Largest ``(N + 1) * (E + 1)`` table of exact multiplicities computed without
#: being asked (each cell is a big integer); pass ``limit=`` to go further.
MAX_CELLS = 10_000_000

#: Default number of significant decimal digits of the canonical results.
DEFAULT_DIGITS = 50

#: Extra decimal digits carried beyond the requested ones.
GUARD_DIGITS = 12

#: Grand-canonical ladder sums switch to the closed-form tail where
#: ``β(ε - μ)`` exceeds this.
_TAIL_GAP = 4


# --------------------------------------------------------------------------
# Input parsing
# --------------------------------------------------------------------------
def parse_rational(value, name: str) -> Fraction:
    """Return *value* as an exact :class:`Fraction`.

    Accepts ``int``, ``Fraction`` and strings such as ``"3"``, ``"-1/2"`` or
    ``"0.25"`` (a decimal string is exact).  Floats are refused: ``0.1`` is not
    the rational one tenth.
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
        text = value.strip()
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


def _parse_temperature(value) -> Fraction:
    if isinstance(value, mpmath.mpf) and mpmath.isfinite(value):
        man, exp = value.man_exp
        number = Fraction(man) * Fraction(2) ** exp
    elif isinstance(value, float):
        if not math.isfinite(value):
            raise InvalidParameters(f"temperature must be a finite positive number (got {value!r})")
        number = Fraction(value)
    else:
        number = parse_rational(value, "temperature")
    if number <= 0:
        raise InvalidParameters(
            f"temperature must be positive (got {value}); give k_B T in the energy unit"
        )
    return number


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

    @property
    def lowest(self) -> int:
        """The lowest single-particle energy, in units."""
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
        """
        if self.ladder is None:
            return self
        lad = self.ladder
        top = max(0, (energy_units - lad.offset) // lad.spacing) if energy_units >= lad.offset else 0
        if top + 1 == len(self.energies):
            return self
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


def make_spectrum(energies, degeneracies=None, name: str = "levels") -> Spectrum:
    """Build a finite :class:`Spectrum` from exact energies and degeneracies.

    :param energies: integers, fractions or decimal strings (or one
        comma-separated string ``"0,1/2,3/2"``); any order, repeats allowed.
    :param degeneracies: whole numbers ``>= 1``, one per energy (default all 1).
    :returns: the spectrum with every energy an integer multiple of
        ``unit = 1 / lcm(denominators)``.
    :raises InvalidParameters: empty lists, lengths that differ, a degeneracy
        below 1, a float or a non-number.

    >>> s = make_spectrum("0,1/2,3/2", "1,2,1")
    >>> s.energies, s.unit
    ((0, 1, 3), Fraction(1, 2))
    """
    values = [parse_rational(v, f"energy {i + 1}") for i, v in enumerate(_split_list(energies, "energies"))]
    if not values:
        raise InvalidParameters("energies must list at least one level, e.g. --energies 0,1,2")
    if degeneracies is None:
        degs = [1] * len(values)
    else:
        raw = _split_list(degeneracies, "degeneracies")
        degs = []
        for i, g in enumerate(raw):
            if isinstance(g, str):
                try:
                    g = int(g)
                except ValueError:
                    raise InvalidParameters(
                        f"degeneracy {i + 1} ({g!r}) must be a whole number >= 1"
                    ) from None
            degs.append(as_count(g, f"degeneracy {i + 1}", 1))
        if len(degs) != len(values):
            raise InvalidParameters(
                f"give one degeneracy per energy: {len(values)} energies but "
                f"{len(degs)} degeneracies"
            )
    lcm = 1
    for v in values:
        lcm = lcm * v.denominator // math.gcd(lcm, v.denominator)
    unit = Fraction(1, lcm)
    return Spectrum(tuple(int(v * lcm) for v in values), tuple(degs), unit, None, name)


def harmonic_oscillator(levels: Optional[int] = None, spacing=1) -> Spectrum:
    """Equally spaced non-degenerate levels ``0, s, 2s, ...`` (a 1D harmonic oscillator).

    :param levels: the number of levels; ``None`` for the infinite ladder
        (computations then use as many levels as the energy range needs and
        closed forms for the partition function).
    :param spacing: the level spacing ``ħω`` (exact rational, default 1).
    """
    return harmonic_trap(levels, dimension=1, spacing=spacing)


def harmonic_trap(levels: Optional[int] = None, dimension: int = 3, spacing=1) -> Spectrum:
    """The isotropic harmonic trap in *dimension* dimensions, from its ground state.

    Level ``m`` has energy ``m ħω`` and degeneracy ``C(m + d - 1, d - 1)``
    (``(m + 1)(m + 2)/2`` in 3D: the number of ``(n_x, n_y, n_z)`` with
    ``n_x + n_y + n_z = m``).  The zero-point energy ``d ħω / 2`` is left out.

    :param levels: number of levels kept; ``None`` for the infinite ladder.
    """
    d = as_count(dimension, "dimension", 1)
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
    return Spectrum(
        tuple(lad.energy(m) for m in range(count)),
        tuple(lad.degeneracy(m) for m in range(count)),
        unit,
        None,
        f"{name} ({count} levels)",
    )


def two_level(gap=1, degeneracies=(1, 1)) -> Spectrum:
    """Two levels ``0`` and *gap* with degeneracies ``(g_0, g_1)`` (default ``(1, 1)``)."""
    delta = parse_rational(gap, "gap")
    if delta <= 0:
        raise InvalidParameters(f"gap must be positive (got {delta})")
    degs = _split_list(degeneracies, "degeneracies")
    if len(degs) != 2:
        raise InvalidParameters("a two-level system takes two degeneracies, e.g. 1,1")
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
                    "use --rule BE with --capacity for intermediate statistics"
                )
            capacity = 1
        elif rule is Rule.BE and capacity == 1:
            rule = Rule.FD
        elif rule is Rule.MB and capacity is not None:
            raise Unsupported(
                "a capacity per state is available for BE (identical particles) only; "
                "drop --capacity or use --rule BE"
            )
        return cls(spectrum, n, rule, capacity)

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

    Presets (see :data:`PRESETS`): ``harmonic`` (``levels``), ``trap``
    (``levels``, ``dimension``, default 3), ``two-level`` (``gap``,
    ``degeneracies`` as two numbers), ``einstein`` (``oscillators`` or
    ``particles``: ``N`` distinguishable oscillators, rule MB).  The default
    rule is MB.
    """
    if preset is None:
        for value, option in ((levels, "levels"), (dimension, "dimension"), (gap, "gap")):
            if value is not None:
                raise InvalidParameters(f"{option} belongs to a preset; add --preset or drop --{option}")
        if oscillators is not None:
            preset = "einstein"
    if preset is None:
        if energies is None:
            raise InvalidParameters(
                "describe the levels: give --energies (and --degeneracies) or --preset "
                f"({', '.join(PRESETS)})"
            )
        if particles is None:
            raise InvalidParameters("give the number of particles (--particles N)")
        spectrum = make_spectrum(energies, degeneracies)
        return System.create(spectrum, particles, rule or "MB", capacity)
    key = _preset_key(preset)
    if energies is not None:
        raise InvalidParameters("give either --energies or --preset, not both")
    if key == "einstein":
        for value, option in ((levels, "levels"), (dimension, "dimension"), (gap, "gap"), (degeneracies, "degeneracies")):
            if value is not None:
                raise InvalidParameters(f"the einstein preset takes no --{option}")
        if oscillators is not None and particles is not None and oscillators != particles:
            raise InvalidParameters(
                f"--oscillators ({oscillators}) and --particles ({particles}) disagree; give one"
            )
        count = oscillators if oscillators is not None else particles
        if count is None:
            raise InvalidParameters("an Einstein solid needs its number of oscillators (--oscillators N)")
        if rule is not None and Rule.parse(rule) is not Rule.MB:
            raise InvalidParameters(
                "the oscillators of an Einstein solid are distinguishable (localised): "
                "use --rule MB or leave --rule out"
            )
        if capacity is not None:
            raise InvalidParameters("the einstein preset takes no --capacity")
        return einstein_solid(count)
    if oscillators is not None:
        raise InvalidParameters("--oscillators belongs to the einstein preset; use --particles")
    if particles is None:
        raise InvalidParameters("give the number of particles (--particles N)")
    if key == "two-level":
        for value, option in ((levels, "levels"), (dimension, "dimension")):
            if value is not None:
                raise InvalidParameters(f"the two-level preset takes no --{option}")
        spectrum = two_level(1 if gap is None else gap, (1, 1) if degeneracies is None else degeneracies)
    else:
        if gap is not None:
            raise InvalidParameters(f"the {key} preset takes no --gap")
        if degeneracies is not None:
            raise InvalidParameters(f"the {key} preset fixes the degeneracies; drop --degeneracies")
        if key == "harmonic":
            if dimension not in (None, 1):
                raise InvalidParameters("the harmonic preset is one-dimensional; use --preset trap --dimension D")
            spectrum = harmonic_oscillator(levels)
        else:
            spectrum = harmonic_trap(levels, 3 if dimension is None else dimension)
    return System.create(spectrum, particles, rule or "MB", capacity)


def einstein_solid(oscillators) -> System:
    """``N`` distinguishable 1D oscillators sharing quanta: MB on the harmonic ladder.

    The multiplicity of ``q`` quanta is ``C(q + N - 1, q)`` (stars and bars).
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
# Exact multiplicities
# --------------------------------------------------------------------------
def _to_units(energy, unit: Fraction, name: str = "max_energy") -> int:
    """Floor of *energy* / *unit* (energy exact: int, Fraction or string)."""
    value = parse_rational(energy, name)
    return math.floor(value / unit)


def ground_energy(system: System) -> Optional[int]:
    """The lowest total energy of *system*, in units (``None`` if no state exists).

    Fill the single-particle states from the bottom, at most ``capacity`` per
    state (common practice: the ground state of an ideal gas).
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


def _check_size(cells: int, limit: Optional[int]) -> None:
    bound = MAX_CELLS if limit is None else limit
    if cells > bound:
        raise TooLarge(
            f"the exact table would hold {cells:,} big integers (limit {bound:,}); lower "
            "the maximum energy or the number of particles, or raise the limit"
        )


def _series_z(spectrum: Spectrum, shift: int, degree: int) -> List[int]:
    """Coefficients ``[t^0..t^degree]`` of ``z(t) = Σ g t^{ε - shift}``."""
    coeffs = [0] * (degree + 1)
    for e, g in spectrum.levels_below(shift + degree):
        coeffs[e - shift] += g
    return coeffs


#: Particle-number blocks of at most this size run the plain recursion; larger
#: ones are split in half (measured on the trap workloads of scripts/bench.py).
_EXACT_BLOCK = 4


def _partition_polynomials(system: System, top: int, degree: int) -> List[fmpz_poly]:
    """``Z_n(t)`` for ``n = 0..top`` (energies shifted by the lowest level), mod ``t^{degree+1}``.

    The recursion over the particle number ``n Z_n = Σ_{k=1}^{n} w_k z(t^k) Z_{n-k}``
    (Newton's identities; Borrmann & Franke 1993 for its thermal form); every
    division by ``n`` is exact (and checked: FLINT raises otherwise).  The
    convolution over ``k`` is computed online by divide and conquer (J. van
    der Hoeven, *Relax, but don't be too lazy*, J. Symb. Comput. 34, 2002):
    once ``Z_lo..Z_{mid-1}`` are known, their whole contribution to
    ``n`` in ``[mid, hi)`` is one FLINT product of the two bivariate blocks,
    packed into one variable with stride ``2 degree + 1`` (Kronecker
    substitution) -- ``O(log top)`` big products instead of ``top^2/2``
    products of length ``degree + 1``, about twice as fast at
    ``top = 100``, ``degree = 2000``.
    """
    shift = system.spectrum.lowest
    z = _series_z(system.spectrum, shift, degree)
    w = system.weights(top)
    length = degree + 1
    stride = 2 * degree + 1
    powers = [fmpz_poly()]
    for k in range(1, top + 1):
        # z(t^k) keeps the levels with k * e <= degree.
        base = fmpz_poly(z[: degree // k + 1])
        a = base.inflate(k) if k > 1 else base
        powers.append(a * w[k] if w[k] != 1 else a)
    polys: List[Optional[fmpz_poly]] = [fmpz_poly([1])] + [None] * top
    acc = [fmpz_poly() for _ in range(top + 1)]
    packed_powers: Dict[int, fmpz_poly] = {}

    def pack(items) -> fmpz_poly:
        out = []
        for p in items:
            c = p.coeffs()
            out.extend(c)
            out.extend([0] * (stride - len(c)))
        return fmpz_poly(out)

    def solve(lo: int, hi: int) -> None:
        if hi - lo <= _EXACT_BLOCK:
            for n in range(lo, hi):
                if n:
                    polys[n] = acc[n] / n  # exact: raises if not
                for m in range(n + 1, hi):
                    if not powers[m - n].is_zero():
                        acc[m] += powers[m - n].mul_low(polys[n], length)
            return
        mid = (lo + hi) // 2
        solve(lo, mid)
        span = hi - lo
        kernel = packed_powers.get(span)
        if kernel is None:
            kernel = packed_powers[span] = pack(powers[:span])
        product = pack(polys[lo:mid]).mul_low(kernel, span * stride).coeffs()
        for m in range(mid, hi):
            start = (m - lo) * stride
            piece = product[start : start + length]
            if piece:
                acc[m] += fmpz_poly(piece)
        solve(mid, hi)

    solve(0, top + 1)
    return polys


def _mb_polynomial(system: System, degree: int) -> fmpz_poly:
    """``z(t)^N`` mod ``t^{degree+1}`` (shifted energies); a ladder uses ``(1-t^s)^{-dN}``."""
    spectrum = system.spectrum
    n = system.particles
    if spectrum.ladder is not None:
        lad = spectrum.ladder
        row = series.binomial_row(lad.dimension * n, degree // lad.spacing)
        poly = fmpz_poly([int(c) for c in row])
        return poly.inflate(lad.spacing) if lad.spacing > 1 else poly
    z = fmpz_poly(_series_z(spectrum, spectrum.lowest, degree))
    return series.power(z, n, degree)


def multiplicities(
    system: System, max_energy=None, limit: Optional[int] = None
) -> Dict[int, int]:
    r"""Return ``{E: Ω(N, E)}`` for every total energy from the lowest reachable to *max_energy*.

    Keys are total energies in units of ``system.spectrum.unit`` (the energy is
    ``key * unit``), consecutive integers including those of count 0; values
    are exact ``int`` -- the coefficients of the canonical partition function
    ``Z_N(t)``.  MB counts assignments of distinguishable particles; BE and FD
    occupancies of identical particles (module docstring).

    :param max_energy: the largest total energy (exact, in the energy unit);
        ``None`` for a finite spectrum means the highest reachable energy.
    :param limit: the largest table (cells) to compute, default
        :data:`MAX_CELLS`.
    :returns: an empty dict when no state has energy at most *max_energy*.

    Cost: MB one truncated FLINT power; BE/FD ``N^2/2`` FLINT products of
    length ``E - N ε_min + 1``.

    >>> multiplicities(einstein_solid(3), 4)
    {0: 1, 1: 3, 2: 6, 3: 10, 4: 15}
    """
    spectrum = system.spectrum
    n = system.particles
    if max_energy is None:
        if not spectrum.finite:
            raise InvalidParameters(
                "an infinite ladder of levels needs a maximum energy (--max-energy), "
                "or make it finite with --levels"
            )
        top_units = _highest_energy(system)
        trim = True
    else:
        top_units = _to_units(max_energy, spectrum.unit)
        trim = False
    low = ground_energy(system)
    if low is None or top_units is None or low > top_units:
        return {}
    shift = spectrum.lowest
    degree = top_units - n * shift
    if system.rule is Rule.MB:
        _check_size(degree + 1, limit)
        poly = _mb_polynomial(system, degree)
    else:
        _check_size((n + 1) * (degree + 1), limit)
        poly = _partition_polynomials(system, n, degree)[n]
    coeffs = series.coefficients(poly, degree)
    result = {n * shift + e: int(coeffs[e]) for e in range(low - n * shift, degree + 1)}
    if trim:
        last = max((e for e, v in result.items() if v), default=None)
        result = {e: v for e, v in result.items() if last is not None and e <= last}
    return result


def _highest_energy(system: System) -> Optional[int]:
    """The highest total energy of a finite *system*, in units (``None``: no state)."""
    mirrored = Spectrum(
        tuple(-e for e in system.spectrum.energies),
        system.spectrum.degeneracies,
        system.spectrum.unit,
    )
    low = ground_energy(System(mirrored, system.particles, system.rule, system.capacity))
    return None if low is None else -low


def multiplicity_table(
    system: System, max_energy, limit: Optional[int] = None
) -> List[Dict[int, int]]:
    """Return ``[multiplicities for n = 0..N]``: the whole bivariate table in one pass.

    Row ``n`` is :func:`multiplicities` of the same spectrum and rule with
    ``n`` particles (keys in units, from that row's lowest energy).  BE/FD
    rows come from one run of the particle-number recursion.
    """
    spectrum = system.spectrum
    top_units = _to_units(max_energy, spectrum.unit)
    n = system.particles
    shift = spectrum.lowest
    degree = top_units - min(0, n * shift)
    rows: List[Dict[int, int]] = []
    if system.rule is Rule.MB or degree < 0:
        for m in range(n + 1):
            rows.append(multiplicities(System(spectrum, m, system.rule, system.capacity), max_energy, limit))
        return rows
    _check_size((n + 1) * (degree + 1), limit)
    polys = _partition_polynomials(system, n, degree)
    for m in range(n + 1):
        sub = System(spectrum, m, system.rule, system.capacity)
        low = ground_energy(sub)
        d_m = top_units - m * shift
        if low is None or low > top_units:
            rows.append({})
            continue
        coeffs = series.coefficients(polys[m], d_m)
        rows.append({m * shift + e: int(coeffs[e]) for e in range(low - m * shift, d_m + 1)})
    return rows


# --------------------------------------------------------------------------
# Thermal contact
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class Contact:
    """Two systems sharing ``energy`` (units of ``unit``): exact split statistics.

    ``split[E_A] = Ω_A(E_A) Ω_B(E - E_A)`` for every ``E_A`` from A's lowest
    energy to ``E`` minus B's lowest; ``total`` is their sum; ``probability``
    the exact ratios; ``most_probable`` the ``E_A`` of the largest term (the
    lowest such ``E_A`` on a tie; ``None`` when no split is possible).
    """

    energy: int
    unit: Fraction
    total: int
    split: Dict[int, int]
    probability: Dict[int, Fraction]
    most_probable: Optional[int]

    @property
    def most_probable_probability(self) -> Optional[Fraction]:
        """The exact probability of the most probable split."""
        if self.most_probable is None:
            return None
        return self.probability[self.most_probable]


def _common_unit(a: Spectrum, b: Spectrum) -> Fraction:
    da, db = a.unit.denominator, b.unit.denominator
    return Fraction(1, da * db // math.gcd(da, db))


def thermal_contact(a: System, b: System, energy, limit: Optional[int] = None) -> Contact:
    """Return the exact energy split of systems *a* and *b* sharing total *energy*.

    Both spectra are written in a common unit; *energy* is exact, in the
    energy unit.  The table is the convolution of the two multiplicity rows,
    so ``total`` equals the multiplicity of the combined system (for two
    Einstein solids ``C(q + N_A + N_B - 1, q)``).

    >>> c = thermal_contact(einstein_solid(3), einstein_solid(3), 6)
    >>> c.total, c.most_probable, c.probability[3]
    (462, 3, Fraction(50, 231))
    """
    unit = _common_unit(a.spectrum, b.spectrum)
    a = System(a.spectrum.rescaled(unit), a.particles, a.rule, a.capacity)
    b = System(b.spectrum.rescaled(unit), b.particles, b.rule, b.capacity)
    e = _to_units(energy, unit, "energy")
    low_a, low_b = ground_energy(a), ground_energy(b)
    if low_a is None or low_b is None or low_a + low_b > e:
        return Contact(e, unit, 0, {}, {}, None)
    omega_a = multiplicities(a, (e - low_b) * unit, limit)
    omega_b = multiplicities(b, (e - low_a) * unit, limit)
    split = {ea: omega_a[ea] * omega_b[e - ea] for ea in range(low_a, e - low_b + 1)}
    total = sum(split.values())
    if total == 0:
        return Contact(e, unit, 0, split, {}, None)
    best = max(split.values())
    most = min(ea for ea, v in split.items() if v == best)
    probability = {ea: Fraction(v, total) for ea, v in split.items()}
    return Contact(e, unit, total, split, probability, most)


# --------------------------------------------------------------------------
# Microcanonical
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class MicroPoint:
    """One total energy: ``ln Ω`` and the finite-difference temperature (approximations)."""

    energy: int
    multiplicity: int
    ln_multiplicity_approx: Optional[float]
    temperature_approx: Optional[float]


def _ln(value: int) -> float:
    return float(mpmath.log(mpmath.mpf(value))) if value > 0 else None


def microcanonical(system: System, max_energy=None) -> List[MicroPoint]:
    r"""Return ``ln Ω(E)`` and ``T(E)`` for every energy of :func:`multiplicities`.

    ``1/T = d ln Ω / dE`` by the central difference
    ``(ln Ω(E+h) - ln Ω(E-h)) / (2h)``, ``h`` the spacing of the lattice of
    reachable energies (the gcd of the level differences), in the energy unit
    with ``k_B = 1``.  ``temperature_approx`` is ``None`` where a neighbour has
    ``Ω = 0`` or the difference vanishes (infinite temperature); it is negative
    where ``ln Ω`` falls (population inversion, as in a two-level system).
    """
    counts = multiplicities(system, max_energy)
    spectrum = system.spectrum
    step = 0
    ref = spectrum.lowest
    for e in spectrum.energies:
        step = math.gcd(step, e - ref)
    if not spectrum.finite:
        step = math.gcd(step, spectrum.ladder.spacing)
    logs = {e: _ln(v) for e, v in counts.items()}
    points = []
    for e, v in counts.items():
        temperature = None
        if step and v > 0:
            lo, hi = logs.get(e - step), logs.get(e + step)
            if lo is not None and hi is not None and hi != lo:
                temperature = float(2 * step * spectrum.unit) / (hi - lo)
        points.append(MicroPoint(e, v, logs[e], temperature))
    return points


# --------------------------------------------------------------------------
# Canonical ensemble (mpmath)
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class CanonicalPoint:
    """Canonical results at one temperature (mpmath numbers; ``k_B = 1``).

    Energies are in the user's energy unit; ``occupations_approx[i]`` is the
    mean number of particles in listed level ``i`` (all its ``g_i`` states).
    ``grand_canonical_occupations_approx`` are the grand-canonical formulas
    at ``chemical_potential_approx`` (the one giving mean ``N``); ``None``
    when not computed.
    """

    temperature: Fraction
    digits: int
    ln_partition_function_approx: mpmath.mpf
    mean_energy_approx: mpmath.mpf
    heat_capacity_approx: mpmath.mpf
    free_energy_approx: mpmath.mpf
    entropy_approx: mpmath.mpf
    occupations_approx: Tuple[mpmath.mpf, ...]
    chemical_potential_approx: Optional[mpmath.mpf] = None
    grand_canonical_occupations_approx: Optional[Tuple[mpmath.mpf, ...]] = None

    @property
    def partition_function_approx(self) -> mpmath.mpf:
        """``Z_N`` itself (may be astronomically large or small)."""
        return mpmath.exp(self.ln_partition_function_approx)

    @property
    def occupation_differences_approx(self) -> Optional[Tuple[mpmath.mpf, ...]]:
        """Canonical minus grand-canonical occupation, level by level."""
        if self.grand_canonical_occupations_approx is None:
            return None
        return tuple(c - g for c, g in zip(self.occupations_approx, self.grand_canonical_occupations_approx))


class _Single:
    """Single-particle sums ``z_k = Σ g y^k``, ``z1_k = Σ g e y^k``, ``z2_k = Σ g e^2 y^k``.

    ``y = e^{-b e}`` with energies ``e`` shifted to the lowest level and ``b``
    the inverse temperature per unit; a ladder uses closed forms.
    """

    def __init__(self, spectrum: Spectrum, b, moments: bool):
        self.spectrum = spectrum
        self.b = b
        self.moments = moments
        shift = spectrum.lowest
        self.shifted = [e - shift for e in spectrum.energies]
        if spectrum.finite:
            self.g = [mpmath.mpf(g) for g in spectrum.degeneracies]
            self.ge = [mpmath.mpf(g * e) for g, e in zip(spectrum.degeneracies, self.shifted)]
            self.gee = [mpmath.mpf(g * e * e) for g, e in zip(spectrum.degeneracies, self.shifted)]
            self.y = [mpmath.exp(-b * e) for e in self.shifted]

    def sums(self, kmax: int):
        """Lists ``z, z1, z2`` indexed ``0..kmax`` (index 0 unused)."""
        z, z1, z2 = [None], [None], [None]
        if self.spectrum.finite:
            powers = list(self.y)
            for _ in range(kmax):
                z.append(mpmath.fdot(self.g, powers))
                if self.moments:
                    z1.append(mpmath.fdot(self.ge, powers))
                    z2.append(mpmath.fdot(self.gee, powers))
                powers = [p * y for p, y in zip(powers, self.y)]
            return z, z1, z2
        lad = self.spectrum.ladder
        d, s = lad.dimension, lad.spacing
        q1 = mpmath.exp(-self.b * s)
        qk = mpmath.mpf(1)
        for _ in range(kmax):
            qk = qk * q1
            r = qk / (1 - qk)
            zk = (1 + r) ** d  # (1 - q^k)^{-d}
            z.append(zk)
            if self.moments:
                first = d * s * r  # -(ln z)' per unit of b k
                z1.append(zk * first)
                z2.append(zk * (first * first + d * s * s * r * (1 + r)))
        return z, z1, z2


def _to_fixed(x, bits: int) -> int:
    """``round(x 2^bits)`` for an mpmath number (exact at the working precision)."""
    return int(mpmath.nint(mpmath.ldexp(x, bits)))


def _from_fixed(value: int, bits: int):
    """The mpmath number ``value / 2^bits`` (rounded to the working precision)."""
    return mpmath.ldexp(mpmath.mpf(value), -bits)


def _rdiv(a: int, d: int) -> int:
    """``a / d`` rounded to the nearest integer (``d > 0``)."""
    return (2 * a + d) // (2 * d)


#: Blocks of at most this many particle numbers are done by the plain loop;
#: larger ones are split in half (measured in scripts/bench.py workloads).
_BASE_BLOCK = 16


def _online_recursion(kernels, couplings, starts, n_max: int, bits: int):
    r"""Solve ``n X^t_n = Σ_{(j, s)} Σ_{k=1}^{n} K^j_k X^s_{n-k}`` for ``n = 1..n_max``, in fixed point.

    All values are integers scaled by ``2^bits``.  The convolutions are
    computed by divide and conquer over ``n`` (an "online" or relaxed
    convolution: once ``X_lo..X_{mid-1}`` are known, their whole contribution
    to ``n`` in ``[mid, hi)`` is one FLINT polynomial product per pair),
    J. van der Hoeven, *Relax, but don't be too lazy*, J. Symb. Comput. 34
    (2002); cost ``O(M(N) log N)`` instead of ``N^2/2`` multiply-adds.

    :param kernels: integer lists ``K^j`` indexed ``0..n_max`` (``K^j_0`` unused).
    :param couplings: for each target ``t`` the pairs ``(j, s)`` above.
    :param starts: ``X^t_0`` for each target.
    """
    width = len(couplings)
    seqs = [[start] + [0] * n_max for start in starts]
    acc = [[0] * (n_max + 1) for _ in range(width)]
    kernel_polys: Dict[Tuple[int, int], fmpz_poly] = {}

    def kernel_poly(j: int, length: int) -> fmpz_poly:
        key = (j, length)
        poly = kernel_polys.get(key)
        if poly is None:
            poly = kernel_polys[key] = fmpz_poly(kernels[j][:length])
        return poly

    def finalize(n: int) -> None:
        if n == 0:
            return
        d = n << bits
        for t in range(width):
            seqs[t][n] = _rdiv(acc[t][n], d)

    def solve(lo: int, hi: int) -> None:
        if hi - lo <= _BASE_BLOCK:
            for n in range(lo, hi):
                finalize(n)
                for t, pairs in enumerate(couplings):
                    row = acc[t]
                    for j, s in pairs:
                        x = seqs[s][n]
                        if x:
                            kern = kernels[j]
                            for m in range(n + 1, hi):
                                row[m] += kern[m - n] * x
            return
        mid = (lo + hi) // 2
        solve(lo, mid)
        length = hi - lo
        sources = {}
        for t, pairs in enumerate(couplings):
            total = None
            for j, s in pairs:
                src = sources.get(s)
                if src is None:
                    src = sources[s] = fmpz_poly(seqs[s][lo:mid])
                if src.is_zero():
                    continue
                part = src.mul_low(kernel_poly(j, length), length)
                total = part if total is None else total + part
            if total is not None:
                row = acc[t]
                for m in range(mid, hi):
                    c = total[m - lo]
                    if c:
                        row[m] += int(c)
        solve(mid, hi)

    solve(0, n_max + 1)
    return seqs


def _bits(x: int) -> int:
    return abs(x).bit_length()


def _occupations(system: System, spectrum: Spectrum, b, ratios, count: int) -> List:
    """``<n_i> = g_i Σ_k w_k y_i^k Z_{N-k} / Z_N`` for the lowest *count* listed levels.

    *ratios* are ``Z_{N-k} / Z_N`` (``k = 0..N``).  BE terms are positive and,
    with the lowest level at energy 0, decrease in ``k`` (``Z_{N-k} <= Z_N``:
    adding a particle to a lowest state maps states into states), so the sum
    stops once a term drops below the working precision.
    """
    n_max = system.particles
    shift = spectrum.lowest
    w = system.weights(n_max)
    signed = [w[k] * ratios[k] for k in range(n_max + 1)]
    eps = mpmath.ldexp(mpmath.mpf(1), -mpmath.mp.prec)
    positive = system.capacity is None
    result = []
    for i in range(count):
        e = spectrum.energies[i] - shift
        g = spectrum.degeneracies[i]
        if e == 0:
            total = mpmath.fsum(signed[1:])
        else:
            y = mpmath.exp(-b * e)
            if positive:
                total = mpmath.mpf(0)
                yk = mpmath.mpf(1)
                for k in range(1, n_max + 1):
                    yk = yk * y
                    term = yk * ratios[k]
                    total += term
                    if term < eps * total:
                        break
            else:
                powers = []
                yk = mpmath.mpf(1)
                for _ in range(n_max):
                    yk = yk * y
                    powers.append(yk)
                total = mpmath.fdot(powers, signed[1:])
        result.append(g * total)
    return result


def _report_count(spectrum: Spectrum, levels: Optional[int]) -> int:
    if levels is None:
        return len(spectrum.energies)
    count = as_count(levels, "levels", 1)
    if spectrum.finite and count > len(spectrum.energies):
        raise InvalidParameters(
            f"the spectrum lists {len(spectrum.energies)} levels; ask for at most that many"
        )
    return count


def _canonical_mb(system, spectrum, b, count, target_bits):
    """MB closed forms: ``ln Z = N ln z``, ``U = N z1/z``, ``Var = N (z2/z - (z1/z)^2)``.

    Returns the values and the bits the one-particle variance lost to cancellation.
    """
    z, z1, z2 = _Single(spectrum, b, True).sums(1)
    n = system.particles
    mean1 = z1[1] / z[1]
    var1 = z2[1] / z[1] - mean1 * mean1
    lost = 0
    if var1 > 0 and mean1 > 0:
        lost = max(0, int(mpmath.log(mean1 * mean1 / var1, 2)) + 1)
    occ = []
    for i in range(count):
        e = spectrum.energies[i] - spectrum.lowest
        occ.append(n * spectrum.degeneracies[i] * mpmath.exp(-b * e) / z[1])
    return n * mpmath.log(z[1]), n * mean1, n * var1, occ, lost


def _canonical_at(system: System, temperature: Fraction, digits: int, count: int, moments: bool):
    """One temperature; the fixed-point precision is raised until the error bound is met.

    Error model (fixed point, one unit ``2^-bits`` per rounding, propagated by
    the recursion with ``|w_k|``): the absolute error of a sequence value is
    about ``N 2^-bits`` times its majorant (``Ẑ``: the same recursion with
    ``|w_k|``, equal to ``Z`` for BE).  The working precision is accepted when
    that error is below ``10^-digits`` relative to ``Z_N``, ``M1_N`` and the
    variance ``M2_N Z_N - M1_N^2``; otherwise it is raised by the shortfall.
    """
    spectrum = system.spectrum
    if count > len(spectrum.energies):
        spectrum = spectrum.through(spectrum.ladder.energy(count - 1))
        system = System(spectrum, system.particles, system.rule, system.capacity)
    n = system.particles
    states = spectrum.states()
    if n and system.capacity is not None and states is not None and n == system.capacity * states:
        # Every state full: one microstate, no fluctuations (the recursion
        # would spend ever more bits resolving a variance that is exactly 0).
        with mpmath.workdps(digits + GUARD_DIGITS):
            T = mpmath.mpf(temperature.numerator) / temperature.denominator
            energy = mpmath.mpf(ground_energy(system) * spectrum.unit.numerator) / spectrum.unit.denominator
            lnZ = -energy / T
            occ = [mpmath.mpf(system.capacity * g) for g in spectrum.degeneracies[:count]]
            zero = mpmath.mpf(0)
            with mpmath.workdps(digits):
                return +lnZ, +energy, zero, +energy, zero, tuple(occ)
    target = math.ceil(digits * math.log2(10))
    margin = 8 + 2 * (n + 1).bit_length()
    bits = target + margin + 16
    for _attempt in range(12):
        with mpmath.workprec(bits + 32):
            T = mpmath.mpf(temperature.numerator) / temperature.denominator
            u = mpmath.mpf(spectrum.unit.numerator) / spectrum.unit.denominator
            b = u / T
            shift_e = n * spectrum.lowest
            if system.rule is Rule.MB:
                lnz, m1, var, occ, lost = _canonical_mb(system, spectrum, b, count, target)
                need = target + margin + lost
            else:
                single = _Single(spectrum, b, moments)
                z, z1, z2 = single.sums(n)
                w = system.weights(n)
                alternating = any(x < 0 for x in w[1:])
                a0 = [0] + [_to_fixed(w[k] * z[k], bits) for k in range(1, n + 1)]
                kernels = [a0]
                couplings = [[(0, 0)]]
                starts = [1 << bits]
                if moments:
                    a1 = [0] + [_to_fixed(w[k] * k * z1[k], bits) for k in range(1, n + 1)]
                    a2 = [0] + [_to_fixed(w[k] * k * k * z2[k], bits) for k in range(1, n + 1)]
                    kernels += [a1, a2, [2 * x for x in a1]]
                    # Z: a0*Z;  M1: a1*Z + a0*M1;  M2: a2*Z + 2 a1*M1 + a0*M2
                    couplings += [[(1, 0), (0, 1)], [(2, 0), (3, 1), (0, 2)]]
                    starts += [0, 0]
                if alternating:
                    base = len(kernels)
                    off = len(couplings)
                    kernels += [[abs(x) for x in a0]]
                    couplings.append([(base, off)])
                    starts.append(1 << bits)
                    if moments:
                        kernels += [[abs(x) for x in a1], [abs(x) for x in a2], [2 * abs(x) for x in a1]]
                        couplings += [
                            [(base + 1, off), (base, off + 1)],
                            [(base + 2, off), (base + 3, off + 1), (base, off + 2)],
                        ]
                        starts += [0, 0]
                seqs = _online_recursion(kernels, couplings, starts, n, bits)
                Z = seqs[0]
                ZN = Z[n]
                if alternating:
                    H = seqs[3 if moments else 1]
                    H1, H2 = (seqs[4], seqs[5]) if moments else (None, None)
                else:
                    H = Z
                    H1, H2 = (seqs[1], seqs[2]) if moments else (None, None)
                if ZN <= 0:
                    # Z_N is below the rounding noise.  It is at least e^{-b E_0}
                    # (the ground state, energy E_0 above n times the lowest
                    # level) and the majorant is accurate, which bounds the loss.
                    ground = ground_energy(system) - shift_e
                    est = target + margin + _bits(H[n]) - bits + int(b * ground / mpmath.ln2) + 1
                    bits = max(2 * bits, est + 16)
                    continue
                need = target + margin + max(0, _bits(H[n]) - _bits(ZN))
                if moments:
                    # With two distinct level energies (and not every state full,
                    # handled above) the energy fluctuates: M1_N > 0 and V > 0
                    # exactly, so a zero or negative value is rounding noise and
                    # the bounds below then ask for more bits.
                    fluctuates = n > 0 and len(set(spectrum.energies)) > 1
                    M1N, M2N = seqs[1][n], seqs[2][n]
                    if fluctuates:
                        need = max(need, target + margin + _bits(H1[n] + H[n]) - _bits(max(M1N, 1)))
                    V = M2N * ZN - M1N * M1N
                    W = ZN * (H2[n] + H[n]) + M2N * H[n] + 2 * abs(M1N) * (H1[n] + H[n])
                    if fluctuates:
                        # V and W both carry the scale 2^(2 bits); V's error is N 2^-bits W.
                        need = max(need, target + margin + _bits(W) - _bits(max(V, 1)))
                if need > bits:
                    bits = need + 16
                    continue
                ZNm = mpmath.mpf(ZN)
                lnz = mpmath.log(ZNm) - bits * mpmath.ln2
                if moments:
                    m1 = mpmath.mpf(M1N) / ZNm
                    var = mpmath.mpf(V) / (ZNm * ZNm)
                else:
                    m1 = var = mpmath.mpf(0)
                ratios = [mpmath.mpf(Z[n - k]) / ZNm for k in range(n + 1)]
                occ = _occupations(system, spectrum, b, ratios, count)
                need = bits
            if need > bits:
                bits = need + 16
                continue
            lnZ = lnz - b * shift_e
            U = u * (m1 + shift_e)
            C = u * u * var / (T * T)
            F = -T * lnZ
            S = lnZ + U / T
            with mpmath.workdps(digits):
                return +lnZ, +U, +C, +F, +S, tuple(+x for x in occ)
    raise TooLarge(
        f"the canonical sums at T = {temperature} lose more digits than a reasonable working "
        "precision holds; raise the temperature or lower the number of particles"
    )


def canonical(
    system: System,
    temperatures: Iterable,
    digits: int = DEFAULT_DIGITS,
    levels: Optional[int] = None,
    grand: bool = True,
) -> List[CanonicalPoint]:
    r"""Return the canonical ensemble of *system* at each temperature.

    ``Z_N`` from the Borrmann–Franke recursion for ideal quantum gases,
    ``Z_N = (1/N) Σ_{k=1}^{N} w_k Z_1(kβ) Z_{N-k}`` (``w_k = (±1)^{k+1}``
    for BE/FD, Gentile weights with a capacity; MB: ``Z = Z_1^N``) together
    with its first two β-derivatives, giving ``U = -∂ ln Z/∂β`` and
    ``C = β^2 ∂^2 ln Z/∂β^2``; ``F = -T ln Z``, ``S = ln Z + U/T``; mean
    occupations ``<n_i> = Σ_k w_k g_i e^{-kβε_i} Z_{N-k}/Z_N`` (Borrmann,
    Harting, Mülken, Hilf 1999).  A ladder uses ``Z_1 = e^{-βε_0}(1 -
    e^{-βħω})^{-d}`` exactly, however many levels it takes.

    Arithmetic: the single-particle sums ``Z_1(kβ)`` and its derivatives in
    mpmath, rounded to fixed-point integers with ``bits`` fractional bits;
    the recursion and its two β-derivatives in exact integer arithmetic, all
    ``N`` convolutions at once by divide and conquer over FLINT products;
    logarithms, ratios and occupations back in mpmath.  The alternating
    FD/Gentile sums cancel at low temperature: ``bits`` is raised until the
    rounding error, bounded through the majorant ``Ẑ`` (the same recursion
    with ``|w_k|``), is below ``10^-digits`` relative to ``Z_N``, to the
    energy moment and to the variance ``⟨E²⟩ - ⟨E⟩²``.  The results carry
    about *digits* correct digits (occupations: about ``10^-digits g_i``
    absolute).  Fermions far below the Fermi temperature need thousands of
    bits (``β E_0 / ln 2`` for a ground energy ``E_0`` above ``N ε_min``).

    :param temperatures: positive ``k_B T`` values in the energy unit (ints,
        fractions, decimal strings or floats).
    :param levels: how many of the lowest listed levels to report
        occupations for (default: all listed; a ladder lists what it was
        extended to by :meth:`Spectrum.through`).
    :param grand: also compute the grand-canonical occupations.

    Cost per temperature: ``O(M(N) log N)`` integer work for the recursion
    (``M``: one FLINT product of length ``N``), plus ``O(N)`` mpmath
    operations per reported level (fewer for BE, whose sums stop once
    negligible); MB ``O(levels)``.
    :raises InvalidParameters: no state exists (FD with more particles than
        states), a non-positive temperature.
    """
    digits = as_count(digits, "digits", 5)
    if ground_energy(system) is None:
        raise InvalidParameters(
            f"{system.particles} particles do not fit in the {system.spectrum.states()} "
            "single-particle states under this rule; lower --particles or add levels"
        )
    count = _report_count(system.spectrum, levels)
    points = []
    for value in temperatures:
        temperature = _parse_temperature(value)
        lnZ, U, C, F, S, occ = _canonical_at(system, temperature, digits, count, True)
        mu, gc = (None, None)
        if grand:
            mu, gc = grand_canonical(system, temperature, digits, count)
        points.append(
            CanonicalPoint(temperature, digits, lnZ, U, C, F, S, occ, mu, gc)
        )
    return points


def canonical_occupations(
    system: System, temperatures: Iterable, digits: int = DEFAULT_DIGITS, levels: Optional[int] = None
) -> List[Tuple]:
    """Return the canonical mean occupations only, one tuple per temperature.

    The same recursion as :func:`canonical` without its β-derivatives (one
    coupled sequence instead of three) and without the grand-canonical
    comparison.
    """
    digits = as_count(digits, "digits", 5)
    if ground_energy(system) is None:
        raise InvalidParameters(
            f"{system.particles} particles do not fit in the single-particle states under this rule"
        )
    count = _report_count(system.spectrum, levels)
    result = []
    for value in temperatures:
        temperature = _parse_temperature(value)
        result.append(_canonical_at(system, temperature, digits, count, False)[5])
    return result


# --------------------------------------------------------------------------
# Grand canonical ensemble
# --------------------------------------------------------------------------
def _occupation_formula(system: System):
    """Mean occupation of one state at ``x = β(ε - μ)`` (``X = e^x``)."""
    if system.rule is Rule.MB:
        return lambda X: 1 / X
    if system.capacity is None:
        return lambda X: 1 / (X - 1)
    if system.capacity == 1:
        return lambda X: 1 / (X + 1)
    cap = system.capacity

    def gentile(X):
        # <n> = sum_j j y^j / sum_j y^j over j = 0..c, y = 1/X: the definition,
        # equal to 1/(X-1) - (c+1)/(X^(c+1)-1) but without its removable pole at X = 1.
        y = 1 / X
        powers = [mpmath.mpf(1)]
        for _ in range(cap):
            powers.append(powers[-1] * y)
        return mpmath.fsum(j * p for j, p in enumerate(powers)) / mpmath.fsum(powers)

    return gentile


def _gc_total(system: System, b, eta, formula):
    """``Σ_i g_i f(b e_i - η)`` over the whole spectrum (a ladder until the tail is negligible)."""
    spectrum = system.spectrum
    shift = spectrum.lowest
    if spectrum.finite:
        return mpmath.fsum(
            g * formula(mpmath.exp(b * (e - shift) - eta))
            for e, g in zip(spectrum.energies, spectrum.degeneracies)
        )
    lad = spectrum.ladder
    d = lad.dimension
    bs = b * lad.spacing
    # Rungs m < m0 directly; above them x = b e_m - eta >= _TAIL_GAP > 0, where
    # f(x) = sum_j w_j e^{-jx} (the weights of the canonical recursion) and each
    # j needs only the ladder tail T_j = sum_{m >= m0} C(m+d-1, d-1) q^m,
    # q = e^{-j b s}, in closed form q^m0 sum_{i<d} C(m0+i-1, i) (1-q)^{-(d-i)}
    # (Vandermonde's convolution).
    m0 = max(0, int(mpmath.ceil((eta + _TAIL_GAP) / bs)))
    total = mpmath.mpf(0)
    if m0:
        step = mpmath.exp(bs)
        X = mpmath.exp(-eta)
        for m in range(m0):
            total += lad.degeneracy(m) * formula(X)
            X = X * step
    eps = mpmath.ldexp(mpmath.mpf(1), -mpmath.mp.prec)
    q1 = mpmath.exp(-bs)
    fug = mpmath.exp(eta)
    lead = [math.comb(m0 + i - 1, i) if m0 else int(i == 0) for i in range(d)]
    c1 = None if system.capacity is None else system.capacity + 1
    q = mpmath.mpf(1)
    fj = mpmath.mpf(1)
    j = 0
    while True:
        j += 1
        q = q * q1
        fj = fj * fug
        weight = 1 if c1 is None or j % c1 else 1 - c1
        inv = 1 / (1 - q)
        tail = q ** m0 * mpmath.fsum(lead[i] * inv ** (d - i) for i in range(d))
        term = weight * fj * tail
        total += term
        if system.rule is Rule.MB or abs(term) < eps * abs(total):
            return total


def grand_canonical(system: System, temperature, digits: int = DEFAULT_DIGITS, levels: Optional[int] = None):
    r"""Return ``(μ, occupations)``: the grand-canonical formulas at mean particle number ``N``.

    ``<n_i> = g_i f(β(ε_i - μ))`` with ``f(x) = 1/(e^x - 1)`` (BE),
    ``1/(e^x + 1)`` (FD), ``e^{-x}`` (MB, where it equals the canonical
    result), ``1/(e^x - 1) - (c+1)/(e^{(c+1)x} - 1)`` (capacity ``c``), and
    ``μ`` solves ``Σ_i <n_i>(μ) = N`` over the whole spectrum:
    ``mpmath.findroot`` with a bracketing solver (Anderson–Björck) on a
    bracket found by doubling; for BE in the variable ``ln(ε_0 - μ)``.
    ``μ`` is ``None`` for ``N = 0`` (``-∞``) and for a full FD/Gentile
    spectrum (``+∞``).
    """
    digits = as_count(digits, "digits", 5)
    temperature = _parse_temperature(temperature)
    spectrum = system.spectrum
    count = _report_count(spectrum, levels)
    if count > len(spectrum.energies):
        spectrum = spectrum.through(spectrum.ladder.energy(count - 1))
    n = system.particles
    states = spectrum.states()
    cap = system.capacity
    if n == 0:
        return None, tuple(mpmath.mpf(0) for _ in range(count))
    if cap is not None and states is not None and n >= cap * states:
        if n > cap * states:
            raise InvalidParameters(
                f"{n} particles do not fit in {states} states holding at most {cap} each"
            )
        return None, tuple(mpmath.mpf(cap * g) for g in spectrum.degeneracies[:count])
    formula = _occupation_formula(system)
    with mpmath.workdps(digits + GUARD_DIGITS):
        T = mpmath.mpf(temperature.numerator) / temperature.denominator
        u = mpmath.mpf(spectrum.unit.numerator) / spectrum.unit.denominator
        b = u / T
        target = mpmath.mpf(n)
        shift = spectrum.lowest
        sysx = System(spectrum, n, system.rule, system.capacity)
        if system.rule is Rule.MB:
            z = _Single(spectrum, b, False).sums(1)[0][1]
            eta = mpmath.log(target / z)
        elif cap is None:
            # BE: eta = beta (mu - eps_0) < 0; solve in s = ln(-eta), N decreasing in s.
            def h(s):
                return _gc_total(sysx, b, -mpmath.exp(s), formula) - target

            lo, hi = mpmath.mpf(-2), mpmath.mpf(2)
            while h(lo) < 0:
                lo -= 2 * (1 + abs(lo))
            while h(hi) > 0:
                hi += 2 * (1 + abs(hi))
            s = _bracketed_root(h, lo, hi, target)
            eta = -mpmath.exp(s)
        else:
            def h(e):
                return _gc_total(sysx, b, e, formula) - target

            lo, hi = mpmath.mpf(-1), mpmath.mpf(1)
            while h(lo) > 0:
                lo = 2 * lo
            while h(hi) < 0:
                hi = 2 * hi
            eta = _bracketed_root(h, lo, hi, target)
        occ = [
            g * formula(mpmath.exp(b * (e - shift) - eta))
            for e, g in zip(spectrum.energies[:count], spectrum.degeneracies[:count])
        ]
        mu = T * eta + u * shift
        with mpmath.workdps(digits):
            return +mu, tuple(+x for x in occ)


def _bracketed_root(h, lo, hi, scale):
    """A root of the monotone *h* inside ``[lo, hi]`` (``h(lo)``, ``h(hi)`` of opposite signs).

    mpmath's Anderson–Björck bracketing solver first; its answer is kept when
    ``|h|`` is below ``scale`` times the working precision.  Otherwise (a
    nearly flat ``h``, as inside the gap of a filled Fermi shell) bisection,
    which keeps the bracket and cannot stall.
    """
    prec = mpmath.mp.prec
    tol = mpmath.ldexp(mpmath.mpf(1), -prec + 8)
    good = scale * mpmath.ldexp(mpmath.mpf(1), -prec + 24)
    try:
        root = mpmath.findroot(h, (lo, hi), solver="anderson", tol=tol, maxsteps=200, verify=False)
        if lo <= root <= hi and abs(h(root)) <= good:
            return root
    except (ValueError, ZeroDivisionError):
        pass
    a, b = lo, hi
    ha = h(a)
    for _ in range(4 * prec):
        m = (a + b) / 2
        hm = h(m)
        if hm == 0 or b - a <= tol * max(1, abs(m)):
            return m
        if (hm > 0) == (ha > 0):
            a, ha = m, hm
        else:
            b = m
    return (a + b) / 2


# --------------------------------------------------------------------------
# Plots (matplotlib, Agg backend)
# --------------------------------------------------------------------------
def _pyplot():
    try:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
    except ImportError:  # pragma: no cover - depends on the installation
        raise Unsupported("plots need matplotlib: pip install 'enumerator[plot]'") from None
    return plt


def plot_levels(path, system: System, counts: Dict[int, int], points: Sequence[CanonicalPoint] = ()) -> None:
    """Save a PNG: multiplicity against total energy and, given canonical points,
    exact canonical occupations (markers) against the grand-canonical formula (lines)."""
    plt = _pyplot()
    panels = 2 if points else 1
    fig, axes = plt.subplots(1, panels, figsize=(6 * panels, 4.2), squeeze=False)
    unit = float(system.spectrum.unit)
    ax = axes[0][0]
    xs = [e * unit for e, v in counts.items() if v > 0]
    ys = [float(mpmath.log10(v)) for v in counts.values() if v > 0]
    ax.plot(xs, ys, ".-", ms=3)
    ax.set_xlabel("total energy E")
    ax.set_ylabel("log10 Ω(N, E)")
    ax.set_title(f"Multiplicity: {system.label}", fontsize=9)
    if points:
        ax = axes[0][1]
        levels = [float(system.spectrum.level_energy(i)) for i in range(len(points[0].occupations_approx))]
        for p in points:
            line = ax.plot(levels, [float(x) for x in p.occupations_approx], "o", ms=4,
                           label=f"T = {float(p.temperature):g} canonical")
            if p.grand_canonical_occupations_approx is not None:
                ax.plot(levels, [float(x) for x in p.grand_canonical_occupations_approx], "-",
                        color=line[0].get_color(), lw=1, label=f"T = {float(p.temperature):g} grand canonical")
        ax.set_xlabel("level energy ε")
        ax.set_ylabel("mean occupation <n>")
        ax.set_title("Exact canonical (markers) vs grand-canonical formula (lines)", fontsize=9)
        ax.legend(fontsize=7)
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)


def plot_contact(path, contact: Contact, label_a: str = "A", label_b: str = "B") -> None:
    """Save a PNG of the exact probability of each energy split ``E_A``."""
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(6, 4.2))
    unit = float(contact.unit)
    keys = sorted(contact.probability)
    ax.plot([k * unit for k in keys], [float(contact.probability[k]) for k in keys], ".-", ms=3)
    if contact.most_probable is not None:
        ax.axvline(contact.most_probable * unit, color="grey", lw=0.8, ls="--")
    ax.set_xlabel(f"energy of {label_a}, E_A")
    ax.set_ylabel("probability")
    ax.set_title(f"{label_a} and {label_b} in thermal contact, total energy {contact.energy * unit:g}", fontsize=9)
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)


# --------------------------------------------------------------------------
# Reports (what the CLI prints)
# --------------------------------------------------------------------------
def _float(x) -> Optional[float]:
    return None if x is None else float(x)


def levels_payload(
    system: System,
    counts: Dict[int, int],
    points: Optional[Sequence[CanonicalPoint]] = None,
    micro: Optional[Sequence[MicroPoint]] = None,
) -> dict:
    """The JSON object of ``enumerator levels``.

    ``{"unit": "p/q", "multiplicity": {"E": "count", ...}}`` (keys: total
    energies in units, consecutive, exact counts as decimal strings), plus
    ``"canonical"`` (one object of approximations per temperature) and
    ``"microcanonical"`` when given.
    """
    payload = {
        "unit": str(system.spectrum.unit),
        "multiplicity": {str(e): str(v) for e, v in counts.items()},
    }
    if points is not None:
        entries = []
        for p in points:
            gc = p.grand_canonical_occupations_approx
            diff = p.occupation_differences_approx
            entries.append(
                {
                    "temperature": float(p.temperature),
                    "mean_energy_approx": float(p.mean_energy_approx),
                    "heat_capacity_approx": float(p.heat_capacity_approx),
                    "free_energy_approx": float(p.free_energy_approx),
                    "entropy_approx": float(p.entropy_approx),
                    "ln_partition_function_approx": float(p.ln_partition_function_approx),
                    "occupation_approx": [float(x) for x in p.occupations_approx],
                    "grand_canonical_occupation_approx": None if gc is None else [float(x) for x in gc],
                    "occupation_difference_approx": None if diff is None else [float(x) for x in diff],
                    "chemical_potential_approx": _float(p.chemical_potential_approx),
                }
            )
        payload["canonical"] = entries
    if micro is not None:
        payload["microcanonical"] = [
            {
                "energy": str(m.energy),
                "ln_multiplicity_approx": m.ln_multiplicity_approx,
                "temperature_approx": m.temperature_approx,
            }
            for m in micro
        ]
    return payload


def contact_payload(contact: Contact) -> dict:
    """The JSON object of ``enumerator contact``.

    ``{"total": "count", "split": {"E_A": "count"}, "most_probable": E_A,
    "probability": {"E_A": "p/q"}}``; energies in units, with a ``"unit"``
    field added when the unit is not 1.
    """
    payload = {
        "total": str(contact.total),
        "split": {str(e): str(v) for e, v in contact.split.items()},
        "most_probable": contact.most_probable,
        "probability": {str(e): str(p) for e, p in contact.probability.items()},
    }
    if contact.unit != 1:
        payload["unit"] = str(contact.unit)
    return payload
