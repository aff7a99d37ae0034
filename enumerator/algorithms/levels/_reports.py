"""Plots and JSON payloads of the levels and contact commands (moving to the CLI layer)."""

from __future__ import annotations

from typing import Dict, Optional, Sequence

import mpmath

from ...core.errors import Unsupported
from .ensembles import CanonicalPoint, MicroPoint
from .multiplicities import Contact
from .spectra import System

__all__ = ["contact_payload", "levels_payload", "plot_contact", "plot_levels"]


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
