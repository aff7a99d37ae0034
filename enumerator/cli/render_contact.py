"""Rendering of ``enumerator contact``: the JSON payload, the table and the plot.

The physics is :func:`enumerator.algorithms.levels.thermal_contact`; this
module turns its :class:`~enumerator.algorithms.levels.Contact` into one JSON
object (:func:`contact_payload`: exact counts as decimal strings, exact
probabilities as ``"p/q"``), a rich table for people (:func:`show_contact`) or
a PNG (:func:`plot_contact`; matplotlib, imported on use).
"""

from __future__ import annotations

from typing import Optional

from ..algorithms.levels import Contact
from ..core.errors import Unsupported
from .render import console, exact, show_table

__all__ = [
    "contact_payload",
    "plot_contact",
    "show_contact",
]


def _pyplot():
    """matplotlib's pyplot on the non-interactive Agg backend; :class:`Unsupported` without matplotlib."""
    try:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
    except ImportError:  # pragma: no cover - depends on the installation
        raise Unsupported("plots need matplotlib: pip install 'enumerator[plot]'") from None
    return plt


def _float_cell(x) -> str:
    """A table cell for an approximate value: 6 significant digits, ``-`` for none."""
    return "-" if x is None else f"{float(x):.6g}"


# --------------------------------------------------------------------------
# Plot (matplotlib, Agg backend)
# --------------------------------------------------------------------------
def plot_contact(path, contact: Contact, label_a: str = "A", label_b: str = "B") -> None:
    """Save a PNG of the exact probability of each energy split ``E_A``.

    Parameters
    ----------
    path : str or path-like
        The image file to write.
    contact : Contact
        As :func:`~enumerator.algorithms.levels.thermal_contact` returns it.
    label_a, label_b : str
        Names of the two systems in the title and axis label.

    Raises
    ------
    Unsupported
        matplotlib is not installed.

    Notes
    -----
    The most probable split is marked by a dashed line.  Cost: linear in the
    number of splits, plus matplotlib's drawing.
    """
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
# Report (what the CLI prints)
# --------------------------------------------------------------------------
def contact_payload(contact: Contact) -> dict:
    """The JSON object of ``enumerator contact``.

    Parameters
    ----------
    contact : Contact

    Returns
    -------
    dict
        ``{"total": "count", "split": {"E_A": "count"}, "most_probable": E_A,
        "probability": {"E_A": "p/q"}}``; energies in units, with a ``"unit"``
        field added when the unit is not 1.

    Notes
    -----
    Cost: linear in the number of splits.

    Examples
    --------
    >>> from enumerator.algorithms.levels import einstein_solid, thermal_contact
    >>> contact_payload(thermal_contact(einstein_solid(1), einstein_solid(1), 1))
    {'total': '2', 'split': {'0': '1', '1': '1'}, 'most_probable': 0, 'probability': {'0': '1/2', '1': '1/2'}}
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


# --------------------------------------------------------------------------
# Table for people
# --------------------------------------------------------------------------
def show_contact(contact: Contact, label_a: str, label_b: str, energy, plot: Optional[str] = None) -> None:
    """Print the table of energy splits, the total and the most probable split.

    Parameters
    ----------
    contact : Contact
    label_a, label_b : str
        Names of the two systems in the title.
    energy : str
        The requested total energy, named when no split exists.
    plot : str, optional
        The file a plot was written to, named last.

    Notes
    -----
    Exact counts and the most probable split's probability are printed
    whole; the other probabilities to 6 significant digits.  Cost: linear in
    the number of splits.
    """
    out = console()
    unit_note = "" if contact.unit == 1 else f" (energies in units of {contact.unit})"
    if not contact.split:
        out.print(f"No microstate of A and B has total energy {energy}.")
        return
    rows = []
    for ea, count in contact.split.items():
        p = contact.probability.get(ea)
        rows.append([str(ea), str(contact.energy - ea), exact(count), _float_cell(p)])
    show_table(
        f"Thermal contact{unit_note}: A = {label_a}; B = {label_b}; total energy {contact.energy}",
        ["E_A", "E_B", "Ω_A Ω_B", "probability (approx)"],
        rows,
    )
    if contact.most_probable is not None:
        p = contact.probability[contact.most_probable]
        out.print(
            f"total microstates: {exact(contact.total)}\nmost probable split: E_A = {contact.most_probable}, "
            f"probability {exact(p)} (≈ {float(p):.6g})"
        )
    if plot is not None:
        out.print(f"plot: {plot}")
