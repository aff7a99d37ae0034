r"""Canonical bosons at scale: the Borrmann–Franke recursion in double precision with rigorous bounds.

:func:`canonical_float` computes ``ln Z``, ``U``, ``C``, ``S``, the level
occupations and the ground-level variance of ideal bosons (BE without a
capacity) from the recursion written as a mixture of positive terms, in numpy
doubles, and bounds every rounding a posteriori (Higham's ``γ_h`` for
numpy's pairwise sums, :func:`pairwise_depth`); the per-cycle kernels come
from ball arithmetic (python-flint's ``arb``).  :func:`float_cost` is its
planner estimate and :func:`float_meets` says whether the bounds meet a
number of digits.  :mod:`.ensembles` decides when the route pays.

Units: energies and temperatures share the user's energy unit, with
Boltzmann's constant ``k_B = 1``.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Dict, List, Sequence

import mpmath

from ...core.errors import TooLarge
from ...core.limits import Cost, check
from .spectra import Spectrum, System, temperature_text

#: Unit roundoff of IEEE double precision.
_U53 = 2.0**-53

#: Absolute slack added to every bound of the float route: it covers the values that fall below the
#: normal range of doubles (each then errs by at most ``2^-1000`` absolutely, far below any result).
_FLOAT_TINY = 2.0**-900

#: Most digits the float route is tried for on route ``"auto"`` (its bounds are never below ``N u``).
FLOAT_MAX_DIGITS = 12


def _gamma(j: int) -> float:
    """Higham's ``γ_j = j u / (1 - j u)`` for double precision."""
    return j * _U53 / (1 - j * _U53)


@functools.lru_cache(maxsize=None)
def pairwise_depth(n: int) -> int:
    """The most roundings a term goes through in numpy's summation of *n* contiguous float64 values.

    Parameters
    ----------
    n : int
        Number of terms.

    Returns
    -------
    int
        ``h`` such that the computed sum is ``Σ x_i (1 + θ_i)`` with ``|θ_i| <= γ_h``.

    Notes
    -----
    ``numpy.add.reduce`` over a contiguous axis of float64 sums by
    ``DOUBLE_pairwise_sum`` (numpy/_core/src/umath/loops_utils.h.src):
    fewer than 8 terms one after another; up to 128 terms in 8 interleaved
    accumulators of ``n // 8`` terms each, joined by a balanced tree of depth
    3, the ``n % 8`` remaining terms added after; more than 128 terms split
    at ``n // 2`` rounded down to a multiple of 8, the halves summed
    recursively and added.  A term passing through ``h`` rounded additions
    errs by at most ``γ_h`` relative (N. J. Higham, *Accuracy and Stability
    of Numerical Algorithms*, 2nd ed., 2002, Lemma 3.1 and § 4.2).
    tests/test_levels_float_bound.py replays this tree and checks it
    against numpy bit for bit.  Cost ``O(log n)``.

    Examples
    --------
    >>> pairwise_depth(7), pairwise_depth(128), pairwise_depth(10_000)
    (6, 18, 19)
    """
    if n < 8:
        return max(n - 1, 0)
    if n <= 128:
        return n // 8 - 1 + 3 + n % 8
    half = n // 2
    half -= half % 8
    return 1 + max(pairwise_depth(half), pairwise_depth(n - half))


@dataclass(frozen=True)
class _Kernels:
    """Per-cycle kernels of the float route, index ``k = 0..N`` (index 0 unused), and their relative errors."""

    a: object  # z_k = Z_1(kβ)
    mean: object  # rows: k <e>_k, k π_k   (means of the two observables over a k-cycle)
    var: object  # rows: k^2 Var_k(e), k^2 π_k (1 - π_k)
    powers: object  # rows: y_i^k of the listed levels
    eps_a: float
    eps_mean: object  # per row
    eps_var: object  # per row
    eps_powers: float


def _arb_to_float(values, eps_floor: float):
    """Doubles of a list of arb balls and one relative error bound for all of them.

    Rounding to double costs at most ``2u`` (any rounding direction); a ball's
    own radius adds ``2^-rel_accuracy_bits``.  Values below ``2^-1000`` (and
    exact zeros) are left to :data:`_FLOAT_TINY`; a ball too wide to give 60
    bits makes the bound 1 (useless, so never chosen automatically).
    """
    out = []
    worst = 0.0
    tiny = 2.0**-1000
    for x in values:
        f = float(x.mid())
        out.append(f)
        if x.is_zero():
            continue
        if abs(f) < tiny:
            if float(x.rad()) > tiny:  # a ball about zero wider than the slack: no bound
                worst = 1.0
            continue
        bits = x.rel_accuracy_bits()
        if bits < 60:
            worst = 1.0
        else:
            worst = max(worst, 2.0 ** -bits)
    return out, eps_floor + worst


def _float_kernels(spectrum: Spectrum, b: Fraction, n: int, count: int) -> _Kernels:
    """The kernels of :func:`canonical_float` in ball arithmetic (128 bits), rounded to doubles.

    Energies are in units above the lowest level; ``y = e^{-b e}``.  Per
    cycle length ``k``: ``z_k = Σ g y^k``; the energy of a ``k``-cycle (``k``
    particles in one state at ``kβ``) has mean ``k <e>_k`` and variance
    ``k^2 Var_k(e)`` under the weights ``g y^k / z_k``; its count on listed
    level 0 is ``k`` with probability ``π_k = g_0 y_0^k / z_k``.  A ladder
    uses ``z_k = (1 - q^k)^{-d}``, ``<e>_k = d s r_k``, ``Var_k = d s^2
    r_k (1 + r_k)``, ``r_k = q^k / (1 - q^k)``, ``q = e^{-b s}``; a finite
    spectrum sums its levels (``Var_k`` as a sum of squares about the mean,
    ``1 - π_k`` as the sum over the other levels: no cancellation).  Cost
    ``O(N)`` ball operations for a ladder, ``O(N L)`` for ``L`` levels.
    """
    import numpy as np
    from flint import arb, ctx

    saved = ctx.prec
    ctx.prec = 128
    try:
        def frac(q: Fraction):
            return arb(q.numerator) / arb(q.denominator)

        a, m0, m1, v0, v1 = ([arb(0)] for _ in range(5))
        shift = spectrum.lowest
        if spectrum.ladder is not None:
            lad = spectrum.ladder
            d, s = lad.dimension, lad.spacing
            q = (-frac(b * s)).exp()
            qk = arb(1)
            for k in range(1, n + 1):
                qk = qk * q
                om = 1 - qk
                r = qk / om
                z = (1 / om) ** d
                pi = 1 / z
                a.append(z)
                m0.append(k * d * s * r)
                v0.append(k * k * d * s * s * r * (1 + r))
                m1.append(k * pi)
                rest = sum((math.comb(d, j) * r**j for j in range(2, d + 1)), d * r)  # z_k - 1, positive terms
                v1.append(k * k * pi * rest / z)
            ys = [(-frac(b * s * i)).exp() for i in range(count)]
        else:
            energies = [e - shift for e in spectrum.energies]
            degs = list(spectrum.degeneracies)
            ys = [(-frac(b * e)).exp() for e in energies]
            powers = [arb(1)] * len(energies)
            for k in range(1, n + 1):
                powers = [p * y for p, y in zip(powers, ys)]
                terms = [g * p for g, p in zip(degs, powers)]
                z = sum(terms[1:], terms[0])
                mean = sum((e * t for e, t in zip(energies[1:], terms[1:])), energies[0] * terms[0]) / z
                var = sum(((e - mean) ** 2 * t for e, t in zip(energies, terms)), arb(0)) / z
                rest = sum(terms[1:], arb(0)) / z
                pi = terms[0] / z
                a.append(z)
                m0.append(k * mean)
                v0.append(k * k * var)
                m1.append(k * pi)
                v1.append(k * k * pi * rest)
            ys = ys[:count]
        floor = 2 * _U53
        a_f, eps_a = _arb_to_float(a, floor)
        rows = [_arb_to_float(col, floor) for col in (m0, m1, v0, v1)]
        y_f, eps_y = _arb_to_float(ys, floor)
    finally:
        ctx.prec = saved
    powers_f = np.ones((len(y_f), n + 1))
    for i, y in enumerate(y_f):
        if n:
            powers_f[i, 1:] = np.multiply.accumulate(np.full(n, y))  # y^k by k - 1 roundings
    # y^k from a double within eps_y of y: (1 + eps_y)^k (1 + u)^(k-1), at most (N eps_y + N u) to first order.
    eps_powers = n * (eps_y + _U53) * 1.001
    return _Kernels(
        a=np.array(a_f), mean=np.array([rows[0][0], rows[1][0]]), var=np.array([rows[2][0], rows[3][0]]),
        powers=powers_f, eps_a=eps_a, eps_mean=np.array([rows[0][1], rows[1][1]]),
        eps_var=np.array([rows[2][1], rows[3][1]]), eps_powers=eps_powers,
    )


def float_cost(spectrum: Spectrum, n: int, count: int, temperatures: int = 1) -> Cost:
    """Time and memory of one pass of :func:`canonical_float_many` over *temperatures* temperatures.

    Measured on the 3D trap (scripts/workloads_levels.py): per step the
    Python work of about 40 numpy calls, once per pass; per temperature the
    window's flops (at most ``9 N^2``), the ball-arithmetic kernels
    (``O(N)`` for a ladder, ``O(N L)`` for ``L`` levels) and the powers of
    the listed levels.
    """
    levels = 1 if spectrum.ladder is not None else len(spectrum.energies)
    # measured in passes of 8 (10^4 trap bosons, quiet machine): 0.31 s of recursion a temperature below T_c
    # (window K ~ m), 0.1 s of kernels; 3e-9 N^2 covers the first with room
    per_temperature = 4e-9 * n * n + 1e-5 * n + 3e-6 * n * levels + 1e-7 * n * count
    seconds = 4e-5 * n + temperatures * per_temperature
    return Cost(seconds=seconds, memory=8 * (n + 1) * (temperatures * (30 + count) + 10))


def canonical_float(system: System, temperature: Fraction, count: int):
    r"""Bosons at scale: the canonical recursion in double precision, with rigorous a-posteriori bounds.

    Returns ``(lnZ, U, C, F, S, occupations, extras)`` like :func:`_canonical_at`;
    ``extras["bounds"]`` holds the four bounds reported with the point and
    ``extras["all_bounds"]`` also those of ``S``, ``U - E_0`` and the
    level-0 variance (all relative except ``ln_partition_function``).

    Algorithm.  Energies are measured from the lowest level, so every term
    below is positive.  With ``z_k = Z_1(kβ)`` the BE recursion
    ``n Z_n = Σ_{k=1}^{n} z_k Z_{n-k}`` (P. Borrmann and G. Franke, J. Chem.
    Phys. 98, 2484 (1993)) makes ``p_{n,k} = z_k Z_{n-k} / (n Z_n)`` a
    probability law over ``k`` (the length of the permutation cycle holding
    a given particle; W. Krauth, *Statistical Mechanics: Algorithms and
    Computations*, 2006, § 4.2, from memory).  Differentiating the recursion
    in a field coupled to an additive observable ``O`` (the energy, ``-∂/∂β``;
    the occupation of listed level 0) gives the mixture
    ``O_n = X_k + O_{n-k}`` with the cycle's contribution ``X_k``
    independent of the rest, hence with positive terms only
    ``U_n = U_{n-1} + Σ_k p_{n,k} (μ_k + U_{n-k} - U_{n-1})`` and the law of
    total variance ``V_n = Σ_k p_{n,k} (σ_k + V_{n-k} + c_{n,k}^2)``,
    ``c_{n,k} = μ_k + U_{n-k} - U_n`` (``μ_k``, ``σ_k``: mean and variance of
    ``X_k``, from :func:`_float_kernels`).  So ``C = β^2 V_N`` comes without
    the cancellation of ``⟨E^2⟩ - ⟨E⟩^2`` (which costs a factor
    ``⟨E⟩^2 / Var E``, up to ``3N``).  Each sum is numpy's pairwise sum of an
    elementwise product; ``Z`` is rescaled by exact powers of two.  The
    terms ``z_k Z_{n-k}`` do not increase with ``k`` (``z_k`` falls, ``Z_j``
    grows: a particle added to a lowest state), so once ``(n - K)`` times
    the ``K``-th is below ``2^-80`` of the sum the rest are dropped, that
    share entering the bounds; far above ``T_c`` ``K`` stays small.

    Error bound (first order in ``u = 2^-53``; every first-order quantity is
    checked to be below ``10^-6``, and the bounds are multiplied by 1.01 for
    the rest).  A pairwise sum of ``m`` positive terms errs by ``γ_h`` with
    ``h = pairwise_depth(m)`` (19 for ``m = 10^4``, against ``m - 1`` for a
    dot product in unknown order; Higham 2002, Lemma 3.1 and § 4.2).
    Kernels come from ball arithmetic, within ``2u`` each.  Relative errors
    ``D_n`` of ``Z_n`` follow ``D_n = Σ_k p_{n,k} D_{n-k} + ε_z + γ_h + 3u``
    (computed alongside), so the weights err by ``Φ_n = max D + ε_z + u``;
    since they sum to one, perturbed weights move a mean only through the
    spread: by ``2 Φ_n Σ p |c|`` for ``U`` and ``2 Φ_n Σ p |t - V_n|`` for
    ``V`` (``t`` the terms), both summed alongside.  Absolute errors of
    ``U`` and ``V`` then add up over the steps (weights sum to one): per
    step the roundings (``u U_n + (2 γ_h + 4u)(|U_n - U_{n-1}| + Σ p|c|)``,
    resp. ``γ_{2h+5} V_n``), kernel errors, the weight term, and for ``V``
    the error ``η`` of the ``c``: ``2 η Σ p|c| + 3 η^2``.  Reported:
    ``ln Z`` absolute ``D_N``; ``U``, ``C``, the level-0 variance relative;
    occupations ``g Σ_k y^k Z_{N-k} / Z_N`` relative ``2 max D + γ_h +
    ε_y + 2u`` (``ε_y``: ``y^k`` by repeated products).  Measured for
    ``N = 10^4`` in the 3D trap at ``k_B T = 0.5 .. 40`` spacings: the bound
    on ``C`` between ``10^-10`` and ``2.4·10^-7`` (largest just below
    ``T_c``), on ``⟨δn_0^2⟩`` up to ``6.5·10^-7``, on ``U`` and the
    occupations ``10^-11``; the actual errors against the exact route are
    about ``10^-15`` (tests/test_levels_float_bound.py checks the bounds at
    ``N = 1000``).

    Cost: about 18 vector passes of length ``K <= n`` at step ``n`` (at most
    ``9 N^2`` flops in all, numpy), plus ``O(N)`` ball operations for the
    kernels (``O(N L)`` for a finite spectrum of ``L`` levels) and ``O(N)``
    per listed level; ``N = 10^4``: about 0.8 s per temperature below
    ``T_c``, 0.35 s far above (one core).
    """
    (result,) = canonical_float_many(system, [temperature], count)
    if isinstance(result, TooLarge):
        raise result
    return result


#: Most temperatures one pass of :func:`canonical_float_many` carries: they share the recursion's
#: window, so a pass holds neighbouring temperatures (measured on 10^4 trap bosons: 8 per pass).
BATCH = 8


def canonical_float_many(system: System, temperatures: Sequence[Fraction], count: int) -> List:
    """:func:`canonical_float` at several temperatures, the recursion vectorised across them.

    Parameters
    ----------
    system : System
        Bosons (BE without a capacity).
    temperatures : sequence of Fraction
        Positive ``k_B T`` in the energy unit.
    count : int
        Listed levels whose occupations are reported.

    Returns
    -------
    list
        Per temperature, in the order given, the tuple of
        :func:`canonical_float`, or the :class:`TooLarge` it would raise
        (one-particle sums beyond the double range at that temperature).

    Notes
    -----
    The temperatures are sorted and cut into passes of at most
    :data:`BATCH`; within a pass every numpy operation of a step works on
    all of them at once (arrays ``(T, K)``), with one window ``K`` (the
    largest any of them needs: a longer window only adds terms, and the
    bounds are those of the window used).  Each row of a row-wise
    ``numpy.add.reduce`` is summed by the same pairwise tree as a single
    vector, so the error analysis is unchanged; the Python work of a step
    (about 40 numpy calls) is paid once per pass instead of once per
    temperature.  Cost per pass ``O(N K̄ T)`` flops plus ``O(N)`` numpy
    calls (:func:`float_cost`).
    """
    import numpy as np

    spectrum = system.spectrum
    if count > len(spectrum.energies):
        spectrum = spectrum.through(spectrum.ladder.energy(count - 1))
    n = system.particles
    temperatures = list(temperatures)
    results: List = [None] * len(temperatures)
    order = sorted(range(len(temperatures)), key=lambda i: temperatures[i])
    for start in range(0, len(order), BATCH):
        chunk = order[start:start + BATCH]
        check(float_cost(spectrum, n, count, len(chunk)), f"the floating canonical recursion of {n} bosons",
              parameters=["particles"])
        kernels = []
        for i in chunk:
            temperature = temperatures[i]
            kern = _float_kernels(spectrum, spectrum.unit / temperature, n, count)
            if not all(np.isfinite(x).all() for x in (kern.a, kern.mean, kern.var)):
                results[i] = TooLarge(
                    f"the one-particle sums at T = {temperature_text(temperature)} pass the range of double "
                    "precision, so the float route cannot hold them; use the exact recursion (route recursion)",
                    parameters=["route"],
                )
            else:
                kernels.append((i, kern))
        if kernels:
            state = _float_recursion([k for _, k in kernels], n)
            for row, (i, kern) in enumerate(kernels):
                results[i] = _float_point(spectrum, temperatures[i], n, count, kern, state, row)
    return results


@dataclass
class _RecursionState:
    """The arrays of :func:`_float_recursion`, one row per temperature of a pass."""

    Z: object  # (T, N+1): Z[t, N - j] = Z_j 2^-scale_bits[t]
    D: object  # (T, N+1): relative error bounds of Z
    U: object  # (T, 2, N+1): means of the two observables (energy above the lowest level, n_0)
    V: object  # (T, 2, N+1): their variances
    EU: object  # (T, 2): absolute error bounds of U at N
    EV: object  # (T, 2): absolute error bounds of V at N
    d_max: object  # (T,)
    scale_bits: object  # (T,) int


def _float_recursion(kernels: List[_Kernels], n: int) -> _RecursionState:
    """The recursion of :func:`canonical_float` for a pass of temperatures (see its docstring for the bounds)."""
    import numpy as np

    T = len(kernels)
    u = _U53
    a = np.array([k.a for k in kernels])  # (T, N+1)
    mean = np.array([k.mean for k in kernels])  # (T, 2, N+1)
    var = np.array([k.var for k in kernels])
    mean_max = mean[:, :, 1:].max(axis=2) if n else np.zeros((T, 2))
    var_max = var[:, :, 1:].max(axis=2) if n else np.zeros((T, 2))
    eps_a = np.array([k.eps_a for k in kernels])
    eps_mean = np.array([k.eps_mean for k in kernels])  # (T, 2)
    eps_var = np.array([k.eps_var for k in kernels])
    Zr = np.zeros((T, n + 1))
    Dr = np.zeros((T, n + 1))
    Ur = np.zeros((T, 2, n + 1))
    Vr = np.zeros((T, 2, n + 1))
    Zr[:, n] = 1.0
    W = np.empty((T, n))
    B1, B2, B3 = (np.empty((T, 2, n)) for _ in range(3))
    mul, sub, add, red, absolute = np.multiply, np.subtract, np.add, np.add.reduce, np.abs
    EU, EV, Umax, Vmax = ([[0.0, 0.0] for _ in range(T)] for _ in range(4))
    mean_max, var_max = mean_max.tolist(), var_max.tolist()
    eps_mean, eps_var = eps_mean.tolist(), eps_var.tolist()
    d_max = np.zeros(T)
    scale_bits = np.zeros(T, dtype=np.int64)
    tiny_rel = n * a.max(axis=1) * 2.0**-1070 if n else np.zeros(T)  # products and Z values below the normal range
    tail_tol = 2.0**-80
    K = 0
    for m in range(1, n + 1):
        at = n - m + 1
        # The terms w_k = z_k Z_{m-k} do not increase with k (z_k falls with k, Z_j grows with j:
        # a particle added to a lowest state), so those past K weigh at most (m - K) w_K in all.
        K = min(m, K + 1)
        while True:
            w = mul(a[:, 1:K + 1], Zr[:, at:at + K], out=W[:, :K])
            S = red(w, axis=1)
            tail = (m - K) * w[:, K - 1] * (1 + 1e-6) / S
            if K == m or (tail <= tail_tol).all():
                break
            K = min(m, 2 * K)
        h = pairwise_depth(K)
        g_h, g_2h = _gamma(h), _gamma(2 * h + 5)
        if K == m:
            tail = np.zeros(T)
        d_m = np.einsum("tk,tk->t", w, Dr[:, at:at + K]) / S + eps_a + g_h + 3 * u + tiny_rel + tail
        phi_t = d_max + eps_a + u + tiny_rel
        Zr[:, n - m] = S / m
        Dr[:, n - m] = d_m
        d_max = np.maximum(d_max, d_m)
        u_prev = Ur[:, :, at]
        y = sub(Ur[:, :, at:at + K], u_prev[:, :, None], out=B1[:, :, :K])
        add(y, mean[:, :, 1:K + 1], out=y)
        w3 = w[:, None, :]
        Sc = S[:, None]
        corr = red(mul(y, w3, out=B2[:, :, :K]), axis=2) / Sc
        u_m = u_prev + corr
        c = sub(y, corr[:, :, None], out=y)
        cc = mul(c, c, out=B2[:, :, :K])
        pc = np.einsum("tjk,tk->tj", absolute(c, out=c), w) / Sc
        t = add(var[:, :, 1:K + 1], Vr[:, :, at:at + K], out=B3[:, :, :K])
        add(t, cc, out=t)
        v_m = red(mul(t, w3, out=B2[:, :, :K]), axis=2) / Sc
        spread = np.einsum("tjk,tk->tj", absolute(sub(t, v_m[:, :, None], out=t), out=t), w) / Sc
        Ur[:, :, n - m] = u_m
        Vr[:, :, n - m] = v_m
        # Bounds (absolute, per temperature and observable, in Python floats: cheaper than numpy calls on
        # arrays this small): see canonical_float's docstring.
        rows = zip(corr.tolist(), u_m.tolist(), v_m.tolist(), pc.tolist(), spread.tolist(), phi_t.tolist(),
                   tail.tolist(), EU, EV, Umax, Vmax, mean_max, var_max, eps_mean, eps_var)
        for cr, ur, vr, pcr, spr, phi, d_tail, eur, evr, umr, vmr, mmr, vxr, emr, evr_eps in rows:
            for j in (0, 1):
                uj, vj, pcj, spj = ur[j], vr[j], pcr[j], spr[j]
                step = abs(cr[j])
                reach = umr[j] + mmr[j] + uj  # bounds |x_k - U_m| for every k, the dropped ones included
                rnd = u * (3 * umr[j] + 3 * mmr[j] + step + uj) + emr[j] * mmr[j]
                eu = (eur[j] + u * uj + (2 * g_h + 4 * u) * (step + pcj) + u * mmr[j]
                      + 2 * phi * (pcj + 2 * eur[j] + rnd) + emr[j] * mmr[j] + d_tail * reach + _FLOAT_TINY)
                eur[j] = eu
                umr[j] = max(umr[j], uj)
                eta = 2 * eu + rnd
                c_err = 2 * eta * (pcj + eta) + eta * eta  # Σ p |ĉ^2 - c^2|
                evr[j] += ((g_2h + evr_eps[j]) * vj + 2 * phi * (spj + c_err) + c_err
                           + d_tail * (vj + vxr[j] + vmr[j] + reach * reach) + _FLOAT_TINY)
                vmr[j] = max(vmr[j], vj)
        # Shrink the window for the next step while its second half is negligible for every temperature.
        while K > 16 and ((m - K // 2) * w[:, K // 2 - 1] * (1 + 1e-6) <= tail_tol * S).all():
            K //= 2
        big = Zr[:, n - m] > 2.0**800
        if big.any():
            Zr[big] *= 2.0**-800  # exact, apart from values falling below the normal range
            scale_bits[big] += 800
    return _RecursionState(Zr, Dr, Ur, Vr, np.array(EU), np.array(EV), d_max, scale_bits)


def _float_point(spectrum: Spectrum, temperature: Fraction, n: int, count: int, kern: _Kernels,
                 state: _RecursionState, row: int):
    """One temperature's results and bounds from row *row* of a pass of :func:`_float_recursion`."""
    import numpy as np

    u = _U53
    Zr, Ur, Vr = state.Z[row], state.U[row], state.V[row]
    EU, EV = state.EU[row].tolist(), state.EV[row].tolist()
    d_max = float(state.d_max[row])
    eps_a, eps_mean, eps_var = kern.eps_a, kern.eps_mean.tolist(), kern.eps_var.tolist()
    ZN = Zr[0]
    R = Zr / ZN  # R[j] = Z_{N-j} / Z_N, within 2 max D + u
    d_N = float(state.D[row, 0])
    with mpmath.workdps(20):
        T = mpmath.mpf(temperature.numerator) / temperature.denominator
        unit = mpmath.mpf(spectrum.unit.numerator) / spectrum.unit.denominator
        lnz = mpmath.log(mpmath.mpf(ZN)) + int(state.scale_bits[row]) * mpmath.ln2
        m1 = mpmath.mpf(float(Ur[0, 0]))
        bb = unit / T
        shift_e = n * spectrum.lowest
        lnZ = lnz - bb * shift_e
        U = unit * (m1 + shift_e)
        C = unit * unit * mpmath.mpf(float(Vr[0, 0])) / (T * T)
        h_N = pairwise_depth(n)
        occ_rel = []
        occ = []
        for i in range(count):
            g = spectrum.degeneracies[i]
            value = g * float(np.add.reduce(kern.powers[i, 1:] * R[1:]))
            occ.append(mpmath.mpf(value))
            rel = 2 * d_max + _gamma(h_N + 1) + kern.eps_powers + 3 * u
            occ_rel.append(rel + g * n * _FLOAT_TINY / value if value > 0 else (0.0 if n == 0 else math.inf))
        extras = {"above": n - mpmath.fsum(occ), "ground_variance": None, "excitation": unit * m1}
        if count and n:
            extras["ground_variance"] = mpmath.mpf(float(Vr[1, 0]))

        def rel(err, value):
            return float(err) / abs(float(value)) if value else (0.0 if err == 0 else math.inf)

        safety = 1.01
        trusted = d_max < 1e-6 and all(x < 1e-6 for x in (eps_a, *eps_mean, *eps_var))
        d_lnz = d_N / (1 - d_N) + 1e-19
        d_U = float(unit) * float(EU[0])
        bounds = {
            "ln_partition_function": d_lnz,
            "mean_energy": rel(d_U, U),
            "heat_capacity": rel(EV[0], Vr[0, 0]),
            "occupations": max(occ_rel, default=0.0),
        }
        more = {
            "entropy": rel(d_lnz + d_U / float(T), lnZ + U / T),
            "free_energy": rel(d_lnz, lnZ),
            "excitation_energy": rel(EU[0], Ur[0, 0]),
            "ground_occupation_variance": rel(EV[1], Vr[1, 0]) if count else 0.0,
        }
        scale = safety if trusted else math.inf
        extras["bounds"] = {k: v * scale for k, v in bounds.items()}
        extras["all_bounds"] = {k: v * scale for k, v in {**bounds, **more}.items()}
        return +lnZ, +U, +C, -T * lnZ, lnZ + U / T, tuple(occ), extras


def float_meets(bounds: Dict[str, float], digits: int) -> bool:
    """Whether every bound of a float point (:func:`canonical_float`) is within ``10^-digits``.

    ``ln Z`` is held to ``digits`` significant digits through the free
    energy's relative bound, the rest relative as they stand.
    """
    tol = 10.0 ** -digits
    return all(value <= tol for key, value in bounds.items() if key != "ln_partition_function")
