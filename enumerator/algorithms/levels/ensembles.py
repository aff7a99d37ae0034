r"""Ensembles of particles on energy levels: canonical and grand canonical.

* :func:`canonical` -- ``Z``, mean energy, heat capacity, free energy, entropy
  and mean level occupations at given temperatures, from the recursion for the
  canonical partition function of ideal quantum gases (P. Borrmann and
  G. Franke, *Recursion formulas for quantum statistical partition functions*,
  J. Chem. Phys. 98, 2484 (1993); P. Borrmann, J. Harting, O. Mülken and
  E. Hilf, *Calculation of thermodynamic properties of finite Bose-Einstein
  systems*, Phys. Rev. A 60, 1519 (1999)) to a requested number of digits:
  mpmath for the exponentials, logarithms and root finding, the recursion
  itself in exact fixed-point integers (FLINT products, divide and conquer),
  with the precision raised until an error bound meets the request.
  :func:`canonical_occupations` is the same without the β-derivatives.
  Two other routes serve where the recursion is slow: fermions far below the
  Fermi temperature go through the particle-hole expansion
  (:mod:`.particle_hole`, positive terms in ball arithmetic, chosen
  automatically), and bosons at scale take the float route (the recursion
  as a mixture of positive terms in double precision with rigorous
  a-posteriori bounds, :func:`.bosons_float.canonical_float`): asked for with
  ``route="float"``, or chosen by ``"auto"`` where the exact recursion would
  be slower and the bounds meet the digits asked.  Each point also carries the occupation above
  the listed levels, ``⟨δE²⟩`` and the variance of level 0's occupation.
* :func:`grand_canonical` -- the grand-canonical occupation formulas at the
  chemical potential that gives mean ``N``; :func:`grand_canonical_level_variance`
  and :func:`grand_canonical_thermo` (``U`` and ``C`` at fixed mean ``N``).
* :func:`parse_temperatures` -- lists and ranges of temperatures
  (``0.1..20:40``, ``1..100:5:log``).

Units: energies and temperatures share the user's energy unit, with
Boltzmann's constant ``k_B = 1`` (a temperature ``T`` means ``k_B T = T``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from fractions import Fraction
from typing import Dict, Iterable, List, Optional, Tuple

import gmpy2
import mpmath
from flint import fmpz_poly

from ...core.errors import InvalidParameters, TooLarge
from ...core.limits import Cost, bigint_bytes, check, multiply_seconds, product_seconds
from ...core.model import as_count
from ...core.rules import Rule
from ...core.workers import map_after_first
from .bosons_float import BATCH, FLOAT_MAX_DIGITS, canonical_float_many, float_cost, float_meets
from .particle_hole import fermion_canonical
from .spectra import (
    Spectrum,
    System,
    ground_and_gap,
    ground_energy,
    parse_digits,
    parse_temperature,
    temperature_text,
)

__all__ = [
    "CanonicalPoint",
    "DEFAULT_DIGITS",
    "ROUTES",
    "canonical",
    "canonical_occupations",
    "grand_canonical",
    "grand_canonical_level_variance",
    "grand_canonical_thermo",
    "ln_partition_bound",
    "online_recursion",
    "parse_temperatures",
    "particle_hole_pays",
    "to_fixed",
]

#: Default number of significant decimal digits of the canonical results.
DEFAULT_DIGITS = 50

#: Extra decimal digits carried beyond the requested ones.
GUARD_DIGITS = 12

#: Grand-canonical ladder sums switch to the closed-form tail where
#: ``β(ε - μ)`` exceeds this.
_TAIL_GAP = 4



#: Most temperatures one list or range may give.
MAX_TEMPERATURES = 10_000


def parse_temperatures(text) -> List[Fraction]:
    """Read a list of temperatures: numbers and ranges, comma-separated.

    Parameters
    ----------
    text : str or iterable
        Items separated by commas, each one of

        * ``T``: one value (integer, fraction ``1/3`` or decimal ``0.25``);
        * ``A..B``: ``A, A+1, ..., B`` (``B - A`` a whole number);
        * ``A..B:K``: ``K`` equally spaced values from ``A`` to ``B`` (both
          included), exact rationals;
        * ``A..B:K:log``: ``K`` values in geometric progression from ``A`` to
          ``B``, each rounded to 12 significant digits (the value used is
          exactly the decimal printed).

        An iterable of values is taken as it is.

    Returns
    -------
    list of Fraction
        Positive, in the order given.

    Raises
    ------
    InvalidParameters
        Malformed text, a value that is not positive, ``K < 2`` with
        ``A != B``, or more than :data:`MAX_TEMPERATURES` values.

    Notes
    -----
    Exact rational arithmetic for the linear forms; the log form by mpmath
    at 30 digits.  Cost linear in the number of values.

    Examples
    --------
    >>> [str(t) for t in parse_temperatures("0.5, 1..3, 4..5:3")]
    ['1/2', '1', '2', '3', '4', '9/2', '5']
    >>> [float(t) for t in parse_temperatures("1..100:3:log")]
    [1.0, 10.0, 100.0]
    """
    if not isinstance(text, str):
        return [parse_temperature(t) for t in text]
    out: List[Fraction] = []
    for item in text.split(","):
        item = item.strip()
        if not item:
            raise InvalidParameters(
                f"temperatures must be a comma-separated list such as '0.5,1,2' or a range '0.1..20:40' (got {text!r})",
                parameters=["temperatures"],
            )
        if ".." not in item:
            out.append(parse_temperature(item))
        else:
            out.extend(_temperature_range(item))
        if len(out) > MAX_TEMPERATURES:
            raise InvalidParameters(
                f"at most {MAX_TEMPERATURES} temperatures at once; use fewer points",
                parameters=["temperatures"],
            )
    return out


def _temperature_range(item: str) -> List[Fraction]:
    lo_text, _, rest = item.partition("..")
    parts = rest.split(":")
    if len(parts) > 3 or (len(parts) == 3 and parts[2].strip().lower() != "log"):
        raise InvalidParameters(
            f"a temperature range is A..B, A..B:K or A..B:K:log (got {item!r})", parameters=["temperatures"]
        )
    lo = parse_temperature(lo_text)
    hi = parse_temperature(parts[0])
    if hi < lo:
        raise InvalidParameters(f"the range {item!r} runs downwards; write the smaller end first",
                                parameters=["temperatures"])
    if len(parts) == 1:
        steps = int((hi - lo) // 1)
        if steps + 1 > MAX_TEMPERATURES:
            raise InvalidParameters(f"the range {item!r} has more than {MAX_TEMPERATURES} values; add :K",
                                    parameters=["temperatures"])
        if lo + steps != hi:  # steps of 1 would drop the upper end without a word
            raise InvalidParameters(
                f"the range {item!r} goes in steps of 1, which do not reach {parts[0].strip()}; "
                f"add :K for K equally spaced values (e.g. {item.strip()}:5)", parameters=["temperatures"])
        return [lo + i for i in range(steps + 1)]
    try:
        count = int(parts[1])
    except ValueError:
        raise InvalidParameters(f"the number of points in {item!r} must be a whole number",
                                parameters=["temperatures"]) from None
    if count < 1 or (count == 1 and hi != lo) or count > MAX_TEMPERATURES:
        raise InvalidParameters(
            f"the number of points in {item!r} must be between 2 and {MAX_TEMPERATURES}",
            parameters=["temperatures"],
        )
    if count == 1:
        return [lo]
    if len(parts) == 2:
        return [lo + (hi - lo) * i / (count - 1) for i in range(count)]
    out = []
    with mpmath.workdps(30):
        ratio = mpmath.mpf(hi.numerator) / hi.denominator / (mpmath.mpf(lo.numerator) / lo.denominator)
        for i in range(count):
            if i == 0 or i == count - 1:
                out.append(lo if i == 0 else hi)
                continue
            value = mpmath.mpf(lo.numerator) / lo.denominator * ratio ** (mpmath.mpf(i) / (count - 1))
            out.append(Fraction(mpmath.nstr(value, 12, min_fixed=-30, max_fixed=30)))
    return out


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
    when not computed or meaningless (an Einstein solid's oscillators are
    localised: no reservoir exchanges them).  ``occupation_above_approx`` is
    the mean number of particles above the listed levels (the listed
    occupations plus it make ``N``); ``excitation_energy_approx`` is
    ``U - E_0`` above the exact ``ground_energy`` ``E_0`` (computed from the
    energy moment, not by subtracting ``U``); ``ground_occupation_variance_approx``
    is ``⟨δn_0^2⟩`` of listed level 0 (on the particle-hole route from the law
    of level 0; ``None`` when level 0 shares its energy with another level),
    beside the grand-canonical ``grand_canonical_ground_variance_approx``.
    ``route`` names the method: ``"recursion"`` (Borrmann–Franke),
    ``"particle-hole"`` (:mod:`.particle_hole`, fermions far below the Fermi
    temperature) or ``"float"`` (bosons at scale, :func:`.bosons_float.canonical_float`,
    whose rigorous a-posteriori bounds are in ``error_bounds``: absolute for
    ``ln_partition_function``, relative for ``mean_energy``,
    ``heat_capacity`` and ``occupations``; the particle-hole route's proved
    bounds are there too, with ``occupations_absolute`` instead).
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
    occupation_above_approx: Optional[mpmath.mpf] = None
    excitation_energy_approx: Optional[mpmath.mpf] = None
    ground_energy: Optional[Fraction] = None
    ground_occupation_variance_approx: Optional[mpmath.mpf] = None
    grand_canonical_ground_variance_approx: Optional[mpmath.mpf] = None
    grand_canonical_mean_energy_approx: Optional[mpmath.mpf] = None
    grand_canonical_heat_capacity_approx: Optional[mpmath.mpf] = None
    route: str = "recursion"
    error_bounds: Optional[Dict[str, float]] = None

    @property
    def energy_variance_approx(self) -> mpmath.mpf:
        """``⟨δE^2⟩ = k_B T^2 C`` (energy unit squared)."""
        T = mpmath.mpf(self.temperature.numerator) / self.temperature.denominator
        return self.heat_capacity_approx * T * T

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
        bs = self.b * s
        step = mpmath.exp(bs)
        grown = None
        for k in range(1, kmax + 1):
            # r = q^k / (1 - q^k) = 1 / (e^{k b s} - 1), q = e^{-b s}: by expm1 while k b s < 1 (where
            # e^{k b s} - 1 would cancel; 1 - q^k underflows to 0 when b s is tiny, at high T), then
            # e^{k b s} by one product a step, recomputed every 64 steps (at most about 100 roundings,
            # 7 of the 32 guard bits; expm1 took most of the time of this loop).
            x = k * bs
            if x < 1:
                r = 1 / mpmath.expm1(x)
            else:
                if k == 1:
                    grown = step
                else:
                    grown = mpmath.exp(x) if grown is None or k % 64 == 0 else grown * step
                r = 1 / (grown - 1)
            zk = (1 + r) ** d  # (1 - q^k)^{-d}
            z.append(zk)
            if self.moments:
                first = d * s * r  # -(ln z)' per unit of b k
                z1.append(zk * first)
                z2.append(zk * (first * first + d * s * s * r * (1 + r)))
        return z, z1, z2


def to_fixed(x, bits: int) -> int:
    """``round(x 2^bits)`` for an mpmath number (exact at the working precision)."""
    return int(mpmath.nint(mpmath.ldexp(x, bits)))


def _from_fixed(value: int, bits: int):
    """The mpmath number ``value / 2^bits`` (rounded to the working precision)."""
    return mpmath.ldexp(mpmath.mpf(value), -bits)


#: Blocks of at most this many particle numbers are done by the plain loop;
#: larger ones are split in half (measured in scripts/bench.py workloads).
_BASE_BLOCK = 16


def online_recursion(kernels, couplings, starts, n_max: int, bits: int):
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
    zero = gmpy2.mpz(0)
    # GMP integers in the base loops (CPython's own products are Karatsuba: 9x slower at 32,000 bits);
    # the FLINT products take Python ints, converted per block.
    seqs = [[gmpy2.mpz(start)] + [zero] * n_max for start in starts]
    acc = [[zero] * (n_max + 1) for _ in range(width)]
    gmp_kernels = [[gmpy2.mpz(x) for x in kern] for kern in kernels]
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
        d = gmpy2.mpz(n) << bits
        for t in range(width):
            seqs[t][n] = (2 * acc[t][n] + d) // (2 * d)  # rounded to the nearest

    def solve(lo: int, hi: int) -> None:
        if hi - lo <= _BASE_BLOCK:
            for n in range(lo, hi):
                finalize(n)
                for t, pairs in enumerate(couplings):
                    row = acc[t]
                    for j, s in pairs:
                        x = seqs[s][n]
                        if x:
                            kern = gmp_kernels[j]
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
                    src = sources[s] = fmpz_poly([int(x) for x in seqs[s][lo:mid]])
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


def _level_variance(system: System, spectrum: Spectrum, b, ratios, index: int, mean):
    r"""Canonical variance of the occupation of listed level *index* from the ratios ``R_m = Z_{N-m}/Z_N``.

    With the per-state generating factor ``φ`` and ``x φ'(x)/φ(x) = Σ_k w_k x^k``,
    ``⟨n_s⟩ = Σ_m w_m y^m R_m`` and, for two states ``s ≠ t`` of the level,
    ``⟨n_s n_t⟩ = Σ_m (w*w)_m y^m R_m`` (``(w*w)_m = Σ_{k=1}^{m-1} w_k w_{m-k}``),
    ``⟨n_s^2⟩ = Σ_m (m w_m + (w*w)_m) y^m R_m``; so
    ``⟨n_l^2⟩ = Σ_m (g m w_m + g^2 (w*w)_m) y^m R_m`` (positive terms for
    bosons), and the variance is ``⟨n_l^2⟩ - ⟨n_l⟩^2`` at the working
    precision (absolute error about ``2^-prec ⟨n_l⟩^2``).  Cost ``O(N)``
    mpmath operations plus one FLINT squaring of length ``N``.
    """
    n = system.particles
    w = system.weights(n)
    conv = fmpz_poly([0] + w[1:]) ** 2
    e = spectrum.energies[index] - spectrum.lowest
    g = spectrum.degeneracies[index]
    y = mpmath.exp(-b * e)
    terms = []
    yk = mpmath.mpf(1)
    for m in range(1, n + 1):
        yk = yk * y
        c = g * m * w[m] + g * g * int(conv[m])
        if c:
            terms.append(c * yk * ratios[m])
    return mpmath.fsum(terms) - mean * mean


def ln_partition_bound(spectrum: Spectrum, particles: int, temperature: Fraction) -> float:
    r"""An upper bound on ``ln Z_N`` (energies from the lowest level), for sizing the recursions' integers.

    Through the grand canonical sum at fugacity ``φ = N/(N + z_1)``:
    ``ln Z_N <= ln Ξ(φ) - N ln φ <= z_1 ln(1 + N/z_1) + N ln(1 + z_1/N)``,
    ``z_1`` the one-particle sum from the lowest level (for a ladder,
    ``-d ln(1 - e^{-x})`` in logarithms, since ``z_1 ~ x^{-d}`` passes the
    float range at high temperature; beyond ``e^600``,
    ``N + N ln(2 z_1/N)``).  Cost: ``O(levels)`` float operations.

    >>> from enumerator.algorithms.levels.spectra import harmonic_trap
    >>> 0 < ln_partition_bound(harmonic_trap(), 100, Fraction(2)) < ln_partition_bound(harmonic_trap(), 100, Fraction(4))
    True
    """
    n = max(particles, 1)
    b = float(spectrum.unit / temperature)
    if spectrum.ladder is not None:
        lad = spectrum.ladder
        x = max(b * float(lad.spacing), 1e-300)
        log_z1 = -lad.dimension * math.log(-math.expm1(-x)) if x < 700 else 0.0
    else:
        low = spectrum.lowest
        # an energy beyond the float range weighs nothing here (e^-700 and less are dropped by exp anyway)
        # in logarithms: a degeneracy may pass the double range (10^400 states)
        logs = [math.log(g) - b * float(min(e - low, Fraction(10**300)))
                for e, g in zip(spectrum.energies, spectrum.degeneracies)]
        top = max(logs)
        log_z1 = top + math.log(sum(math.exp(x - top) for x in logs))
    if log_z1 < 600:
        z1 = math.exp(log_z1)
        return z1 * math.log1p(n / z1) + n * math.log1p(z1 / n)
    # z_1 ln(1 + N/z_1) <= N and N ln(1 + z_1/N) <= N ln(2 z_1/N) once z_1 >= N
    return n + n * (log_z1 - math.log(n) + math.log(2))


def _argument_digits(spectrum: Spectrum, temperature: Fraction, particles: int = 1) -> int:
    """Decimal digits of the largest exponent ``β (ε - ε_min)`` (times *particles* on a ladder) the sums meet.

    ``e^{-x}`` to ``d`` digits needs ``x`` itself to ``d + log10 x`` digits
    (a relative error ``η`` of ``x`` is one of ``x η`` in ``e^{-x}``), so the
    working precision grows by this many digits: none for ordinary
    temperatures, 400 for a level at ``10^400`` in ``k_B T`` units.

    >>> from .spectra import make_spectrum
    >>> _argument_digits(make_spectrum([0, 10**400]), Fraction(1)), _argument_digits(make_spectrum([0, 1]), Fraction(1))
    (401, 1)
    """
    if spectrum.ladder is not None:
        span = Fraction(spectrum.ladder.spacing) * max(1, particles)
    else:
        span = max(spectrum.energies) - spectrum.lowest
    x = span * spectrum.unit / temperature
    if x <= 1:
        return 1
    return max(1, math.ceil((x.numerator.bit_length() - x.denominator.bit_length() + 1) * math.log10(2)))


def _recursion_cost(system: System, spectrum: Spectrum, temperature: Fraction, bits: int, moments: bool) -> Cost:
    r"""Rough cost of the fixed-point recursion at one temperature.

    Its integers hold ``bits`` fractional bits plus the magnitude of ``Z_N``
    (of the majorant for alternating weights), bounded through the grand
    canonical sum at fugacity ``φ``: ``ln Z_N <= ln Ξ(φ) - N ln φ <=
    z_1 ln(1 + N/z_1) + N ln(1 + z_1/N)`` at ``φ = N/(N + z_1)`` (``z_1`` the
    one-particle sum from the lowest level), plus the cancellation of the
    alternating sums, ``β (E_0 - N ε_min) / ln 2`` bits.  Time: the
    products of the divide and conquer (``log2 N`` levels, six couplings
    with the moments) and the base loops (about ``48 N`` GMP products of
    ``size``-bit numbers, at the measured rate ``multiply_seconds`` plus
    Python's overhead); calibrated on the 3D trap (CPU time, load 3-4,
    measured against estimated: BE 1000 particles at ``T = 2``, 3000
    digits: 2.5 s, 2.2 s; BE 2000 at ``T = 1``, 10000 digits: 18.7 s,
    17.4 s; BE 5000 at ``T = 5``, 1000 digits: 4.4 s, 5.4 s; BE 10^4 at
    ``T = 20``, 15 digits: 15 s, 40 s; FD 100 at ``T = 3``, 3000 digits:
    0.47 s, 1.4 s).
    """
    n = max(system.particles, 1)
    b = float(spectrum.unit / temperature)
    size = bits + ln_partition_bound(spectrum, n, temperature) / math.log(2)
    if system.capacity is not None:
        size += b * (ground_energy(system) - n * spectrum.lowest) / math.log(2)
    couplings = 6 if moments else 1
    if system.capacity is not None:
        couplings *= 2
    seconds = (couplings * 2 * max(1, n.bit_length()) * product_seconds(n * size)
               + n * 8 * couplings * (multiply_seconds(size) + 3e-7) + n * 1.5e-4)
    # the one-particle sums in mpmath at bits + 32: an exponential every 64 cycle lengths (about
    # 0.03 s at 10^5 bits, 1.9 s at 10^6, growing as bits^1.8) and a dozen products per cycle length
    seconds += (n / 64 + 1) * 0.04 * ((bits + 32) / 1e5) ** 1.8 + 12 * n * product_seconds(bits + 32)
    if system.capacity is not None:
        seconds *= 8  # measured: the precision is found in a few attempts, the majorant doubles the work
    return Cost(seconds=seconds, memory=(couplings + 3) * (n + 1) * bigint_bytes(size))


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
    """MB closed forms: ``ln Z = N ln z``, ``U = N z1/z``, ``Var = N Var_1``.

    The one-particle variance without the cancellation of ``z2/z - (z1/z)^2``
    (which lost everything when it is ``10^-400`` of the squared mean): a
    finite spectrum as ``Σ g y (e - <e>)^2 / z``, positive terms; a ladder
    in closed form, ``d s^2 r (1 + r)`` with ``r = 1/(e^{b s} - 1)``.
    Returns the values and the bits lost to cancellation (none now).
    """
    single = _Single(spectrum, b, True)
    z, z1, z2 = single.sums(1)
    n = system.particles
    mean1 = z1[1] / z[1]
    if spectrum.finite:
        var1 = mpmath.fsum(g * y * (e - mean1) ** 2 for g, y, e in zip(single.g, single.y, single.shifted)) / z[1]
    else:
        lad = spectrum.ladder
        r = 1 / mpmath.expm1(b * lad.spacing)
        var1 = lad.dimension * lad.spacing**2 * r * (1 + r)
    lost = 0
    occ = []
    low = spectrum.lowest
    for i in range(count):
        e = spectrum.energies[i] - low
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
    At least :data:`FLOAT_DIGITS` digits are computed, whatever is asked: the
    values end as doubles on the command line, and a value rounded to fewer
    (binary) digits printed false ones (``9999.38671875`` at 6 digits).
    """
    digits = max(digits, FLOAT_DIGITS)
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
            extras = {"above": n - mpmath.fsum(occ), "ground_variance": zero, "excitation": zero}
            with mpmath.workdps(digits):
                return +lnZ, +energy, zero, +energy, zero, tuple(occ), extras
    target = math.ceil(digits * math.log2(10))
    margin = 8 + 2 * (n + 1).bit_length()
    bits = target + margin + 16 + math.ceil(_argument_digits(spectrum, temperature, n) * math.log2(10))
    # β Δ for the first gap Δ of the whole spectrum (a ladder listed to rung 0 still has its spacing)
    _, gap = ground_and_gap(spectrum)
    beta_gap = None if gap is None else gap * spectrum.unit / temperature
    if moments and system.rule is Rule.BE and system.capacity is None and n and beta_gap is not None:
        # Bosons: the energy variance is about e^{-β Δ} (one particle lifted by the first gap Δ) against
        # Z_N, so the fixed point needs β Δ / ln 2 more bits to resolve it; asked for at once, not
        # found by doubling (which ran out of attempts far below the Bose temperature).
        lost = float(min(beta_gap, Fraction(2**64))) / math.log(2)
        bits = max(bits, target + margin + 16 + math.ceil(lost))
    if system.rule is not Rule.MB:
        # the float route only where its one-particle sums stay in the double range (e^{-β Δ} above e^-700)
        floatable = (system.rule is Rule.BE and system.capacity is None
                     and (beta_gap is None or beta_gap < 700))
        check(_recursion_cost(system, spectrum, temperature, bits, moments),
              f"the canonical recursion of {n} particles at T = {temperature_text(temperature)}",
              advice="raise the temperature, lower particles=" + (", or use route= float" if floatable else ""),
              parameters=["particles", "route"] if floatable else ["particles"])
    for _attempt in range(12):
        with mpmath.workprec(bits + 32):
            T = mpmath.mpf(temperature.numerator) / temperature.denominator
            u = mpmath.mpf(spectrum.unit.numerator) / spectrum.unit.denominator
            b = u / T
            shift_e = n * spectrum.lowest
            ratios = None
            if system.rule is Rule.MB:
                lnz, m1, var, occ, lost = _canonical_mb(system, spectrum, b, count, target)
                need = target + margin + lost
            else:
                single = _Single(spectrum, b, moments)
                z, z1, z2 = single.sums(n)
                w = system.weights(n)
                alternating = any(x < 0 for x in w[1:])
                a0 = [0] + [to_fixed(w[k] * z[k], bits) for k in range(1, n + 1)]
                kernels = [a0]
                couplings = [[(0, 0)]]
                starts = [1 << bits]
                if moments:
                    a1 = [0] + [to_fixed(w[k] * k * z1[k], bits) for k in range(1, n + 1)]
                    a2 = [0] + [to_fixed(w[k] * k * k * z2[k], bits) for k in range(1, n + 1)]
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
                seqs = online_recursion(kernels, couplings, starts, n, bits)
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
                    # With a gap above the lowest level (of the whole spectrum: a ladder
                    # listed to rung 0 has one) and not every state full (handled above)
                    # the energy fluctuates: M1_N > 0 and V > 0 exactly, so a zero or
                    # negative value is rounding noise and the bounds below then ask
                    # for more bits.
                    fluctuates = n > 0 and gap is not None
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
            # U - E_0 from the moment about n ε_min (no subtraction of U itself).
            excitation = u * (m1 + shift_e - ground_energy(system))
            extras = {"above": n - mpmath.fsum(occ), "ground_variance": None, "excitation": excitation}
            if count and n:
                if ratios is None:  # MB: n_0 is binomial(N, <n_0>/N)
                    extras["ground_variance"] = occ[0] * (1 - occ[0] / n)
                else:
                    extras["ground_variance"] = _level_variance(system, spectrum, b, ratios, 0, occ[0])
            with mpmath.workdps(digits):
                extras = {k: (None if v is None else +v) for k, v in extras.items()}
                return +lnZ, +U, +C, +F, +S, tuple(+x for x in occ), extras
    raise TooLarge(
        f"the canonical sums at T = {temperature_text(temperature)} lose more digits than a reasonable working "
        "precision holds; raise the temperature or lower the number of particles"
    )


def canonical(
    system: System,
    temperatures: Iterable,
    digits: int = DEFAULT_DIGITS,
    levels: Optional[int] = None,
    grand: bool = True,
    route: str = "auto",
    processes: int = 1,
) -> List[CanonicalPoint]:
    """Return the canonical ensemble of *system* at each temperature.

    Parameters
    ----------
    system : System
    temperatures : iterable
        Positive ``k_B T`` values in the energy unit (ints, fractions, decimal
        strings or floats).
    digits : int
        Significant decimal digits wanted, at least 5 (default :data:`DEFAULT_DIGITS`).
    levels : int, optional
        How many of the lowest listed levels to report occupations for
        (default: all listed; a ladder lists what it was extended to by
        :meth:`Spectrum.through`).
    grand : bool
        Also compute the grand-canonical occupations (:func:`grand_canonical`)
        and ground-level variance (:func:`grand_canonical_level_variance`),
        to at most :data:`GRAND_MAX_DIGITS` digits (they are the comparison,
        and 3000 digits of them took half a minute); never for an Einstein
        solid (localised oscillators have no reservoir).
    route : str
        ``"auto"`` (default), ``"recursion"``, ``"particle-hole"`` (FD
        only) or ``"float"`` (BE without capacity: double precision with
        rigorous a-posteriori bounds, see :func:`.bosons_float.canonical_float`; *digits*
        is then not promised but the bounds are stated in ``error_bounds``;
        ``"auto"`` takes it only when they meet *digits*): see Notes.
    processes : int
        Most local processes computing temperatures side by side (default
        1: one after the other here).  With more, the lowest temperature is
        computed first, here; when it took over
        :data:`PROCESSES_AFTER_SECONDS`, the others are cut into groups of
        neighbouring temperatures for :func:`~enumerator.core.workers.map_in_processes`
        (the same answers: each group is computed as by a call of its own).

    Returns
    -------
    list of CanonicalPoint
        One per temperature, about *digits* correct digits each (occupations:
        about ``10^-digits g_i`` absolute).

    Raises
    ------
    InvalidParameters
        No state exists (FD with more particles than states), a non-positive
        temperature, more report levels than a finite spectrum lists.
    TooLarge
        The sums lose more digits than a reasonable working precision holds.

    Notes
    -----
    ``Z_N`` from the Borrmann–Franke recursion for ideal quantum gases,
    ``Z_N = (1/N) Σ_{k=1}^{N} w_k Z_1(kβ) Z_{N-k}`` (``w_k = (±1)^{k+1}``
    for BE/FD, Gentile weights with a capacity; MB: ``Z = Z_1^N``) together
    with its first two β-derivatives, giving ``U = -∂ ln Z/∂β`` and
    ``C = β^2 ∂^2 ln Z/∂β^2``; ``F = -T ln Z``, ``S = ln Z + U/T``; mean
    occupations ``<n_i> = Σ_k w_k g_i e^{-kβε_i} Z_{N-k}/Z_N`` (P. Borrmann and
    G. Franke, J. Chem. Phys. 98, 2484 (1993); P. Borrmann, J. Harting,
    O. Mülken and E. Hilf, Phys. Rev. A 60, 1519 (1999)).  A ladder uses
    ``Z_1 = e^{-βε_0}(1 - e^{-βħω})^{-d}`` exactly, however many levels it takes.

    Arithmetic: the single-particle sums ``Z_1(kβ)`` and its derivatives in
    mpmath, rounded to fixed-point integers with ``bits`` fractional bits;
    the recursion and its two β-derivatives in exact integer arithmetic, all
    ``N`` convolutions at once by divide and conquer over FLINT products;
    logarithms, ratios and occupations back in mpmath.  The alternating
    FD/Gentile sums cancel at low temperature: ``bits`` is raised until the
    rounding error, bounded through the majorant ``Ẑ`` (the same recursion
    with ``|w_k|``), is below ``10^-digits`` relative to ``Z_N``, to the
    energy moment and to the variance ``⟨E²⟩ - ⟨E⟩²``.  Fermions far below the
    Fermi temperature need thousands of bits (``β E_0 / ln 2`` for a ground
    energy ``E_0`` above ``N ε_min``).

    Fermions far below the Fermi temperature (route ``"auto"``, when the
    recursion would lose more than ``4 × 3.32 digits + 256`` bits, see
    :func:`particle_hole_pays`) go through the particle-hole expansion about
    the ground state instead (:func:`.particle_hole.fermion_canonical`): a
    sum of positive terms in ball arithmetic with rigorous truncation
    bounds, ``10^-digits`` relative for ``ln Z``, ``U - E_0``, ``C``, ``S``
    and absolute per level for the occupations (969 fermions in the 3D trap
    at ``T = 0.1, 0.3, 1``: well under a second each).  Both routes agree
    to the requested digits where both finish (tests/test_particle_hole.py,
    tests/test_levels_fluctuations.py).

    Bosons (BE without a capacity, route ``"auto"``) take the float route
    (:func:`.bosons_float.canonical_float`) when at most :data:`FLOAT_MAX_DIGITS` digits
    are asked and the exact recursion's estimated time is at least twice
    the float route's share of a pass (:func:`_float_pays`: 10^4 bosons in
    the 3D trap at every ``k_B T`` from 0.5 spacings up, where the recursion
    takes one second to minutes a temperature and the float route about
    half a second), and keep it only when every bound (``ln Z`` through ``F``,
    ``U``, ``U - E_0``, ``C``, ``S``, the occupations and the level-0
    variance) is within ``10^-digits`` relative; otherwise the exact
    recursion runs.  The point then says ``route="float"`` and carries its
    ``error_bounds``.

    Cost per temperature: ``O(M(N) log N)`` integer work for the recursion
    (``M``: one FLINT product of length ``N``), plus ``O(N)`` mpmath
    operations per reported level (fewer for BE, whose sums stop once
    negligible) and ``O(N)`` for the ground-level variance; MB
    ``O(levels)``; the particle-hole route as stated in its module.
    """
    digits = parse_digits(digits)
    if ground_energy(system) is None:
        raise InvalidParameters(
            f"{system.particles} particles do not fit in the {system.spectrum.states()} "
            "single-particle states under this rule; lower particles= or add levels",
            parameters=["particles"],
        )
    count = _report_count(system.spectrum, levels)
    if route not in ROUTES:
        raise InvalidParameters(f"route must be one of {', '.join(ROUTES)} (got {route!r})", parameters=["route"])
    if route == "particle-hole" and system.rule is not Rule.FD:
        raise InvalidParameters("the particle-hole route is for fermions (rule FD)", parameters=["route", "rule"])
    if route == "float" and (system.rule is not Rule.BE or system.capacity is not None):
        raise InvalidParameters("the float route is for bosons (rule BE without a capacity): its sums must be "
                                "positive", parameters=["route", "rule"])
    grand = grand and system.has_reservoir
    temperatures = [parse_temperature(value) for value in temperatures]
    # the reported levels: each an mpmath sum per temperature (measured 34 us a level at 10 particles; a
    # ladder lists them first), planned before the ladder is extended to them
    check(Cost(seconds=4e-5 * count * max(1, len(temperatures)) * (2 if grand else 1), memory=400 * count),
          f"the occupations of {count} levels at {len(temperatures)} temperature(s)",
          advice="report fewer levels")
    if processes > 1 and len(temperatures) > 1:
        return _canonical_in_processes(system, temperatures, digits, levels, grand, route, processes)
    floats = _float_points(system, temperatures, digits, count, route)
    points = []
    for index, temperature in enumerate(temperatures):
        floated = floats.get(index)
        if floated is not None:
            lnZ, U, C, F, S, occ, extras = floated
            point = CanonicalPoint(temperature, digits, lnZ, U, C, F, S, occ,
                                   occupation_above_approx=extras["above"],
                                   excitation_energy_approx=extras["excitation"],
                                   ground_occupation_variance_approx=extras["ground_variance"],
                                   route="float", error_bounds=extras["bounds"])
        elif particle_hole_pays(system, temperature, digits, route):
            point = _particle_hole_point(system, temperature, digits, count)
        else:
            lnZ, U, C, F, S, occ, extras = _canonical_at(system, temperature, digits, count, True)
            point = CanonicalPoint(temperature, digits, lnZ, U, C, F, S, occ,
                                   occupation_above_approx=extras["above"],
                                   excitation_energy_approx=extras["excitation"],
                                   ground_occupation_variance_approx=extras["ground_variance"])
        point = replace(point, ground_energy=ground_energy(system) * system.spectrum.unit)
        if system.spectrum.finite and count == len(system.spectrum.energies):
            point = replace(point, occupation_above_approx=mpmath.mpf(0))  # every level listed: nothing above
        if grand:
            gdigits = min(digits, GRAND_MAX_DIGITS)
            mu, gc = grand_canonical(system, temperature, gdigits, count)
            gvar = None
            if mu is not None and count:
                gvar = grand_canonical_level_variance(system, temperature, mu, 0, gc[0], gdigits)
            gu = gcap = None
            if mu is not None:
                gu, gcap = grand_canonical_thermo(system, temperature, mu, min(digits, 30))
            point = replace(point, chemical_potential_approx=mu, grand_canonical_occupations_approx=gc,
                            grand_canonical_ground_variance_approx=gvar, grand_canonical_mean_energy_approx=gu,
                            grand_canonical_heat_capacity_approx=gcap)
        points.append(point)
    return points


#: Seconds the lowest temperature must take before :func:`canonical` hands the others to processes
#: (starting them and sending the answers back costs about 0.1 s).
PROCESSES_AFTER_SECONDS = 0.25


def _canonical_group(task) -> List[CanonicalPoint]:
    """:func:`canonical` at one group of temperatures, in one process (a task of :func:`_canonical_in_processes`)."""
    system, temperatures, digits, levels, grand, route = task
    return canonical(system, temperatures, digits, levels, grand, route)


def _canonical_in_processes(system: System, temperatures: List[Fraction], digits: int, levels: Optional[int],
                            grand: bool, route: str, processes: int) -> List[CanonicalPoint]:
    """:func:`canonical` with the temperatures shared among up to *processes* local processes.

    The lowest temperature first, here, timed (:func:`~enumerator.core.workers.map_after_first`);
    the rest, sorted, in groups of neighbouring temperatures (at most
    :data:`~.bosons_float.BATCH`, about three groups per process so that
    unequal groups balance out), in processes when the first took over
    :data:`PROCESSES_AFTER_SECONDS`, else here.  Results in the order given.
    """
    order = sorted(range(len(temperatures)), key=lambda i: temperatures[i])
    rest = order[1:]
    size = max(1, min(BATCH, math.ceil(len(rest) / (3 * processes))))
    groups = [order[:1]] + [rest[i:i + size] for i in range(0, len(rest), size)]
    tasks = [(system, [temperatures[i] for i in group], digits, levels, grand, route) for group in groups]
    results = map_after_first(_canonical_group, tasks, processes, PROCESSES_AFTER_SECONDS)
    points: List[Optional[CanonicalPoint]] = [None] * len(temperatures)
    for group, group_points in zip(groups, results):
        for i, point in zip(group, group_points):
            points[i] = point
    return points


def _float_points(system: System, temperatures: List[Fraction], digits: int, count: int, route: str) -> Dict:
    """The float-route results of :func:`canonical`, by index into *temperatures*, all in one batched call.

    Route ``"float"``: every temperature (a :class:`TooLarge` for one of
    them is raised).  Route ``"auto"``: those where :func:`_float_pays`, kept
    only where the bounds meet *digits* (the rest, and a batch refused by
    the planner, go to the exact recursion).  Other routes: none.
    """
    if route == "float":
        chosen = list(range(len(temperatures)))
    elif route == "auto":
        chosen = [i for i, t in enumerate(temperatures) if _float_pays(system, t, digits, count)]
    else:
        return {}
    if not chosen:
        return {}
    try:
        results = canonical_float_many(system, [temperatures[i] for i in chosen], count)
    except TooLarge:
        if route == "float":
            raise
        return {}
    out = {}
    for i, result in zip(chosen, results):
        if isinstance(result, TooLarge):
            if route == "float":
                raise result
            continue  # beyond the double range: the exact recursion
        if route == "auto" and not float_meets(result[6]["all_bounds"], digits):
            continue  # the bounds fall short of the digits asked: the exact recursion
        out[i] = result
    return out


#: Fewest digits the exact recursion computes (a double's 17 significant digits).
FLOAT_DIGITS = 17

#: Most digits of the grand-canonical comparison in :func:`canonical` (its fields are approximations beside
#: the canonical ones; at 3000 digits the chemical potential alone took 25-32 s).
GRAND_MAX_DIGITS = 60

#: The routes of :func:`canonical`.
ROUTES = ("auto", "recursion", "particle-hole", "float")

def _float_pays(system: System, temperature: Fraction, digits: int, count: int) -> bool:
    """Whether route ``"auto"`` tries the float route first (it keeps it only when its bounds meet *digits*).

    Bosons (BE without a capacity, at least one particle), at most
    :data:`FLOAT_MAX_DIGITS` digits asked, and the exact recursion's estimated
    time (:func:`_recursion_cost`) at least twice the float route's share of
    a pass of :data:`~.bosons_float.BATCH` temperatures
    (:func:`.bosons_float.float_cost`).
    """
    if system.rule is not Rule.BE or system.capacity is not None or system.particles == 0:
        return False
    if digits > FLOAT_MAX_DIGITS:
        return False
    spectrum = system.spectrum
    if count > len(spectrum.energies):
        spectrum = spectrum.through(spectrum.ladder.energy(count - 1))
    n = system.particles
    bits = math.ceil(digits * math.log2(10)) + 8 + 2 * (n + 1).bit_length() + 16
    exact = _recursion_cost(System(spectrum, n, system.rule, system.capacity), spectrum, temperature, bits, True)
    # the float route's share of a pass of BATCH temperatures (they go in passes), at least twice cheaper
    share = float_cost(spectrum, n, count, BATCH).seconds / BATCH
    return exact.seconds >= 2 * share


def particle_hole_pays(system: System, temperature: Fraction, digits: int, route: str) -> bool:
    """Whether *route* (``"auto"``: fermions whose recursion would cancel badly) takes the particle-hole expansion.

    The Borrmann–Franke recursion for fermions loses about
    ``β (E_0 - N ε_min) / ln 2`` bits to cancellation; the particle-hole sums
    lose none but grow with the temperature.  ``auto`` takes the
    particle-hole route when that loss exceeds four times the bits asked
    for plus ``256 + 12 N^{3/4}``: the crossover measured on the 3D trap
    (969 fermions, 15 digits, CPU: particle-hole 0.23 / 0.69 / 1.2 s at
    ``T = 3 / 6 / 10``, recursion 3.1 / 2.2 / 0.47 s; the rule switches
    near ``T = 7``; 100 fermions at ``T = 1``: 0.16 against 0.13 s, the
    recursion kept).
    """
    if system.rule is not Rule.FD or system.particles == 0:
        return False
    if route != "auto":
        return route == "particle-hole"
    spectrum = system.spectrum
    excess = ground_energy(system) - system.particles * spectrum.lowest
    loss = float(excess * spectrum.unit / temperature) / math.log(2)
    return loss > 4 * digits * math.log2(10) + 256 + 12 * system.particles ** 0.75


def _particle_hole_point(system: System, temperature: Fraction, digits: int, count: int) -> CanonicalPoint:
    """One temperature by :func:`.particle_hole.fermion_canonical`, as a :class:`CanonicalPoint`."""
    energies = system.spectrum.energies
    own = system.spectrum.ladder is not None or energies.count(energies[0]) == 1
    (p,) = fermion_canonical(system, temperatures=[temperature], digits=digits, levels=count,
                             law_level=0 if own else None)
    variance = None
    if p.law is not None:  # level 0's variance from its law (absolute error about 10^-digits N^2)
        with mpmath.workdps(digits + GUARD_DIGITS):
            mean = mpmath.fsum(k * q for k, q in enumerate(p.law))
            variance = mpmath.fsum((k - mean) ** 2 * q for k, q in enumerate(p.law))
    bounds = _particle_hole_bounds(p, digits)
    with mpmath.workdps(digits):
        return CanonicalPoint(
            temperature, digits, +p.ln_partition_function_approx, +p.mean_energy_approx,
            +p.heat_capacity_approx, +p.free_energy_approx, +p.entropy_approx,
            tuple(+x for x in p.occupations_approx),
            occupation_above_approx=+p.occupation_above_approx, route="particle-hole",
            excitation_energy_approx=+p.excitation_energy_approx,
            ground_occupation_variance_approx=None if variance is None else +variance,
            error_bounds=bounds,
        )


def _float_up(x) -> float:
    """The smallest double at least the non-negative mpmath number *x* (a bound stays a bound)."""
    value = float(x)
    if value < x:
        value = math.nextafter(value, math.inf)
    return value


def _particle_hole_bounds(p, digits: int) -> Dict[str, float]:
    """The particle-hole point's proved error bounds in the float route's terms, rounded up to doubles.

    ``ln_partition_function`` absolute; ``mean_energy``, ``excitation_energy``,
    ``heat_capacity`` and ``entropy`` relative to their values;
    ``occupations_absolute`` the largest absolute bound over the listed
    levels (a relative one would be meaningless for a nearly empty level).
    Each includes the rounding of the value to *digits* digits (``2^{1-p}``
    relative at mpmath's precision ``p`` for them), as the point holds it.
    """
    errors = p.errors
    with mpmath.workdps(digits):
        rounding = mpmath.ldexp(1, 1 - mpmath.mp.prec)

    def relative(key, value):
        if not value:
            return 0.0 if errors[key] == 0 else math.inf
        return _float_up(errors[key] / abs(value) + rounding)

    with mpmath.workdps(30):
        big = max((abs(x) for x in p.occupations_approx), default=mpmath.mpf(0))
        return {
            "ln_partition_function": _float_up(errors["ln_partition_function"]
                                               + abs(p.ln_partition_function_approx) * rounding),
            "mean_energy": relative("mean_energy", p.mean_energy_approx),
            "excitation_energy": relative("excitation_energy", p.excitation_energy_approx),
            "heat_capacity": relative("heat_capacity", p.heat_capacity_approx),
            "entropy": relative("entropy", p.entropy_approx),
            "occupations_absolute": _float_up(errors["occupations"] + big * rounding),
        }


#: Most ladder rungs :func:`grand_canonical_thermo` sums one by one.
_GC_MAX_RUNGS = 200_000


def grand_canonical_thermo(system: System, temperature, mu, digits: int = 20):
    """Grand-canonical mean energy and heat capacity at fixed mean ``N``: ``(U, C)``.

    Parameters
    ----------
    system : System
    temperature : Fraction
    mu : mpmath.mpf
        The chemical potential giving mean ``N`` (:func:`grand_canonical`).
    digits : int
        Working digits (the results feed ``*_approx`` fields and plots).

    Returns
    -------
    (mpmath.mpf, mpmath.mpf) or (None, None)
        ``None`` when a ladder would need more than :data:`_GC_MAX_RUNGS`
        rungs (``k_B T`` far above the spacing; these fields are extras).

    Notes
    -----
    Independent states with per-state mean ``f`` and variance ``v`` at
    ``x = β(ε - μ)``: ``U = Σ g ε f``; at fixed mean ``N`` (``μ`` following
    ``T``) ``C = β^2 (Var E - Cov(E, N)^2 / Var N)`` with ``Var E = Σ g ε^2 v``,
    ``Cov = Σ g ε v``, ``Var N = Σ g v`` (the Jacobian of ``(β, βμ) -> (U, N)``;
    Pathria & Beale, *Statistical Mechanics*, 3rd ed., 2011, §§ 4.5, 6.2,
    from memory).  A ladder is summed rung by rung until the terms drop
    below the working precision past their peak: cost ``O(levels)``
    mpmath operations, about ``(|βμ| + 2.3 digits + d ln(k_B T/ħω)) / (βħω)``
    rungs for a ladder.
    """
    spectrum = system.spectrum
    cap = system.capacity
    with mpmath.workdps(digits + GUARD_DIGITS + _argument_digits(spectrum, temperature)):
        T = mpmath.mpf(temperature.numerator) / temperature.denominator
        u = mpmath.mpf(spectrum.unit.numerator) / spectrum.unit.denominator
        eps = mpmath.mpf(10) ** -(digits + 4)

        def stats(x):
            if system.rule is Rule.MB:
                f = mpmath.exp(-x)
                return f, f
            if cap is None:
                f = 1 / mpmath.expm1(x)
                return f, f * (1 + f)
            if cap == 1:
                f = 1 / (mpmath.exp(x) + 1)
                return f, f * (1 - f)
            y = mpmath.exp(-x)
            ws = [y**j for j in range(cap + 1)]
            z = mpmath.fsum(ws)
            m1 = mpmath.fsum(j * w for j, w in enumerate(ws)) / z
            m2 = mpmath.fsum(j * j * w for j, w in enumerate(ws)) / z
            return m1, m2 - m1 * m1

        sums = [mpmath.mpf(0)] * 4  # Σ g ε f, Σ g v, Σ g ε v, Σ g ε^2 v

        def add(e_units, g):
            e = e_units * u
            f, v = stats((e - mu) / T)
            terms = (g * e * f, g * v, g * e * v, g * e * e * v)
            for i, t in enumerate(terms):
                sums[i] += t
            return terms

        if spectrum.ladder is None:
            for e, g in zip(spectrum.energies, spectrum.degeneracies):
                add(e, g)
        else:
            lad = spectrum.ladder
            # the terms fall like e^{-ε/T} from max(μ, 0): a negative μ (high T) does not shorten the sum
            rungs = float((max(mu, 0) + (lad.dimension + 2.3 * digits + 20) * T) / (lad.spacing * u))
            if rungs > _GC_MAX_RUNGS:
                return None, None
            m = 0
            while True:
                terms = add(lad.energy(m), lad.degeneracy(m))
                past_peak = lad.energy(m) * u > mu + (lad.dimension + 2) * T
                if past_peak and all(abs(t) <= eps * abs(s_) for t, s_ in zip(terms, sums) if s_):
                    break
                m += 1
                if m > _GC_MAX_RUNGS:  # the estimate above was passed: these fields are extras
                    return None, None
        U, varN, cov, varE = sums
        C = (varE - cov * cov / varN) / (T * T) if varN > 0 else mpmath.mpf(0)
        with mpmath.workdps(digits):
            return +U, +C


def grand_canonical_level_variance(system: System, temperature, mu, index: int, mean, digits: int = DEFAULT_DIGITS):
    """Grand-canonical variance of the occupation of listed level *index* (independent states).

    Parameters
    ----------
    system : System
    temperature : Fraction
    mu : mpmath.mpf
        The chemical potential (:func:`grand_canonical`).
    index : int
        The listed level (ladder rung).
    mean : mpmath.mpf
        Its grand-canonical mean occupation ``g f``.
    digits : int

    Returns
    -------
    mpmath.mpf
        ``g f (1 + f)`` (BE), ``g f (1 - f)`` (FD), ``g f`` (MB: Poisson),
        with a capacity ``c`` the variance of ``j`` under weights
        ``e^{-jβ(ε - μ)}``, ``j = 0..c``, times ``g``.

    Notes
    -----
    Each state of a grand-canonical ideal gas is independent (R. K. Pathria
    & P. D. Beale, *Statistical Mechanics*, 3rd ed., 2011, ch. 6); for a Bose
    condensate this gives ``⟨δn_0^2⟩ ≈ ⟨n_0⟩^2``, far above the canonical
    value.  Constant cost (``O(c)`` with a capacity).
    """
    spectrum = system.spectrum
    if spectrum.ladder is not None:
        e_units, g = spectrum.ladder.energy(index), spectrum.ladder.degeneracy(index)
    else:
        e_units, g = spectrum.energies[index], spectrum.degeneracies[index]
    with mpmath.workdps(digits + GUARD_DIGITS + _argument_digits(spectrum, temperature)):
        f = mean / g
        if system.rule is Rule.MB:
            var = g * f
        elif system.capacity is None:
            var = g * f * (1 + f)
        elif system.capacity == 1:
            var = g * f * (1 - f)
        else:
            T = mpmath.mpf(temperature.numerator) / temperature.denominator
            u = spectrum.unit
            y = mpmath.exp(-(mpmath.mpf(e_units * u.numerator) / u.denominator - mu) / T)
            ws = [y**j for j in range(system.capacity + 1)]
            z = mpmath.fsum(ws)
            m1 = mpmath.fsum(j * w for j, w in enumerate(ws)) / z
            m2 = mpmath.fsum(j * j * w for j, w in enumerate(ws)) / z
            var = g * (m2 - m1 * m1)
        with mpmath.workdps(digits):
            return +var


def canonical_occupations(
    system: System, temperatures: Iterable, digits: int = DEFAULT_DIGITS, levels: Optional[int] = None
) -> List[Tuple]:
    """Return the canonical mean occupations only, one tuple per temperature.

    Parameters
    ----------
    system : System
    temperatures : iterable
        Positive ``k_B T`` values in the energy unit.
    digits : int
        Significant decimal digits wanted, at least 5.
    levels : int, optional
        How many of the lowest listed levels to report (default: all listed).

    Returns
    -------
    list of tuple of mpmath.mpf

    Raises
    ------
    InvalidParameters
        No state exists, a non-positive temperature.
    TooLarge
        As :func:`canonical`.

    Notes
    -----
    The same recursion as :func:`canonical` (Borrmann & Franke 1993) without
    its β-derivatives (one coupled sequence instead of three) and without the
    grand-canonical comparison; cost per temperature ``O(M(N) log N)`` plus
    ``O(N)`` mpmath operations per level.
    """
    digits = parse_digits(digits)
    if ground_energy(system) is None:
        raise InvalidParameters(
            f"{system.particles} particles do not fit in the single-particle states under this rule"
        )
    count = _report_count(system.spectrum, levels)
    result = []
    for value in temperatures:
        temperature = parse_temperature(value)
        if particle_hole_pays(system, temperature, digits, "auto"):
            result.append(_particle_hole_point(system, temperature, digits, count).occupations_approx)
        else:
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
    if m0 and eta < 0:
        # A fugacity e^eta < 1: the tail series converges from rung 0 on (every x >= -eta > 0; for FD and
        # a capacity its weights alternate, the terms still falling), in about prec ln 2 / |eta| terms:
        # far fewer than m0 rungs when k_B T is many spacings.
        if mpmath.mp.prec * 0.7 / -eta < m0:
            m0 = 0
    total = mpmath.mpf(0)
    if m0:
        step = mpmath.exp(bs)
        X = mpmath.exp(-eta)
        for m in range(m0):
            total += lad.degeneracy(m) * formula(X)
            X = X * step
    eps = mpmath.ldexp(mpmath.mpf(1), -mpmath.mp.prec)
    fug = mpmath.exp(eta)
    lead = [math.comb(m0 + i - 1, i) if m0 else int(i == 0) for i in range(d)]
    c1 = None if system.capacity is None else system.capacity + 1
    q1 = mpmath.exp(-bs)
    q = mpmath.mpf(1)
    fj = mpmath.mpf(1)
    j = 0
    while True:
        j += 1
        q = q * q1
        fj = fj * fug
        weight = 1 if c1 is None or j % c1 else 1 - c1
        inv = -1 / mpmath.expm1(-j * bs)  # 1/(1 - q): 1 - q rounds to 0 when b s is tiny (high T)
        tail = q ** m0 * mpmath.fsum(lead[i] * inv ** (d - i) for i in range(d))
        term = weight * fj * tail
        total += term
        if system.rule is Rule.MB or abs(term) < eps * abs(total):
            return total


def grand_canonical(system: System, temperature, digits: int = DEFAULT_DIGITS, levels: Optional[int] = None):
    """Return ``(μ, occupations)``: the grand-canonical formulas at mean particle number ``N``.

    Parameters
    ----------
    system : System
    temperature : int, Fraction, str, float or mpmath.mpf
        ``k_B T`` in the energy unit, positive.
    digits : int
        Significant decimal digits wanted, at least 5.
    levels : int, optional
        How many of the lowest listed levels to report (default: all listed).

    Returns
    -------
    mu : mpmath.mpf or None
        The chemical potential; ``None`` for ``N = 0`` (``-∞``) and for a full
        FD/Gentile spectrum (``+∞``).
    occupations : tuple of mpmath.mpf
        ``<n_i>`` of the reported levels (all ``g_i`` states of each).

    Raises
    ------
    InvalidParameters
        More particles than the states hold, a non-positive temperature.

    Notes
    -----
    ``<n_i> = g_i f(β(ε_i - μ))`` with ``f(x) = 1/(e^x - 1)`` (BE),
    ``1/(e^x + 1)`` (FD), ``e^{-x}`` (MB, where it equals the canonical
    result), ``1/(e^x - 1) - (c+1)/(e^{(c+1)x} - 1)`` (capacity ``c``), and
    ``μ`` solves ``Σ_i <n_i>(μ) = N`` over the whole spectrum:
    ``mpmath.findroot`` with a bracketing solver (Pegasus) on a
    bracket found by doubling, bisection when it stalls; for BE in the
    variable ``ln(ε_0 - μ)``.  The formulas: R. K. Pathria & P. D. Beale,
    *Statistical Mechanics*, 3rd ed., 2011, ch. 6.  Cost: ``O(levels)``
    mpmath operations per evaluation of the total, times the root finder's
    iterations (a ladder sums its tail in closed form).
    """
    digits = parse_digits(digits)
    temperature = parse_temperature(temperature)
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
    work_digits = digits + GUARD_DIGITS + _argument_digits(spectrum, temperature)
    check(_grand_cost(spectrum, work_digits), f"the grand-canonical chemical potential to {digits} digits",
          advice="lower digits=", parameters=["digits"])
    with mpmath.workdps(work_digits):
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

            # Start about the classical fugacity N / z_1 when it is small (far above the Fermi
            # temperature every statistics is MB's): a bracket at eta = 1 there would sum ~5/(β s)
            # rungs one by one (millions at k_B T = 10^6 spacings).
            z1 = _Single(spectrum, b, False).sums(1)[0][1]
            start = mpmath.log(target / z1) if target < z1 else mpmath.mpf(0)
            lo, hi = start - 1, start + 1
            while h(lo) > 0:
                lo = lo - 2 * (1 + abs(lo - start))
            while h(hi) < 0:
                hi = hi + 2 * (1 + abs(hi - start))
            eta = _bracketed_root(h, lo, hi, target)
        occ = [
            g * formula(mpmath.exp(b * (e - shift) - eta))
            for e, g in zip(spectrum.energies[:count], spectrum.degeneracies[:count])
        ]
        mu = T * eta + u * shift
        with mpmath.workdps(digits):
            return +mu, tuple(+x for x in occ)


def _grand_cost(spectrum: Spectrum, work_digits: int) -> Cost:
    """Time of :func:`grand_canonical`: about 40 evaluations of the total (:func:`_gc_total`).

    One evaluation sums the levels (a ladder: the rungs below the tail and
    about ``prec ln 2 / 4`` tail terms, each an ``expm1`` and a few
    products), so it grows like ``prec^2.1``: measured 9.3 ms at 1040 bits,
    72 ms at 3370 and 1.1 s at 10,000 (969 trap fermions at ``T = 0.3``; CPU
    time, load 3-4); a finite spectrum of ``L`` levels costs ``L / 100`` times
    that when longer.
    """
    prec = work_digits * math.log2(10)
    per_evaluation = 1e-3 + 0.0093 * (prec / 1040) ** 2.1
    if spectrum.ladder is None:
        per_evaluation *= max(1.0, len(spectrum.energies) / 100)
    return Cost(seconds=40 * per_evaluation, memory=0)


def _bracketed_root(h, lo, hi, scale):
    """A root of the monotone *h* inside ``[lo, hi]`` (``h(lo)``, ``h(hi)`` of opposite signs).

    mpmath's Pegasus bracketing solver first (M. Dowell and P. Jarratt, BIT 12,
    503 (1972)); its answer is kept when ``|h|`` is below ``scale`` times the
    working precision.  Measured on the trap's grand-canonical totals it takes
    13-40 evaluations where Anderson–Björck ran out of its 200 steps for
    condensed bosons (then bisection took 200 more).  Otherwise (a
    nearly flat ``h``, as inside the gap of a filled Fermi shell) bisection,
    which keeps the bracket and cannot stall.
    """
    prec = mpmath.mp.prec
    tol = mpmath.ldexp(mpmath.mpf(1), -prec + 8)
    good = scale * mpmath.ldexp(mpmath.mpf(1), -prec + 24)
    try:
        root = mpmath.findroot(h, (lo, hi), solver="pegasus", tol=tol, maxsteps=200, verify=False)
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
