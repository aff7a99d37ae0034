"""Rendering of ``enumerator levels``: JSON payloads, tables and plots.

The physics is :mod:`enumerator.algorithms.levels`; this module turns its
results into one JSON object (:func:`levels_payload`: exact counts as decimal
strings, floats only in ``*_approx`` fields), rich tables for people
(:func:`show_levels`) or a PNG (:func:`plot_levels`; matplotlib, imported on
use).  ``enumerator contact`` renders through :mod:`enumerator.cli.render_contact`.
"""

from __future__ import annotations

from typing import Dict, Optional, Sequence

import mpmath

from ..algorithms.levels import CanonicalPoint, MicroPoint, System
from ..core.errors import Unsupported
from .render import console, exact, show_table

__all__ = [
    "levels_payload",
    "plot_levels",
    "show_levels",
]


# --------------------------------------------------------------------------
# Plots (matplotlib, Agg backend)
# --------------------------------------------------------------------------
def _pyplot():
    """matplotlib's pyplot on the non-interactive Agg backend; :class:`Unsupported` without matplotlib."""
    try:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
    except ImportError:  # pragma: no cover - depends on the installation
        raise Unsupported("plots need matplotlib: pip install 'enumerator[plot]'") from None
    return plt


def plot_levels(path, system: System, counts: Dict[int, int], points: Sequence[CanonicalPoint] = ()) -> None:
    """Save a PNG: multiplicity against total energy, and the canonical occupations.

    Parameters
    ----------
    path : str or path-like
        The image file to write.
    system : System
        The system the counts belong to (its label and energy unit).
    counts : dict of int to int
        ``{E: Ω(N, E)}`` as :func:`~enumerator.algorithms.levels.multiplicities` returns it.
    points : sequence of CanonicalPoint, optional
        Given, a second panel shows the exact canonical occupations
        (markers) against the grand-canonical formula (lines).

    Raises
    ------
    Unsupported
        matplotlib is not installed.

    Notes
    -----
    ``log10 Ω`` is plotted (exact counts overflow floats).  Cost: linear in
    the number of energies and of reported levels, plus matplotlib's drawing.
    """
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


# --------------------------------------------------------------------------
# Reports (what the CLI prints)
# --------------------------------------------------------------------------
def _float(x) -> Optional[float]:
    """*x* as a float, ``None`` kept."""
    return None if x is None else float(x)


def levels_payload(
    system: System,
    counts: Dict[int, int],
    points: Optional[Sequence[CanonicalPoint]] = None,
    micro: Optional[Sequence[MicroPoint]] = None,
) -> dict:
    """The JSON object of ``enumerator levels``.

    Parameters
    ----------
    system : System
        Gives the energy unit.
    counts : dict of int to int
        ``{E: Ω(N, E)}``, energies in units.
    points : sequence of CanonicalPoint, optional
        Canonical results, one per temperature.
    micro : sequence of MicroPoint, optional
        Microcanonical results, one per energy.

    Returns
    -------
    dict
        ``{"unit": "p/q", "multiplicity": {"E": "count", ...}}`` (keys: total
        energies in units, consecutive, exact counts as decimal strings), plus
        ``"canonical"`` (one object of approximations per temperature) and
        ``"microcanonical"`` when given.

    Notes
    -----
    Cost: linear in the number of energies, temperatures and levels.
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


# --------------------------------------------------------------------------
# Tables for people
# --------------------------------------------------------------------------
def _float_cell(x) -> str:
    """A table cell for an approximate value: 6 significant digits, ``-`` for none."""
    return "-" if x is None else f"{float(x):.6g}"


def show_levels(
    system: System,
    counts: Dict[int, int],
    points: Optional[Sequence[CanonicalPoint]],
    micro: Optional[Sequence[MicroPoint]],
    max_energy,
    plot: Optional[str] = None,
) -> None:
    """Print the multiplicities (with the microcanonical columns when given) and the canonical tables.

    Parameters
    ----------
    system : System
        Its label and energy unit head the tables.
    counts : dict of int to int
        ``{E: Ω(N, E)}``, energies in units.
    points : sequence of CanonicalPoint or None
        Per temperature, a table of thermodynamic quantities and one of
        mean level occupations (canonical, grand canonical, difference).
    micro : sequence of MicroPoint or None
        Given, ``ln Ω`` and the microcanonical temperature join the counts.
    max_energy : str or None
        The requested maximum energy, named when no state lies below it.
    plot : str, optional
        The file a plot was written to, named last.

    Notes
    -----
    Exact counts are printed whole (:func:`~enumerator.cli.render.show_table`);
    approximations to 6 significant digits.  Cost: linear in the number of
    energies, temperatures and levels.
    """
    unit = system.spectrum.unit
    unit_note = "" if unit == 1 else f" (energies in units of {unit})"
    out = console()
    if micro is not None:
        rows = [[str(m.energy), exact(m.multiplicity), _float_cell(m.ln_multiplicity_approx),
                 _float_cell(m.temperature_approx)] for m in micro]
        columns = ["E", "Ω(N, E)", "ln Ω (approx)", "T (approx)"]
    else:
        rows = [[str(e), exact(v)] for e, v in counts.items()]
        columns = ["E", "Ω(N, E)"]
    if not rows:
        out.print(f"{system.label}: no state has total energy at most {max_energy}.")
    else:
        show_table(f"Multiplicities: {system.label}{unit_note}", columns, rows)
    for p in points or ():
        out.print()
        show_table(
            f"Canonical ensemble at T = {float(p.temperature):g} ({p.digits} digits; k_B = 1)",
            ["quantity", "value (approx)"],
            [
                ["ln Z", _float_cell(p.ln_partition_function_approx)],
                ["mean energy U", _float_cell(p.mean_energy_approx)],
                ["heat capacity C", _float_cell(p.heat_capacity_approx)],
                ["free energy F", _float_cell(p.free_energy_approx)],
                ["entropy S", _float_cell(p.entropy_approx)],
                ["chemical potential (grand canonical)", _float_cell(p.chemical_potential_approx)],
            ],
        )
        gc = p.grand_canonical_occupations_approx or [None] * len(p.occupations_approx)
        show_table(
            f"Mean level occupations at T = {float(p.temperature):g}",
            ["level energy", "g", "canonical", "grand canonical", "difference"],
            [
                [str(system.spectrum.level_energy(i)), str(system.spectrum.degeneracies[i]),
                 _float_cell(c), _float_cell(g), _float_cell(None if g is None else c - g)]
                for i, (c, g) in enumerate(zip(p.occupations_approx, gc))
            ],
        )
    if plot is not None:
        out.print(f"plot: {plot}")
