"""Rendering of ``enumerator levels``: JSON payloads, tables and plots.

The physics is :mod:`enumerator.algorithms.levels`; this module turns its
results into one JSON object (:func:`levels_payload`: exact counts as decimal
strings, floats only in ``*_approx`` fields), rich tables for people
(:func:`show_levels`) or a PNG (:func:`plot_levels`; matplotlib, imported on
use).  ``enumerator contact`` renders through :mod:`enumerator.cli.render_contact`.
"""

from __future__ import annotations

from fractions import Fraction
from typing import Dict, Optional, Sequence

import mpmath

from ..algorithms.levels import CanonicalPoint, MicroPoint, System
from .render import console, exact, float_cell, json_float, pyplot, show_table

__all__ = [
    "levels_payload",
    "plot_levels",
    "show_levels",
]


# --------------------------------------------------------------------------
# Plots (matplotlib, Agg backend)
# --------------------------------------------------------------------------
def plot_levels(path, system: System, counts: Optional[Dict[int, int]], points: Sequence[CanonicalPoint] = (),
                laws: Sequence = ()) -> None:
    """Save a PNG of what was computed, one panel each.

    Parameters
    ----------
    path : str or path-like
        The image file to write.
    system : System
        The system (its label and energy unit).
    counts : dict of int to int or None
        ``{E: Ω(N, E)}`` (energies in units): ``log10 Ω`` against ``E``.
    points : sequence of CanonicalPoint, optional
        Up to six temperatures: the canonical occupations (markers) against the
        grand-canonical formula (lines).  Two or more: ``C(T)``, ``U(T)``,
        ``<N_0>(T)`` and ``δN_0(T)`` (the occupation of level 0 and its
        standard deviation), canonical (markers) against grand canonical (lines).
    laws : sequence of OccupationLaw, optional
        The canonical law ``P(n = k)`` at each temperature.

    Raises
    ------
    Unsupported
        matplotlib is not installed.

    Notes
    -----
    ``log10 Ω`` is plotted (exact counts overflow floats).  Cost: linear in
    the number of energies, temperatures, levels and law entries, plus
    matplotlib's drawing (Agg backend).
    """
    plt = pyplot()
    panels = []
    if counts:
        panels.append("counts")
    if points and len(points) <= 6:
        panels.append("occupations")
    if len(points) >= 2:
        panels += ["C", "U", "N0", "dN0"]
    if laws:
        panels.append("law")
    if not panels:
        panels.append("counts")
    cols = 2 if len(panels) > 1 else 1
    rows = (len(panels) + cols - 1) // cols
    fig, axes = plt.subplots(rows, cols, figsize=(6 * cols, 4.2 * rows), squeeze=False)
    unit = float(system.spectrum.unit)
    temps = [float(p.temperature) for p in points]

    def curve(ax, canonical, grand, ylabel, title):
        ax.plot(temps, canonical, "o-", ms=3, lw=0.8, label="canonical (exact)")
        if grand is not None and all(g is not None for g in grand):
            ax.plot(temps, grand, "-", lw=1.2, label="grand canonical")
        ax.set_xlabel("k_B T (energy unit)")
        ax.set_ylabel(ylabel)
        ax.set_title(title, fontsize=9)
        ax.legend(fontsize=7)

    for ax, panel in zip((a for row in axes for a in row), panels):
        if panel == "counts":
            items = [(e, v) for e, v in (counts or {}).items() if v > 0]
            ax.plot([e * unit for e, _ in items], [float(mpmath.log10(v)) for _, v in items], ".-", ms=3)
            ax.set_xlabel("total energy E")
            ax.set_ylabel("log10 Ω(N, E)")
            ax.set_title(f"Multiplicity: {system.label}", fontsize=9)
        elif panel == "occupations":
            levels = [float(_level_energy(system, i)) for i in range(len(points[0].occupations_approx))]
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
        elif panel == "C":
            curve(ax, [float(p.heat_capacity_approx) for p in points],
                  [_float(p.grand_canonical_heat_capacity_approx) for p in points], "heat capacity C / k_B",
                  f"C(T): {system.label}")
        elif panel == "U":
            curve(ax, [float(p.mean_energy_approx) for p in points],
                  [_float(p.grand_canonical_mean_energy_approx) for p in points], "mean energy U",
                  "U(T)")
        elif panel == "N0":
            curve(ax, [float(p.occupations_approx[0]) if p.occupations_approx else None for p in points],
                  [None if p.grand_canonical_occupations_approx is None else float(p.grand_canonical_occupations_approx[0])
                   for p in points], "<N_0> (level 0)", "<N_0>(T)")
        elif panel == "dN0":
            curve(ax, [_sqrt(p.ground_occupation_variance_approx) for p in points],
                  [_sqrt(p.grand_canonical_ground_variance_approx) for p in points], "δN_0 = sqrt(<δN_0²>)",
                  "δN_0(T): canonical vs grand canonical")
        else:
            for law in laws:
                ks = [k for k, q in enumerate(law.law) if float(q) > 1e-7 * max(float(x) for x in law.law)]
                label = f"T = {float(law.temperature):.4g}"
                if law.factor is not None:
                    label += f" (x = {law.factor})"
                ax.plot(ks, [float(law.law[k]) for k in ks], ".-", ms=3, lw=0.8, label=label)
            ax.set_xlabel(f"occupation k of level {laws[0].level}")
            ax.set_ylabel("P(n = k), canonical")
            ax.set_title("Canonical occupation law", fontsize=9)
            ax.legend(fontsize=7)
    for ax in [a for row in axes for a in row][len(panels):]:
        ax.set_visible(False)
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)


# --------------------------------------------------------------------------
# Reports (what the CLI prints)
# --------------------------------------------------------------------------
def _float(x) -> Optional[float]:
    """*x* as a float, ``None`` kept."""
    return None if x is None else float(x)


def _sqrt(x) -> Optional[float]:
    """The standard deviation of a variance (``None`` kept; rounding noise below 0 read as 0)."""
    return None if x is None else float(mpmath.sqrt(max(x, 0)))


def _level_energy(system: System, i: int) -> Fraction:
    """Exact energy of listed level (ladder rung) *i* in the user's unit."""
    spectrum = system.spectrum
    if i < len(spectrum.energies):
        return spectrum.level_energy(i)
    return spectrum.ladder.energy(i) * spectrum.unit


def _level_degeneracy(system: System, i: int) -> int:
    spectrum = system.spectrum
    if i < len(spectrum.degeneracies):
        return spectrum.degeneracies[i]
    return spectrum.ladder.degeneracy(i)


def _entry(system: System, p: CanonicalPoint, law, factor) -> dict:
    """One object of ``"canonical"``."""
    entry = {
        "temperature": float(p.temperature),
        "mean_energy_approx": json_float(p.mean_energy_approx),
        "heat_capacity_approx": json_float(p.heat_capacity_approx),
        "free_energy_approx": json_float(p.free_energy_approx),
        "entropy_approx": json_float(p.entropy_approx),
        "ln_partition_function_approx": json_float(p.ln_partition_function_approx),
        "energy_variance_approx": json_float(p.energy_variance_approx),
        "ground_energy": None if p.ground_energy is None else exact(p.ground_energy),
        "excitation_energy_approx": json_float(p.excitation_energy_approx),
        "occupation_approx": [json_float(x) for x in p.occupations_approx],
        "occupation_above_approx": json_float(p.occupation_above_approx),
        "ground_occupation_variance_approx": json_float(p.ground_occupation_variance_approx),
        "route": p.route,
    }
    if p.error_bounds is not None:
        entry["error_bound_approx"] = dict(p.error_bounds)
    if factor is not None:
        entry = {"factor": exact(factor), **entry}
    if system.has_reservoir:
        gc = p.grand_canonical_occupations_approx
        diff = p.occupation_differences_approx
        entry.update({
            "grand_canonical_occupation_approx": None if gc is None else [json_float(x) for x in gc],
            "occupation_difference_approx": None if diff is None else [json_float(x) for x in diff],
            "chemical_potential_approx": json_float(p.chemical_potential_approx),
            "grand_canonical_ground_variance_approx": json_float(p.grand_canonical_ground_variance_approx),
            "grand_canonical_mean_energy_approx": json_float(p.grand_canonical_mean_energy_approx),
            "grand_canonical_heat_capacity_approx": json_float(p.grand_canonical_heat_capacity_approx),
        })
    if law is not None:
        entry["occupation_level"] = law.level
        entry["occupation_law_approx"] = {str(k): json_float(q) for k, q in enumerate(law.law)}
        entry["occupation_mean_approx"] = json_float(law.mean)
        entry["occupation_variance_approx"] = json_float(law.variance)
        if law.exact:
            entry["occupation_law"] = {str(k): exact(q) for k, q in enumerate(law.law)}
            entry["occupation_mean"] = exact(law.mean)
            entry["occupation_variance"] = exact(law.variance)
        if system.has_reservoir:
            entry["grand_canonical_occupation_mean_approx"] = json_float(law.grand_canonical_mean_approx)
            entry["grand_canonical_occupation_variance_approx"] = json_float(law.grand_canonical_variance_approx)
    return entry


def levels_payload(
    system: System,
    counts: Optional[Dict[int, int]],
    points: Optional[Sequence[CanonicalPoint]] = None,
    micro: Optional[Sequence[MicroPoint]] = None,
    laws: Optional[Sequence] = None,
    factors: Optional[Sequence] = None,
    omitted: Optional[str] = None,
) -> dict:
    """The JSON object of ``enumerator levels``.

    Parameters
    ----------
    system : System
        Gives the energy unit.
    counts : dict of int to int or None
        ``{E: Ω(N, E)}``, energies in units; ``None`` when not computed (a
        ladder without a maximum energy).
    points : sequence of CanonicalPoint, optional
        Canonical results, one per temperature.
    micro : sequence of MicroPoint, optional
        Microcanonical results, one per energy.
    laws : sequence of OccupationLaw or None, optional
        Beside each point, the occupation law of the level asked for.
    factors : sequence of Fraction or None, optional
        Beside each point, its exact Boltzmann factor (``None``: a temperature).
    omitted : str, optional
        Why the multiplicities were left out (too large for the limits while
        only canonical results were asked): ``"multiplicity_omitted"``.

    Returns
    -------
    dict
        ``{"unit": "p/q", "multiplicity": {"E": "count", ...}}``: every
        energy, key or value, is in the user's energy unit (keys exact,
        ``"1/2"``; ``unit`` is the grid they lie on), exact counts as decimal
        strings; plus ``"canonical"`` (one object per temperature, floats in
        ``*_approx`` fields; with an occupation law its ``"occupation_law_approx"``
        ``{"k": P}``, mean and variance, and with a Boltzmann factor the exact
        ``"occupation_law"`` ``{"k": "p/q"}``, ``"occupation_mean"`` and
        ``"occupation_variance"``; ``"route"`` names the method and the float
        route adds its rigorous ``"error_bound_approx"``; no grand-canonical
        fields for an Einstein solid) and ``"microcanonical"`` when given;
        ``"multiplicity_omitted"`` says why a refused table is missing.

    Notes
    -----
    Cost: linear in the number of energies, temperatures, levels and law entries.
    """
    unit = system.spectrum.unit
    payload = {"unit": exact(unit)}
    if counts is not None:
        payload["multiplicity"] = {exact(e * unit): str(v) for e, v in counts.items()}
    if omitted is not None:
        payload["multiplicity_omitted"] = omitted
    if points is not None:
        laws = list(laws) if laws else [None] * len(points)
        factors = list(factors) if factors else [None] * len(points)
        payload["canonical"] = [_entry(system, p, law, x) for p, law, x in zip(points, laws, factors)]
    if micro is not None:
        payload["microcanonical"] = [
            {
                "energy": exact(m.energy * unit),
                "ln_multiplicity_approx": m.ln_multiplicity_approx,
                "temperature_approx": m.temperature_approx,
            }
            for m in micro
        ]
    return payload


# --------------------------------------------------------------------------
# Tables for people
# --------------------------------------------------------------------------
def show_levels(
    system: System,
    counts: Optional[Dict[int, int]],
    points: Optional[Sequence[CanonicalPoint]],
    micro: Optional[Sequence[MicroPoint]],
    max_energy,
    plot: Optional[str] = None,
    laws: Optional[Sequence] = None,
    factors: Optional[Sequence] = None,
    omitted: Optional[str] = None,
) -> None:
    """Print the multiplicities, the canonical tables and the occupation laws.

    Parameters
    ----------
    system : System
        Its label and energy unit head the tables.
    counts : dict of int to int or None
        ``{E: Ω(N, E)}``, energies in units (``None``: not computed).
    points : sequence of CanonicalPoint or None
        With up to three temperatures, per temperature a table of
        thermodynamic quantities and one of mean level occupations (canonical,
        grand canonical, difference); with more, one row per temperature.
    micro : sequence of MicroPoint or None
        Given, ``ln Ω`` and the microcanonical temperature join the counts.
    max_energy : str or None
        The requested maximum energy, named when no state lies below it.
    plot : str, optional
        The file a plot was written to, named last.
    laws : sequence of OccupationLaw, optional
        Per temperature, the law of one level's occupation.
    factors : sequence of Fraction or None, optional
        The exact Boltzmann factor of each point (``None`` for a temperature).
    omitted : str, optional
        Why the multiplicities were left out, printed first.

    Notes
    -----
    Energies and temperatures in the user's unit (printed); exact counts
    whole (:func:`~enumerator.cli.render.show_table`), approximations to 6
    significant digits.  Cost: linear in the number of energies,
    temperatures, levels and law entries.
    """
    unit = system.spectrum.unit
    out = console()
    if omitted is not None:
        out.print(f"multiplicities left out: {omitted}")
    if counts is not None or micro is not None:
        if micro is not None:
            rows = [[exact(m.energy * unit), exact(m.multiplicity), float_cell(m.ln_multiplicity_approx),
                     float_cell(m.temperature_approx)] for m in micro]
            columns = ["E", "Ω(N, E)", "ln Ω (approx)", "T (approx)"]
        else:
            rows = [[exact(e * unit), exact(v)] for e, v in counts.items()]
            columns = ["E", "Ω(N, E)"]
        if not rows:
            out.print(f"{system.label}: no state has total energy at most {max_energy}.")
        else:
            show_table(f"Multiplicities: {system.label}", columns, rows)
    points = list(points or ())
    factors = list(factors) if factors else [None] * len(points)
    if points:
        out.print()
        spacing = " (the level spacing ħω)" if system.spectrum.ladder is not None or "oscillator" in system.spectrum.name else ""
        out.print(f"Energies and k_B T in the energy unit{spacing}; k_B = 1; {points[0].digits} digits computed.")
    reservoir = system.has_reservoir
    if len(points) > 3:
        columns = ["k_B T", "U", "C", "S", "<n_0>", "<δn_0²>"] + (["<δn_0²> gc"] if reservoir else [])
        rows = []
        for p in points:
            row = [float_cell(p.temperature), float_cell(p.mean_energy_approx), float_cell(p.heat_capacity_approx),
                   float_cell(p.entropy_approx),
                   float_cell(p.occupations_approx[0] if p.occupations_approx else None),
                   float_cell(p.ground_occupation_variance_approx)]
            if reservoir:
                row.append(float_cell(p.grand_canonical_ground_variance_approx))
            rows.append(row)
        show_table(f"Canonical ensemble: {system.label}", columns, rows)
    else:
        for p, x in zip(points, factors):
            out.print()
            at = f"T = {float(p.temperature):g}" + ("" if x is None else f" (Boltzmann factor {x})")
            quantities = [
                ["ln Z", float_cell(p.ln_partition_function_approx)],
                ["mean energy U", float_cell(p.mean_energy_approx)],
                ["U - E_0 (E_0 = ground energy " + ("-" if p.ground_energy is None else exact(p.ground_energy)) + ")",
                 float_cell(p.excitation_energy_approx)],
                ["heat capacity C", float_cell(p.heat_capacity_approx)],
                ["free energy F", float_cell(p.free_energy_approx)],
                ["entropy S", float_cell(p.entropy_approx)],
                ["energy fluctuation <δE²>", float_cell(p.energy_variance_approx)],
                ["level 0 fluctuation <δn_0²>", float_cell(p.ground_occupation_variance_approx)],
            ]
            if reservoir:
                quantities += [
                    ["chemical potential (grand canonical)", float_cell(p.chemical_potential_approx)],
                    ["level 0 fluctuation (grand canonical)", float_cell(p.grand_canonical_ground_variance_approx)],
                ]
            show_table(f"Canonical ensemble at {at} ({p.route})", ["quantity", "value (approx)"], quantities)
            gc = p.grand_canonical_occupations_approx if reservoir else None
            gc = gc or [None] * len(p.occupations_approx)
            show_table(
                f"Mean level occupations at {at}",
                ["level energy", "g", "canonical", "grand canonical", "difference"],
                [
                    [exact(_level_energy(system, i)), str(_level_degeneracy(system, i)),
                     float_cell(c), float_cell(g), float_cell(None if g is None else c - g)]
                    for i, (c, g) in enumerate(zip(p.occupations_approx, gc))
                ],
            )
            if p.occupation_above_approx is not None and abs(p.occupation_above_approx) > 10 ** -min(p.digits, 12) * system.particles:
                out.print(f"above the listed levels: {float_cell(p.occupation_above_approx)} of "
                          f"{system.particles} particles (list more with --report-levels)")
    for law in laws or ():
        out.print()
        exact_law = law.exact
        at = f"T = {float(law.temperature):g}" + ("" if law.factor is None else f" (Boltzmann factor {law.factor})")
        peak = max(float(q) for q in law.law)
        rows = [[str(k), exact(q) if exact_law else float_cell(q)] + ([float_cell(q)] if exact_law else [])
                for k, q in enumerate(law.law) if float(q) >= 1e-6 * peak]
        columns = ["k", "P(n = k)" + ("" if exact_law else " (approx)")] + (["(approx)"] if exact_law else [])
        show_table(f"Occupation law of level {law.level} at {at} (rows with P >= 1e-6 of the peak)", columns, rows)
        line = f"mean {float_cell(law.mean)}, variance {float_cell(law.variance)}"
        if law.grand_canonical_variance_approx is not None:
            line += (f"; grand canonical: mean {float_cell(law.grand_canonical_mean_approx)}, "
                     f"variance {float_cell(law.grand_canonical_variance_approx)}")
        out.print(line)
    if plot is not None:
        out.print(f"plot: {plot}")
