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
  I.2), whose divisions by ``N`` are exact; or, in little memory, the same
  row by evaluation at roots of unity modulo primes and Chinese remaindering.
* :func:`multiplicity_table` -- every particle number ``0..N`` in one pass.
* :func:`thermal_contact` -- two systems sharing a total energy: the exact table
  ``Ω_A(E_A) Ω_B(E - E_A)``, the most probable split, the exact
  probabilities (and floats), and the peak and width of the split
  (:meth:`Contact.summary`).
* :func:`microcanonical` -- ``ln Ω(E)`` and the temperature from central finite
  differences of ``ln Ω`` (approximations, so named).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Dict, List, Optional, Union

import gmpy2
import mpmath
import numpy as np
from flint import fmpz_poly, nmod_poly

from ...core import series
from ...core.errors import InvalidParameters, TooLarge
from ...core.exact import coprime_fraction
from ...core.limits import Cost, active_limits, check
from ...core.rules import Rule
from .spectra import Spectrum, System, ground_and_gap, ground_energy, parse_rational

__all__ = [
    "Contact",
    "ContactSummary",
    "MAX_CELLS",
    "MicroPoint",
    "microcanonical",
    "multiplicities",
    "multiplicity_cost",
    "multiplicity_table",
    "thermal_contact",
]

#: The cell count (``(N + 1) * (E + 1)`` big integers) the tables were capped
#: at before their cost was estimated; kept for callers that pass it as
#: ``limit=``.  The planner now refuses by estimated memory and time
#: (:func:`multiplicity_cost`, :func:`enumerator.core.limits.check`).
MAX_CELLS = 10_000_000


# --------------------------------------------------------------------------
# Exact multiplicities
# --------------------------------------------------------------------------
def _to_units(energy, unit: Fraction, name: str = "max_energy") -> int:
    """Floor of *energy* / *unit* (energy exact: int, Fraction or string)."""
    value = parse_rational(energy, name)
    return math.floor(value / unit)



def _check_size(cells: int, limit: Optional[int]) -> None:
    """Refuse a table of more than *limit* cells (``None``: no cap by cells)."""
    if limit is not None and cells > limit:
        raise TooLarge(
            f"the exact table would hold {cells:,} big integers, above limit={limit:,}; lower "
            "the maximum energy (max_energy=) or the number of particles, or raise limit=",
            parameters=["max_energy", "limit"],
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
    z = _series_z(system.spectrum, system.spectrum.lowest, degree)
    return _partition_polynomials_of(z, system.weights(top), top, degree)


def _partition_polynomials_of(z: List[int], w: List[int], top: int, degree: int) -> List[fmpz_poly]:
    """The recursion of :func:`_partition_polynomials` for the level series *z* and weights *w*."""
    length = degree + 1
    stride = 2 * degree + 1
    powers = [fmpz_poly()]
    for k in range(1, top + 1):
        # z(t^k) keeps the levels with k * e <= degree.
        base = fmpz_poly(z[: degree // k + 1])
        a = base.inflate(k) if k > 1 else base
        powers.append(a * w[k] if w[k] != 1 else a)
    polys: List[Optional[fmpz_poly]] = [fmpz_poly([1])] + [None] * top
    acc: List[Optional[fmpz_poly]] = [fmpz_poly() for _ in range(top + 1)]
    packed_powers: Dict[int, fmpz_poly] = {}

    def pack(items) -> fmpz_poly:
        # sum of items[i] x^(i stride), halves joined by a shift: FLINT copies only, no Python integers
        if len(items) == 1:
            return items[0]
        half = len(items) // 2
        return pack(items[:half]) + pack(items[half:]).left_shift(half * stride)

    def scatter(block: fmpz_poly, first: int, count: int) -> None:
        # add block's pieces of stride to acc[first .. first + count - 1], by halves
        if block.is_zero():
            return
        if count == 1:
            acc[first] += block.truncate(length)
            return
        half = count // 2
        scatter(block.truncate(half * stride), first, half)
        scatter(block.right_shift(half * stride), first + half, count - half)

    def solve(lo: int, hi: int) -> None:
        if hi - lo <= _EXACT_BLOCK:
            for n in range(lo, hi):
                if n:
                    polys[n] = acc[n] / n  # exact: raises if not
                acc[n] = None  # complete: its sum is no longer needed
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
        product = pack(polys[lo:mid]).mul_low(kernel, span * stride)
        scatter(product.right_shift((mid - lo) * stride), mid, hi - mid)
        del product
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


# --------------------------------------------------------------------------
# Planning: the route, the size of its numbers and its cost
# --------------------------------------------------------------------------
#: Coefficient bits per second of FLINT's products of long integer
#: polynomials with big coefficients (the packed products of the recursion),
#: counting the product's length times its coefficient size; measured with
#: python-flint 0.9 on the reference machine (a 90,000 x 180,000 product of
#: 460-bit by 10-bit coefficients: about one second; whole recursions on the
#: 3D trap fit this rate within a factor 2).
_POLY_BITS_PER_SECOND = 1.0e8
#: The same rate for the scalar recursion of :func:`_boson_series` (one
#: product per level of the divide and conquer); measured: 2,725-bit
#: coefficients up to ``t^10000`` in 1.2 s.
_SCALAR_BITS_PER_SECOND = 2.0e8
#: Peak bytes per cell of the recursion's table: about this many copies of a
#: coefficient's limbs (the table, the accumulators, the packed operands and
#: product, FLINT's Kronecker buffers, the product's Python integers) plus a
#: fixed overhead per cell; fitted to peak resident sizes (``/usr/bin/time``,
#: less the interpreter's 49 MB) of 3D-trap tables (N, E): BE (30, 2000)
#: 65 MB for 113 estimated, (100, 900) 126/148, (300, 600) 234/231,
#: (600, 1200) 1.26 GB/1.42 GB in 66 s for 85 estimated; FD (60, 600) 35/46,
#: (100, 1000) 173/176 in 9.3 s for 7.0.
_CELL_COPIES = 24
_CELL_OVERHEAD = 200
#: The size bound reads this many rungs of an infinite ladder one by one,
#: and the rest in bins of geometrically growing width (by 0.5 %).
_EXACT_RUNGS = 2047
#: A finite spectrum is read up to this many levels for the size bound.
_BOUND_LEVELS = 1_000_000
#: Blocks of the scalar recursion at most this long run in plain Python.
_SCALAR_BLOCK = 32
#: The table route over the excited rows (:func:`_excited_table`): the
#: lowest level's factor is applied by passes of additions over the rows up
#: to this degeneracy, by one FLINT product above it.
_TABLE_PASSES = 32
#: Coefficient bits per second of those additions, and seconds per cell of
#: reading the table out into Python integers and dicts; fitted with margin
#: to CPU times of whole tables (3D-trap bosons N = 10^4, E <= 300: 3.0 10^6
#: cells in 1.1 s, estimated 5.8 s; 1D-oscillator bosons N = 2 10^4,
#: E <= 200: 4.0 10^6 cells in 0.5 s, estimated 2.8 s).
_TABLE_ADD_BITS_PER_SECOND = 2.0e10
_TABLE_CELL_SECONDS = 5e-7
#: Peak bytes per cell of the table: copies of a coefficient (the rows, the
#: packed product, the Python integers) plus a fixed overhead (dicts, objects).
_TABLE_COPIES = 4
_TABLE_OVERHEAD = 120
#: The modular route (:func:`_modular_row`) works modulo primes below
#: ``2^32``, so that a product of two residues fits NumPy's unsigned 64-bit
#: words; it evaluates at most this many points per prime (so that primes
#: ``≡ 1`` modulo the number of points below ``2^32`` are plentiful).
_MODULAR_PRIME_BITS = 32
_MODULAR_MAX_POINTS = 2**16
#: Seconds of one truncated exponential modulo a word-sized prime, per
#: ``D log2 D`` (times ``max(1, D/2000)``: FLINT's products leave the cache),
#: and per term of the logarithm and per coefficient of one evaluation (NumPy
#: and the conversions); measured with python-flint 0.9 (exp of length 2,000
#: in 0.5 to 2 ms on a loaded machine, length 10^4 in 35 ms).
_MODULAR_EXP_SECONDS = 5e-8
_MODULAR_TERM_SECONDS = 6e-8
_MODULAR_COEFF_SECONDS = 2e-7


@dataclass(frozen=True)
class _Plan:
    """How :func:`multiplicities` will compute, and what that costs.

    ``route`` is ``"mb"`` (a truncated power), ``"series"`` (bosons on a
    non-degenerate ground level with at least ``degree // gap`` particles:
    the univariate product over the excited levels), ``"recursion"`` (the
    particle-number recursion over the excited levels, ``excited + 1`` rows)
    or ``"modular"`` (the same row by evaluation modulo primes,
    :func:`_modular_row`: little memory); ``"mb-rows"`` and
    ``"excited-table"`` are the table's (:func:`multiplicity_table`);
    ``degree`` is the largest excitation energy (units above the ground
    level of every particle); ``bits`` a bound on the size of one coefficient.
    """

    route: str
    degree: int
    excited: int
    bits: float
    cost: Cost


def _level_arrays(spectrum: Spectrum, degree: int):
    """Shifted energies and degeneracies (floats) of the levels at most *degree* above the lowest."""
    low = spectrum.lowest
    lad = spectrum.ladder
    if lad is not None and lad.offset == low:
        top = degree // lad.spacing
        exact_top = min(top, _EXACT_RUNGS)
        m = np.arange(exact_top + 1, dtype=float)
        g = np.ones_like(m)
        for i in range(1, lad.dimension):
            g *= (m + i) / i
        if top > exact_top:
            # rungs exact_top+1..top in bins growing by 0.5 %, each at its middle
            # with the number of states it holds: C(M + d - 1, d) states lie below rung M
            bins = int(math.log(top / exact_top) / 0.005) + 2
            edges = np.unique(np.round(np.geomspace(exact_top + 1, top + 1, bins)))

            def below(rung):
                count = np.ones_like(rung)
                for i in range(lad.dimension):
                    count *= (rung + i) / (i + 1)
                return count

            m = np.concatenate([m, (edges[:-1] + edges[1:] - 1) / 2])
            g = np.concatenate([g, below(edges[1:]) - below(edges[:-1])])
        return m * lad.spacing, g
    pairs = [(e - low, g) for e, g in spectrum.levels_below(low + min(degree, _BOUND_LEVELS))]
    # a degeneracy beyond the double range (10^400 states) is held at 2^1000 here: these arrays only size the
    # coefficients for the plan, and such a level is refused on its own size before that matters
    return (np.array([float(min(e, 2**1000)) for e, _ in pairs], dtype=float),
            np.array([float(min(g, 2**1000)) for _, g in pairs], dtype=float))


def _minimise(f, lo: float = -40.0, hi: float = 12.0) -> float:
    """Minimum of a unimodal *f* of ``u`` on ``[lo, hi]`` (golden section; the callers use ``s = -e^u``)."""
    ratio = (math.sqrt(5) - 1) / 2
    a, b = lo, hi
    c, d = b - ratio * (b - a), a + ratio * (b - a)
    fc, fd = f(c), f(d)
    for _ in range(64):
        if fc < fd:
            b, d, fd = d, c, fc
            c = b - ratio * (b - a)
            fc = f(c)
        else:
            a, c, fc = c, d, fd
            d = a + ratio * (b - a)
            fd = f(d)
    return min(fc, fd, f(lo), f(hi))


def _coefficient_bits(system: System, particles: int, degree: int) -> float:
    """An upper bound (in bits, rounded) on every ``Ω(n, E)``, ``n <= particles``, ``E <= degree`` above ground.

    Chernoff's bound for a series of nonnegative coefficients,
    ``[t^D] F(t) <= F(τ) / τ^D`` for every ``0 < τ < 1``, minimised over
    ``τ`` (the saddle-point bound; Flajolet & Sedgewick, *Analytic
    Combinatorics*, 2009, Prop. IV.1).  MB: ``F = z(t)^N``.  BE, FD and
    Gentile configurations are among the BE ones, whose count is at most the
    ground level's ``C(N + g0 - 1, g0 - 1)`` times ``[t^D] ∏_excited (1 - t^ε)^{-g}``.
    """
    energies, degeneracies = _level_arrays(system.spectrum, degree)
    excited = energies > 0
    e, g = energies[excited], degeneracies[excited]
    g0 = float(degeneracies[~excited].sum())
    n = particles
    if system.rule is Rule.MB:
        if n == 0:
            return 1.0

        def f(u: float) -> float:
            s = -math.exp(u)
            return n * math.log(g0 + float(np.dot(g, np.exp(np.maximum(s * e, -700.0))))) - degree * s

        bound = n * math.log(g0) if degree == 0 or not e.size else _minimise(f)
    else:
        ground = math.lgamma(n + g0) - math.lgamma(n + 1) - math.lgamma(g0) if g0 > 1 else 0.0

        def f(u: float) -> float:
            s = -math.exp(u)
            return -float(np.dot(g, np.log(-np.expm1(np.maximum(s * e, -700.0))))) - degree * s

        bound = ground + (0.0 if degree == 0 or not e.size else _minimise(f))
        if n and e.size and degree:
            # every such configuration is also one of distinguishable particles (MB)

            def f_mb(u: float) -> float:
                s = -math.exp(u)
                return n * math.log(g0 + float(np.dot(g, np.exp(np.maximum(s * e, -700.0))))) - degree * s

            bound = min(bound, _minimise(f_mb))
    return max(1.0, bound / math.log(2) + math.log2(n + 1))


#: Most steps of the energy grid a multiplicity table may span: one coefficient a step, so far
#: beyond any time limit (10^15 cells), and below the range where the estimates' floats overflow.
_MOST_UNITS = 10**15


def _plan(system: System, degree: int, rows: Optional[int] = None) -> _Plan:
    """Choose the route for excitation energies up to *degree* and estimate its cost.

    *rows* (the table of every particle number) forces the recursion with
    ``N + 1`` rows.  For one row, where the recursion would run, the modular
    route (:func:`_modular_cost`) is the alternative: the recursion when it
    fits the active limits (:func:`enumerator.core.limits.active_limits`;
    measured, it is as fast or faster: 0.4 s against 0.6 s for 80 trap
    bosons up to ``E = 160``, 4.6 s against 4.8 s for 300 up to ``E = 600``),
    else the modular route when it fits, else the one estimated faster,
    which the caller's check then refuses.
    """
    n = system.particles
    spectrum = system.spectrum
    if degree > _MOST_UNITS:
        # Beyond any limit on its size alone (and beyond the floats of the estimates below).
        raise TooLarge(
            f"multiplicities up to about 10^{len(str(degree)) - 1} steps of the energy grid {spectrum.unit} would "
            "take far longer "
            "than any limit; lower max_energy=, or give energies on a coarser grid",
            parameters=["max_energy"],
        )
    if system.rule is Rule.MB and rows is None:
        # lower bound first: a coefficient is at least a machine word
        bits = 64.0 if degree > 10**8 else _coefficient_bits(system, n, degree)
        steps = max(1, n.bit_length())
        seconds = 2 * steps * (degree + 1) * (bits + 64) / _POLY_BITS_PER_SECOND
        return _Plan("mb", degree, n, bits, Cost(seconds, int((degree + 1) * (6 * bits / 8 + 100))))
    g0, gap = ground_and_gap(spectrum)
    top = n if rows is not None else (0 if gap is None else min(n, degree // gap))
    route = "recursion"
    if rows is None and system.rule is Rule.BE and system.capacity is None and g0 == 1 and gap is not None \
            and n >= degree // gap:
        route = "series"
    cells = (degree + 1) * (1 if route == "series" else top + 1)
    if cells > 10**9:  # refused on its size alone, before the levels are read
        bits = 64.0
    else:
        bits = _coefficient_bits(system, top if rows is None else n, degree)
    if route == "series":
        levels = max(1, (degree + 1).bit_length())
        seconds = levels * (degree + 1) * (bits + 64) / _SCALAR_BITS_PER_SECOND + (degree + 1) * _SCALAR_BLOCK * 1e-6
        memory = (degree + 1) * (_CELL_COPIES * bits / 8 + _CELL_OVERHEAD)
    else:
        levels = max(1, (top + 1).bit_length() - 1)
        seconds = levels * (top + 1) * (2 * degree + 1) * (bits + 64) / _POLY_BITS_PER_SECOND
        memory = cells * (_CELL_COPIES * bits / 8 + _CELL_OVERHEAD)
    plan = _Plan(route, degree, top, bits, Cost(seconds, int(memory)))
    if route == "recursion" and rows is None and top >= 2 and degree // gap < _MODULAR_MAX_POINTS:
        # the same row by evaluation modulo primes: little memory, about as fast.  Its primes must
        # hold Ω(N, E) itself (with g0 > 1 and N > top the rows' bound is short; past 10^9 cells
        # the bound above is a placeholder)
        whole = bits if top == n and cells <= 10**9 else _coefficient_bits(system, n, degree)
        modular = _Plan("modular", degree, top, whole, _modular_cost(system.spectrum, degree, gap, whole))
        limits = active_limits()

        def fits(p: _Plan) -> bool:
            return p.cost.memory <= limits.memory and p.cost.seconds <= limits.seconds

        if not fits(plan):
            plan = modular if fits(modular) else min((plan, modular), key=lambda p: p.cost.seconds)
    return plan


def _energy_range(system: System, max_energy):
    """``(top_units, trim)`` of :func:`multiplicities`: the highest total energy, in units."""
    spectrum = system.spectrum
    if max_energy is None:
        if not spectrum.finite:
            raise InvalidParameters(
                "an infinite ladder of levels needs a maximum energy (max_energy=), "
                "or make it finite with levels=",
                parameters=["max_energy", "levels"],
            )
        return _highest_energy(system), True
    return _to_units(max_energy, spectrum.unit), False


def multiplicity_cost(system: System, max_energy=None) -> Cost:
    """Return the estimated time and peak memory of :func:`multiplicities` (nothing is computed).

    Parameters
    ----------
    system : System
    max_energy : int, Fraction or str, optional
        As for :func:`multiplicities`.

    Returns
    -------
    Cost
        Seconds and bytes; ``Cost()`` when no state lies below *max_energy*.

    Raises
    ------
    InvalidParameters
        As :func:`multiplicities` raises it.

    Notes
    -----
    The size of the numbers is bounded by Chernoff's saddle-point bound
    ``[t^D] F <= F(τ)/τ^D`` (Flajolet & Sedgewick, *Analytic Combinatorics*,
    2009, Prop. IV.1), minimised by golden section over ``τ``; the rates are
    measured ones (module constants), good to a factor of a few.  Cost: one
    pass over the levels below *max_energy* per step of the minimisation
    (a ladder: :data:`_EXACT_RUNGS` rungs, then bins of geometric width), about 130 steps.

    Examples
    --------
    >>> from enumerator.algorithms.levels.spectra import System, harmonic_trap
    >>> cost = multiplicity_cost(System.create(harmonic_trap(), 10**4, "BE"), 10**6)
    >>> cost.memory > 10**12
    True
    """
    top_units, _ = _energy_range(system, max_energy)
    low = ground_energy(system)
    if low is None or top_units is None or low > top_units:
        return Cost()
    return _plan(system, top_units - system.particles * system.spectrum.lowest).cost


def _check_plan(system: System, plan: _Plan) -> None:
    """Refuse *plan* beyond the active limits, in one sentence naming the options."""
    spectrum = system.spectrum
    top = (plan.degree + system.particles * spectrum.lowest) * spectrum.unit
    check(
        plan.cost,
        f"the exact multiplicities of {system.label} up to total energy {top}",
        advice="lower the maximum energy (max_energy=) or the number of particles",
        parameters=["max_energy"],
    )


def _scalar_euler(c: List[int], degree: int) -> List[int]:
    """``F_0..F_degree`` from ``n F_n = Σ_{k=1}^{n} c_k F_{n-k}``, ``F_0 = 1`` (every division exact).

    The online convolution by divide and conquer (van der Hoeven 2002, as in
    :func:`_partition_polynomials`): once ``F_lo..F_{mid-1}`` are known their
    contribution to ``[mid, hi)`` is one FLINT product; blocks of at most
    :data:`_SCALAR_BLOCK` run in plain gmpy2.  Cost ``O(M(D) log D)`` for
    coefficients of the final size.
    """
    f = [gmpy2.mpz(0)] * (degree + 1)
    acc = [gmpy2.mpz(0)] * (degree + 1)
    f[0] = gmpy2.mpz(1)
    cz = [gmpy2.mpz(v) for v in c]

    def solve(lo: int, hi: int) -> None:
        if hi - lo <= _SCALAR_BLOCK:
            for n in range(lo, hi):
                if n:
                    f[n] = gmpy2.divexact(acc[n], n)
                fn = f[n]
                if fn:
                    for m in range(n + 1, hi):
                        acc[m] += cz[m - n] * fn
            return
        mid = (lo + hi) // 2
        solve(lo, mid)
        product = fmpz_poly([int(v) for v in f[lo:mid]]).mul_low(fmpz_poly([int(v) for v in c[: hi - lo]]), hi - lo)
        for m in range(mid, hi):
            k = m - lo
            if k <= product.degree():
                acc[m] += gmpy2.mpz(int(product[k]))
        solve(mid, hi)

    solve(0, degree + 1)
    return [int(v) for v in f]


def _boson_series(spectrum: Spectrum, degree: int) -> List[int]:
    """``[t^0..t^degree] ∏_excited (1 - t^ε)^{-g}`` (energies above the lowest level).

    The logarithmic derivative ``t F'/F = Σ_k c_k t^k``, ``c_k = Σ_{ε | k} ε g_ε``
    (Euler's transform; Flajolet & Sedgewick, *Analytic Combinatorics*, 2009,
    I.2) gives ``n F_n = Σ_k c_k F_{n-k}``, solved by :func:`_scalar_euler`.
    Cost: ``Σ_ε D/ε`` small additions for ``c`` plus the recursion.
    """
    c = [0] * (degree + 1)
    low = spectrum.lowest
    for e, g in spectrum.levels_below(low + degree):
        step = e - low
        if step <= 0:
            continue
        weight = step * g
        for k in range(step, degree + 1, step):
            c[k] += weight
    return _scalar_euler(c, degree)


def _ground_ways(system: System, g0: int, count: int) -> int:
    """Ways to put *count* particles in the *g0* states of the lowest level under the system's rule."""
    if count < 0:
        return 0
    cap = system.capacity
    if cap is None:
        return math.comb(count + g0 - 1, g0 - 1) if g0 else int(count == 0)
    c1 = cap + 1
    return sum((-1) ** i * math.comb(g0, i) * math.comb(count - i * c1 + g0 - 1, g0 - 1)
               for i in range(min(g0, count // c1) + 1))


def _excited_recursion(system: System, top: int, degree: int) -> fmpz_poly:
    """``Z_N(t)`` mod ``t^{degree+1}`` (shifted energies) from the rows ``Y_m`` of the excited levels.

    ``Σ_N Z_N x^N = G(x) Y(x, t)``: ``G`` the lowest level's factor, ``Y``
    that of the levels above it, whose rows ``Y_m`` vanish below ``t^{m·gap}``;
    so only ``m <= top = min(N, degree // gap)`` contribute and
    ``Z_N = Σ_m G_{N-m} Y_m``.
    """
    spectrum = system.spectrum
    g0, _ = ground_and_gap(spectrum)
    z = _series_z(spectrum, spectrum.lowest, degree)
    z[0] = 0
    rows = _partition_polynomials_of(z, system.weights(top), top, degree)
    n = system.particles
    out = fmpz_poly()
    for m, row in enumerate(rows):
        ways = _ground_ways(system, g0, n - m)
        if ways and not row.is_zero():
            out += row * ways if ways != 1 else row
    return out


def _modular_entries(system: System, degree: int, points: int):
    """The terms ``(e, k, g_ε w_k)`` of ``ln Y = Σ_k (w_k / k) x^k y(t^k)``, ``e = k ε <= degree``, sorted by ``e``.

    ``y`` the excited levels' ``Σ g_ε t^ε`` (energies above the lowest
    level), ``w_k`` the weights of the particle-number recursion
    (:meth:`System.weights`).  Returns NumPy arrays ``e`` (the distinct
    energies), ``starts`` (where each energy's terms begin), ``k`` and the
    Python list of the integers ``g_ε w_k``.
    """
    y = _series_z(system.spectrum, system.spectrum.lowest, degree)
    w = system.weights(points - 1)
    energies, ks, values = [], [], []
    for eps in range(1, degree + 1):
        g = y[eps]
        if g:
            for k in range(1, degree // eps + 1):
                if w[k]:
                    energies.append(k * eps)
                    ks.append(k)
                    values.append(g * w[k])
    order = np.argsort(np.array(energies, dtype=np.int64), kind="stable")
    e = np.array(energies, dtype=np.int64)[order]
    starts = np.flatnonzero(np.r_[True, e[1:] != e[:-1]]) if e.size else np.zeros(0, dtype=np.int64)
    return e[starts], starts, np.array(ks, dtype=np.uint64)[order], [values[i] for i in order.tolist()]


def _modular_cost(spectrum: Spectrum, degree: int, gap: int, bits: float) -> Cost:
    """The estimated cost of :func:`_modular_row` (primes, points per prime, one exponential each)."""
    points = degree // gap + 1
    primes = math.ceil((bits + 64) / (_MODULAR_PRIME_BITS - 1)) + 1
    length = degree + 1
    lad = spectrum.ladder
    if lad is not None:
        rungs = degree // lad.spacing  # rung m brings degree // (m s) terms: about K (ln K + 1) in all
        terms = int(rungs * (math.log(rungs) + 1)) if rungs else 0
    else:
        terms = sum(degree // (e - spectrum.lowest) for e in spectrum.energies
                    if spectrum.lowest < e <= spectrum.lowest + degree)
    exp = _MODULAR_EXP_SECONDS * length * max(1.0, math.log2(length)) * max(1.0, length / 2000)
    per_point = exp + terms * _MODULAR_TERM_SECONDS + length * _MODULAR_COEFF_SECONDS
    seconds = primes * (points * per_point + terms * 1e-6 + points * 1e-6) + primes * length * 2e-6
    memory = terms * 80 + points * 80 + length * (3 * bits / 8 + 200) + primes * length * 40
    return Cost(seconds, int(memory))


def _exp_series_mod(f: nmod_poly, length: int) -> nmod_poly:
    """``exp(f) mod t^length`` for ``f(0) = 0`` modulo a prime above *length* (Newton's iteration).

    ``g <- g (1 + f - ln g)`` doubles the correct terms; ``ln g = ∫ g'/g``
    (Brent, *Multiple-precision zero-finding methods and the complexity of
    elementary function evaluation*, 1976): ``O(M(length))`` word operations.
    """
    one = nmod_poly([1], f.modulus())
    g, k = one, 1
    while k < length:
        k = min(2 * k, length)
        log_g = g.derivative().mul_low(g.inverse_series_trunc(k), k - 1).integral()
        g = g.mul_low(one + f.truncate(k) - log_g, k)
    return g


def _modular_primes(points: int, floor: int):
    """Yield the primes ``p < 2^32`` with ``p ≡ 1 (mod points)`` and ``p > floor``, largest first."""
    q = ((1 << _MODULAR_PRIME_BITS) - 2) // points
    while q > 0:
        p = q * points + 1
        if p <= floor:
            break
        if gmpy2.is_prime(p):
            yield p
        q -= 1
    raise TooLarge(f"too few primes of the form {points} q + 1 below 2^32 for the modular route; lower the "
                   "maximum energy (max_energy=)", parameters=["max_energy"])


def _root_of_unity(order: int, p: int) -> int:
    """A primitive *order*-th root of unity modulo the prime *p* (``order`` divides ``p - 1``)."""
    factors, rest, d = [], order, 2
    while d * d <= rest:
        if rest % d == 0:
            factors.append(d)
            while rest % d == 0:
                rest //= d
        d += 1
    if rest > 1:
        factors.append(rest)
    for base in range(2, p):
        root = pow(base, (p - 1) // order, p)
        if all(pow(root, order // q, p) != 1 for q in factors):
            return root
    raise AssertionError("no root of unity")  # unreachable: the multiplicative group is cyclic


def _modular_row_mod(p: int, degree: int, points: int, entries, ground: List[int]) -> List[int]:
    """``[t^0..t^degree] Σ_m G_{N-m} Y_m`` modulo the prime *p* (``p ≡ 1 mod points``), by *points* evaluations."""
    energies, starts, ks, values = entries
    root = _root_of_unity(points, p)
    inverses = [0] + [pow(k, -1, p) for k in range(1, points)]
    modulus = np.uint64(p)
    coef = np.array([v % p for v in values], dtype=np.uint64)
    coef = coef * np.array(inverses, dtype=np.uint64)[ks.astype(np.int64)] % modulus
    powers = [1] * points
    for i in range(1, points):
        powers[i] = powers[i - 1] * root % p
    table = np.array(powers, dtype=np.uint64)
    weights = nmod_poly([c % p for c in ground], p)
    acc = nmod_poly([], p)
    vector = np.zeros(degree + 1, dtype=np.uint64)
    for j in range(points):
        # W_j = Σ_m G_{N-m} ω^{-jm}: the weight of the evaluation at x = ω^j
        weight = int(weights(powers[(points - j) % points]))
        if not weight:
            continue
        if energies.size:
            terms = coef * table[(np.uint64(j) * ks) % np.uint64(points)] % modulus
            vector[energies] = np.add.reduceat(terms, starts) % modulus
        acc += _exp_series_mod(nmod_poly(vector.tolist(), p), degree + 1) * weight
    acc *= pow(points, -1, p)
    values = [int(c) for c in acc.coeffs()]
    return values + [0] * (degree + 1 - len(values))


def _modular_row(system: System, degree: int, bits: float) -> List[int]:
    """``[t^0..t^degree] Z_N(t)`` (energies shifted by the lowest level) by evaluation modulo primes.

    ``Σ_N Z_N x^N = G(x) Y(x, t)`` as in :func:`_excited_recursion`: ``Y``
    truncated at ``t^{degree+1}`` is a polynomial of degree ``K = degree //
    gap`` in ``x``, so with ``ω`` a primitive ``(K+1)``-th root of unity
    modulo a prime ``p ≡ 1 (mod K+1)``, ``Y_m = (K+1)^{-1} Σ_j ω^{-jm}
    Y(ω^j, t)`` (the discrete Fourier transform) and
    ``Z_N = (K+1)^{-1} Σ_j W_j Y(ω^j, t)``, ``W_j = Σ_m G_{N-m} ω^{-jm}``.
    Each ``Y(ω^j, t) = exp(Σ_k (w_k/k) ω^{jk} y(t^k))`` is one truncated
    exponential (:func:`_exp_series_mod`).  The residues for primes whose
    product exceeds ``2^{bits+64}`` (``bits`` Chernoff's bound of
    :func:`_coefficient_bits`) give the integers by Chinese remaindering
    (Garner's algorithm; Knuth, *TAOCP* vol. 2, 4.3.2); every value must
    then lie below the product over ``2^32``, else more primes are taken (a
    bound that fell short cannot pass unseen but with probability about
    ``2^-32`` per coefficient).  Cost: ``(bits/31) (K+1)`` exponentials of
    length ``degree + 1`` modulo word-sized primes; memory ``O(degree)``
    words and the answer, against the ``(K+1)(degree+1)`` big integers of
    the recursion.
    """
    n = system.particles
    g0, gap = ground_and_gap(system.spectrum)
    points = degree // gap + 1
    entries = _modular_entries(system, degree, points)
    ground = [_ground_ways(system, g0, n - m) for m in range(min(n, points - 1) + 1)]
    primes = _modular_primes(points, max(degree, points) + 1)
    need = bits + 64
    values: List = [gmpy2.mpz(0)] * (degree + 1)
    product = gmpy2.mpz(1)
    while True:
        while product.bit_length() <= need:
            p = next(primes)
            residues = _modular_row_mod(p, degree, points, entries, ground)
            inverse = int(gmpy2.invert(product % p, p))
            for e, r in enumerate(residues):
                lift = (r - int(values[e] % p)) * inverse % p
                if lift:
                    values[e] += product * lift
            product *= p
        if all(v.bit_length() < product.bit_length() - 32 for v in values):
            return [int(v) for v in values]
        need = 2 * product.bit_length()  # the bound fell short: take as many primes again


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
        The largest table (cells) to compute; default: no cap by cells, only
        the planner's limits on memory and time (:func:`multiplicity_cost`,
        :func:`enumerator.core.limits.check`; ``limited(...)`` or the CLI's
        ``--max-memory``/``--max-seconds`` raise them).

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
        The table would exceed *limit* cells, or its estimated memory or time
        (:func:`multiplicity_cost`) the active limits -- refused before any
        work, so FLINT never runs out of memory.

    Notes
    -----
    With ``D = E - N ε_min`` the excitation energy (in units):

    * MB: one truncated FLINT power of ``z(t)`` (a ladder: a binomial row of
      ``(1 - t^s)^{-dN}``).
    * BE/FD/Gentile: ``Σ_N Z_N x^N = G(x) Y(x, t)``, ``G`` the factor of the
      lowest level (degeneracy ``g0``) and ``Y`` that of the levels above it
      (gap ``δ``).  A row ``Y_m`` starts at ``t^{mδ}``, so only the
      ``M = min(N, D // δ) + 1`` rows below ``t^{D+1}`` count:
      ``Z_N = Σ_m G_{N-m} Y_m``.  The rows come from the particle-number
      recursion ``m Y_m = Σ_k w_k y(t^k) Y_{m-k}`` (Newton's identities;
      Macdonald, *Symmetric Functions and Hall Polynomials*, 1995, I.2), its
      convolutions computed online by divide and conquer (van der Hoeven,
      J. Symb. Comput. 34, 2002): ``O(log M)`` FLINT products of ``M``
      blocks of length ``D + 1``, holding ``M (D + 1)`` big integers.  Or,
      when that table does not fit the limits, by evaluation modulo primes (:func:`_modular_row`): ``Y`` at the
      ``(D // δ + 1)``-th roots of unity modulo word-sized primes, one
      truncated exponential each, and Chinese remaindering -- memory
      ``O(D)``, time comparable: 1000 bosons in the 3D trap up to
      ``E = 2000``, refused before (about 4 GB by the recursion), take
      130 s CPU and 66 MB peak.
    * Bosons on a non-degenerate lowest level with ``N >= D // δ`` (a trap
      holding many particles): every ``G_j = 1`` and ``Z_N = Y(1, t)``, the
      one-variable product ``∏ (1 - t^ε)^{-g}`` over the excited levels, by
      Euler's transform (:func:`_boson_series`): ``O(M(D) log D)``,
      independent of ``N`` -- 10^4 bosons in the 3D trap up to ``E = 10^4``
      take about a second.

    Examples
    --------
    >>> from enumerator.algorithms.levels.spectra import einstein_solid
    >>> multiplicities(einstein_solid(3), 4)
    {0: 1, 1: 3, 2: 6, 3: 10, 4: 15}
    """
    spectrum = system.spectrum
    n = system.particles
    top_units, trim = _energy_range(system, max_energy)
    low = ground_energy(system)
    if low is None or top_units is None or low > top_units:
        return {}
    shift = spectrum.lowest
    degree = top_units - n * shift
    plan = _plan(system, degree)
    _check_size((degree + 1) * (1 if plan.route in ("mb", "series", "modular") else plan.excited + 1), limit)
    _check_plan(system, plan)
    if plan.route == "mb":
        coeffs = series.coefficients(_mb_polynomial(system, degree), degree)
    elif plan.route == "series":
        coeffs = _boson_series(spectrum, degree)
    elif plan.route == "modular":
        coeffs = _modular_row(system, degree, plan.bits)
    else:
        coeffs = series.coefficients(_excited_recursion(system, plan.excited, degree), degree)
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
        The largest table (cells); default: no cap by cells, only the
        planner's limits.

    Returns
    -------
    list of dict of int to int
        Row ``n`` is :func:`multiplicities` of the same spectrum and rule with
        ``n`` particles (keys in units, from that row's lowest energy).

    Raises
    ------
    TooLarge
        The table would exceed *limit* cells, or its estimated memory or
        time the active limits (:mod:`enumerator.core.limits`).

    Notes
    -----
    BE/FD/Gentile: ``Σ_N Z_N x^N = G(x) Y(x, t)`` as in :func:`multiplicities`
    (``G`` the lowest level's factor, ``Y`` the excited levels', gap ``δ``).
    When the excited levels need fewer rows than the table (``D // δ < N``,
    ``D`` the excitation energy), only the ``M = D // δ + 1`` rows ``Y_m``
    run the particle-number recursion, and every row of the table follows
    as ``Z_n = Σ_m G_{n-m} Y_m``: ``g0`` passes of additions over the rows
    (a prefix sum per bosonic ground state, a sliding sum with a cap), or
    one Kronecker-packed FLINT product for a ground degeneracy above
    :data:`_TABLE_PASSES` (:func:`_excited_table`).  Measured: 10^3 bosons in
    the 3D trap up to ``E = 200`` in 0.28 s CPU and 72 MB peak, against
    2.6 s and 180 MB for the recursion over all ``N + 1`` rows; 10^4 up to
    ``E = 300`` in 1.1 s.  Otherwise the ``N + 1`` rows come from one run of
    the recursion (van der Hoeven's online convolution; see
    :func:`multiplicities`), so the table costs what its last row costs.
    MB: row ``m`` is ``z(t)^m`` truncated at the row's energy, ``z`` the
    one-particle partition polynomial, so each row is the previous one times
    ``z`` (:func:`_mb_table_rows`): ``N`` truncated products by a polynomial
    of small coefficients, linear in the size of the table up to FLINT's
    product, where the rows one by one took ``log m`` products each; on a
    ladder every row is a binomial row of ``(1 - t^s)^{-dm}``, read off
    directly.  Measured (CPU, peak above the interpreter): 10^3 particles in
    the 3D trap cut at 401 levels, ``E <= 400``: 1.3 s and 73 MB against
    6.5 s one row at a time; on the infinite trap ladder 0.24 s against
    1.0 s; 2 10^3 particles on four levels up to ``E = 400``: 0.6 s against
    7.6 s.  Every route is estimated and checked against the limits before
    any work.
    """
    spectrum = system.spectrum
    top_units = _to_units(max_energy, spectrum.unit)
    n = system.particles
    shift = spectrum.lowest
    degree = top_units - min(0, n * shift)
    rows: List[Dict[int, int]] = []
    if degree < 0:
        for m in range(n + 1):
            rows.append(multiplicities(System(spectrum, m, system.rule, system.capacity), max_energy, limit))
        return rows
    _check_size((n + 1) * (degree + 1), limit)
    if system.rule is Rule.MB:
        _check_plan(system, _mb_table_plan(system, degree))
        return list(_mb_table_rows(system, top_units))
    _check_plan(system, _plan(system, degree, rows=n + 1))
    plan = _table_plan(system, degree)
    if plan.route == "excited-table":
        _check_plan(system, plan)
        return _table_rows(system, top_units, _excited_table(system, plan.excited, degree))
    _check_plan(system, plan)
    polys = _partition_polynomials(system, n, degree)
    return _table_rows(system, top_units, lambda m, d: series.coefficients(polys[m], d))


#: Coefficient bits per second of the MB table's row-by-row products (a row
#: of big coefficients times ``z(t)``, whose coefficients are small), counting
#: the row's length times the bound on its coefficients; measured on the 3D
#: trap cut at 400 levels (10^3 particles, ``E <= 400``: 1.0 s CPU for an
#: estimate of 1.9 s) and on few-level spectra (faster: sparse products).
_MB_ROW_BITS_PER_SECOND = 4.0e8
#: Seconds per cell of a binomial row of the MB table on a ladder (one small
#: multiplication and one exact division per coefficient, gmpy2), fitted with
#: margin to the 3D trap (10^3 particles, ``E <= 400``: 0.14 s).
_MB_LADDER_CELL_SECONDS = 1e-6
#: Peak bytes per cell of an MB table: the Python integer and its dict slot
#: (about 100 bytes with the key) plus the coefficient's limbs, at the bound
#: of the largest coefficient; peak resident sizes (``/usr/bin/time``, less the
#: interpreter's 49 MB) are about half the estimate, since most cells are
#: smaller: 3D trap, 10^3 particles, ``E <= 400``: 71 MB for 138 estimated;
#: 3 10^3, ``E <= 600``: 469 MB for 950 MB.
_MB_TABLE_COPIES = 1
_MB_TABLE_OVERHEAD = 120
#: An MB table whose ``z(t)`` has at most this many nonzero terms (and 7
#: coefficients or more, where FLINT's product switches to Kronecker
#: substitution and costs a full product) multiplies a row by ``z`` as a sum
#: of shifted multiples of the row: measured on a row of 2,800 coefficients of
#: 1,800 bits, 0.5 ms per term against 6.3 ms for the product.
_MB_SPARSE_TERMS = 8


def _mb_table_plan(system: System, degree: int) -> _Plan:
    """The cost of the MB :func:`multiplicity_table` up to excitation *degree* (route ``"mb-rows"``).

    ``N + 1`` rows of at most ``degree + 1`` cells whose coefficients are
    bounded by those of the last row (Chernoff's bound,
    :func:`_coefficient_bits`: ``z(t)^N = z(t)^m z(t)^{N-m}`` and the second
    factor starts with ``g0^{N-m} >= 1``).  Time: one product per row by
    ``z`` (:data:`_MB_ROW_BITS_PER_SECOND`) or a binomial row on a ladder,
    plus reading every cell out; memory: the table of Python integers.
    """
    n = system.particles
    cells = (n + 1) * (degree + 1)
    bits = 64.0 if cells > 10**9 else _coefficient_bits(system, n, degree)
    if system.spectrum.ladder is not None:
        seconds = cells * (_MB_LADDER_CELL_SECONDS * (1 + bits / 4096) + _TABLE_CELL_SECONDS)
    else:
        seconds = cells * ((bits + 64) / _MB_ROW_BITS_PER_SECOND + _TABLE_CELL_SECONDS)
    memory = cells * (_MB_TABLE_COPIES * bits / 8 + _MB_TABLE_OVERHEAD)
    return _Plan("mb-rows", degree, n, bits, Cost(seconds, int(memory)))


def _mb_table_rows(system: System, top_units: int):
    """Yield the rows ``m = 0..N`` of an MB :func:`multiplicity_table`, each ``{E: Ω(m, E)}``, in order.

    Row ``m`` is ``z(t)^m`` (energies shifted by the lowest level ``ε0``),
    truncated at ``t^{d_m}``, ``d_m = top_units - m ε0``; the keys run from
    ``m ε0`` to *top_units* (``{}`` when ``d_m < 0``).  Each row is the
    previous one times ``z`` (one FLINT ``mul_low``; with ``ε0 < 0`` the
    rows are kept to the longest ``d_N``, with ``ε0 >= 0`` each is cut at its
    own ``d_m``).  On a ladder of spacing ``s`` and dimension ``d``,
    ``z = (1 - t^s)^{-d}`` and row ``m`` is the binomial row
    ``C(k + dm - 1, k)`` at ``t^{sk}`` (:func:`enumerator.core.series.binomial_row`).
    One row's polynomial is held at a time.
    """
    spectrum = system.spectrum
    n = system.particles
    shift = spectrum.lowest
    degree = top_units - min(0, n * shift)
    lad = spectrum.ladder
    z = None if lad is not None else fmpz_poly(_series_z(spectrum, shift, degree))
    terms = None if z is None else [(e, int(g)) for e, g in enumerate(z.coeffs()) if g]
    if terms is not None and (len(terms) > _MB_SPARSE_TERMS or z.length() < 7):
        terms = None  # FLINT multiplies by a z of fewer than 7 coefficients term by term itself
    poly = fmpz_poly([1])
    for m in range(n + 1):
        d_m = top_units - m * shift
        if d_m < 0:
            yield {}
            continue
        if lad is not None:
            row = series.binomial_row(lad.dimension * m, d_m // lad.spacing)
            s = lad.spacing
            yield {m * shift + e: (int(row[e // s]) if e % s == 0 else 0) for e in range(d_m + 1)}
            continue
        if m:
            length = (d_m if shift >= 0 else degree) + 1
            if terms is None:
                poly = poly.mul_low(z, length)
            else:
                # a few levels: the product as a sum of shifted multiples (FLINT would pad z)
                out = fmpz_poly()
                for e, g in terms:
                    if e < length:
                        part = poly.truncate(length - e)
                        part = part.left_shift(e) if e else part
                        out += part * g if g != 1 else part
                poly = out
        coeffs = series.coefficients(poly, d_m)
        yield {m * shift + e: int(coeffs[e]) for e in range(d_m + 1)}


def _table_rows(system: System, top_units: int, coefficients) -> List[Dict[int, int]]:
    """The rows of :func:`multiplicity_table` from ``Z_m(t)``, ``m = 0..N`` (energies shifted by the lowest level).

    ``coefficients(m, d)`` gives ``[t^0..t^d] Z_m``.  Row ``m`` keeps the
    energies from its ground energy to *top_units* (``{}`` when its ground
    state lies above); cost linear in the cells.
    """
    spectrum = system.spectrum
    shift = spectrum.lowest
    rows: List[Dict[int, int]] = []
    for m in range(system.particles + 1):
        sub = System(spectrum, m, system.rule, system.capacity)
        low = ground_energy(sub)
        d_m = top_units - m * shift
        if low is None or low > top_units:
            rows.append({})
            continue
        coeffs = coefficients(m, d_m)
        rows.append({m * shift + e: int(coeffs[e]) for e in range(low - m * shift, d_m + 1)})
    return rows


def _table_plan(system: System, degree: int) -> _Plan:
    """The route of a BE/FD/Gentile :func:`multiplicity_table` up to excitation *degree*, and its cost.

    ``"excited-table"`` when the excited levels need fewer rows than the
    table (``M = min(N, degree // gap) + 1 < N + 1``): the ``M`` rows
    ``Y_j`` by the recursion, then the lowest level's factor applied in
    ``x`` (:func:`_excited_table`); else the particle-number recursion over
    all ``N + 1`` rows (:func:`_plan` with ``rows``).
    """
    n = system.particles
    g0, gap = ground_and_gap(system.spectrum)
    top = 0 if gap is None else min(n, degree // gap)
    if top >= n:
        return _plan(system, degree, rows=n + 1)
    cells = (n + 1) * (degree + 1)
    bits = 64.0 if cells > 10**9 else _coefficient_bits(system, n, degree)
    levels = max(1, (top + 1).bit_length() - 1)
    seconds = levels * (top + 1) * (2 * degree + 1) * (bits + 64) / _POLY_BITS_PER_SECOND
    memory = (top + 1) * (degree + 1) * (_CELL_COPIES * bits / 8 + _CELL_OVERHEAD)
    if g0 <= _TABLE_PASSES:
        seconds += g0 * (2 if system.capacity is not None else 1) * cells * (bits + 64) / _TABLE_ADD_BITS_PER_SECOND
    else:
        seconds += (n + top + 1) * (degree + 1) * (bits + 64) / _POLY_BITS_PER_SECOND
    seconds += cells * _TABLE_CELL_SECONDS
    memory += cells * (_TABLE_COPIES * bits / 8 + _TABLE_OVERHEAD)
    return _Plan("excited-table", degree, top, bits, Cost(seconds, int(memory)))


def _ground_factor(system: System, g0: int, length: int) -> List[int]:
    """``[x^0..x^{length-1}] G(x)``, the factor of the *g0* states of the lowest level.

    BE: ``(1 - x)^{-g0}``, the binomials ``C(j + g0 - 1, g0 - 1)``
    (:func:`enumerator.core.series.binomial_row`); at most ``c`` per state
    (FD: ``c = 1``): ``(1 + x + ... + x^c)^{g0}`` (a truncated FLINT power).
    """
    if system.capacity is None:
        return [int(v) for v in series.binomial_row(g0, length - 1)]
    return series.coefficients(series.power(series.window(0, system.capacity), g0, length - 1), length - 1)


def _ground_passes(system: System, g0: int, rows: List[fmpz_poly], count: int) -> List[fmpz_poly]:
    """``Z_m = Σ_j G_{m-j} Y_j`` for ``m < count`` by *g0* passes over the rows, one per state of the lowest level.

    BE: each state multiplies by ``1/(1 - x)``, a prefix sum over ``m``; at
    most ``c`` per state: by ``1 + x + ... + x^c``, a sliding sum of
    ``c + 1`` rows.  Rows past the last nonzero one are one shared object
    (so a prefix sum of a finished sum costs nothing).  Cost: ``g0 count``
    polynomial additions (twice that with a cap).
    """
    zero = fmpz_poly()
    z = list(rows[:count]) + [zero] * max(0, count - len(rows))
    cap = system.capacity
    last = len(rows) - 1  # the last row that may be nonzero
    for _ in range(g0):
        if cap is None:
            for m in range(1, count):
                z[m] = z[m - 1] if z[m] is zero else z[m] + z[m - 1]
            last = count - 1
        else:
            last = min(count - 1, last + cap)
            out = [zero] * count
            running = zero
            for m in range(last + 1):
                running = running + z[m] if z[m] is not zero else running
                if m > cap and z[m - cap - 1] is not zero:
                    running = running - z[m - cap - 1]
                out[m] = running
            z = out
    return z


def _excited_table(system: System, top: int, degree: int):
    """Every ``Z_m(t)`` mod ``t^{degree+1}``, ``m = 0..N``, from the ``top + 1`` rows of the excited levels.

    ``Σ_m Z_m x^m = G(x) Y(x, t)`` (as in :func:`_excited_recursion`): the
    rows ``Y_j`` of the excited levels by the particle-number recursion
    (:func:`_partition_polynomials_of`), then ``G``, the lowest level's
    factor, applied in ``x``: by :func:`_ground_passes` when its
    degeneracy ``g0`` is at most :data:`_TABLE_PASSES`, else as one FLINT
    product of the rows packed with stride ``s = degree + 1`` (Kronecker
    substitution; ``G`` has no ``t``, so the blocks of the product do not
    overlap) by ``G(x^s)``.

    Returns
    -------
    callable
        ``coefficients(m, d)``: ``[t^0..t^d] Z_m`` as Python ints (rows that
        are one object are converted once).
    """
    spectrum = system.spectrum
    n = system.particles
    g0, _ = ground_and_gap(spectrum)
    z = _series_z(spectrum, spectrum.lowest, degree)
    z[0] = 0
    rows = _partition_polynomials_of(z, system.weights(top), top, degree)
    if g0 <= _TABLE_PASSES:
        table = _ground_passes(system, g0, rows, n + 1)
        cache = {}

        def coefficients(m: int, d: int) -> List[int]:
            poly = table[m]
            key = (id(poly), d)
            if key not in cache:
                cache.clear()
                cache[key] = series.coefficients(poly, d)
            return cache[key]

        return coefficients
    stride = degree + 1

    def pack(items) -> fmpz_poly:
        # sum of items[i] x^(i stride), halves joined by a shift
        if len(items) == 1:
            return items[0]
        half = len(items) // 2
        return pack(items[:half]) + pack(items[half:]).left_shift(half * stride)

    packed = pack(rows)
    del rows
    ground = fmpz_poly(_ground_factor(system, g0, n + 1))
    product = packed.mul_low(ground.inflate(stride) if stride > 1 else ground, (n + 1) * stride)

    def coefficients(m: int, d: int) -> List[int]:
        return [int(product[m * stride + e]) for e in range(d + 1)]

    return coefficients


# --------------------------------------------------------------------------
# Thermal contact
# --------------------------------------------------------------------------
def _ratio(p: int, q: int) -> Fraction:
    """``p/q`` in lowest terms with GMP's gcd (CPython's is quadratic on big numbers)."""
    g = gmpy2.gcd(p, q)
    if q < 0:
        p, q = -p, -q
    return coprime_fraction(gmpy2.divexact(p, g), gmpy2.divexact(q, g)) if g != 1 else coprime_fraction(p, q)


def _ratio_approx(p: int, q: int) -> float:
    """``p/q`` (``q > 0``) as a float, within one unit in the last place; ``0.0`` below the float range.

    Small operands: CPython's correctly rounded ``int / int``.  Big ones: the
    integer quotient ``⌊p 2^k / q⌋`` with about 64 significant bits (one GMP
    division, no gcd), rounded to a float and scaled by ``2^-k``.
    """
    if max(abs(p).bit_length(), q.bit_length()) <= 1000:
        return p / q
    if p == 0:
        return 0.0
    sign = -1.0 if p < 0 else 1.0
    a = gmpy2.mpz(abs(p))
    k = q.bit_length() - a.bit_length() + 64
    quotient = (a << k) // q if k >= 0 else (a >> -k) // q
    try:
        return sign * math.ldexp(float(quotient), -k)
    except OverflowError:
        return sign * math.inf


@dataclass(frozen=True)
class Contact:
    """Two systems sharing ``energy`` (a grid index: the energy is ``energy * unit``): exact split statistics.

    ``split[E_A] = Ω_A(E_A) Ω_B(E - E_A)`` for every ``E_A`` from A's lowest
    energy to ``E`` minus B's lowest; ``total`` is their sum; ``most_probable``
    the ``E_A`` of the largest term (the lowest such ``E_A`` on a tie;
    ``None`` when no split is possible).  Every probability is
    ``split[E_A] / total`` (all microstates of A and B equally likely); the
    exact ones are reduced only when asked (:attr:`probability`,
    :meth:`probability_of`), the floats computed directly
    (:meth:`probability_approx_of`), so a summary of 10^4 splits of
    10^4-digit counts costs milliseconds.

    ``energy``, the keys of ``split`` and ``most_probable`` are grid indices:
    the energy they stand for is ``index * unit`` in the user's unit
    (:meth:`energy_of`).  ``mean``, ``variance`` and :meth:`summary` are in
    the user's unit.
    """

    energy: int
    unit: Fraction
    total: int
    split: Dict[int, int]
    most_probable: Optional[int]

    def energy_of(self, index: int):
        """The energy of grid *index* in the user's unit: ``index * unit``, an ``int`` when whole, else a Fraction.

        Examples
        --------
        >>> from enumerator.algorithms.levels.spectra import System, two_level
        >>> half = System.create(two_level("1/2"), 2, "MB")
        >>> c = thermal_contact(half, half, "3/2")
        >>> c.unit, c.energy_of(c.energy), [(c.energy_of(k), v) for k, v in c.split.items()]
        (Fraction(1, 2), Fraction(3, 2), [(0, 0), (Fraction(1, 2), 2), (1, 2), (Fraction(3, 2), 0)])
        """
        value = index * self.unit
        return value.numerator if value.denominator == 1 else value

    @property
    def probability(self) -> Dict[int, Fraction]:
        """Every split's exact probability, ``{E_A: Fraction}`` (empty when no split is possible)."""
        if not self.total:
            return {}
        cached = self.__dict__.get("_probability")
        if cached is None:
            cached = {ea: self.probability_of(ea) for ea in self.split}
            object.__setattr__(self, "_probability", cached)
        return cached

    def probability_of(self, energy_a: int) -> Fraction:
        """The exact probability that A holds grid index *energy_a* (energy ``energy_a * unit``): ``split[E_A] / total``."""
        return _ratio(self.split.get(energy_a, 0), self.total)

    def probability_approx_of(self, energy_a: int) -> float:
        """:meth:`probability_of` as the nearest float (``0.0`` below the float range)."""
        return _ratio_approx(self.split.get(energy_a, 0), self.total)

    @property
    def most_probable_probability(self) -> Optional[Fraction]:
        """The exact probability of the most probable split."""
        if self.most_probable is None:
            return None
        return self.probability_of(self.most_probable)

    def _moments(self):
        """``(Σ v, Σ E_A v, Σ E_A^2 v)`` over the splits, exact (gmpy2)."""
        s1 = s2 = gmpy2.mpz(0)
        for ea, v in self.split.items():
            term = ea * gmpy2.mpz(v)
            s1 += term
            s2 += ea * term
        return int(s1), int(s2)

    def _scaled_moments(self):
        """``(mean_num, mean_den, var_num, var_den)``: mean and variance of ``E_A`` in the user's unit, unreduced.

        With ``unit = p/q``: ``mean = p Σ E_A v / (q total)`` and ``variance =
        p^2 (Σ E_A^2 v · total - (Σ E_A v)^2) / (q total)^2`` (``E_A`` grid indices).
        """
        s1, s2 = self._moments()
        p, q = self.unit.numerator, self.unit.denominator
        t = self.total
        return s1 * p, t * q, (s2 * t - s1 * s1) * p * p, (t * q) ** 2

    @property
    def mean(self) -> Optional[Fraction]:
        """The exact mean of ``E_A`` in the user's unit (``None`` when no split is possible)."""
        if not self.total:
            return None
        mean_num, mean_den, _, _ = self._scaled_moments()
        return _ratio(mean_num, mean_den)

    @property
    def variance(self) -> Optional[Fraction]:
        """The exact variance of ``E_A`` in the user's unit squared: ``(Σ E_A^2 v · total - (Σ E_A v)^2) / total^2``."""
        if not self.total:
            return None
        _, _, var_num, var_den = self._scaled_moments()
        return _ratio(var_num, var_den)

    def summary(self) -> Optional["ContactSummary"]:
        """The peak and the width of the split, exact and as floats (``None`` when no split is possible).

        Energies in the user's unit (the grid indices times ``unit``).
        Cost: one pass over the splits (two small-by-big products each) and
        three gcds of numbers of twice the digits of ``total``.
        """
        if not self.total:
            return None
        mean_num, mean_den, var_num, var_den = self._scaled_moments()
        t = self.total
        peak = self.split[self.most_probable]
        return ContactSummary(
            splits=len(self.split),
            most_probable=self.energy_of(self.most_probable),
            most_probable_probability=_ratio(peak, t),
            most_probable_probability_approx=_ratio_approx(peak, t),
            mean=_ratio(mean_num, mean_den),
            mean_approx=_ratio_approx(mean_num, mean_den),
            variance=_ratio(var_num, var_den),
            variance_approx=_ratio_approx(var_num, var_den),
            std_dev_approx=math.sqrt(_ratio_approx(var_num, var_den)),
        )


@dataclass(frozen=True)
class ContactSummary:
    """The shape of the energy split: its peak and its width, energies in the user's unit.

    ``most_probable`` is an energy of A (an ``int`` when whole, else a
    Fraction), ``mean`` and ``variance`` exact in the user's unit (and its
    square), with their floats and the standard deviation.
    """

    splits: int
    most_probable: Union[int, Fraction]
    most_probable_probability: Fraction
    most_probable_probability_approx: float
    mean: Fraction
    mean_approx: float
    variance: Fraction
    variance_approx: float
    std_dev_approx: float


def _common_unit(a: Spectrum, b: Spectrum, energy: Fraction) -> Fraction:
    """The coarsest grid ``1/q`` holding both spectra and the total *energy* (``q`` the lcm of their denominators)."""
    da, db = a.unit.denominator, b.unit.denominator
    d = da * db // math.gcd(da, db)
    de = energy.denominator
    return Fraction(1, d * de // math.gcd(d, de))


def thermal_contact(a: System, b: System, energy, limit: Optional[int] = None) -> Contact:
    """Return the exact energy split of systems *a* and *b* sharing total *energy*.

    Parameters
    ----------
    a, b : System
    energy : int, Fraction or str
        The total energy, exact, in the energy unit.
    limit : int, optional
        The largest multiplicity table (cells) of either side; default: only
        the planner's limits on memory and time.

    Returns
    -------
    Contact
        Split keys are indices on the common grid of the two spectra and
        the total energy (:meth:`Contact.energy_of` gives the energy in the
        user's unit); the summary is in the user's unit.

    Raises
    ------
    InvalidParameters
        An *energy* that is not a number.
    TooLarge
        A side's table would exceed *limit*, or the work its estimated memory
        or time (:mod:`enumerator.core.limits`) -- before anything is computed.

    Notes
    -----
    Both spectra are written in a common unit (``1/lcm`` of the
    denominators of the two units and of *energy*, so a total energy off the
    spectra's grid has no microstate rather than being rounded); the table is the convolution of the two multiplicity rows,
    so ``total`` equals the multiplicity of the combined system (for two
    Einstein solids ``C(q + N_A + N_B - 1, q)``, the worked example of
    D. V. Schroeder, *An Introduction to Thermal Physics*, 2000, §2.3).  Cost:
    the two calls of :func:`multiplicities` (each checked against the limits)
    plus ``E`` big-integer products (gmpy2), also checked; probabilities are
    reduced only on demand (:class:`Contact`).

    Examples
    --------
    >>> from enumerator.algorithms.levels.spectra import einstein_solid
    >>> c = thermal_contact(einstein_solid(3), einstein_solid(3), 6)
    >>> c.total, c.most_probable, c.probability[3]
    (462, 3, Fraction(50, 231))
    >>> s = c.summary()
    >>> s.mean, s.variance, round(s.std_dev_approx, 6)
    (Fraction(3, 1), Fraction(18, 7), 1.603567)
    """
    total_energy = parse_rational(energy, "energy")
    unit = _common_unit(a.spectrum, b.spectrum, total_energy)
    a = System(a.spectrum.rescaled(unit), a.particles, a.rule, a.capacity)
    b = System(b.spectrum.rescaled(unit), b.particles, b.rule, b.capacity)
    e = _to_units(total_energy, unit, "energy")
    low_a, low_b = ground_energy(a), ground_energy(b)
    if low_a is None or low_b is None or low_a + low_b > e:
        return Contact(e, unit, 0, {}, None)
    plans = [_plan(side, e - low_other - side.particles * side.spectrum.lowest)
             for side, low_other in ((a, low_b), (b, low_a))]
    splits = e - low_a - low_b + 1
    bits = plans[0].bits + plans[1].bits
    check(
        Cost(splits * 2 * (bits + 64) / _POLY_BITS_PER_SECOND, int(splits * 3 * (bits / 8 + 40))) + plans[0].cost
        + plans[1].cost,
        f"the exact energy split of {a.label} and {b.label} over {splits:,} values of E_A",
        advice="share less energy or make the systems smaller",
    )
    omega_a = multiplicities(a, (e - low_b) * unit, limit)
    omega_b = multiplicities(b, (e - low_a) * unit, limit)
    split = {ea: int(gmpy2.mpz(omega_a[ea]) * omega_b[e - ea]) for ea in range(low_a, e - low_b + 1)}
    total = int(sum((gmpy2.mpz(v) for v in split.values()), gmpy2.mpz(0)))
    if total == 0:
        return Contact(e, unit, 0, split, None)
    best = max(split.values())
    most = min(ea for ea, v in split.items() if v == best)
    return Contact(e, unit, total, split, most)


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
