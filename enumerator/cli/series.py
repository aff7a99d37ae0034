"""``gf`` and ``coeff``: generating functions of a model, and exact coefficients of any series."""

import sys
from typing import Annotated, Optional

import typer

from ..core.model import as_count
from ..core.rules import Rule
from .options import (
    Balls,
    Bounds,
    Capacity,
    Json,
    MaxMemory,
    MaxSeconds,
    Minimum,
    NoCache,
    RuleOpt,
    Store,
    Urns,
    Weights,
    build_model,
    count_parser,
    limits_scope,
    store_scope,
)
from .render import describe, emit_json, exact, show_table

__all__ = ["commands"]

#: The commands of this module, merged into the root application by :mod:`enumerator.cli.app`.
commands = typer.Typer()

Upto = Annotated[
    Optional[int],
    typer.Option("--upto", metavar="N", parser=count_parser("upto", 0),
                 help="Last degree (number of balls) of the coefficient row."),
]
def _variable(text) -> str:
    """Check ``--var`` at parse time, so a bad name is a usage error naming the option."""
    from ..algorithms.expressions import symbol
    from ..core.errors import InvalidParameters

    try:
        symbol(str(text), "var")
    except InvalidParameters as error:
        raise typer.BadParameter(str(error)) from None
    return str(text)


Var = Annotated[
    str,
    typer.Option("--var", parser=_variable, help="Name of the variable of the generating function."),
]


@commands.command("gf")
def gf_command(
    balls: Balls,
    urns: Urns = None,
    rule: RuleOpt = "MB",
    capacity: Capacity = None,
    minimum: Minimum = None,
    bounds: Bounds = None,
    weights: Weights = None,
    upto: Upto = None,
    mark: Annotated[
        Optional[str],
        typer.Option(
            "--mark",
            metavar="empty|occupied|exactly:J|atleast:J",
            help="Also print the bivariate function whose u marks these urns "
            "(\\[x^n u^j] counts outcomes with j marked urns).",
        ),
    ] = None,
    var: Var = "x",
    store: Store = None,
    no_cache: NoCache = False,
    max_memory: MaxMemory = None,
    max_seconds: MaxSeconds = None,
    as_json: Json = False,
) -> None:
    """Print the model's generating function and its counts for 0..N balls.

    BE and FD: the ordinary generating function, \\[x^m] = configurations of m
    balls (with --weights, the total weight of those vectors: "microstates",
    as count names it). MB: the exponential one, m! \\[x^m] = microstates of
    m balls. The row comes from one exact series pass; N is --upto (default:
    --balls).

    Example:

        $ enumerator gf -n 6 -r 3 --rule BE --capacity 2
        $ enumerator gf -n 8 -r 4 --rule MB --minimum 1 --json
        $ enumerator gf -n 5 -r 3 --rule BE --mark empty
    """
    from ..algorithms.generating import bivariate_generating_function, generating_function, kind

    with store_scope(store, no_cache), limits_scope(max_memory, max_seconds):
        model = build_model(balls, urns, rule, capacity, minimum, bounds, weights)
        top = model.balls if upto is None else as_count(upto, "--upto")
        function = generating_function(model, var)
        bivariate = None if mark is None else bivariate_generating_function(model, mark, var)
        row = model.coefficient_row(top)
    # with weights a BE/FD row is the total weight of the vectors, which count calls microstates
    counts = "microstates" if model.rule is Rule.MB or model.weighted else "configurations"
    if as_json:
        payload = {
            "rule": model.rule.value,
            "generating_function": str(function),
            "kind": kind(model),
            "variable": str(var),
            "counts": counts,
            "coefficients": [exact(c) for c in row],
        }
        if bivariate is not None:
            payload["mark"] = mark
            payload["bivariate"] = str(bivariate)
        emit_json(payload)
        return
    reading = f"[{var}^m]" if model.rule is not Rule.MB else f"m! [{var}^m]"
    sys.stdout.write(f"{describe(model)}\n")
    sys.stdout.write(f"{kind(model)} generating function ({reading} = {counts} of m balls):\n")
    sys.stdout.write(f"  {function}\n")
    if bivariate is not None:
        sys.stdout.write(f"bivariate, u marking the urns '{mark}':\n  {bivariate}\n")
    sys.stdout.flush()
    show_table(f"{counts} of m balls, m = 0..{top}", ["m", counts], [[str(m), c] for m, c in enumerate(row)])


@commands.command("coeff")
def coeff_command(
    expression: Annotated[
        str,
        typer.Argument(
            metavar="EXPR",
            help='A generating function in one variable, e.g. "1/(1 - x - x^2)": whole numbers, '
            "the variable, + - * / ^ (or **) and parentheses; 2x means 2*x.",
        ),
    ],
    upto: Annotated[
        int, typer.Option("--upto", metavar="N", parser=count_parser("upto", 0), help="Last degree to expand to.")
    ] = 10,
    var: Var = "x",
    max_memory: MaxMemory = None,
    max_seconds: MaxSeconds = None,
    as_json: Json = False,
) -> None:
    """Expand a generating function exactly and print its coefficients up to x^N.

    Polynomials, products, powers and quotients are expanded by the exact
    series kernel, never in floating point. An exponent may be any whole
    number (2^64 is ordinary) or a fraction such as 1/2 when the base's
    constant term has a rational power (1, or a perfect square for 1/2):
    such powers go by Miller's recurrence, at a cost that grows with the
    exponent's digits, not its size. A denominator whose constant term is not
    1 or -1 gives fractions, printed as p/q. Start the expression with a
    space (or put -- before it) if it begins with a minus sign.

    Example:

        $ enumerator coeff "1/(1 - x - x^2)" --upto 20
        $ enumerator coeff "1/((1-x)(1-x^2)(1-x^5)(1-x^10))" --upto 100 --json
        $ enumerator coeff "(1 + z)^5/(2 - z)" --var z --upto 6
        $ enumerator coeff "(1 + x)^(1/2)" --upto 5
        $ enumerator coeff "(1 + x)^(2^64)" --upto 3 --json
    """
    from ..algorithms.generating import extract_coefficients

    top = as_count(upto, "--upto")
    with limits_scope(max_memory, max_seconds):
        values = extract_coefficients(expression, top, var)
    if as_json:
        emit_json({"expression": expression, "variable": var, "coefficients": [exact(c) for c in values]})
        return
    show_table(
        f"Coefficients of {expression.strip()} in powers of {var}",
        ["degree", "coefficient"],
        [[str(m), c] for m, c in enumerate(values)],
    )

