"""``sample``: exact random draws from the rule's law, streamed (never through the result store)."""

import itertools
from typing import Annotated, Optional

import typer

from ..core.model import as_count
from .counts import SPARSE_URNS, Sparse
from .options import (
    Balls,
    Bounds,
    Capacity,
    Json,
    ListFormat,
    MaxMemory,
    MaxSeconds,
    Minimum,
    RuleOpt,
    Urns,
    Weights,
    build_problem,
    limits_scope,
    whole_option,
)
from .render import write_sparse, write_vectors

__all__ = ["commands"]

#: The commands of this module, merged into the root application by :mod:`enumerator.cli.app`.
commands = typer.Typer()


def _method(text) -> str:
    """Check ``--method`` at parse time against the library's methods, so a typo names the option."""
    from ..algorithms.sampling import METHODS

    if text not in METHODS:
        raise typer.BadParameter(f"method must be one of {', '.join(METHODS)} (got {text!r})")
    return text


@commands.command("sample")
def sample_command(
    balls: Balls,
    urns: Urns = None,
    rule: RuleOpt = "MB",
    capacity: Capacity = None,
    minimum: Minimum = None,
    bounds: Bounds = None,
    weights: Weights = None,
    size: Annotated[int, whole_option("--size", name="size", help="How many configurations to draw.")] = 10,
    seed: Annotated[
        Optional[int],
        whole_option("--seed", name="seed", help="Seed (a whole number): the same seed gives the same draws. "
                     "Default: a fresh random seed (shown in --json)."),
    ] = None,
    fmt: Annotated[
        ListFormat,
        typer.Option(
            "--format",
            case_sensitive=False,
            help="csv: a header k1,...,kr then one row per draw; jsonl: one JSON array per line.",
        ),
    ] = ListFormat.csv,
    method: Annotated[
        Optional[str],
        typer.Option(
            "--method",
            parser=_method,
            metavar="stars-and-bars|subset|uniform-balls|rejection|sequential",
            help="Force one exact method where it applies (same law; the default picks the fastest).",
        ),
    ] = None,
    sparse: Sparse = False,
    max_memory: MaxMemory = None,
    max_seconds: MaxSeconds = None,
    as_json: Json = False,
) -> None:
    """Draw random configurations exactly from the rule's law, streaming.

    BE and FD: every admissible occupancy vector equally likely (with
    --weights, in proportion to prod(w_i^k_i)); MB: vector k with probability
    n!/(k1!...kr!) prod(w_i/sum(w))^k_i, conditioned on the bounds. Exact
    integer arithmetic throughout (no floating-point bias); --seed makes the
    draws reproducible, and a smaller --size gives the first rows of a larger
    one. With --sparse, or more than 1,048,576 urns (or dense rows beyond
    --max-memory), each draw is written as its occupied urns and their counts
    (csv: draw,occupied with "urn:count" pairs), by the exact group sampler:
    the same law, but a seed gives other draws than in the dense form.
    prob --config takes such pairs back.

    Example:

        $ enumerator sample -n 10 -r 4 --rule BE --size 5 --seed 1
        $ enumerator sample -n 1000 -r 100 --size 100000 --seed 7 > draws.csv
        $ enumerator sample -n 6 -r 3 --capacity 3 --size 3 --seed 2 --format jsonl
        $ enumerator sample -n 3 -r 2^64 --size 2 --seed 1
    """
    with limits_scope(max_memory, max_seconds):
        _sample(balls, urns, rule, capacity, minimum, bounds, weights, size, seed, fmt, method, sparse, as_json)


def _sample(balls, urns, rule, capacity, minimum, bounds, weights, size, seed, fmt, method, sparse,
            as_json) -> None:
    """The body of ``sample``, under the command's work limits (the options as parsed)."""
    import secrets

    from ..algorithms.sampling import dense_sample_cost, iter_sample_blocks, sampling_method
    from ..core.limits import active_limits

    # The bare description, not the facade: draws never go through the result store.
    model = build_problem(balls, urns, rule, capacity, minimum, bounds, weights)
    size = as_count(size, "--size")
    seed = secrets.randbits(63) if seed is None else as_count(seed, "--seed")
    if sparse or model.urns > SPARSE_URNS or dense_sample_cost(model).memory > active_limits().memory:
        _sample_sparse(model, size, seed, fmt, method, as_json)
        return
    stream = iter_sample_blocks(model, size, seed, method)
    first = next(stream, None)  # plans the draw, so a bad model fails before any output
    blocks = (block for block in itertools.chain([first] if first is not None else [], stream) if len(block))
    head = None
    if as_json:
        head = '"rule": "%s", "balls": "%d", "urns": "%d", "seed": "%d", "method": "%s"' % (
            model.rule.value, model.balls, model.urns, seed, method or sampling_method(model))
    write_vectors(blocks, model.urns, fmt, head, "size")



def _sample_sparse(model, size: int, seed: int, fmt, method, as_json: bool) -> None:
    """Write *size* sparse draws (the occupied urns with their counts) by the exact group sampler."""
    from ..algorithms.sampling import iter_sample_sparse
    from ..core.errors import InvalidParameters

    if method not in (None, "groups"):
        raise InvalidParameters(
            f"sparse draws use the method 'groups' (got --method {method}); leave --method out"
        )
    stream = iter_sample_sparse(model, size, seed)
    first = next(stream, None)  # plans the draw, so a bad model fails before any output
    rows = itertools.chain([first] if first is not None else [], stream)
    head = None
    if as_json:
        head = '"rule": "%s", "balls": "%d", "urns": "%d", "seed": "%d", "method": "groups"' % (
            model.rule.value, model.balls, model.urns, seed)
    write_sparse(rows, fmt, head, "size", "draw", 1)
