"""The ``enumerator`` application: the root command group, the error wrapper and ``main``.

Every command parses its options into an :class:`~enumerator.facade.Occupancy`
(:func:`~enumerator.cli.options.build_model`), calls one or two library
functions and prints the answer either as rich tables for people or, with
``--json``, as one JSON object for programs
(:func:`~enumerator.cli.render.emit_json`).  No counting happens in the CLI.

Layout, for whoever adds a command:

1. :mod:`~enumerator.cli.options` — the shared options (``Annotated``
   aliases), :func:`~enumerator.cli.options.build_model`,
   :func:`~enumerator.cli.options.store_scope`,
   :func:`~enumerator.cli.options.parse_config`;
2. :mod:`~enumerator.cli.render` — tables, the JSON encoding, CSV/JSONL rows;
3. one module per command group, each with a ``commands = typer.Typer()``
   holding its commands (the docstring is the ``--help`` text: one line,
   then an Example block); list each command in :data:`COMMANDS` below;
4. this module: :class:`_Group`, the error wrapper, which turns every
   failure into one line on stderr: exit 2 for bad input (any
   :class:`~enumerator.core.errors.EnumeratorError`, any usage error), exit 1
   for an internal failure (traceback only with ``ENUMERATOR_DEBUG=1``).

A command's module is imported, and its click command built, only when that
command runs or ``--help`` lists it, so ``enumerator count ...`` never loads
the code (or the typer parameters) of ``compare`` or ``levels``.
"""

from __future__ import annotations

import errno
import importlib
import os
import re
import sys
import traceback
from collections.abc import MutableMapping
from typing import Dict, Iterator, Optional, Sequence

import typer
from typer.core import TyperGroup

try:  # recent typer releases vendor click as typer._click
    from typer._click.exceptions import ClickException, NoArgsIsHelpError
except ImportError:  # pragma: no cover - older typer on top of click
    from click.exceptions import ClickException, NoArgsIsHelpError

from ..core.errors import EnumeratorError

__all__ = ["COMMANDS", "FLAGS", "app", "main"]

#: Every command of the root group in ``--help`` order, and the module
#: (under :mod:`enumerator.cli`) whose ``commands`` Typer defines it.
COMMANDS: Dict[str, str] = {
    "count": "counts",
    "prob": "counts",
    "dist": "counts",
    "list": "counts",
    "gf": "series",
    "coeff": "series",
    "sample": "sampling",
    "ways": "ways",
    "threshold": "threshold",
    "demo": "demo",
    "compare": "compare",
    "levels": "physics",
    "contact": "contact",
    # typer always listed the sub-groups after the plain commands; kept so.
    "table": "tables",
    "cache": "tables",
}

#: How the CLI spells the library parameters that error messages ask to
#: change (``limit=`` in the library's words is ``--limit`` here); see
#: :meth:`~enumerator.core.errors.EnumeratorError.spelled`.
FLAGS: Dict[str, str] = {
    "at": "--at",
    "balls": "--balls",
    "bounds": "--bounds",
    "capacity": "--capacity",
    "cluster": "--cluster",
    "degeneracies": "--degeneracies",
    "digits": "--digits",
    "dimension": "--dimension",
    "energies": "--energies",
    "event": "--event",
    "factor": "--factor",
    "gap": "--gap",
    "geometric": "--geometric",
    "levels": "--levels",
    "limit": "--limit",
    "max_energy": "--max-energy",
    "max_memory": "--max-memory",
    "max_seconds": "--max-seconds",
    "minimum": "--minimum",
    "name": "--name",
    "no_cache": "--no-cache",
    "oscillators": "--oscillators",
    "particles": "--particles",
    "pattern": "--pattern",
    "preset": "--preset",
    "route": "--route",
    "rule": "--rule",
    "seed": "--seed",
    "size": "--size",
    "start": "--start",
    "step": "--step",
    "store": "--store",
    "stop": "--stop",
    "target": "--target",
    "temperatures": "--temperatures",
    "upto": "--upto",
    "urns": "--urns",
    "var": "--var",
    "vary": "--vary",
    "weights": "--weights",
    "workers": "--workers",
}


class _LazyCommands(MutableMapping):
    """The root group's commands, each built on first access.

    Parameters
    ----------
    names : dict of str to str
        Command name -> module under :mod:`enumerator.cli` (:data:`COMMANDS`).

    Notes
    -----
    Iteration gives the names in :data:`COMMANDS` order without building
    anything; looking a name up imports its module and builds only that
    click command (typer's per-parameter setup is the costly part).  Cost of
    one lookup: importing one module and building one command's parameters.
    """

    def __init__(self, names: Dict[str, str]):
        self._names = dict(names)
        self._built: dict = {}

    def __getitem__(self, name):
        if name not in self._built:
            if name not in self._names:
                raise KeyError(name)
            self._built[name] = _build(name, self._names[name])
        return self._built[name]

    def __setitem__(self, name, command):
        self._names.setdefault(name, "")
        self._built[name] = command

    def __delitem__(self, name):
        del self._names[name]
        self._built.pop(name, None)

    def __iter__(self) -> Iterator[str]:
        return iter(self._names)

    def __len__(self) -> int:
        return len(self._names)

    def __contains__(self, name) -> bool:
        return name in self._names


def _build(name: str, module: str):
    """The click command (or sub-group) *name* defined in ``enumerator.cli.<module>``.

    Parameters
    ----------
    name : str
        The command's name on the command line.
    module : str
        The module under :mod:`enumerator.cli` whose ``commands`` Typer holds it.

    Returns
    -------
    click.Command

    Raises
    ------
    LookupError
        The module does not define *name* (a programming error).

    Notes
    -----
    Builds only this command, with the root application's typer settings.
    Cost: importing *module* and one command's parameter setup.
    """
    commands: typer.Typer = importlib.import_module(f"{__package__}.{module}").commands
    settings = {"pretty_exceptions_short": app.pretty_exceptions_short, "rich_markup_mode": app.rich_markup_mode}
    for info in commands.registered_commands:
        if info.name == name:
            return typer.main.get_command_from_info(info, **settings)
    for info in commands.registered_groups:
        if info.name == name:
            return typer.main.get_group_from_info(info, suggest_commands=app.suggest_commands, **settings)
    raise LookupError(f"enumerator.cli.{module} defines no command {name!r}")


# --------------------------------------------------------------------------
# The error wrapper
# --------------------------------------------------------------------------
class _Group(TyperGroup):
    """The application's command group: lazy commands, and one place that handles every failure."""

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self.commands = _LazyCommands(COMMANDS)

    def list_commands(self, ctx) -> list:
        """The command names in ``--help`` order (without building the commands)."""
        return list(self.commands)

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        """Run the application; every outcome ends in :func:`sys.exit` with the contract's code.

        Parameters
        ----------
        args : sequence of str, optional
            The command line (default ``sys.argv[1:]``).
        prog_name, complete_var, standalone_mode, **extra
            As for :meth:`click.Command.main`; the group always runs click in
            non-standalone mode and handles the failures itself.

        Raises
        ------
        SystemExit
            Always: 0 on success, 2 for bad input (one ``Error: ...`` line on
            stderr), 1 for an internal failure, 130 when interrupted.

        Notes
        -----
        Library errors are printed with their parameters spelled as flags
        (:data:`FLAGS`).  Python's limit on int<->str conversion is lifted so
        counts of any length print.
        """
        # Counts of 100,000+ digits must print in full (and big ranks parse).
        sys.set_int_max_str_digits(0)
        try:
            result = super().main(
                args=args, prog_name=prog_name, complete_var=complete_var,
                standalone_mode=False, **extra,
            )
        except EnumeratorError as error:
            _fail(f"Error: {error.spelled(FLAGS)}", 2)
        except NoArgsIsHelpError as error:
            error.show()
            sys.exit(error.exit_code)
        except ClickException as error:
            hint = ""
            ctx = getattr(error, "ctx", None)
            if ctx is not None:
                hint = f" Try '{ctx.command_path} --help'."
            # typer reads some types (enum choices) through pydantic, whose wording starts "Value error, "
            message = _VALUE_ERROR.sub(r"\1", error.format_message().strip())
            if message and message[-1] not in ".?!":
                message += "."
            _fail(f"Error: {message}{hint}", error.exit_code)
        except BrokenPipeError:
            # The reader stopped early (``enumerator list | head``): not a failure.
            _silence_stdout()
            sys.exit(0)
        except SystemExit as stop:
            # rich (printing --help) and typer end a closed pipe with exit 1 (``enumerator count --help | head -1``)
            if stop.code == 1 and _pipe_closed():
                _silence_stdout()
                sys.exit(0)
            raise
        except KeyboardInterrupt:
            _fail("Interrupted.", 130)
        except OSError as error:
            if error.filename is None or error.errno not in _PATH_ERRNOS:
                _internal(error)
            # a path the user gave that cannot be used (missing, not writable, full disk)
            _fail(f"Error: cannot use {str(error.filename)!r}: {error.strerror}; "
                  "choose a path in an existing folder you can write", 2)
        except Exception as error:  # noqa: BLE001 - the last line of defence
            _internal(error)
        sys.exit(result if isinstance(result, int) else 0)

    def invoke(self, ctx):
        """Invoke the chosen command; a closed pipe on stdout ends quietly with exit 0."""
        try:
            return super().invoke(ctx)
        except BrokenPipeError:
            # The reader stopped early (``enumerator list | head``): not a failure.
            # Caught here, before click's own EPIPE handler turns it into exit 1.
            _silence_stdout()
            raise typer.Exit(0) from None


#: The prefix pydantic puts before a validator's message (``Value error, 'bogus' is not one of ...``).
_VALUE_ERROR = re.compile(r"(^|: )Value error, ")


def _pipe_closed() -> bool:
    """True when stdout was a pipe its reader closed, as rich and typer leave it after the failed write.

    rich points the stdout descriptor at ``os.devnull`` (``Console.on_broken_pipe``)
    and typer wraps ``sys.stdout`` in ``PacifyFlushWrapper``; a real /dev/null
    never breaks, so neither happens without a closed pipe.  Cost: two ``stat`` calls.
    """
    if type(sys.stdout).__name__ == "PacifyFlushWrapper":
        return True
    try:
        return os.path.samestat(os.fstat(sys.stdout.fileno()), os.stat(os.devnull))
    except (OSError, ValueError, AttributeError):
        return False


#: errno values of an unusable path the user gave (exit 2, not an internal error).
_PATH_ERRNOS = frozenset({errno.ENOENT, errno.EACCES, errno.EPERM, errno.ENOTDIR, errno.EISDIR, errno.EEXIST,
                          errno.EROFS, errno.ENOSPC, errno.EDQUOT, errno.ENAMETOOLONG, errno.ELOOP})


def _internal(error: BaseException) -> None:
    """Report *error* as our own bug: one line, exit 1 (a traceback with ``ENUMERATOR_DEBUG=1``)."""
    if os.environ.get("ENUMERATOR_DEBUG", "").strip() not in ("", "0"):
        traceback.print_exc()
    _fail(
        f"Internal error: {type(error).__name__}: {error} "
        "(this is a bug; set ENUMERATOR_DEBUG=1 for a traceback)",
        1,
    )


def _fail(message: str, code: int) -> None:
    """Write *message* as one line on stderr and exit with *code*.

    Parameters
    ----------
    message : str
        Whitespace (newlines included) is collapsed to single spaces.
    code : int
        The exit code.

    Raises
    ------
    SystemExit
        Always.
    """
    line = " ".join(str(message).split())
    try:
        sys.stdout.flush()
    except (BrokenPipeError, ValueError):
        _silence_stdout()
    sys.stderr.write(line + "\n")
    sys.stderr.flush()
    sys.exit(code)


def _silence_stdout() -> None:
    """Point stdout at /dev/null so the interpreter's final flush cannot fail."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        pass


app = typer.Typer(
    cls=_Group,
    name="enumerator",
    help=(
        "Exact counts, probabilities and listings for n balls placed in r labelled urns.\n\n"
        "Rules: MB (Maxwell–Boltzmann) distinguishable balls, every assignment of balls "
        "to urns equally likely; BE (Bose–Einstein) identical balls, every occupancy "
        "vector equally likely; FD (Fermi–Dirac) identical balls, at most one per urn, "
        "every occupancy vector equally likely.\n\n"
        "Add --json to any command for one JSON object (exact numbers as strings)."
    ),
    add_completion=False,
    no_args_is_help=True,
    pretty_exceptions_enable=False,
    context_settings={"help_option_names": ["-h", "--help"]},
)


@app.callback()
def _root() -> None:
    # The commands are supplied lazily by _Group; typer needs a callback (or a
    # registered command) to make the root a group.  It runs before every
    # command and has nothing to do.
    pass


def main(argv: Optional[Sequence[str]] = None) -> None:
    """Run the command line tool (the ``enumerator`` console script).

    Parameters
    ----------
    argv : sequence of str, optional
        The arguments (default ``sys.argv[1:]``).

    Raises
    ------
    SystemExit
        Always, with the exit code of the contract (0, 1 or 2).
    """
    typer.main.get_command(app).main(args=argv)
