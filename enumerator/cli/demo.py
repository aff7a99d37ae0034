"""``demo``: the whole job on an invented scenario, gas molecules on catalyst sites."""

from fractions import Fraction

import typer

from ..core.rules import Rule
from .options import Json, build_model, store_scope
from .render import approx, console, emit_json, exact, show_table

__all__ = ["commands"]

#: The commands of this module, merged into the root application by :mod:`enumerator.cli.app`.
commands = typer.Typer()

_DEMO_BALLS = 3
_DEMO_SITES = 5
_DEMO_CONFIGS = [(3, 0, 0, 0, 0), (2, 1, 0, 0, 0), (1, 1, 1, 0, 0)]
_DEMO_CONFIG_NAMES = ["all three on site 1", "two on site 1 and one on site 2", "one each on sites 1, 2, 3"]
_DEMO_LISTED = 4
_DEMO_STORY = {
    Rule.MB: (
        "Tagged molecules (each carries a different isotope label), each landing on a "
        "site uniformly at random and independently of the others: all {micro} "
        "assignments are equally likely, and they fall into {conf} occupancy patterns "
        "of unequal weight."
    ),
    Rule.BE: (
        "Identical molecules that may stack on a site: each of the {conf} occupancy "
        "patterns is equally likely, so all three on site 1 has probability {pile} "
        "here against {pile_mb} under MB."
    ),
    Rule.FD: (
        "Identical molecules that block their site (at most one per site): only {conf} "
        "patterns remain, each equally likely, and any doubly occupied site has "
        "probability 0."
    ),
}


def _demo_cell(p: Fraction) -> str:
    """A probability cell of the demo: ``0``, or the exact value and its rounded value.

    Parameters
    ----------
    p : Fraction

    Returns
    -------
    str
    """
    return "0" if p == 0 else f"{exact(p)} ≈ {approx(p):.4f}"


@commands.command("demo")
def demo_command(as_json: Json = False) -> None:
    """Show the whole job on an invented scenario: gas molecules on catalyst sites.

    Three gas molecules adsorb onto a catalyst grain with five binding sites.
    The three rules are three different physical assumptions about the
    molecules; for each the demo prints the exact counts, the exact
    probability of three occupancy patterns and the first few patterns in
    lexicographic order.

    Example:

        $ enumerator demo
        $ enumerator demo --json
    """
    results = []
    # A demonstration leaves no trace: its tiny counts are computed afresh,
    # never written into the user's result store (it offers no --store).
    with store_scope(None, no_cache=True):
        for rule in (Rule.MB, Rule.BE, Rule.FD):
            model = build_model(_DEMO_BALLS, _DEMO_SITES, rule)
            probabilities = [model.probability(k) for k in _DEMO_CONFIGS]
            first = list(model.iter_configurations(0, _DEMO_LISTED))
            results.append((model, model.configurations(), model.microstates(), probabilities, first))

    if as_json:
        emit_json(
            {
                "scenario": f"{_DEMO_BALLS} gas molecules adsorbed on {_DEMO_SITES} catalyst sites",
                "balls": exact(_DEMO_BALLS),
                "urns": exact(_DEMO_SITES),
                "rules": [
                    {
                        "rule": model.rule.value,
                        "configurations": exact(conf),
                        "microstates": exact(micro),
                        "probabilities": [
                            {
                                "config": ",".join(map(str, k)),
                                "probability": exact(p),
                                "approx": approx(p),
                            }
                            for k, p in zip(_DEMO_CONFIGS, probabilities)
                        ],
                        "first": [",".join(map(str, k)) for k in first],
                    }
                    for model, conf, micro, probabilities, first in results
                ],
            }
        )
        return

    from rich.table import Table

    out = console()
    out.print(
        f"Scenario: {_DEMO_BALLS} gas molecules adsorb onto a catalyst grain with "
        f"{_DEMO_SITES} binding sites (the urns). Which occupancy patterns can arise, and "
        "how likely is each? That depends on what the molecules are:"
    )
    stories = Table.grid(padding=(0, 1))
    stories.add_column(no_wrap=True)
    stories.add_column()
    pile_mb = results[0][3][0]
    for model, conf, micro, probabilities, _ in results:
        story = _DEMO_STORY[model.rule].format(
            conf=conf, micro=micro, pile=exact(probabilities[0]), pile_mb=exact(pile_mb)
        )
        stories.add_row(f"  {model.rule.value} ({model.rule.title})", story)
    out.print(stories)
    out.print()
    show_table(
        "Exact counts",
        ["rule", "configurations", "microstates"],
        [[m.rule.value, exact(c), exact(u)] for m, c, u, _, _ in results],
    )
    out.print()
    show_table(
        "Exact probability of an occupancy pattern (≈ its approximate value)",
        ["pattern"] + [m.rule.value for m, *_ in results],
        [
            [",".join(map(str, k))] + [_demo_cell(r[3][i]) for r in results]
            for i, k in enumerate(_DEMO_CONFIGS)
        ],
    )
    out.print(
        "Patterns: "
        + "; ".join(f"{','.join(map(str, k))} is {name}" for k, name in zip(_DEMO_CONFIGS, _DEMO_CONFIG_NAMES))
        + "."
    )
    out.print()
    show_table(
        f"The first {_DEMO_LISTED} patterns in lexicographic order",
        ["rank"] + [m.rule.value for m, *_ in results],
        [
            [str(i)] + [",".join(map(str, r[4][i])) if i < len(r[4]) else "" for r in results]
            for i in range(_DEMO_LISTED)
        ],
    )
    out.print()
    out.print(
        f"Try: enumerator count -n {_DEMO_BALLS} -r {_DEMO_SITES} --rule BE;  "
        f"enumerator prob -n {_DEMO_BALLS} -r {_DEMO_SITES} --config 2,1,0,0,0;  "
        f"enumerator list -n {_DEMO_BALLS} -r {_DEMO_SITES} --rule FD"
    )

