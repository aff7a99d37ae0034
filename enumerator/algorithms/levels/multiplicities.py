r"""Exact multiplicities ``Ω(N, E)`` of particles on energy levels, and what follows from them alone.

The generating functions of a :class:`~enumerator.algorithms.levels.spectra.System`:

``MB``
    ``Ω_N(t) = (Σ_i g_i t^{ε_i})^N``;
``BE``
    ``Σ_N Ω_N(t) x^N = ∏_i (1 - x t^{ε_i})^{-g_i}``; with a ``capacity``
    ``c`` per state ``∏_i ((1 - x^{c+1} t^{(c+1)ε_i}) / (1 - x t^{ε_i}))^{g_i}``;
``FD``
    ``∏_i (1 + x t^{ε_i})^{g_i}``.

The coefficient ``Ω(N, E) = [x^N t^E]`` is the multiplicity of the total energy
``E``; the polynomial ``Z_N(t) = Σ_E Ω(N, E) t^E`` is the canonical partition
function with ``t = e^{-β·unit}``, so its coefficients are exact integers.

* :func:`multiplicities` -- ``Ω(N, E)`` for every ``E`` up to a maximum, exact,
  with FLINT integer polynomials (:mod:`enumerator.core.series`).  MB is one
  truncated power; BE/FD/Gentile use the recursion over the particle number
  ``N Z_N(t) = Σ_{k=1}^{N} w_k z(t^k) Z_{N-k}(t)``, ``z(t) = Σ g_i t^{ε_i}``
  (Newton's identities between complete/elementary symmetric functions and
  power sums, Macdonald, *Symmetric Functions and Hall Polynomials*, 1995,
  I.2), whose divisions by ``N`` are exact.
* :func:`multiplicity_table` -- every particle number ``0..N`` in one pass.
* :func:`thermal_contact` -- two systems sharing a total energy: the exact table
  ``Ω_A(E_A) Ω_B(E - E_A)``, the most probable split and the exact
  probabilities.
* :func:`microcanonical` -- ``ln Ω(E)`` and the temperature from central finite
  differences of ``ln Ω`` (approximations, so named).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Dict, List, Optional

import mpmath
from flint import fmpz_poly

from ...core import series
from ...core.errors import InvalidParameters, TooLarge
from ...core.rules import Rule
from .spectra import Spectrum, System, ground_energy, parse_rational

__all__ = [
    "Contact",
    "MAX_CELLS",
    "MicroPoint",
    "microcanonical",
    "multiplicities",
    "multiplicity_table",
    "thermal_contact",
]

#: Largest ``(N + 1) * (E + 1)`` table of exact multiplicities computed without
#: being asked (each cell is a big integer); pass ``limit=`` to go further.
MAX_CELLS = 10_000_000


# --------------------------------------------------------------------------
# Exact multiplicities
# --------------------------------------------------------------------------
def _to_units(energy, unit: Fraction, name: str = "max_energy") -> int:
    """Floor of *energy* / *unit* (energy exact: int, Fraction or string)."""
    value = parse_rational(energy, name)
    return math.floor(value / unit)



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
    """Return ``{E: Ω(N, E)}`` for every total energy from the lowest reachable to *max_energy*.

    Parameters
    ----------
    system : System
        MB counts assignments of distinguishable particles; BE and FD
        occupancies of identical particles (module docstring).
    max_energy : int, Fraction or str, optional
        The largest total energy (exact, in the energy unit); ``None`` for a
        finite spectrum means the highest reachable energy.
    limit : int, optional
        The largest table (cells) to compute, default :data:`MAX_CELLS`.

    Returns
    -------
    dict of int to int
        Keys are total energies in units of ``system.spectrum.unit`` (the
        energy is ``key * unit``), consecutive integers including those of
        count 0; values are exact -- the coefficients of the canonical
        partition function ``Z_N(t)``.  Empty when no state has energy at most
        *max_energy*.

    Raises
    ------
    InvalidParameters
        An infinite ladder without *max_energy*; a *max_energy* that is not a number.
    TooLarge
        The table would exceed *limit* cells.

    Notes
    -----
    MB: one truncated FLINT power of ``z(t)`` (a ladder: a binomial row of
    ``(1 - t^s)^{-dN}``).  BE/FD/Gentile: the particle-number recursion
    ``n Z_n = Σ_k w_k z(t^k) Z_{n-k}`` (Newton's identities; Macdonald,
    *Symmetric Functions and Hall Polynomials*, 1995, I.2), its convolutions
    computed online by divide and conquer (van der Hoeven, J. Symb. Comput. 34,
    2002): ``O(log N)`` FLINT products of ``N`` blocks of length
    ``E - N ε_min + 1``.

    Examples
    --------
    >>> from enumerator.algorithms.levels.spectra import einstein_solid
    >>> multiplicities(einstein_solid(3), 4)
    {0: 1, 1: 3, 2: 6, 3: 10, 4: 15}
    """
    spectrum = system.spectrum
    n = system.particles
    if max_energy is None:
        if not spectrum.finite:
            raise InvalidParameters(
                "an infinite ladder of levels needs a maximum energy (max_energy=), "
                "or make it finite with levels=",
                parameters=["max_energy", "levels"],
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

    Parameters
    ----------
    system : System
        Its particle number ``N`` is the last row.
    max_energy : int, Fraction or str
        The largest total energy, in the energy unit.
    limit : int, optional
        The largest table (cells), default :data:`MAX_CELLS`.

    Returns
    -------
    list of dict of int to int
        Row ``n`` is :func:`multiplicities` of the same spectrum and rule with
        ``n`` particles (keys in units, from that row's lowest energy).

    Raises
    ------
    TooLarge
        The table would exceed *limit* cells.

    Notes
    -----
    BE/FD rows come from one run of the particle-number recursion (see
    :func:`multiplicities`), so the table costs what its last row costs; MB
    rows are ``N + 1`` truncated powers.
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

    Parameters
    ----------
    a, b : System
    energy : int, Fraction or str
        The total energy, exact, in the energy unit.
    limit : int, optional
        The largest multiplicity table of either side, default :data:`MAX_CELLS`.

    Returns
    -------
    Contact
        Energies in the common unit of the two spectra.

    Raises
    ------
    InvalidParameters
        An *energy* that is not a number.
    TooLarge
        A side's table would exceed *limit*.

    Notes
    -----
    Both spectra are written in a common unit (``1/lcm`` of the two unit
    denominators); the table is the convolution of the two multiplicity rows,
    so ``total`` equals the multiplicity of the combined system (for two
    Einstein solids ``C(q + N_A + N_B - 1, q)``, the worked example of
    D. V. Schroeder, *An Introduction to Thermal Physics*, 2000, §2.3).  Cost:
    the two calls of :func:`multiplicities` plus ``E`` big-integer products.

    Examples
    --------
    >>> from enumerator.algorithms.levels.spectra import einstein_solid
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
    """Return ``ln Ω(E)`` and ``T(E)`` for every energy of :func:`multiplicities`.

    Parameters
    ----------
    system : System
    max_energy : int, Fraction or str, optional
        As for :func:`~enumerator.algorithms.levels.multiplicities.multiplicities`.

    Returns
    -------
    list of MicroPoint
        One per total energy, in increasing order.

    Raises
    ------
    InvalidParameters, TooLarge
        As :func:`~enumerator.algorithms.levels.multiplicities.multiplicities` raises them.

    Notes
    -----
    ``1/T = d ln Ω / dE`` (the microcanonical definition of temperature) by the
    central difference ``(ln Ω(E+h) - ln Ω(E-h)) / (2h)``, ``h`` the spacing of
    the lattice of reachable energies (the gcd of the level differences), in
    the energy unit with ``k_B = 1``.  ``temperature_approx`` is ``None`` where
    a neighbour has ``Ω = 0`` or the difference vanishes (infinite
    temperature); it is negative where ``ln Ω`` falls (population inversion, as
    in a two-level system).  Cost: that of the multiplicities plus one mpmath
    logarithm per energy.
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
