"""Rendering of ``enumerator contact``: the JSON payload, the table and the plot.

The physics is :func:`enumerator.algorithms.levels.thermal_contact`; this
module turns its :class:`~enumerator.algorithms.levels.Contact` into one JSON
object (:func:`contact_payload`: exact counts as decimal strings, exact
probabilities as ``"p/q"``, floats only in ``*_approx`` fields), a rich table
for people (:func:`show_contact`) or a PNG (:func:`plot_contact`; matplotlib,
imported on use).

Which splits are written is the caller's choice (:class:`Listing`): all of
them, a window ``E_A = low..high``, or none; a summary of the split (peak,
mean, variance, standard deviation) goes with any listing that is not
complete, so a big system is described without writing every split.

Energies are written in the user's unit, as ``enumerator levels`` writes
them (:func:`~enumerator.cli.render_levels.levels_payload`): keys are exact
energies (``"3"``, ``"3/2"``), ``most_probable`` and ``listed`` JSON integers
when whole and ``"p/q"`` text otherwise, and ``"unit"`` (written when it is
not 1) is the grid the energies lie on.  The library's
:class:`~enumerator.algorithms.levels.Contact` keeps grid indices; the
conversion is :meth:`~enumerator.algorithms.levels.Contact.energy_of`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional, Tuple

from ..algorithms.levels import Contact
from .render import console, exact, float_cell, human, pyplot, show_table

__all__ = [
    "Listing",
    "contact_payload",
    "plot_contact",
    "show_contact",
]


@dataclass(frozen=True)
class Listing:
    """Which splits to write: ``window`` ``(low, high)`` of ``E_A`` (grid indices), ``None`` for none.

    ``complete`` says the window holds every split; ``summary`` that the
    peak-and-width summary is written; ``reason`` (when splits were left out
    without being asked) says why, and ``suggestion`` a window worth listing.
    """

    window: Optional[Tuple[int, int]]
    complete: bool
    summary: bool
    reason: Optional[str] = None
    suggestion: Optional[Tuple[int, int]] = None

    def keys(self, contact: Contact):
        """The listed ``E_A``, in increasing order."""
        if self.window is None:
            return []
        low, high = self.window
        return [ea for ea in contact.split if low <= ea <= high]


def _energy(contact: Contact, index: int) -> str:
    """The energy of grid *index* as exact text in the user's unit (``"3"``, ``"3/2"``), as JSON keys write it."""
    return exact(contact.energy_of(index))


def _energy_json(value):
    """An energy in the user's unit as a JSON value: an integer when whole, else ``"p/q"`` (``None`` kept)."""
    if value is None or isinstance(value, int):
        return value
    return value.numerator if value.denominator == 1 else exact(value)


# --------------------------------------------------------------------------
# Plot (matplotlib, Agg backend)
# --------------------------------------------------------------------------
def plot_contact(path, contact: Contact, label_a: str = "A", label_b: str = "B") -> None:
    """Save a PNG of the probability of each energy split ``E_A``.

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
    Every split is drawn from its float probability
    (:meth:`~enumerator.algorithms.levels.Contact.probability_approx_of`, no
    gcd), the most probable split marked by a dashed line.  Cost: one
    division per split, plus matplotlib's drawing.
    """
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(6, 4.2))
    unit = float(contact.unit)
    keys = sorted(contact.split)
    ax.plot([k * unit for k in keys], [contact.probability_approx_of(k) for k in keys], ".-", ms=3)
    if contact.most_probable is not None:
        ax.axvline(contact.most_probable * unit, color="grey", lw=0.8, ls="--")
    ax.set_xlabel(f"energy of {label_a}, E_A")
    ax.set_ylabel("probability")
    ax.set_title(f"{label_a} and {label_b} in thermal contact, total energy {_energy(contact, contact.energy)}",
                 fontsize=9)
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)


# --------------------------------------------------------------------------
# Report (what the CLI prints)
# --------------------------------------------------------------------------
def _summary_payload(contact: Contact, listing: Listing) -> dict:
    """The ``"summary"`` object of :func:`contact_payload`."""
    s = contact.summary()
    return {
        "splits": s.splits,
        "listed": None if listing.window is None else [_energy_json(contact.energy_of(e)) for e in listing.window],
        "most_probable": _energy_json(s.most_probable),
        "most_probable_probability": exact(s.most_probable_probability),
        "most_probable_probability_approx": s.most_probable_probability_approx,
        "mean": exact(s.mean),
        "mean_approx": s.mean_approx,
        "variance": exact(s.variance),
        "variance_approx": s.variance_approx,
        "std_dev_approx": s.std_dev_approx,
    }


def contact_payload(contact: Contact, listing: Optional[Listing] = None) -> dict:
    """The JSON object of ``enumerator contact``.

    Parameters
    ----------
    contact : Contact
    listing : Listing, optional
        Which splits to write; default all of them, without a summary.

    Returns
    -------
    dict
        ``{"total": "count", "split": {"E_A": "count"}, "most_probable": E_A,
        "probability": {"E_A": "p/q"}, "probability_approx": {"E_A": float}}``
        for the listed splits (the three maps are left out when none is
        listed).  Energies are in the user's unit: keys exact (``"3/2"``),
        ``most_probable`` and ``listed`` integers when whole, else ``"p/q"``;
        a ``"unit"`` field (the grid the energies lie on) is added when it
        is not 1.  With a summary: ``"summary": {"splits": count,
        "listed": [low, high] or null, "most_probable": E_A,
        "most_probable_probability": "p/q", "mean": "p/q", "variance":
        "p/q"}`` plus the floats ``most_probable_probability_approx``,
        ``mean_approx``, ``variance_approx`` and ``std_dev_approx`` (the
        variance in the unit squared).

    Notes
    -----
    Cost: one gcd of numbers of the size of ``total`` per listed split (the
    exact probability), one division for its float; the summary one pass
    over all splits.

    Examples
    --------
    >>> from enumerator.algorithms.levels import einstein_solid, thermal_contact
    >>> contact_payload(thermal_contact(einstein_solid(1), einstein_solid(1), 1))  # doctest: +NORMALIZE_WHITESPACE
    {'total': '2', 'split': {'0': '1', '1': '1'}, 'most_probable': 0, 'probability': {'0': '1/2', '1': '1/2'},
     'probability_approx': {'0': 0.5, '1': 0.5}}
    >>> from enumerator.algorithms.levels import System, two_level
    >>> half = System.create(two_level("1/2"), 1, "MB")
    >>> contact_payload(thermal_contact(half, half, "1/2"))  # doctest: +NORMALIZE_WHITESPACE
    {'total': '2', 'split': {'0': '1', '1/2': '1'}, 'most_probable': 0, 'probability': {'0': '1/2', '1/2': '1/2'},
     'probability_approx': {'0': 0.5, '1/2': 0.5}, 'unit': '1/2'}
    """
    if listing is None:
        listing = Listing(None if not contact.split else (min(contact.split), max(contact.split)), True, False)
    payload: dict = {"total": exact(contact.total)}
    keys = listing.keys(contact)
    listed = listing.window is not None or listing.complete
    if listed:
        names = [_energy(contact, e) for e in keys]
        payload["split"] = {name: exact(contact.split[e]) for name, e in zip(names, keys)}
    payload["most_probable"] = None if contact.most_probable is None else _energy_json(
        contact.energy_of(contact.most_probable))
    if listed:
        if contact.total:
            payload["probability"] = {name: exact(contact.probability_of(e)) for name, e in zip(names, keys)}
            payload["probability_approx"] = {name: contact.probability_approx_of(e) for name, e in zip(names, keys)}
        else:
            payload["probability"] = {}
            payload["probability_approx"] = {}
    if listing.summary and contact.total:
        payload["summary"] = _summary_payload(contact, listing)
    if contact.unit != 1:
        payload["unit"] = exact(contact.unit)
    return payload


# --------------------------------------------------------------------------
# Table for people
# --------------------------------------------------------------------------
def show_contact(contact: Contact, label_a: str, label_b: str, energy, plot: Optional[str] = None,
                 listing: Optional[Listing] = None) -> None:
    """Print the table of the listed energy splits, the total, the most probable split and the summary.

    Parameters
    ----------
    contact : Contact
    label_a, label_b : str
        Names of the two systems in the title.
    energy : str
        The requested total energy, named when no split exists.
    plot : str, optional
        The file a plot was written to, named last.
    listing : Listing, optional
        Which splits to show; default all, without a summary.

    Notes
    -----
    Energies in the user's unit, exact (``3/2``); exact counts are printed
    whole when short and rounded with their digit count when long
    (:func:`~enumerator.cli.render.human`); probabilities to 6 significant
    digits, the most probable split's exactly when short.
    Cost: linear in the number of listed splits, plus the summary's pass.
    """
    out = console()
    unit_note = "" if contact.unit == 1 else f" (energies on a grid of {exact(contact.unit)})"
    if not contact.split:
        out.print(f"No microstate of A and B has total energy {energy}.")
        return
    if listing is None:
        listing = Listing((min(contact.split), max(contact.split)), True, False)
    keys = listing.keys(contact)
    title = f"Thermal contact{unit_note}: A = {label_a}; B = {label_b}; total energy {_energy(contact, contact.energy)}"
    if keys:
        rows = [[_energy(contact, ea), _energy(contact, contact.energy - ea), contact.split[ea],
                 float_cell(contact.probability_approx_of(ea) if contact.total else None)] for ea in keys]
        show_table(title, ["E_A", "E_B", "Ω_A Ω_B", "probability (approx)"], rows)
    else:
        out.print(title)
    if contact.most_probable is None:
        out.print("total microstates: 0")
    else:
        p = human(contact.most_probable_probability)
        if not p.startswith("≈"):
            p += f" (≈ {contact.probability_approx_of(contact.most_probable):.6g})"
        out.print(
            f"total microstates: {human(contact.total)}\nmost probable split: E_A = "
            f"{_energy(contact, contact.most_probable)}, "
            f"probability {p}"
        )
    if listing.summary and contact.total:
        s = contact.summary()
        low, high = min(contact.split), max(contact.split)
        out.print(
            f"mean E_A = {human(s.mean)} (≈ {s.mean_approx:.6g}), variance {human(s.variance)} "
            f"(≈ {s.variance_approx:.6g}), standard deviation ≈ {s.std_dev_approx:.6g}\n"
            f"splits: {s.splits:,} (E_A = {_energy(contact, low)}..{_energy(contact, high)}); "
            + ("listed: all" if listing.complete else
               "listed: none" if listing.window is None else
               f"listed: E_A = {_energy(contact, listing.window[0])}..{_energy(contact, listing.window[1])}")
        )
    if listing.reason:
        hint = "" if listing.suggestion is None else \
            f"--splits {_energy(contact, listing.suggestion[0])}..{_energy(contact, listing.suggestion[1])} (±2σ) or "
        out.print(f"{listing.reason}; list them with {hint}--splits all")
    if plot is not None:
        out.print(f"plot: {plot}")
