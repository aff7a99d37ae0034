"""``enumerator contact``: two systems of particles on energy levels in thermal contact.

Thermal contact is :func:`enumerator.algorithms.levels.thermal_contact`; this
module parses the options of the two sides, calls the library and hands the
result to :mod:`enumerator.cli.render_contact` (one JSON object, a table or a
plot).  The command neither reads nor writes the result store, so it does not
offer ``--store``/``--no-cache``.
"""

import math
from fractions import Fraction
from typing import Annotated, Optional

import typer

from .options import (
    OUTPUT_PANEL,
    Json,
    MaxMemory,
    MaxSeconds,
    check_exact_numbers,
    count_parser,
    limits_scope,
    plot_path,
    rule_parser,
    whole_option,
)
from .render import emit_json

__all__ = ["commands"]

#: The commands of this module, merged into the root application by :mod:`enumerator.cli.app`.
commands = typer.Typer()

_OUTPUT = OUTPUT_PANEL

#: Without --splits, every split is listed only while there are at most this
#: many of them and their listing stays below :data:`AUTO_MAX_CHARS`.
AUTO_MAX_SPLITS = 1001
#: ... and while the listing (counts, p/q and floats) is at most this many characters.
AUTO_MAX_CHARS = 1_000_000


def _listing(contact, splits: Optional[str], summary: bool):
    """The :class:`~enumerator.cli.render_contact.Listing` that ``--splits``/``--summary`` ask for.

    Parameters
    ----------
    contact : Contact
    splits : str or None
        ``all``, ``none``, ``LOW..HIGH`` (energies of A in the user's unit,
        exact: ``3/2..5``; the splits on the grid between them) or
        ``K`` (the ``K`` splits around the most probable one); ``None``: all
        of them when the listing is small (:data:`AUTO_MAX_SPLITS`,
        :data:`AUTO_MAX_CHARS`), else none, with a summary.
    summary : bool
        ``--summary``: a summary, and no splits unless ``--splits`` asks.

    Returns
    -------
    Listing
        Its window in grid indices of *contact* (energy = index × unit).

    Raises
    ------
    InvalidParameters
        A malformed ``--splits``.

    Notes
    -----
    The size of a full listing is estimated as three numbers of the digits
    of ``total`` per split (the count, and the probability's ``p/q``).  Cost:
    constant, plus the summary's pass over the splits when a window is
    suggested.
    """
    from ..core.errors import InvalidParameters
    from .render_contact import Listing

    keys = list(contact.split)
    if not keys:
        return Listing(None, True, summary)
    low, high = keys[0], keys[-1]
    unit = contact.unit
    text = (splits or "").strip().lower()
    if splits is None and not summary:
        size = len(keys) * (3 * math.ceil(contact.total.bit_length() * math.log10(2)) + 40)
        if len(keys) <= AUTO_MAX_SPLITS and size <= AUTO_MAX_CHARS:
            return Listing((low, high), True, False)
        s = contact.summary()
        suggestion = None
        if s is not None:
            width = math.ceil(2 * s.std_dev_approx / unit)  # grid steps
            peak = contact.most_probable
            suggestion = (max(low, peak - width), min(high, peak + width))
        what = f"about {size / 1e6:,.0f} MB" if size >= 1e6 else f"{len(keys):,} rows"
        return Listing(None, False, True,
                       reason=f"the {len(keys):,} splits are not listed (their listing would be {what})",
                       suggestion=suggestion)
    if not text:
        return Listing(None, False, True)
    if text == "all":
        return Listing((low, high), True, summary)
    if text == "none":
        return Listing(None, False, True)
    try:
        if ".." in text:
            # energies in the user's unit; the window holds the grid points between them
            first, last = (Fraction(check_exact_numbers(v.strip(), "--splits")) for v in text.split("..", 1))
            a, b = math.ceil(first / unit), math.floor(last / unit)
        else:
            from ..core.groups import parse_count

            count = parse_count(text, "--splits", 1)  # digits or a power; InvalidParameters is a ValueError
            peak = contact.most_probable if contact.most_probable is not None else low
            a = max(low, peak - (count - 1) // 2)
            b = min(high, a + count - 1)
            a = max(low, b - count + 1)
            first = last = None
    except (ValueError, ZeroDivisionError):
        example = f"{contact.energy_of(low)}..{contact.energy_of(min(high, low + 10))}"
        raise InvalidParameters(
            f"--splits takes all, none, LOW..HIGH (energies of A) or a number K of splits around the "
            f"most probable one (got {splits!r}); e.g. --splits {example}"
        ) from None
    if first is not None and first > last:
        raise InvalidParameters(f"--splits {splits}: the low end must not exceed the high end, "
                                f"e.g. --splits {last}..{first}")
    window = (max(a, low), min(b, high))
    complete = window == (low, high)
    if window[0] > window[1]:
        first_energy, last_energy = contact.energy_of(low), contact.energy_of(high)
        raise InvalidParameters(
            f"--splits {splits.strip()} lists no split: E_A runs from {first_energy} to {last_energy}; "
            f"choose a window inside it, e.g. --splits {first_energy}..{last_energy}"
        )
    return Listing(window, complete, summary or not complete)


def _side_options(side: str):
    """The option bundle of one side (a or b) of ``enumerator contact``.

    Parameters
    ----------
    side : str
        ``"a"`` or ``"b"``: the suffix of every option and the name of its help panel.

    Returns
    -------
    dict of str to typer.models.OptionInfo
    """
    panel = f"System {side.upper()}"
    name = side.upper()
    return {
        "oscillators": whole_option(f"--oscillators-{side}", name=f"oscillators of {name}", minimum=1,
                                    rich_help_panel=panel,
                                    help=f"{name} is an Einstein solid of this many oscillators."),
        "particles": whole_option(f"--particles-{side}", name=f"particles of {name}", rich_help_panel=panel,
                                  help="Number of particles."),
        "energies": typer.Option(f"--energies-{side}", rich_help_panel=panel, metavar="E1,E2,...",
                                 help="Level energies."),
        "degeneracies": typer.Option(f"--degeneracies-{side}", rich_help_panel=panel, metavar="G1,G2,...",
                                     help="Level degeneracies (default all 1)."),
        "rule": typer.Option(f"--rule-{side}", rich_help_panel=panel, metavar="MB|BE|FD", parser=rule_parser,
                             help="Rule of this side (default --rule, else MB)."),
        "capacity": whole_option(f"--capacity-{side}", name=f"capacity of {name}", minimum=1, rich_help_panel=panel,
                                 help="BE: at most this many per state."),
        "preset": typer.Option(f"--preset-{side}", rich_help_panel=panel, metavar="NAME",
                               help="harmonic, trap, two-level or einstein."),
        "levels": whole_option(f"--levels-{side}", name=f"levels of {name}", minimum=1, rich_help_panel=panel,
                               help="harmonic/trap: number of levels."),
        "dimension": whole_option(f"--dimension-{side}", name=f"dimension of {name}", minimum=1,
                                  rich_help_panel=panel, help="trap: dimension."),
        "gap": typer.Option(f"--gap-{side}", rich_help_panel=panel, help="two-level: gap."),
    }


_A = _side_options("a")
_B = _side_options("b")

#: The library parameters of one side (:func:`enumerator.algorithms.levels.make_system`), each an option ``--NAME-a``/``-b``.
_SIDE_PARAMETERS = ("oscillators", "particles", "energies", "degeneracies", "rule", "capacity", "preset", "levels",
                    "dimension", "gap")


def _respelled(error, flags: dict, prefix: str = ""):
    """*error* again, its message naming this command's options (``--particles-a``, not ``--particles``).

    Parameters
    ----------
    error : EnumeratorError
        Raised by the library, naming library parameters (``particles=``).
    flags : dict of str to str
        Library parameter -> the option of ``contact`` that sets it.
    prefix : str
        Put before a message that names none of *flags* (which side it is about).

    Returns
    -------
    EnumeratorError
        Of the same class; the parameters left to spell (``max_memory``) are
        kept for the CLI's error wrapper.
    """
    text = error.spelled(flags)
    if not any(name in flags for name in error.parameters):
        text = prefix + text
    return type(error)(text, parameters=[name for name in error.parameters if name not in flags])


def _check_energy(side_a, side_b, energy: str, flag: str) -> None:
    """Refuse a negative total energy when no level of either side is negative (it can only be a mistake).

    Raises
    ------
    InvalidParameters
        Naming *flag* (``--energy`` or ``--quanta``): an energy that is not
        an exact number, or a negative one.
    """
    from ..algorithms.levels import parse_rational
    from ..core.errors import InvalidParameters

    text = str(energy).strip()
    value = parse_rational(check_exact_numbers(text, flag), flag)
    if value < 0 and side_a.spectrum.lowest >= 0 and side_b.spectrum.lowest >= 0:
        raise InvalidParameters(f"{flag} must be at least 0 (got {energy}): no level of A or B lies below 0")


@commands.command("contact")
def contact_command(
    energy: Annotated[
        Optional[str],
        typer.Option("--energy", metavar="E",
                     help="Total energy shared by A and B, exact (6, 3/2, 0.5), in the energy unit of the levels."),
    ] = None,
    quanta: Annotated[
        Optional[int],
        typer.Option("--quanta", metavar="Q", parser=count_parser("quanta", 0),
                     help="Instead of --energy: the number of quanta shared (Einstein solids, ladders), "
                     "a whole number >= 0."),
    ] = None,
    oscillators_a: Annotated[Optional[int], _A["oscillators"]] = None,
    particles_a: Annotated[Optional[int], _A["particles"]] = None,
    energies_a: Annotated[Optional[str], _A["energies"]] = None,
    degeneracies_a: Annotated[Optional[str], _A["degeneracies"]] = None,
    rule_a: Annotated[Optional[str], _A["rule"]] = None,
    capacity_a: Annotated[Optional[int], _A["capacity"]] = None,
    preset_a: Annotated[Optional[str], _A["preset"]] = None,
    levels_a: Annotated[Optional[int], _A["levels"]] = None,
    dimension_a: Annotated[Optional[int], _A["dimension"]] = None,
    gap_a: Annotated[Optional[str], _A["gap"]] = None,
    oscillators_b: Annotated[Optional[int], _B["oscillators"]] = None,
    particles_b: Annotated[Optional[int], _B["particles"]] = None,
    energies_b: Annotated[Optional[str], _B["energies"]] = None,
    degeneracies_b: Annotated[Optional[str], _B["degeneracies"]] = None,
    rule_b: Annotated[Optional[str], _B["rule"]] = None,
    capacity_b: Annotated[Optional[int], _B["capacity"]] = None,
    preset_b: Annotated[Optional[str], _B["preset"]] = None,
    levels_b: Annotated[Optional[int], _B["levels"]] = None,
    dimension_b: Annotated[Optional[int], _B["dimension"]] = None,
    gap_b: Annotated[Optional[str], _B["gap"]] = None,
    rule: Annotated[
        Optional[str],
        typer.Option("--rule", metavar="MB|BE|FD", parser=rule_parser,
                     help="Rule of both systems unless --rule-a/--rule-b say otherwise."),
    ] = None,
    summary: Annotated[
        bool,
        typer.Option("--summary", rich_help_panel=_OUTPUT,
                     help="Describe the split without listing it: the most probable E_A and its "
                     "probability, the mean and variance of E_A (exact and float), the standard deviation."),
    ] = False,
    splits: Annotated[
        Optional[str],
        typer.Option("--splits", metavar="all|none|LOW..HIGH|K", rich_help_panel=_OUTPUT,
                     help="Which splits to list: all, none, the energies of A from LOW to HIGH (in your "
                     "energy unit, exact: 1/2..3), or the K "
                     f"around the most probable one. Default: all while there are at most {AUTO_MAX_SPLITS:,} "
                     f"and their listing stays under {AUTO_MAX_CHARS // 10**6} MB, else none (a summary instead)."),
    ] = None,
    plot: Annotated[
        Optional[str],
        typer.Option("--plot", metavar="FILE.png", rich_help_panel=_OUTPUT, callback=plot_path,
                     help="Draw the probability of each split E_A."),
    ] = None,
    as_json: Json = False,
    max_memory: MaxMemory = None,
    max_seconds: MaxSeconds = None,
) -> None:
    """Two systems in thermal contact: the exact energy split Ω_A(E_A) Ω_B(E - E_A).

    Every split of the total energy is listed with its exact multiplicity and
    probability, exact (p/q) and as a float (all microstates of A+B equally
    likely), and the most probable split is named (the lowest E_A on a tie).
    Each side is an Einstein solid (--oscillators-a N) or any spectrum, given
    as for 'enumerator levels' with -a/-b suffixes.  Energies are in your
    energy unit everywhere, JSON keys included ("3/2" for a rational
    spectrum); "unit" is the grid they lie on, written when it is not 1.

    Big systems: past 1,001 splits or about 1 MB of listing the splits are
    not listed unless --splits asks, and a summary is given instead: the most
    probable split and its probability, the exact mean and variance of E_A
    (p/q) with their floats, and the standard deviation.  --summary asks for
    it on any system; --splits LOW..HIGH or --splits K lists a window.

    Example:

        $ enumerator contact --oscillators-a 300 --oscillators-b 200 --quanta 100 --json
        $ enumerator contact --oscillators-a 3 --oscillators-b 3 --quanta 6
        $ enumerator contact --oscillators-a 10000 --oscillators-b 10000 --quanta 10000 --summary
        $ enumerator contact --oscillators-a 10000 --oscillators-b 10000 --quanta 10000 --splits 21 --json
        $ enumerator contact --preset-a two-level --particles-a 10 --preset-b trap --particles-b 4 --rule-b BE --energy 12
        $ enumerator contact --preset-a two-level --gap-a 1/2 --particles-a 6 --preset-b two-level --gap-b 1/2 --particles-b 4 --energy 3/2 --json
    """
    from ..algorithms import levels as lv
    from ..core.errors import EnumeratorError, InvalidParameters
    from . import render_contact

    if (energy is None) == (quanta is None):
        raise InvalidParameters("give the total energy once: --energy E, or --quanta Q for a number of quanta"
                                if energy is None else "give --energy or --quanta, not both")
    flag = "--energy" if quanta is None else "--quanta"
    energy = energy if quanta is None else str(quanta)
    sides = []
    for side, options in (("a", dict(particles=particles_a, energies=energies_a, degeneracies=degeneracies_a,
                                      rule=rule_a or rule, capacity=capacity_a, preset=preset_a, levels=levels_a,
                                      dimension=dimension_a, gap=gap_a, oscillators=oscillators_a)),
                          ("b", dict(particles=particles_b, energies=energies_b, degeneracies=degeneracies_b,
                                      rule=rule_b or rule, capacity=capacity_b, preset=preset_b, levels=levels_b,
                                      dimension=dimension_b, gap=gap_b, oscillators=oscillators_b))):
        flags = {name: f"--{name}-{side}" for name in _SIDE_PARAMETERS}
        for name in ("energies", "degeneracies", "gap"):
            check_exact_numbers(options[name], flags[name])
        if options["rule"] is not None and (rule_a if side == "a" else rule_b) is None:
            flags["rule"] = "--rule"  # the rule of both sides
        try:
            sides.append(lv.make_system(**options))
        except EnumeratorError as error:
            raise _respelled(error, flags, f"system {side.upper()}: ") from None
    side_a, side_b = sides
    _check_energy(side_a, side_b, energy, flag)
    with limits_scope(max_memory, max_seconds):
        try:
            result = lv.thermal_contact(side_a, side_b, energy)
        except EnumeratorError as error:
            # the library's energy= and max_energy= are the total energy here
            raise _respelled(error, {"energy": flag, "max_energy": flag}) from None
    listing = _listing(result, splits, summary)
    if plot is not None:
        render_contact.plot_contact(plot, result, side_a.label, side_b.label)
    if as_json:
        emit_json(render_contact.contact_payload(result, listing))
        return
    render_contact.show_contact(result, side_a.label, side_b.label, energy, plot, listing)
