r"""The canonical law of one level's occupation, ``P(n_l = k)``, exact or to a requested precision.

Particles on levels (:class:`~.spectra.System`) in the canonical ensemble.
Take one listed level ``l`` (energy ``ε_l``, ``g`` states) out of the
spectrum and call ``Z'_M`` the canonical partition function of ``M``
particles on the remaining levels.  A microstate with ``k`` particles in
level ``l`` is a way of putting ``k`` particles into its ``g`` states times a
microstate of the other ``N - k`` particles elsewhere, so

.. math::

    P(n_l = k) = \frac{c_k\, e^{-β k ε_l}\, Z'_{N-k}}{\sum_j c_j\, e^{-β j ε_l}\, Z'_{N-j}},
    \qquad
    c_k = \binom{k + g - 1}{k}\ (\mathrm{BE}),\quad \binom{g}{k}\ (\mathrm{FD}),\quad
    [t^k] (1 + t + \dots + t^c)^g\ (\text{capacity } c),

and for distinguishable particles (MB) the law is binomial,
``C(N, k) p^k (1 - p)^{N-k}`` with ``p = g e^{-βε_l} / Z_1``.  The
denominator *is* ``Z_N`` (every microstate has some ``n_l``), so the law sums
to one by construction and every term is positive: nothing cancels, for any
rule.  (The identity is the level-resolved form of the canonical
occupation formulas of P. Borrmann and G. Franke, J. Chem. Phys. 98, 2484
(1993); for a single state of a BE gas it is the textbook
``P(n_0 >= k) = e^{-βkε_0} Z_{N-k} / Z_N``, e.g. C. Weiss and M. Wilkens,
Opt. Express 1, 272 (1997), from memory.)

``Z'_M`` for ``M = 0..N`` comes from the particle-number recursion
``M Z'_M = Σ_k w_k z'_k Z'_{M-k}`` with the reduced single-particle sums
``z'_k = Z_1(kβ) - g e^{-kβε_l}`` (written without a subtraction where it
would cancel: for the ground rung of a ladder ``(1+r)^d - 1 = Σ_j C(d,j)
r^j``).

Two arithmetics:

* **a temperature** (:func:`occupation_law`): the recursion in fixed point
  (:func:`~.ensembles.online_recursion`: exact integers, FLINT products,
  divide and conquer) with energies measured from the lowest remaining level,
  so ``Z'_M >= 1`` for bosons; for the alternating FD/capacity weights the
  precision is raised until the majorant bound ``M 2^-bits Ẑ'_M`` is below
  ``10^-digits`` of ``Z'_M`` for every ``M`` used.  Each ``P(n_l = k)`` is
  then correct to about ``10^-digits`` *relative*, the mean and the variance
  (``Σ (k - mean)^2 P_k``, positive terms) likewise.
* **a rational Boltzmann factor** ``x = e^{-β u}`` (:func:`occupation_law_exact`,
  ``u`` the spectrum's energy unit): the same recursion in exact rationals
  (gmpy2 ``mpq``); the law, mean and variance are exact fractions.

Beside each law: the grand-canonical variance of the same level at the
chemical potential giving mean ``N`` (independent states: ``g f(1 + f)`` for
bosons, ``g f(1 - f)`` for fermions, ``g f`` for MB, per-state law for a
capacity), which for a Bose condensate is ``~ ⟨n_0⟩^2`` instead of the
canonical ``O(N^{4/3})`` in a 3D trap (the "grand-canonical catastrophe";
M. Holthaus, E. Kalinowski and K. Kirsten, Ann. Phys. 270, 198 (1998), from
memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Iterable, List, Optional, Tuple

import gmpy2
import mpmath
from flint import fmpz_poly

from ...core.errors import InvalidParameters, TooLarge
from ...core.exact import coprime_fraction
from ...core.limits import Cost, bigint_bytes, check, decimal_seconds, multiply_seconds, product_seconds
from ...core.model import as_count
from ...core.rules import Rule
from ...core.workers import map_after_first
from .ensembles import (
    DEFAULT_DIGITS,
    GUARD_DIGITS,
    PROCESSES_AFTER_SECONDS,
    grand_canonical,
    grand_canonical_level_variance,
    ln_partition_bound,
    online_recursion,
    particle_hole_pays,
    to_fixed,
)
from .particle_hole import fermion_canonical
from .spectra import System, ground_energy, parse_digits, parse_rational, parse_temperature

__all__ = ["OccupationLaw", "exact_law_cost", "factor_temperature", "occupation_law", "occupation_law_exact", "parse_factor"]


@dataclass(frozen=True)
class OccupationLaw:
    """The canonical law of the occupation of one level at one temperature.

    ``law[k]`` is ``P(n_level = k)`` for ``k = 0..len(law) - 1`` (the largest
    possible occupation of the level); ``mean`` and ``variance`` are its
    moments.  Exact (``Fraction``) when ``factor`` is set, mpmath numbers
    otherwise.  ``grand_canonical_mean_approx`` and
    ``grand_canonical_variance_approx`` are the independent-state formulas at
    the chemical potential giving mean ``N`` (``None`` where no grand
    canonical ensemble applies: distinguishable localised oscillators, a full
    or empty system).
    """

    level: int
    temperature: Fraction
    factor: Optional[Fraction]
    law: Tuple
    mean: object
    variance: object
    grand_canonical_mean_approx: Optional[mpmath.mpf] = None
    grand_canonical_variance_approx: Optional[mpmath.mpf] = None

    @property
    def exact(self) -> bool:
        """True when the law is exact (a rational Boltzmann factor)."""
        return self.factor is not None


# --------------------------------------------------------------------------
# The level and the rest of the spectrum
# --------------------------------------------------------------------------
def _level(system: System, level) -> Tuple[int, int]:
    """``(energy in units, degeneracy)`` of listed level (ladder rung) *level*."""
    index = as_count(level, "level", 0)
    spectrum = system.spectrum
    if spectrum.ladder is not None:
        # the law of rung l lists the rungs 0..l (its grand-canonical side sums them): ~50 us, ~400 bytes each
        check(Cost(seconds=(index + 1) * 5e-5, memory=(index + 1) * 400),
              f"the occupation law of level {index:,} (every level up to it is listed)",
              advice="choose a lower level", parameters=["level"])
        lad = spectrum.ladder
        return lad.energy(index), lad.degeneracy(index)
    if index >= len(spectrum.energies):
        raise InvalidParameters(
            f"level {index} does not exist: the spectrum lists levels 0..{len(spectrum.energies) - 1}",
            parameters=["level"],
        )
    return spectrum.energies[index], spectrum.degeneracies[index]


def _others(system: System, index: int):
    """The remaining levels: ``(lowest energy in units or None, capacity of the rest or None)``."""
    spectrum = system.spectrum
    if spectrum.ladder is not None:
        lad = spectrum.ladder
        return (lad.energy(1) if index == 0 else lad.energy(0)), None
    rest = [(e, g) for i, (e, g) in enumerate(zip(spectrum.energies, spectrum.degeneracies)) if i != index]
    if not rest:
        return None, 0
    low = min(e for e, _ in rest)
    cap = None if system.capacity is None else system.capacity * sum(g for _, g in rest)
    return low, cap


def _ways(system: System, g: int, kmax: int) -> List[int]:
    """``c_k``: ways of putting ``k`` identical particles into ``g`` states (``k = 0..kmax``)."""
    if system.capacity is None:
        return [math.comb(k + g - 1, k) for k in range(kmax + 1)]
    if system.capacity == 1:
        return [math.comb(g, k) for k in range(kmax + 1)]
    one = fmpz_poly([1] * (system.capacity + 1))
    poly = one.pow_trunc(g, kmax + 1)
    return [int(poly[k]) for k in range(kmax + 1)]


def _kmax(system: System, g: int) -> int:
    n = system.particles
    if system.rule is Rule.MB or system.capacity is None:
        return n
    return min(n, system.capacity * g)


def _reduced_sums(system: System, index: int, low: int, kmax: int, power, one_minus=None):
    """``z'_k`` (``k = 1..kmax``) of the remaining levels, energies from *low*; index 0 unused.

    *power(e)* returns ``e^{-β e}`` for an energy ``e`` in units (an mpmath
    number or an exact ``mpq``), so the same code serves both arithmetics.
    *one_minus(e)*, when given, returns ``1 - e^{-β e}`` without cancelling
    (``-expm1(-β e)``): far above the spacing ``e^{-β s}`` rounds to 1.
    """
    spectrum = system.spectrum
    out = [None]
    if spectrum.ladder is None:
        rest = [(e - low, g) for i, (e, g) in enumerate(zip(spectrum.energies, spectrum.degeneracies)) if i != index]
        base = [power(e) for e, _ in rest]
        cur = list(base)
        for _ in range(kmax):
            out.append(sum(g * y for (_, g), y in zip(rest, cur)))
            cur = [c * y for c, y in zip(cur, base)]
        return out
    lad = spectrum.ladder
    d = lad.dimension
    q1 = power(lad.spacing)
    y_l = power(lad.energy(index) - lad.offset) if index else None
    g_l = lad.degeneracy(index)
    qk = q1 * 0 + 1
    yk = qk
    binom = [math.comb(d, j) for j in range(d + 1)]
    for k in range(1, kmax + 1):
        qk = qk * q1
        inv = 1 / (1 - qk if one_minus is None else one_minus(k * lad.spacing))
        r = qk * inv
        if index == 0:
            # ((1 + r)^d - 1) q^-k = Σ_{j>=1} C(d, j) r^(j-1) / (1 - q^k): positive terms.
            total = 0
            rp = 1
            for j in range(1, d + 1):
                total = total + binom[j] * rp
                rp = rp * r
            out.append(total * inv)
        else:
            yk = yk * y_l
            out.append((1 + r) ** d - g_l * yk)
    return out


# --------------------------------------------------------------------------
# A temperature: fixed point with a precision loop
# --------------------------------------------------------------------------
def _law_at(system: System, index: int, temperature: Fraction, digits: int):
    spectrum = system.spectrum
    n = system.particles
    e_l, g = _level(system, index)
    kmax = _kmax(system, g)
    u_frac = spectrum.unit
    target = math.ceil(digits * math.log2(10))
    margin = 8 + 2 * (n + 1).bit_length()
    bits = target + margin + 16
    if system.capacity is not None:
        # The alternating sums cancel: about β (E_0 - N ε_min) / ln 2 bits (the plain recursion's loss).
        excess = ground_energy(system) - n * spectrum.lowest
        bits += math.ceil(float(excess * u_frac / temperature) / math.log(2))
    check(_law_cost(system, temperature, bits), f"the occupation law of {n} particles at T = {temperature}",
          advice="raise the temperature or lower particles=", parameters=["particles", "temperatures"])
    for _attempt in range(12):
        with mpmath.workprec(bits + 32):
            T = mpmath.mpf(temperature.numerator) / temperature.denominator
            b = mpmath.mpf(u_frac.numerator) / u_frac.denominator / T
            one_minus = lambda e, b=b: -mpmath.expm1(-b * e)  # noqa: E731
            if system.rule is Rule.MB:
                law = _binomial_law(system, index, e_l, g, lambda e, b=b: mpmath.exp(-b * e), one_minus)
                return law, bits
            low, cap_rest = _others(system, index)
            w = system.weights(n)
            alternating = any(x < 0 for x in w[1:])
            if low is None:
                seq = [1 << bits] + [0] * n
                need = bits
            else:
                # z'_k lose at most log2(Z_1) bits to the subtraction for an upper rung.
                with mpmath.workprec(bits + 64 + 4 * n.bit_length()):
                    zp = _reduced_sums(system, index, low, n, lambda e, b=b: mpmath.exp(-b * e), one_minus)
                kern = [0] + [to_fixed(w[k] * zp[k], bits) for k in range(1, n + 1)]
                kernels, couplings, starts = [kern], [[(0, 0)]], [1 << bits]
                if alternating:
                    kernels.append([abs(x) for x in kern])
                    couplings.append([(1, 1)])
                    starts.append(1 << bits)
                seqs = online_recursion(kernels, couplings, starts, n, bits)
                seq = seqs[0]
                major = seqs[1] if alternating else seq
                need = bits
                for k in range(kmax + 1):
                    m = n - k
                    if cap_rest is not None and m > cap_rest:
                        seq[m] = 0
                        continue
                    if seq[m] <= 0:
                        need = max(need, 2 * bits)
                        break
                    need = max(need, target + margin + max(0, major[m].bit_length() - seq[m].bit_length()))
            if need > bits:
                bits = need + 16
                continue
            ways = _ways(system, g, kmax)
            ratio = mpmath.exp(-b * (e_l - (low if low is not None else e_l)))
            terms = []
            yk = mpmath.mpf(1)
            for k in range(kmax + 1):
                m = n - k
                terms.append(ways[k] * yk * seq[m] if seq[m] > 0 else mpmath.mpf(0))
                yk = yk * ratio
            total = mpmath.fsum(terms)
            if total <= 0:
                raise InvalidParameters(
                    f"{n} particles do not fit in the single-particle states under this rule",
                    parameters=["particles"],
                )
            return [t / total for t in terms], bits
    raise TooLarge(
        f"the occupation law at T = {temperature} loses more digits than a reasonable working precision "
        "holds; raise the temperature or lower the number of particles",
        parameters=["temperatures", "particles"],
    )


def _law_cost(system: System, temperature: Fraction, bits: int) -> Cost:
    """Rough cost of one fixed-point recursion of length ``N`` with *bits* fractional bits, and the law in mpmath.

    The integers hold *bits* fractional bits plus the magnitude of
    ``Z'_M``, bounded through the grand canonical sum as in the
    ensembles' estimate: ``ln Z_N <= z_1 ln(1 + N/z_1) + N ln(1 + z_1/N)``
    (``z_1`` the one-particle sum from the lowest level), so ``size`` bits
    each.  Memory ``9 (N + 1)`` numbers of ``size`` bits (the sequence, the
    accumulators, the kernel's FLINT polynomials and the products of the
    divide and conquer; doubled with the majorant of alternating weights);
    seconds ``1.2`` times the products of ``log2 N`` levels plus ``8 N``
    products of the base loops (CPython integers, a *bits*-bit kernel value
    times a ``size``-bit sum: :func:`_python_product_seconds`, times 1.3),
    plus ``4e-5`` s per particle for the mpmath sums.  The base loops
    dominate at high precision: they were priced at GMP's rate before,
    which said 0.71 s where 1000 bosons at ``T = 5`` and 10000 digits take
    4.0 s.

    Measured (``occupation_law`` of level 0 of the BE trap, 15 digits
    unless said; CPU time, peak RSS above the start, 2 cores under a load of
    4-5; ``N, k_B T``: measured, estimate): 2000, 10: 0.15 s, 6.7 MB (0.20 s,
    7.5 MB); 8000, 10: 0.78 s, 38 MB (1.3 s, 48 MB); 8000, 10, 200 digits:
    1.05 s, 43 MB (1.9 s, 54 MB); 20000, 10: 2.5 s, 105 MB (4.6 s, 150 MB);
    20000, 40: 27 s, 886 MB (44 s, 1.5 GB).  The estimate before (the
    integers at *bits* bits) said 0.19 s and 2 MB at 20000, 40.  At high
    precision (load 2-4; CPU time only): 1000, 5, 1000 digits: 0.27 s
    (0.23 s); 1000, 5, 3000 digits: 0.82 s (0.85 s); 1000, 5, 10000
    digits: 4.0 s (4.8 s); 5000, 5, 3000 digits: 4.1 s (4.7 s); FD 100, 3,
    10000 digits: 0.66 s (0.90 s).
    """
    n = max(system.particles, 1)
    size = bits + ln_partition_bound(system.spectrum, n, temperature) / math.log(2)
    sequences = 1 if system.capacity is None else 2
    seconds = sequences * (1.2 * 2 * max(1, n.bit_length()) * product_seconds(n * size)
                           + 1.3 * 8 * n * _python_product_seconds(bits, size)) + 4e-5 * n
    return Cost(seconds=seconds, memory=9 * sequences * (n + 1) * bigint_bytes(size))


def _python_product_seconds(a: float, b: float) -> float:
    """CPU seconds of one CPython ``int`` product of an *a*-bit and a *b*-bit number.

    CPython multiplies its own integers by Karatsuba, ``O(m^1.585)`` for
    ``m``-bit factors (not GMP's FFT): measured 1.5 us at 1000 bits, 65 us
    at 10^4, 416 us at 34000, 1.2 ms at 70000 (CPU time, 2 cores under a
    load of 2-4), ``2.7e-11 m^1.585``; an unbalanced product is about
    ``max/min`` balanced ones of the shorter size.
    """
    lo, hi = max(min(a, b), 64.0), max(a, b, 64.0)
    return 2e-7 + hi / lo * 2.7e-11 * lo ** 1.585


def _binomial_law(system: System, index: int, e_l: int, g: int, power, one_minus=None):
    """MB: ``C(N, k) p^k (1 - p)^(N-k)``, ``p = g y_l / (g y_l + z'_1)`` (energies from the lowest other level)."""
    n = system.particles
    low, _cap = _others(system, index)
    if low is None:
        return [0] * n + [1]
    zp1 = _reduced_sums(system, index, low, 1, power, one_minus)[1]
    a = g * power(e_l - low)
    p = a / (a + zp1)
    q = zp1 / (a + zp1)
    return [math.comb(n, k) * p**k * q ** (n - k) for k in range(n + 1)]


def _moments(law):
    """``(mean, variance)`` of a law on ``0..K`` (mpmath: the variance as a sum of positive terms)."""
    if isinstance(law[0], (int, Fraction, type(gmpy2.mpq()))):
        mean = sum(k * p for k, p in enumerate(law))
        var = sum(k * k * p for k, p in enumerate(law)) - mean * mean
        return mean, var
    mean = mpmath.fsum(k * p for k, p in enumerate(law))
    var = mpmath.fsum((k - mean) ** 2 * p for k, p in enumerate(law))
    return mean, var


def _grand(system: System, index: int, temperature: Fraction, digits: int):
    """Grand-canonical ``(mean, variance)`` of the level's occupation (independent states), or ``(None, None)``."""
    if not system.has_reservoir:
        return None, None  # localised oscillators: their number is fixed, no particle reservoir
    mu, occ = grand_canonical(system, temperature, digits, levels=index + 1)
    if mu is None:
        return None, None
    return occ[index], grand_canonical_level_variance(system, temperature, mu, index, occ[index], digits)


def _own_energy(system: System, index: int) -> bool:
    """True when listed level *index* shares its energy with no other listed level (a ladder's rungs never do)."""
    energies = system.spectrum.energies
    return system.spectrum.ladder is not None or energies.count(energies[index]) == 1


def _check_system(system: System) -> None:
    if ground_energy(system) is None:
        raise InvalidParameters(
            f"{system.particles} particles do not fit in the single-particle states under this rule; "
            "lower particles= or add levels",
            parameters=["particles"],
        )


def _law_piece(task) -> OccupationLaw:
    """:func:`occupation_law` at one temperature, in one process (a piece for ``processes=``)."""
    system, level, temperature, digits, grand, route = task
    (law,) = occupation_law(system, level, [temperature], digits, grand, route)
    return law


def occupation_law(system: System, level: int, temperatures: Iterable, digits: int = DEFAULT_DIGITS,
                   grand: bool = True, route: str = "auto", processes: int = 1) -> List[OccupationLaw]:
    """Return the canonical law of the occupation of *level* at each temperature.

    Parameters
    ----------
    system : System
    level : int
        The listed level (ladder rung), counted from 0 as in the occupations
        of :func:`~.ensembles.canonical`.
    temperatures : iterable
        Positive ``k_B T`` values in the energy unit.
    digits : int
        Significant digits wanted, at least 5: relative, for every
        probability, the mean and the variance.
    grand : bool
        Also give the grand-canonical mean and variance of the level.
    route : str
        ``"auto"`` (default: the particle-hole sums for fermions far below
        the Fermi temperature, the recursion otherwise), ``"recursion"`` or
        ``"particle-hole"`` (fermions, a level of its own energy).
    processes : int
        Most local processes computing temperatures side by side (default
        1); the first temperature here, timed, the others in processes when
        it took over :data:`~.ensembles.PROCESSES_AFTER_SECONDS`
        (:func:`~enumerator.core.workers.map_after_first`).  The same laws.

    Returns
    -------
    list of OccupationLaw
        ``law[k] = P(n_level = k)`` for ``k`` from 0 to the largest possible
        occupation (``N`` for BE and MB, ``min(N, g)`` for FD, ``min(N, c g)``
        with a capacity ``c``), as mpmath numbers.

    Raises
    ------
    InvalidParameters
        A level the spectrum does not list, more particles than states, a
        non-positive temperature.
    TooLarge
        The alternating (FD, capacity) recursion loses more digits than a
        reasonable precision holds.

    Notes
    -----
    ``P(n_l = k) ∝ c_k e^{-βkε_l} Z'_{N-k}``, ``Z'`` the partition function
    without level ``l`` by the Borrmann–Franke recursion in fixed point
    (module docstring); MB binomial.  Cost per temperature: one recursion,
    ``O(M(N) log N)`` integer work (``M``: a FLINT product of length ``N``),
    plus ``O(N)`` mpmath operations; refused beforehand past the limits
    (:mod:`enumerator.core.limits`).  Fermions far below the Fermi
    temperature (where the alternating recursion would need about
    ``β (E_0 - N ε_min) / ln 2`` bits; the rule of
    :func:`~.ensembles.canonical`) take the particle-hole sums instead
    (:func:`.particle_hole.fermion_canonical` with ``law_level``): each
    probability then within ``10^-digits`` *absolute* by a rigorous bound
    (ball radius plus the truncation bound), and its leading configurations
    are all kept however small it is, so that it agrees with the recursion
    to about ``10^-digits`` *relative* down to ``10^-1042`` in the tests
    (tests/test_particle_hole.py; not a proved relative bound).

    Examples
    --------
    Two bosons on two non-degenerate levels ``0, 1`` at ``k_B T = 1/ln 2``
    (Boltzmann factor 1/2): states (2,0), (1,1), (0,2) weigh 1, 1/2, 1/4.

    >>> from enumerator.algorithms.levels import make_system
    >>> law, = occupation_law(make_system(2, "0,1", rule="BE"), 0, [1 / mpmath.log(2)], digits=15, grand=False)
    >>> [mpmath.nstr(p, 12) for p in law.law]
    ['0.142857142857', '0.285714285714', '0.571428571429']
    """
    digits = parse_digits(digits)
    _check_system(system)
    _level(system, level)
    if route not in ("auto", "recursion", "particle-hole"):
        raise InvalidParameters(f"route must be auto, recursion or particle-hole (got {route!r})", parameters=["route"])
    if route == "particle-hole" and (system.rule is not Rule.FD or system.capacity != 1
                                     or not _own_energy(system, level)):
        raise InvalidParameters("the particle-hole route is for fermions (rule FD) and a level of its own energy",
                                parameters=["route", "rule"])
    temperatures = [parse_temperature(value) for value in temperatures]
    if processes > 1 and len(temperatures) > 1:
        tasks = [(system, level, t, digits, grand, route) for t in temperatures]
        return map_after_first(_law_piece, tasks, processes, PROCESSES_AFTER_SECONDS)
    out = []
    for temperature in temperatures:
        if system.particles and particle_hole_pays(system, temperature, digits, route) and _own_energy(system, level):
            (point,) = fermion_canonical(system, temperatures=[temperature], digits=digits, law_level=level,
                                         levels=1)
            law = point.law
        else:
            law, _bits = _law_at(system, level, temperature, digits)
        with mpmath.workdps(digits + GUARD_DIGITS):
            law = [mpmath.mpf(p) for p in law]
            mean, var = _moments(law)
        gm, gv = _grand(system, level, temperature, digits) if grand else (None, None)
        with mpmath.workdps(digits):
            out.append(OccupationLaw(level, temperature, None, tuple(+p for p in law), +mean, +var, gm, gv))
    return out


# --------------------------------------------------------------------------
# A rational Boltzmann factor: exact
# --------------------------------------------------------------------------
def parse_factor(value) -> Fraction:
    """A Boltzmann factor ``x = e^{-β u}``: an exact rational with ``0 < x < 1``.

    Parameters
    ----------
    value : int, Fraction or str
        ``"1/2"``, ``"0.3"``: exact (see
        :func:`~enumerator.algorithms.levels.spectra.parse_rational`).

    Returns
    -------
    Fraction

    Raises
    ------
    InvalidParameters
        Not a number, a float, text too long to read (more than 4,000
        digits or a decimal exponent beyond 4,000: ``1e-99999999`` is
        refused before it is expanded), or outside ``(0, 1)``.

    Notes
    -----
    ``fractions.Fraction`` parsing after sizing the text
    (:func:`~enumerator.algorithms.levels.spectra.size_number_text`), linear
    in the length of the text.

    Examples
    --------
    >>> parse_factor("1/2")
    Fraction(1, 2)
    """
    x = parse_rational(value, "factor", "factor")
    if not 0 < x < 1:
        raise InvalidParameters(
            f"the Boltzmann factor e^(-unit/T) must lie strictly between 0 and 1 (got {x}); "
            "e.g. factor= 1/2 is k_B T = unit / ln 2",
            parameters=["factor"],
        )
    return x


def factor_temperature(factor: Fraction, unit: Fraction, digits: int = DEFAULT_DIGITS) -> Fraction:
    """The temperature ``k_B T = u / ln(1/x)`` of a Boltzmann factor, to *digits* digits (a binary fraction).

    Parameters
    ----------
    factor : Fraction
        ``x = e^{-u/k_B T}``, ``0 < x < 1`` (:func:`parse_factor`).
    unit : Fraction
        The energy unit ``u`` of the spectrum.
    digits : int
        Significant decimal digits (plus the guard digits).

    Returns
    -------
    Fraction
        The mpmath value of ``u / ln(1/x)`` taken exactly
        (:func:`~enumerator.algorithms.levels.spectra.parse_temperature`).

    Notes
    -----
    One logarithm and one division in mpmath at ``digits + GUARD_DIGITS``
    digits: quasi-linear in the digits (mpmath's ``log``, AGM or Taylor).
    """
    with mpmath.workdps(digits + GUARD_DIGITS):
        t = mpmath.mpf(unit.numerator) / unit.denominator / mpmath.log(mpmath.mpf(factor.denominator) / factor.numerator)
        return parse_temperature(t)


#: Bytes of peak memory per decimal digit of the exact law the command line
#: writes (the digits, the JSON text and its copy on the way out), measured
#: with the trap below.
_LAW_BYTES_PER_DIGIT = 3


def exact_law_cost(system: System, factor) -> Cost:
    """Rough cost of :func:`occupation_law_exact`: ``N^2/2`` rational products on ``bits``-bit numbers, and the law written.

    Parameters
    ----------
    system : System
    factor : Fraction or str
        The Boltzmann factor ``x = e^{-β u}`` (:func:`parse_factor`).

    Returns
    -------
    Cost
        Seconds and bytes, from ``N``, the spectrum's span (or a ladder's
        dimension and spacing) and the height of ``x``: the rationals have
        about ``bits = d s N(N+1)/2 h + 64 N`` bits on a ladder of
        dimension ``d`` and spacing ``s``, ``N span h + 64 N`` on a finite
        spectrum (``h`` the bits of ``x``'s numerator or denominator).

    Notes
    -----
    Seconds: ``2 N^2/2`` GMP products of ``bits``-bit numbers
    (:func:`~enumerator.core.limits.multiply_seconds`; an ``mpq`` product
    and sum with its gcds, on sizes growing to ``bits``) and ``2 (N + 1)``
    numbers written in decimal.  Memory: the ``N + 1`` rationals of the
    recursion and the decimal text of the law, ``2 (N + 1)`` numbers of
    ``bits`` bits at :data:`_LAW_BYTES_PER_DIGIT` bytes per digit.

    Measured (``levels --preset trap --rule BE --factor 9/10
    --occupation-law 0 --json``; CPU time and peak RSS above the 62 MB of
    the command's own start; 2 cores under a load of 4-5; ``N``: measured,
    estimate): 100: 1.7 s, 10 MB (2.8 s, 14 MB); 140: 7.4 s, 29 MB
    (12 s, 37 MB); 170: 18 s, 51 MB (26 s, 65 MB); 200: 40 s (55 s before
    the moments were taken in ``mpq``), 83 MB (52 s, 105 MB).  The former
    estimate (``8 N^2/2`` nominal products, no text) said 20.3 s and 13 MB
    at ``N = 200``.

    Examples
    --------
    >>> from enumerator.algorithms.levels import make_system
    >>> small, large = (exact_law_cost(make_system(n, preset="trap", rule="BE"), "9/10") for n in (50, 100))
    >>> small.seconds < large.seconds and small.memory < large.memory
    True
    """
    factor = parse_factor(factor)
    spectrum = system.spectrum
    span = 0 if spectrum.ladder is not None else max(spectrum.energies) - min(spectrum.energies)
    n = max(system.particles, 1)
    height = max(factor.numerator.bit_length(), factor.denominator.bit_length(), 1)
    if system.spectrum.ladder is not None:
        d = system.spectrum.ladder.dimension
        bits = d * system.spectrum.ladder.spacing * n * (n + 1) / 2 * height + n * 64
    else:
        bits = n * max(span, 1) * height + n * 64
    numbers = 2 * (n + 1)
    seconds = n * n * multiply_seconds(bits) + numbers * decimal_seconds(bits)
    digits = numbers * bits * math.log10(2)
    return Cost(seconds=seconds, memory=numbers * bigint_bytes(bits) + int(_LAW_BYTES_PER_DIGIT * digits))


def occupation_law_exact(system: System, level: int, factor) -> OccupationLaw:
    """Return the exact canonical law of the occupation of *level* at the Boltzmann factor *factor*.

    Parameters
    ----------
    system : System
    level : int
        The listed level (ladder rung), counted from 0.
    factor : Fraction or str
        ``x = e^{-β u}``, ``0 < x < 1``, ``u`` the spectrum's energy unit: a
        state of energy ``e u`` has Boltzmann weight ``x^e``.

    Returns
    -------
    OccupationLaw
        Exact fractions: the law, its mean and variance; ``temperature`` is
        ``u / ln(1/x)`` rounded (the grand-canonical fields are computed there).

    Raises
    ------
    InvalidParameters
        A factor outside ``(0, 1)``, a level the spectrum does not list, more
        particles than states.
    TooLarge
        The exact rationals would exceed the time or memory limits.

    Notes
    -----
    The formula of :func:`occupation_law` with the recursion
    ``M Z'_M = Σ_k w_k z'_k Z'_{M-k}`` in exact rationals (gmpy2 ``mpq``);
    MB the exact binomial.  Cost: ``N^2/2`` rational products whose size
    grows with ``N`` (linearly for a finite spectrum, quadratically for a
    ladder, whose ``z_k = (1 - x^k)^{-d}`` bring new denominators), checked
    against the limits first (:mod:`enumerator.core.limits`).

    Examples
    --------
    >>> from enumerator.algorithms.levels import make_system
    >>> law = occupation_law_exact(make_system(2, "0,1", rule="BE"), 0, "1/2")
    >>> law.law, law.mean
    ((Fraction(1, 7), Fraction(2, 7), Fraction(4, 7)), Fraction(10, 7))
    """
    _check_system(system)
    x = parse_factor(factor)
    e_l, g = _level(system, level)
    n = system.particles
    spectrum = system.spectrum
    check(exact_law_cost(system, x), "the exact occupation law", advice="lower particles= or use temperatures=",
          parameters=["particles", "temperatures"])
    xq = gmpy2.mpq(x.numerator, x.denominator)

    def power(e: int):
        return xq**e if e >= 0 else 1 / xq ** (-e)

    kmax = _kmax(system, g)
    if system.rule is Rule.MB:
        law = _binomial_law(system, level, e_l, g, power)
    else:
        low, cap_rest = _others(system, level)
        if low is None:
            seq = [gmpy2.mpq(1)] + [gmpy2.mpq(0)] * n
        else:
            w = system.weights(n)
            zp = _reduced_sums(system, level, low, n, power)
            seq = [gmpy2.mpq(1)]
            for m in range(1, n + 1):
                acc = gmpy2.mpq(0)
                for k in range(1, m + 1):
                    acc += w[k] * zp[k] * seq[m - k]
                seq.append(acc / m)
            if cap_rest is not None:
                for m in range(cap_rest + 1, n + 1):
                    seq[m] = gmpy2.mpq(0)
        ways = _ways(system, g, kmax)
        ratio = power(e_l - (low if low is not None else e_l))
        terms = []
        yk = gmpy2.mpq(1)
        for k in range(kmax + 1):
            terms.append(ways[k] * yk * seq[n - k])
            yk = yk * ratio
        total = sum(terms)
        law = [t / total for t in terms]
    # the moments in gmpy2 rationals (GMP's subquadratic gcd), not CPython Fractions (quadratic gcd)
    mean, var = _moments(law)
    law = tuple(_fraction(p) for p in law)
    mean, var = _fraction(mean), _fraction(var)
    temperature = factor_temperature(x, spectrum.unit)
    gm, gv = _grand(system, level, temperature, DEFAULT_DIGITS)
    return OccupationLaw(level, temperature, x, law, mean, var, gm, gv)


def _fraction(value) -> Fraction:
    if isinstance(value, Fraction):
        return value
    if isinstance(value, int):
        return Fraction(value)
    q = gmpy2.mpq(value)
    return coprime_fraction(q.numerator, q.denominator)
