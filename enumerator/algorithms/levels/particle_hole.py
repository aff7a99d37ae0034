r"""Canonical fermions at any temperature: the particle–hole expansion about the ground state.

The Borrmann–Franke recursion for fermions (:mod:`.ensembles`) is a sum of
terms of both signs whose total ``Z_N`` is smaller than its largest term by
about ``e^{-β E_0}`` relative to ``N`` times the lowest level; far below the
Fermi temperature it needs thousands of bits.  Here ``Z_N`` is written as a
sum of positive terms only, so nothing cancels and a working precision of the
requested digits plus a few guard bits suffices at every temperature.

The expansion
    Sort the distinct single-particle energies and fill the ground state from
    the bottom.  The *Fermi shell* ``P`` (energy ``ε_P``, ``g_P`` states) is
    the highest shell that holds a particle; it holds ``n_P`` of its ``g_P``
    states (``n_P = g_P`` for a closed shell).  Shells below are full, shells
    above empty.  An excited state is a set of ``h`` holes below ``P``, ``p``
    particles above ``P`` and ``m`` occupied states of ``P``, with
    ``p - h + m = n_P`` (particle number is fixed).  Its energy above the
    ground energy ``E_0`` is ``Σ_holes (ε_P - ε_j) + Σ_particles (ε_k - ε_P)``
    (the shell ``P`` costs nothing), so

    .. math::

        Z_N = e^{-β E_0} \sum_{h, p} H_h P_p \binom{g_P}{n_P + h - p},\qquad
        \sum_h H_h x^h = \prod_{j<P} (1 + x e^{-β(ε_P-ε_j)})^{g_j},\quad
        \sum_p P_p x^p = \prod_{k>P} (1 + x e^{-β(ε_k-ε_P)})^{g_k},

    the coefficient of ``y^0`` in
    ``∏_{below}(1 + y^{-1} e^{-β(ε_P-ε_j)})^{g_j} (1 + y)^{g_P} y^{-n_P} ∏_{above}(1 + y e^{-β(ε_k-ε_P)})^{g_k}``.
    Every coefficient is positive.  The energy moments ``Σ w E`` and
    ``Σ w E^2`` (giving ``U - E_0`` and ``C``) come from the same products
    carried with their energy-weighted companions (``(AB)_1 = A_1 B_0 + A_0 B_1``,
    ``(AB)_2 = A_2 B_0 + 2 A_1 B_1 + A_0 B_2``, all positive), and the
    occupation of one state from the same sums with that state's factor
    removed (prefix and suffix products, never a division).  The law of one
    level's occupation (``law_level=``) restricts the same sums to ``k``
    particles (or holes) in it: ``C(g, k) y^k`` times the sum with the whole
    level's factor removed, shifted by ``k``.

Arithmetic and error bound
    Ball arithmetic (FLINT's ``arb``/``arb_poly`` through python-flint;
    F. Johansson, *Arb: efficient arbitrary-precision midpoint-radius interval
    arithmetic*, IEEE Trans. Comput. 66 (2017)): every rounding is enclosed,
    so each sum is a midpoint with a rigorous radius.  Three truncations keep
    the polynomials short: ladder rungs above ``K``; more than ``hmax`` holes
    or ``pmax`` particles; more than ``k_j`` excitations in one level.  The
    configurations left out weigh at most the same relaxed sum
    ``F(y) = H(1/y) (1 + y)^{g_P} y^{-n_P} P(y) >= Z_exc`` (any fugacity
    ``y > 0``: a Laurent polynomial with positive coefficients exceeds its
    ``y^0`` coefficient; ``y`` is put where the mean charge vanishes, so
    ``F`` exceeds ``Z_exc`` only by about the width of the charge law)
    restricted to them: ``F·(e^{yτ} - 1)`` for the rungs (``τ`` a
    ratio-test bound on ``Σ_{k>K} g_k e^{-β(ε_k-ε_P)}``), Chernoff bounds
    ``F(r)/r^{kmax+1}`` (``r >= 1``) for the degrees and
    ``(g z)^{k+1}/(k+1)! e^{g z}`` for one level.  Their energy moments
    follow from ``E^j e^{-βE} <= (j/(eδ))^j e^{-(β-δ)E}``, the same bound
    at ``β - δ`` (the best of a few ``δ``).  The stated bound of each result
    (:attr:`FermionPoint.errors`) is ball radius plus truncation plus one
    unit of the working precision; cut-offs and precision are raised until
    it meets ``10^-digits`` (relative for ``ln Z``, ``U - E_0``, ``C``,
    ``S``; absolute per listed level for occupations).

Cost
    ``L`` levels used (the shells below ``P`` and the rungs kept above):
    seven products of ball polynomials of length at most
    ``max(hmax, pmax) + 1`` (``<= N + 1``; tens at ``T << ε_F``, a few
    hundred for 969 fermions at ``T = ħω``) by one level's short factor per
    level, two long products per listed level, and ``O(L)`` logarithms of
    balls for the truncation bound, all at a working precision of
    ``digits log2 10`` plus guard bits; ``L`` and the lengths grow about
    linearly with the digits (more rungs and more excitations count), so
    the time grows like ``digits^3``-``digits^4``.  :func:`fermion_cost`
    counts this work before any sum and :func:`fermion_canonical` checks it
    against the limits.  Measured: 969 fermions in the 3D trap, 15 digits,
    0.006 s at ``T = 0.1``, 0.02 s at ``0.3``, 0.04 s at ``1``, 0.3 s at
    ``T = 3`` (where the plain recursion is the better route); 300 digits at
    ``T = 0.3``: 0.7 s.

Units: energies and temperatures share the user's energy unit, ``k_B = 1``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Dict, Iterable, List, Optional, Tuple

import mpmath
from flint import arb, arb_poly, ctx

from ...core.errors import InvalidParameters, TooLarge
from ...core.limits import Cost, check
from ...core.model import as_count
from ...core.rules import Rule
from .spectra import Spectrum, System, parse_digits, parse_temperature, temperature_text

__all__ = ["FermionPoint", "fermion_canonical", "fermion_cost"]

#: Bits carried beyond the requested digits.
GUARD_BITS = 40

#: The precision is doubled at most this many times.
_MAX_ATTEMPTS = 8


@dataclass(frozen=True)
class FermionPoint:
    """Canonical results for fermions at one temperature (mpmath numbers; ``k_B = 1``).

    ``errors`` holds a rigorous bound on the absolute error of each value
    (keys ``"ln_partition_function"``, ``"excitation_energy"``,
    ``"mean_energy"``, ``"heat_capacity"``, ``"free_energy"``, ``"entropy"``,
    ``"occupations"``: the largest bound over the listed levels).
    ``occupations_approx[i]`` is the mean number of particles in listed level
    ``i`` (all its states); ``occupation_above_approx`` is the mean number in
    the ladder rungs beyond the listed levels, so that the listed occupations
    plus it sum to ``N``.  ``law`` (when asked for) is ``P(n_l = k)`` of one
    level, ``k = 0..min(g_l, N)``, each within ``errors["law"]`` (absolute).
    """

    temperature: Fraction
    digits: int
    ground_energy: Fraction
    ln_partition_function_approx: mpmath.mpf
    excitation_energy_approx: mpmath.mpf
    mean_energy_approx: mpmath.mpf
    heat_capacity_approx: mpmath.mpf
    free_energy_approx: mpmath.mpf
    entropy_approx: mpmath.mpf
    occupations_approx: Tuple[mpmath.mpf, ...]
    occupation_above_approx: mpmath.mpf
    errors: Dict[str, mpmath.mpf]
    law: Optional[Tuple[mpmath.mpf, ...]] = None


# --------------------------------------------------------------------------
# Small helpers on balls
# --------------------------------------------------------------------------
def _mpf(x: arb) -> mpmath.mpf:
    man, exp = x.mid().man_exp()
    return mpmath.mpf((int(man), int(exp)))


def _rad(x: arb) -> mpmath.mpf:
    man, exp = x.rad().man_exp()
    return mpmath.mpf((int(man), int(exp)))


def _upper(x: arb) -> mpmath.mpf:
    """An mpmath number at least every point of the ball (rounded up)."""
    with mpmath.workprec(64):
        return mpmath.mpf(abs(_mpf(x))) * (1 + mpmath.mpf(2) ** -60) + _rad(x) * 2


def _frac(q: Fraction) -> arb:
    return arb(q.numerator) / arb(q.denominator)


def _trunc(poly: arb_poly, length: int) -> arb_poly:
    return poly if poly.length() <= length else poly.truncate(length)


def _mul3(a, b, length: int):
    """Product of two (value, first moment, second moment) polynomial triples."""
    a0, a1, a2 = a
    b0, b1, b2 = b
    p0 = _trunc(a0 * b0, length)
    p1 = _trunc(a1 * b0 + a0 * b1, length)
    p2 = _trunc(a2 * b0 + 2 * (a1 * b1) + a0 * b2, length)
    return p0, p1, p2


def _factor(g: int, y: arb, d: int, length: int):
    """``(1 + y x)^g`` and its energy-weighted companions (energy ``d`` per particle)."""
    top = min(g, length - 1)
    c0, c1, c2 = [], [], []
    binom = 1
    power = arb(1)
    for k in range(top + 1):
        term = power * binom
        c0.append(term)
        c1.append(term * (k * d))
        c2.append(term * (k * d) ** 2)
        power = power * y
        binom = binom * (g - k) // (k + 1)
    return arb_poly(c0), arb_poly(c1), arb_poly(c2)


def _coeff(poly: arb_poly, i: int) -> arb:
    if 0 <= i < poly.length():
        return poly[i]
    return arb(0)


def _shifted_dot(a: arb_poly, b: arb_poly, shift: int) -> arb:
    """``Σ_h a_h b_{h + shift}``."""
    total = arb(0)
    n = b.length()
    for h in range(a.length()):
        j = h + shift
        if j < 0:
            continue
        if j >= n:
            break
        total += a[h] * b[j]
    return total


def _level_terms(g: int, y: arb, without: arb_poly, other: arb_poly, offset: int, top: int) -> List[arb]:
    """``C(g, j) y^j Σ_h without_h other_{h + offset + j}`` for ``j = 0..top``: one level's law terms.

    *j* particles (above the Fermi level) or holes (below it) in a level of
    degeneracy *g* with Boltzmann factor *y* per particle or hole; *without*
    is the generating polynomial of the same side without that level and
    *other* that of the other side.  Positive terms; ``top + 1`` dot products.
    """
    terms = []
    yk = arb(1)
    for j in range(top + 1):
        terms.append(math.comb(g, j) * yk * _shifted_dot(without, other, offset + j))
        yk = yk * y
    return terms


# --------------------------------------------------------------------------
# Shells
# --------------------------------------------------------------------------
def _shells(spectrum: Spectrum, top: int) -> List[Tuple[int, int]]:
    """Distinct energies (in units) with their total degeneracy, ascending, up to *top* for a ladder."""
    if spectrum.ladder is None:
        merged: Dict[int, int] = {}
        for e, g in zip(spectrum.energies, spectrum.degeneracies):
            merged[e] = merged.get(e, 0) + g
        return sorted(merged.items())
    lad = spectrum.ladder
    return [(lad.energy(m), lad.degeneracy(m)) for m in range(top + 1)]


def _fermi_shell(spectrum: Spectrum, n: int):
    """``(index, shells)``: the shells through the Fermi shell and the Fermi shell's index."""
    if spectrum.ladder is None:
        shells = _shells(spectrum, 0)
        filled = 0
        for i, (_e, g) in enumerate(shells):
            filled += g
            if filled >= n:
                return i, shells
        raise InvalidParameters(
            f"{n} fermions do not fit in the {spectrum.states()} single-particle states; "
            "lower the number of particles or add levels"
        )
    lad = spectrum.ladder
    filled, m = 0, 0
    while True:
        filled += lad.degeneracy(m)
        if filled >= n:
            return m, _shells(spectrum, m)
        m += 1


def _ladder_tail(spectrum: Spectrum, last: int, e_fermi: int, b: arb) -> arb:
    """A ball containing an upper bound of ``τ = Σ_{m > last} g_m e^{-b (ε_m - ε_P)}`` (ladder)."""
    lad = spectrum.ladder
    d = lad.dimension
    m = last + 1
    first = arb(lad.degeneracy(m)) * (-(b * (lad.energy(m) - e_fermi))).exp()
    q = (-(b * lad.spacing)).exp()
    # t_{m+1}/t_m = q (m + d)/(m + 1), decreasing in m, at most rho from m = last + 1 on.
    rho = q * arb(m + d) / arb(m + 1)
    if not rho < 1:
        return arb("inf")
    return first / (1 - rho)


def _log_product(levels, b: arb, e_fermi: int, r=None) -> arb:
    """``ln ∏ (1 + r e^{-b |ε - ε_P|})^g`` over *levels* (``r = 1`` by default)."""
    total = arb(0)
    for e, g in levels:
        y = (-(b * abs(e - e_fermi))).exp()
        total += g * (1 + (y if r is None else r * y)).log()
    return total


def _fugacity(below, above, e_p: int, g_p: int, n_p: int, beta: float) -> Tuple[float, float]:
    """``(y, ln F(y))``: the point where the charge ``p - h + m - n_P`` has mean zero, and the relaxed sum there.

    ``F(y) = H(1/y) (1 + y)^{g_P} y^{-n_P} P(y) >= Z_exc`` for every ``y > 0``
    (a Laurent polynomial with positive coefficients exceeds its ``y^0``
    coefficient); at its minimum it exceeds ``Z_exc`` by a modest factor
    (about the width of the charge distribution).  Floating point: used to
    choose cut-offs and to tighten the rigorous bounds, any ``y`` is valid.
    """
    def fermi(x: float) -> float:  # 1 / (1 + e^x) without overflow
        if x > 0:
            q = math.exp(-x)
            return q / (1 + q)
        return 1 / (1 + math.exp(x))

    def charge(t: float) -> float:
        total = g_p * fermi(-t) - n_p
        for e, g in below:
            total -= g * fermi(t + beta * (e_p - e))
        for e, g in above:
            total += g * fermi(beta * (e - e_p) - t)
        return total

    lo, hi = -1.0, 1.0
    while charge(lo) > 0 and lo > -1e6:
        lo *= 2
    while charge(hi) < 0 and hi < 1e6:
        hi *= 2
    for _ in range(60):
        mid = (lo + hi) / 2
        if charge(mid) < 0:
            lo = mid
        else:
            hi = mid
    t = (lo + hi) / 2

    def lp(x: float) -> float:
        return x + math.log1p(math.exp(-x)) if x > 0 else math.log1p(math.exp(x))

    log_f = g_p * lp(t) - n_p * t
    log_f += sum(g * lp(-t - beta * (e_p - e)) for e, g in below)
    log_f += sum(g * lp(t - beta * (e - e_p)) for e, g in above)
    return t, log_f


def _degree(levels, e_fermi: int, beta: float, shift: float, budget: float, cap: int):
    """``(kmax, r)``: a degree cut-off for one side and the Chernoff point bounding its tail.

    The side's generating function at fugacity ``e^{shift}``,
    ``F(x) = ∏ (1 + x e^{shift - β|ε - ε_P|})^g``, has
    ``Σ_{k > kmax} c_k <= F(r) r^{-(kmax+1)}`` for ``r >= 1``; ``kmax`` is
    the first degree where that is ``e^{-budget}`` of ``F(1)``.  Chosen in
    floating point; the bound itself is then evaluated in balls.
    """
    ys = [(g, math.exp(shift - beta * abs(e - e_fermi))) for e, g in levels]
    lam = sum(g * y for g, y in ys)
    log_f1 = sum(g * math.log1p(y) for g, y in ys)
    k = 0
    while k < cap:
        r = max(1.0, (k + 1) / lam) if lam > 0 else 1.0
        if r > 1 and sum(g * math.log1p(r * y) for g, y in ys) - (k + 1) * math.log(r) < log_f1 - budget:
            return k, Fraction(r).limit_denominator(1 << 20)
        k += 1 if k < 64 else max(1, k // 32)
    return cap, Fraction(1)


@dataclass(frozen=True)
class _Plan:
    """The shells and cut-offs of one attempt at one temperature (chosen in floating point)."""

    shells: List[Tuple[int, int]]
    e_p: int
    g_p: int
    n_p: int
    below: List[Tuple[int, int]]
    above: List[Tuple[int, int]]
    t_fug: float
    hmax: int
    r_h: Fraction
    pmax: int
    r_p: Fraction
    cap_h: int
    cap_p: int
    cut: Dict[int, int]


def _plan(spectrum: Spectrum, n: int, temperature: Fraction, digits: int, top: int, extra: int,
          law_energy: Optional[int] = None) -> _Plan:
    """The shells through *top*, the fugacity, the degree cut-offs and the per-level cut-offs.

    With *law_energy* (the level whose law is asked for), that level is not
    cut, both degree cut-offs grow by its degeneracy ``g`` and so do the
    per-level cut-offs of the levels nearest the Fermi shell on each side
    (until they hold ``g`` more): every ``P(n_l = k)``, however small, then
    keeps its leading configurations (``k`` particles or ``g - k`` holes in
    the level, the charge made up in the nearest levels) instead of being
    cut to 0 below ``10^-digits``.
    """
    fermi, _ = _fermi_shell(spectrum, n)
    shells = _shells(spectrum, top)
    e_p, g_p = shells[fermi]
    below = shells[:fermi]
    above = shells[fermi + 1:]
    n_p = n - sum(g for _e, g in below)
    beta_f = float(spectrum.unit / temperature)
    t_fug, _log_f = _fugacity(below, above, e_p, g_p, n_p, beta_f)
    # Cut-offs at 15/16 of β (room for the moment bounds at β - δ); the
    # relaxed sum F exceeds Z by about the charge width (log_f - ln Z <~ 10).
    budget = (digits + 8 + extra) * math.log(10) + math.log(n + 1) + 12
    # p - h = n_P - m lies in [n_P - g_P, n_P]: h <= p + g_P - n_P and p <= h + n_P.
    cap_p = n if spectrum.ladder is not None else min(n, sum(g for _e, g in above))
    cap_h = min(sum(g for _e, g in below), cap_p + g_p - n_p)
    hmax, r_h = _degree(below, e_p, beta_f * 15 / 16, -t_fug, budget, cap_h)
    pmax, r_p = _degree(above, e_p, beta_f * 15 / 16, t_fug, budget, cap_p)
    law_g = next((g for e, g in shells if e == law_energy), 0)
    # At least two holes and two particles, however cold: the energy moments are then led by the
    # excitations kept (e^{-βΔ}), and the neglected ones weigh e^{-2βΔ} against them, so the bounds
    # are relative even where every excitation is far below 10^-digits of Z.
    hmax, pmax = max(hmax, min(cap_h, 2)), max(pmax, min(cap_p, 2))
    hmax, pmax = min(cap_h, hmax + law_g), min(cap_p, pmax + law_g)
    # Per-level cut-offs: at most cut[e] holes/particles in one level (the nearest level on each
    # side of the Fermi shell keeps two, as above).
    cut = {}
    nearest = {levels[i][0] for levels, i in ((below, -1), (above, 0)) if levels}
    for levels, sign, cap in ((below, -t_fug, hmax), (above, t_fug, pmax)):
        for e, g in levels:
            log_z = math.log(g) + sign - beta_f * 15 / 16 * abs(e - e_p)
            z = math.exp(min(log_z, 700.0))
            k = 0
            while k < min(g, cap) and (k + 1) * log_z - math.lgamma(k + 2) + z > -budget:
                k += 1
            if e in nearest:
                k = max(k, min(g, cap, 2))
            cut[e] = min(g, cap) if e == law_energy else k
    if law_g:
        # Room for the law's charge shift of up to g: the levels nearest the
        # Fermi shell, outwards, until they hold g more holes (particles).
        for levels, cap in ((below[::-1], hmax), (above, pmax)):
            room = 0
            for e, g in levels:
                if room >= law_g:
                    break
                cut[e] = min(g, cap, cut[e] + law_g)
                room += g
    return _Plan(shells, e_p, g_p, n_p, below, above, t_fug, hmax, r_h, pmax, r_p, cap_h, cap_p, cut)


def _operations(spectrum: Spectrum, plan: _Plan, report: int, law_energy: Optional[int]):
    """``(short, full, balls, logs, held)``: the work of one :func:`_at` with *plan*, counted for :func:`fermion_cost`.

    *short*: coefficient products (``a c`` for lengths ``a`` and ``c``) of
    the ball-polynomial products by one level's short factor, seven per
    level (:func:`_mul3`'s six and the suffix's one).  *full*: the products
    of two long polynomials (each listed level's, the Fermi shell's, the
    law's), each counted as ``L^1.12`` for length ``L`` (FLINT multiplies
    them by blocks; the exponent is fitted).  *balls*: the Python-level
    ball operations of the dot products and of the factors' coefficients.
    *logs*: logarithms and
    exponentials of the truncation bound (fifteen evaluations of about five
    per level).  *held*: the coefficients of the prefix and suffix products.
    """
    hlen, plen = plan.hmax + 1, plan.pmax + 1
    g_p = plan.g_p
    ladder = spectrum.ladder is not None
    listed = {spectrum.energies[i] if not ladder else spectrum.ladder.energy(i) for i in range(report)}
    short = balls = held = 0
    for levels, length in ((plan.below, hlen), (plan.above, plen)):
        acc = 1
        for e, _g in levels:
            c = min(length, plan.cut[e] + 1)
            short += 7 * acc * c
            balls += 6 * c  # the factor's coefficients, built one by one (_factor)
            held += 2 * acc + 3 * c
            acc = min(length, acc + c - 1)
    lengths = [plen] * 5 + [hlen]  # S = P G, SP, AG (by the Fermi shell's g_P + 1 terms)
    balls += 8 * (hlen + plen + g_p)  # Z, M1, M2, the Fermi shell, e_side, the particles above
    for levels, length, every in ((plan.below, hlen, ladder), (plan.above, plen, False)):
        for e, _g in levels:
            if every or e in listed:
                lengths.append(length)
                balls += length + 6 * min(length, plan.cut[e] + 1)
    if law_energy is not None:
        if law_energy == plan.e_p:
            balls += (g_p + 1) * (hlen + plen)
        else:
            lengths.append(hlen if law_energy < plan.e_p else plen)
            balls += (min(plan.cut.get(law_energy, 0), hlen + plen) + 1) * (hlen + plen)
    logs = 75 * (len(plan.below) + len(plan.above) + 1)
    return short, sum(length ** 1.12 for length in lengths), balls, logs, held


# --------------------------------------------------------------------------
# One temperature
# --------------------------------------------------------------------------
def _at(spectrum: Spectrum, n: int, temperature: Fraction, digits: int, report: int, prec: int, top: int,
        extra: int = 0, law_energy: Optional[int] = None):
    """Everything at one temperature with ladder rungs through *top*: ``(point or None, widen the cut-offs?)``."""
    ctx.prec = prec
    unit = spectrum.unit
    plan = _plan(spectrum, n, temperature, digits, top, extra, law_energy)
    shells, e_p, g_p, n_p, below, above = plan.shells, plan.e_p, plan.g_p, plan.n_p, plan.below, plan.above
    hmax, r_h, pmax, r_p, cap_h, cap_p, cut = plan.hmax, plan.r_h, plan.pmax, plan.r_p, plan.cap_h, plan.cap_p, plan.cut
    b = _frac(unit / temperature)  # inverse temperature per energy unit
    fug = _frac(Fraction(plan.t_fug).limit_denominator(1 << 30)).exp()
    hlen, plen = hmax + 1, pmax + 1
    one = (arb_poly([1]), arb_poly([0]), arb_poly([0]))
    hole_factors = [_factor(g, (-(b * (e_p - e))).exp(), e_p - e, min(hlen, cut[e] + 1)) for e, g in below]
    part_factors = [_factor(g, (-(b * (e - e_p))).exp(), e - e_p, min(plen, cut[e] + 1)) for e, g in above]

    def product(factors, length):
        acc = one
        prefixes = [one[0]]
        for f in factors:
            acc = _mul3(acc, f, length)
            prefixes.append(acc[0])
        return acc, prefixes

    def suffixes(factors, length):
        acc = arb_poly([1])
        out = [acc]
        for f in reversed(factors):
            acc = _trunc(acc * f[0], length)
            out.append(acc)
        return out[::-1]  # out[i] = product of factors i..end

    H, h_pre = product(hole_factors, hlen)
    P, p_pre = product(part_factors, plen)
    h_suf = suffixes(hole_factors, hlen)
    p_suf = suffixes(part_factors, plen)
    G = arb_poly([math.comb(g_p, k) for k in range(g_p + 1)])
    S = tuple(x * G for x in P)

    Z = _shifted_dot(H[0], S[0], n_p)
    M1 = _shifted_dot(H[1], S[0], n_p) + _shifted_dot(H[0], S[1], n_p)
    M2 = _shifted_dot(H[2], S[0], n_p) + 2 * _shifted_dot(H[1], S[1], n_p) + _shifted_dot(H[0], S[2], n_p)

    # Per-state occupation probability of the listed shells (and, on a
    # ladder, of the unlisted ones below P, few); the unlisted rungs above P
    # are summed at once below (two full products per shell otherwise).
    listed = {spectrum.energies[i] if spectrum.ladder is None else spectrum.ladder.energy(i) for i in range(report)}
    per_state: Dict[int, arb] = {}
    for i, (e, g) in enumerate(below):
        if e not in listed and spectrum.ladder is None:
            continue
        y = (-(b * (e_p - e))).exp()
        rest = _factor(g - 1, y, 0, min(hlen, cut[e] + 1))[0] if g > 1 else arb_poly([1])
        without = _trunc(_trunc(h_pre[i] * rest, hlen) * h_suf[i + 1], hlen)
        per_state[e] = _shifted_dot(without, S[0], n_p) / Z
    g_minus = arb_poly([math.comb(g_p - 1, k) for k in range(g_p)])
    SP = P[0] * g_minus
    per_state[e_p] = _shifted_dot(H[0], SP, n_p - 1) / Z
    e_side = None
    if above:
        # e_p' = Σ_h H_h G_{n_P + h - p}: the hole side with the Fermi shell, as a polynomial in p.
        s_b = H[0].length() - 1
        h_rev = arb_poly([_coeff(H[0], s_b - i) for i in range(s_b + 1)])
        AG = h_rev * G
        # e_p = AG[s_b + n_p - p]
        e_side = arb_poly([_coeff(AG, s_b + n_p - p) for p in range(plen)])
        for i, (e, g) in enumerate(above):
            if e not in listed:
                continue
            y = (-(b * (e - e_p))).exp()
            rest = _factor(g - 1, y, 0, min(plen, cut[e] + 1))[0] if g > 1 else arb_poly([1])
            without = _trunc(_trunc(p_pre[i] * rest, plen) * p_suf[i + 1], plen)
            per_state[e] = y * _shifted_dot(without, e_side, 1) / Z

    # The law of one level: its configurations restricted to k particles (holes below P).
    law_sums: Dict[int, arb] = {}
    if law_energy is not None:
        if law_energy < e_p:
            i = next(j for j, (e, _g) in enumerate(below) if e == law_energy)
            g = below[i][1]
            y = (-(b * (e_p - law_energy))).exp()
            without = _trunc(h_pre[i] * h_suf[i + 1], hlen)
            for h, term in enumerate(_level_terms(g, y, without, S[0], n_p, min(g, cut[law_energy], hmax))):
                law_sums[g - h] = term  # h holes: g - h particles in the level
        elif law_energy == e_p:
            for m in range(g_p + 1):
                law_sums[m] = math.comb(g_p, m) * _shifted_dot(H[0], P[0], n_p - m)
        else:
            i = next(j for j, (e, _g) in enumerate(above) if e == law_energy)
            g = above[i][1]
            y = (-(b * (law_energy - e_p))).exp()
            without = _trunc(p_pre[i] * p_suf[i + 1], plen)
            for k, term in enumerate(_level_terms(g, y, without, e_side, 0, min(g, cut[law_energy], pmax))):
                law_sums[k] = term

    # Truncation: configurations using rungs above `top`, more than `hmax`
    # holes or more than `pmax` particles (see the module docstring).
    zero = mpmath.mpf(0)
    ladder = spectrum.ladder is not None
    full_h = hmax >= cap_h
    full_p = pmax >= cap_p
    full_levels = all(cut[e] >= min(g, hmax) for e, g in below) and all(cut[e] >= min(g, pmax) for e, g in above)

    def weight(bb: arb) -> mpmath.mpf:
        tau = _ladder_tail(spectrum, top, e_p, bb) if ladder else arb(0)
        if not tau.is_finite():
            return mpmath.inf
        # Relaxed sums at fugacity `fug` (see _fugacity): every config weight
        # times fug^charge, charge 0 for the configurations counted in Z.
        log_h1 = _log_product(below, bb, e_p, 1 / fug)
        log_p1 = _log_product(above, bb, e_p, fug)
        log_g = g_p * (1 + fug).log() - n_p * fug.log()
        total = (log_h1 + log_p1 + log_g).exp() * (fug * tau).expm1()
        if not full_h:
            rh = _frac(r_h)
            total += (_log_product(below, bb, e_p, rh / fug) - (hmax + 1) * rh.log() + log_p1 + fug * tau
                      + log_g).exp()
        if not full_p:
            rp = _frac(r_p)
            total += (_log_product(above, bb, e_p, rp * fug) + rp * fug * tau - (pmax + 1) * rp.log() + log_h1
                      + log_g).exp()
        # Configurations with more than cut[e] holes/particles in one level:
        # Σ_{k > K} C(g, k) z^k <= (g z)^{K+1} / (K+1)! e^{g z}.
        log_f = log_h1 + log_p1 + log_g + fug * tau
        for levels, scale, side in ((below, 1 / fug, hmax), (above, fug, pmax)):
            for e, g in levels:
                k = cut[e]
                if k >= min(g, side):  # no cut, or covered by the degree cut-off
                    continue
                z = g * scale * (-(bb * abs(e - e_p))).exp()
                total += (log_f + (k + 1) * z.log() - arb(k + 2).lgamma() + z).exp()
        if not total.is_finite():
            return mpmath.inf  # no bound from this shift (an overflow far below the spacing)
        return _upper(total)

    eta = [zero, zero, zero]
    if ladder or not (full_h and full_p and full_levels):
        z_low = _mpf(Z) - _rad(Z)
        if z_low <= 0:
            return None, True
        eta[0] = weight(b) / z_low
        # Shifts δ of the inverse temperature for the Cauchy bounds: fractions of b, and fixed
        # ones (in units of the energy grid) for b far above them, where b/256 would cost e^{bΔ/256}.
        deltas = [b / split for split in (4, 8, 16, 32, 64, 128, 256)]
        b_float = float(unit / temperature)
        deltas += [_frac(Fraction(1, 64) * 4**i) for i in range(7) if Fraction(1, 64) * 4**i < b_float / 256]
        for j in (1, 2):
            best = mpmath.inf
            for delta in deltas:
                c = _upper((arb(j) / (arb(1).exp() * delta)) ** j)  # (j/(e δ))^j
                best = min(best, c * weight(b - delta))
            eta[j] = best / z_low

    with mpmath.workprec(prec + 16):
        u = mpmath.mpf(unit.numerator) / unit.denominator
        T = mpmath.mpf(temperature.numerator) / temperature.denominator
        beta = 1 / T
        e0_units = sum(e * g for e, g in below) + n_p * e_p
        E0 = e0_units * unit
        e0 = mpmath.mpf(E0.numerator) / E0.denominator

        # ln Z from the ground weight C(g_P, n_P) (exact) and the excited weight E = Z - C(g_P, n_P)
        # summed on its own: log1p keeps E's relative accuracy where it is far below 2^-prec (the
        # entropy and free energy far below the first gap), where Z.log() would leave 2^-prec of it.
        ground = math.comb(g_p, n_p)
        excited = arb(0)
        for h in range(1, H[0].length()):
            excited += H[0][h] * _coeff(S[0], h + n_p)
        for p in range(1, P[0].length()):
            if 0 <= n_p - p < G.length():
                excited += P[0][p] * G[n_p - p]
        lnz_exc = arb(ground).log() + (excited / ground).log1p()
        mean_units = M1 / Z
        var_units = M2 / Z - mean_units * mean_units
        zero_var = not below and not above  # a single shell: nothing moves
        if zero_var:
            var_units = arb(0)
        U_exc = _mpf(mean_units) * u
        U_exc_err = (_rad(mean_units) + eta[1] + _upper(mean_units) * eta[0]) * u
        mean_sq = _upper(M2 / Z)
        var_err = _rad(var_units) + eta[2] + mean_sq * eta[0] + 2 * _upper(mean_units) * (
            eta[1] + _upper(mean_units) * eta[0]
        ) + (eta[1] + _upper(mean_units) * eta[0]) ** 2
        C = _mpf(var_units) * u * u * beta * beta
        C_err = var_err * u * u * beta * beta
        lnZ = -beta * e0 + _mpf(lnz_exc)
        lnZ_err = _rad(lnz_exc) + eta[0]
        S = _mpf(lnz_exc) + beta * U_exc
        S_err = lnZ_err + beta * U_exc_err
        F = e0 - T * _mpf(lnz_exc)
        F_err = T * lnZ_err

        occ = []
        occ_err = zero
        for i in range(report):
            e = spectrum.energies[i] if spectrum.ladder is None else spectrum.ladder.energy(i)
            g = spectrum.degeneracies[i] if spectrum.ladder is None else spectrum.ladder.degeneracy(i)
            f = per_state[e]
            occ.append(g * _mpf(f))
            occ_err = max(occ_err, g * (_rad(f) + eta[0]))
        if spectrum.ladder is None:
            above_listed = zero
            if report < len(spectrum.energies):
                # The particles in the unlisted levels: N less the listed ones (absolute errors add).
                kept = arb(n) - sum((g * per_state[e] for e, g in
                                     zip(spectrum.energies[:report], spectrum.degeneracies[:report])), arb(0))
                above_listed = _mpf(kept)
                occ_err = max(occ_err, _rad(kept) + n * eta[0])
        else:
            # Particles in the unlisted shells: those below P and P one by
            # one, those above P as all particles above P (Σ_p p P_p e_p / Z)
            # less the listed ones above P.
            kept = arb(0)
            for e, g in shells[report:]:
                if e <= e_p:
                    kept += g * per_state[e]
            if above:
                p_mean = _shifted_dot(arb_poly([p * _coeff(P[0], p) for p in range(P[0].length())]), e_side, 0) / Z
                kept += p_mean - sum((g * per_state[e] for e, g in above if e in listed), arb(0))
            above_listed = _mpf(kept)
            occ_err = max(occ_err, _rad(kept) + n * eta[0])
        errors = {
            "ln_partition_function": lnZ_err,
            "excitation_energy": U_exc_err,
            "mean_energy": U_exc_err,
            "heat_capacity": C_err,
            "free_energy": F_err,
            "entropy": S_err,
            "occupations": occ_err,
        }
        law = None
        if law_energy is not None:
            g_l = next(g for e, g in shells if e == law_energy) if law_energy <= shells[-1][0] else 0
            law = []
            law_err = zero
            for k in range(min(g_l, n) + 1):
                if k in law_sums:
                    q = law_sums[k] / Z
                    law.append(_mpf(q))
                    law_err = max(law_err, _rad(q))
                else:
                    law.append(zero)
            errors["law"] = law_err + eta[0]
        tol = mpmath.mpf(10) ** -digits
        checks = [(lnZ_err, lnZ), (U_exc_err, U_exc), (C_err, C), (S_err, S)]
        ok = all(err == 0 or err <= tol * abs(val) for err, val in checks)
        ok = ok and occ_err <= tol and errors.get("law", zero) <= tol
        if not ok:
            # Is the truncation alone above half the tolerance?  Then widen the cut-offs.
            mu = _upper(mean_units)
            trunc = [
                (eta[0], lnZ),
                ((eta[1] + mu * eta[0]) * u, U_exc),
                ((eta[2] + mean_sq * eta[0] + 2 * mu * (eta[1] + mu * eta[0]) + (eta[1] + mu * eta[0]) ** 2)
                 * u * u * beta * beta, C),
            ]
            widen = any(err > tol / 2 * abs(val) for err, val in trunc) or n * eta[0] > tol / 2
            return None, widen
        # The values are returned at the working precision (no rounding to
        # `digits`); the bounds take one more unit of 2^-prec for the mpmath
        # steps after the balls.
        ulp = mpmath.mpf(2) ** -prec
        values = {
            "ln_partition_function": lnZ, "excitation_energy": U_exc, "mean_energy": e0 + U_exc,
            "heat_capacity": C, "free_energy": F, "entropy": S,
        }
        errors = {k: v + abs(values.get(k, 0)) * ulp for k, v in errors.items()}
        errors["occupations"] = occ_err + n * ulp
        if law is not None:
            errors["law"] += ulp
        point = FermionPoint(
            temperature,
            digits,
            E0,
            lnZ,
            U_exc,
            e0 + U_exc,
            C,
            F,
            S,
            tuple(occ),
            above_listed,
            errors,
            None if law is None else tuple(law),
        )
        return point, False


def _first_top(spectrum: Spectrum, fermi: int, temperature: Fraction, digits: int, extra: int) -> int:
    """A ladder cut-off: rungs above the Fermi shell until ``e^{-β Δ}`` is far below ``10^-digits``."""
    lad = spectrum.ladder
    beta_step = float(lad.spacing * spectrum.unit / temperature)
    need = (digits + 10 + extra) * math.log(10) + 2 * math.log(fermi + 2) * lad.dimension
    return fermi + 2 + int(math.ceil(need / beta_step))


def _setup(spectrum: Spectrum, n: int, levels, law_level) -> Tuple[int, int, Optional[int]]:
    """``(Fermi shell index, levels reported, energy of the law's level or None)`` for *n* >= 1 fermions."""
    fermi, _ = _fermi_shell(spectrum, n)
    if spectrum.ladder is None:
        report = len(spectrum.energies) if levels is None else as_count(levels, "levels", 1)
        if report > len(spectrum.energies):
            raise InvalidParameters(
                f"the spectrum lists {len(spectrum.energies)} levels; ask for at most that many"
            )
    else:
        report = fermi + 3 if levels is None else as_count(levels, "levels", 1)
    law_energy = None
    if law_level is not None:
        index = as_count(law_level, "level", 0)
        if spectrum.ladder is None:
            if index >= len(spectrum.energies) or spectrum.energies.count(spectrum.energies[index]) > 1:
                raise InvalidParameters(
                    f"level {index} is not a listed level of its own energy; the particle-hole law needs one",
                    parameters=["level"],
                )
            law_energy = spectrum.energies[index]
        else:
            law_energy = spectrum.ladder.energy(index)
            report = max(report, index + 1)
    return fermi, report, law_energy


def _first_prec(digits: int, n: int) -> int:
    """The working precision of the first attempt (bits)."""
    return math.ceil(digits * math.log2(10)) + GUARD_BITS + 2 * (n + 1).bit_length()


def _arguments(spectrum, particles, temperatures, digits):
    """``(spectrum, N, digits, temperatures)`` checked: a :class:`~.spectra.System` must be FD and brings its N."""
    if isinstance(spectrum, System):
        if spectrum.rule is not Rule.FD:
            raise InvalidParameters("the particle-hole expansion is for fermions (rule FD)")
        if particles is None:
            particles = spectrum.particles
        spectrum = spectrum.spectrum
    if particles is None:
        raise InvalidParameters("give the number of particles")
    n = as_count(particles, "particles")
    digits = parse_digits(digits)
    temps = [parse_temperature(t) for t in temperatures]
    if spectrum.ladder is None:
        states = spectrum.states()
        if n > states:
            raise InvalidParameters(
                f"{n} fermions do not fit in the {states} single-particle states; "
                "lower the number of particles or add levels"
            )
    return spectrum, n, digits, temps


def _what(n: int, temps: List[Fraction], digits: int) -> str:
    at = f"T = {temperature_text(temps[0])}" if len(temps) == 1 else f"{len(temps)} temperatures"
    return f"the particle-hole sums of {n} fermions at {at} to {digits} digits"


#: CPU seconds at 1000 bits of: a coefficient product of a short ball-polynomial
#: product, a unit of a full product (``L^1.12`` for length ``L``), a
#: logarithm or exponential of a ball, a Python-level ball operation; the
#: precision factors and the exponents are in :func:`_attempt_cost` (fitted to
#: the CPU times in :func:`fermion_cost`, times 1.55 for an upper bound).
_SHORT_SECONDS = 152e-9
_FULL_SECONDS = 12.1e-6
_LOG_SECONDS = 12.3e-6
_BALL_SECONDS = 1.7e-6


def _attempt_cost(spectrum: Spectrum, plan: _Plan, report: int, law_energy: Optional[int], prec: int) -> Cost:
    """The cost of one :func:`_at` with *plan* at *prec* bits (see :func:`fermion_cost`)."""
    short, full, balls, logs, held = _operations(spectrum, plan, report, law_energy)
    products = (short * _SHORT_SECONDS + full * _FULL_SECONDS) * ((prec + 250) / 1250) ** 1.6
    python = (logs * _LOG_SECONDS + balls * _BALL_SECONDS) * ((prec + 1240) / 2240) ** 2.1
    return Cost(seconds=products + python, memory=int(1.5 * held * (prec // 8 + 64)) + 8 * 10**6)


def fermion_cost(spectrum, particles=None, temperatures: Iterable = (), digits: int = 15,
                 levels: Optional[int] = None, law_level: Optional[int] = None) -> Cost:
    """Return the estimated cost of :func:`fermion_canonical` with the same arguments.

    Parameters
    ----------
    spectrum, particles, temperatures, digits, levels, law_level
        As for :func:`fermion_canonical`.

    Returns
    -------
    Cost
        CPU seconds summed over the temperatures, the largest memory of one.

    Notes
    -----
    Each temperature's shells and cut-offs are chosen as the computation
    chooses them (:func:`_plan`, floating point, ``O(L k)`` for ``L`` levels
    and ``k`` trial degrees: milliseconds), then its work is counted
    (:func:`_operations`) and priced at the working precision ``p``
    (``digits log2 10`` plus guard bits), which is what makes the estimate
    follow ``digits``: the coefficient products of the short and the full
    ball-polynomial products times ``((p + 250)/1250)^1.6``, the
    logarithms and Python-level ball operations of the bounds and dot
    products times ``((p + 1240)/2240)^2.1`` (Arb's multiplication,
    ``exp`` and ``log`` slow down faster than linearly in ``p``).  The
    constants were fitted by least squares in logarithms to 60 runs (the 3D
    trap, ``N`` = 100 to 3000, ``T`` = 0.1 to 3, 15 to 1000 digits, 5 ms to
    26 s) and raised by 1.55, so that the estimate lies between 0.93 and 2
    times the CPU time of every run above 0.5 s.  Memory: the prefix and
    suffix products held, ``1.5 (p/8 + 64)`` bytes a coefficient, plus
    8 MB.  The first attempt only: a second one (a doubled precision or
    wider cut-offs) was not needed in any of the runs.

    Measured (the 3D trap, ``law_level=0`` as the command line asks; CPU
    time and peak RSS above the start, 2 cores under a load of 2-4;
    ``N, T, digits``: measured, estimate): 969, 0.1, 600: 1.07 s, 30 MB
    (1.47 s, 55 MB); 969, 0.3, 300: 0.70 s, 31 MB (1.14 s, 62 MB); 969,
    0.3, 600: 4.3 s, 143 MB (7.1 s, 269 MB); 969, 1, 300: 3.3 s, 172 MB
    (5.9 s, 324 MB); 969, 1, 600: 26 s, 764 MB (34.5 s, 1.35 GB); 969, 3,
    300: 14.2 s, 736 MB (23.6 s, 1.28 GB); 3000, 1, 300: 4.8 s (9.4 s).
    Before the estimate existed the route was not priced at all (969, 0.3,
    300 digits ran 13 s before the per-rung occupations were dropped).

    Examples
    --------
    >>> from enumerator.algorithms.levels.spectra import harmonic_trap
    >>> low, high = (fermion_cost(harmonic_trap(), 969, ["0.3"], d) for d in (15, 300))
    >>> low.seconds < high.seconds and low.memory < high.memory
    True
    """
    spectrum, n, digits, temps = _arguments(spectrum, particles, temperatures, digits)
    if n == 0:
        return Cost()
    fermi, report, law_energy = _setup(spectrum, n, levels, law_level)
    prec = _first_prec(digits, n)
    total = Cost()
    for t in temps:
        top = fermi if spectrum.ladder is None else max(_first_top(spectrum, fermi, t, digits, 0), report - 1)
        total = total + _attempt_cost(spectrum, _plan(spectrum, n, t, digits, top, 0, law_energy), report, law_energy,
                                      prec)
    return total


def fermion_canonical(
    spectrum,
    particles=None,
    temperatures: Iterable = (),
    digits: int = 15,
    levels: Optional[int] = None,
    law_level: Optional[int] = None,
) -> List[FermionPoint]:
    """Return the canonical ensemble of *particles* fermions on *spectrum* at each temperature.

    Parameters
    ----------
    spectrum : Spectrum or System
        The single-particle levels (a finite spectrum or an infinite ladder);
        an FD :class:`~.spectra.System` brings its own particle number.
    particles : int, optional
        ``N`` (required with a :class:`~.spectra.Spectrum`).
    temperatures : iterable
        Positive ``k_B T`` values in the energy unit (ints, fractions,
        decimal strings or floats, the float's exact value).
    digits : int
        Decimal digits wanted, at least 5 (default 15): relative for
        ``ln Z``, ``U - E_0``, ``C`` and ``S``, absolute per state for the
        occupations.
    levels : int, optional
        How many listed levels (ladder rungs) to report occupations for.
        Default: every listed level of a finite spectrum; for a ladder the
        rungs through the Fermi shell and two above it.
    law_level : int, optional
        Also the law ``P(n_l = k)`` of this listed level (ladder rung), from
        the same sums restricted to ``k`` particles in it (``k`` holes below
        the Fermi shell): ``C(g, h) y^h Σ_{h'} W_{h'} S_{h'+h+n_P}`` with ``W``
        the hole polynomial without the level, and likewise above it; each
        probability within ``10^-digits`` absolute (ball radius plus the
        truncation bound).  The cut-offs make room for the level's whole
        range (:func:`_plan`), so a probability far below ``10^-digits`` keeps
        its leading configurations and its relative digits (checked against
        the recursion, not bounded) instead of being cut to 0.  Its energy must not be shared with another
        listed level.

    Returns
    -------
    list of FermionPoint
        One per temperature, each with its rigorous error bounds.

    Raises
    ------
    InvalidParameters
        More fermions than states, a non-positive temperature, a system that
        is not FD, more report levels than a finite spectrum lists.
    TooLarge
        The bounds are not met within a few doublings of the precision.

    Notes
    -----
    The particle–hole expansion of ``Z_N`` about the ground state (holes
    below the Fermi shell, particles above it, the Fermi shell's states
    counted exactly; the canonical constraint fixes the particle number), a
    sum of positive terms; see the module docstring for the formula, the
    bound and the cost (about ``10 L`` ball-polynomial products for ``L``
    levels used).  The expansion about the filled Fermi sea is the standard
    one of the canonical ideal Fermi gas (e.g. K. Schönhammer,
    *Thermodynamics and occupation numbers of a Fermi gas in the canonical
    ensemble*, Am. J. Phys. 68, 1032 (2000), from memory); the arithmetic is
    Arb's ball arithmetic (F. Johansson, IEEE Trans. Comput. 66, 2017).  The
    Borrmann–Franke recursion (:func:`.ensembles.canonical`) gives the same
    numbers where it finishes (tests/test_particle_hole.py).

    Examples
    --------
    >>> from enumerator.algorithms.levels.spectra import harmonic_trap
    >>> p, = fermion_canonical(harmonic_trap(), 4, ["1/2"], digits=10)
    >>> p.ground_energy, mpmath.nstr(p.excitation_energy_approx, 10)
    (Fraction(3, 1), '1.576578391')
    >>> mpmath.nstr(sum(p.occupations_approx) + p.occupation_above_approx, 12)
    '4.0'
    """
    spectrum, n, digits, temps = _arguments(spectrum, particles, temperatures, digits)
    if n == 0:
        return [_empty(spectrum, t, digits, levels) for t in temps]
    fermi, report, law_energy = _setup(spectrum, n, levels, law_level)
    check(fermion_cost(spectrum, n, temps, digits, levels, law_level), _what(n, temps, digits),
          advice="lower digits= (or the temperature)", parameters=["digits", "temperatures"])
    points = []
    for t in temps:
        prec = _first_prec(digits, n)
        extra = 0
        saved = ctx.prec
        try:
            for _attempt in range(_MAX_ATTEMPTS):
                top = fermi
                if spectrum.ladder is not None:
                    top = max(_first_top(spectrum, fermi, t, digits, extra), report - 1)
                point, widen = _at(spectrum, n, t, digits, report, prec, top, extra, law_energy)
                if point is not None:
                    points.append(point)
                    break
                # Not met: either the truncation (widen the cut-offs) or the rounding (more bits).
                if widen:
                    extra += 10
                else:
                    prec = 2 * prec
            else:
                raise TooLarge(
                    f"the particle-hole sums at T = {temperature_text(t)} did not meet {digits} digits; "
                    "lower digits= or raise the temperature",
                    parameters=["digits", "temperatures"],
                )
        finally:
            ctx.prec = saved
    return points


def _empty(spectrum: Spectrum, temperature: Fraction, digits: int, levels) -> FermionPoint:
    count = len(spectrum.energies) if levels is None else as_count(levels, "levels", 1)
    zero = mpmath.mpf(0)
    errors = dict.fromkeys(
        ("ln_partition_function", "excitation_energy", "mean_energy", "heat_capacity",
         "free_energy", "entropy", "occupations"), zero)
    return FermionPoint(temperature, digits, Fraction(0), zero, zero, zero, zero, zero, zero,
                        (zero,) * count, zero, errors)
