"""The project's one exception family.

Every error a user can cause is an :class:`EnumeratorError`; the CLI turns it
into a one-line message and exit code 2.  Messages name the parameter, the rule
that was broken and what to change.
"""

from __future__ import annotations

__all__ = [
    "EnumeratorError",
    "InvalidConfiguration",
    "InvalidParameters",
    "StoreError",
    "TooLarge",
    "Unsupported",
]


class EnumeratorError(Exception):
    """Base class of every error raised on purpose by enumerator.

    Parameters
    ----------
    message : str
        What is wrong and what to change, naming library parameters (``limit=``),
        never command-line flags.
    parameters : sequence of str, optional
        The library parameters the message tells the user to change.  A front
        end that spells them differently (the CLI's ``--limit``) reads this to
        say so in its own words; see :meth:`spelled`.

    Examples
    --------
    >>> error = TooLarge("the listing exceeds the limit; raise limit=", parameters=["limit"])
    >>> error.spelled({"limit": "--limit"})
    'the listing exceeds the limit; raise --limit'
    >>> TooLarge("give balls=, or vary= balls=0..9", parameters=["balls", "vary"]).spelled(
    ...     {"balls": "--balls", "vary": "--vary"})
    'give --balls, or --vary balls=0..9'
    """

    #: Parameters a message of this class may name even when the raiser lists none.
    default_parameters: tuple = ()

    def __init__(self, *args, parameters=()):
        super().__init__(*args)
        self.parameters = tuple(parameters) or self.default_parameters

    def spelled(self, names) -> str:
        """The message with each named parameter (``limit=``) written as *names* spells it."""
        import re

        text = str(self)
        for parameter in self.parameters:
            flag = names.get(parameter)
            if flag:
                # 'limit=' as a word of its own, not 'balls=START..STOP' (an example of a value)
                text = re.sub(rf"(?<![\w-]){re.escape(parameter)}=(?![\w.])", lambda _, flag=flag: flag, text)
        return text


class InvalidParameters(EnumeratorError, ValueError):
    """A model parameter is malformed (negative, non-integer, inconsistent)."""


class InvalidConfiguration(EnumeratorError, ValueError):
    """An occupancy vector is malformed for its model (length, sum, sign)."""


class TooLarge(EnumeratorError):
    """The request is well formed but exceeds a size limit the user can raise."""


class Unsupported(EnumeratorError):
    """The request is well formed but this combination is not implemented."""


class StoreError(EnumeratorError):
    """The result store cannot be opened, read or written."""

    # its messages point at another store (store=) or at none (no_cache=)
    default_parameters = ("store", "no_cache")
