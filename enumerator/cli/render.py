"""Rendering for the command line: rich tables for people, JSON and CSV/JSONL rows for programs.

- :func:`exact` and :func:`emit_json` — the JSON encoding (DESIGN.md): exact
  integers are strings of decimal digits, exact rationals are
  ``str(Fraction)`` (``"p/q"`` in lowest terms, ``"p"`` when ``q = 1``);
  floats appear only in fields named ``approx``/``float``.  Exact values go
  through :mod:`enumerator.core.exact`, the project's one codec.
- :func:`show_table` — a rich table that never cuts a long number: an exact
  value of more than :data:`LONG_DIGITS` digits shows in the table as a
  correctly rounded decimal with its digit count (:func:`scientific`) and is
  written whole after the table.
- :func:`write_vectors` and :func:`format_rows` — streaming CSV, JSONL or
  one JSON object from numpy blocks of occupancy vectors.

rich and numpy are imported inside the functions that use them, so a
command that prints JSON never loads rich and one that prints no vectors
never loads numpy.
"""

from __future__ import annotations

import functools
import json
import math
import re
import sys
from fractions import Fraction
from typing import TYPE_CHECKING, Iterable, Optional, Sequence

from .options import ListFormat

if TYPE_CHECKING:  # pragma: no cover - annotations only
    from rich.console import Console

    from ..facade import Occupancy

__all__ = [
    "LONG_DIGITS",
    "NARROW",
    "abbreviate",
    "approx",
    "console",
    "describe",
    "JsonNumber",
    "emit_json",
    "exact",
    "float_cell",
    "json_float",
    "json_text",
    "format_rows",
    "human",
    "pyplot",
    "scientific",
    "show_table",
    "write_sparse",
    "write_vectors",
]

#: A value column narrower than this still gets the value in the table.
NARROW = 12
#: Exact values with more digits than this show rounded in tables (:func:`human`).
LONG_DIGITS = 40
#: Digits (numerator and denominator together) above which a table does not
#: write an exact number out after it: the rounded form and the digit count
#: stand, and ``--json`` prints the value exactly.
SPILL_DIGITS = 10_000
#: Significant digits of the rounded form of a long value.
SIGNIFICANT = 5


def exact(value) -> str:
    """Encode an exact number for JSON and tables.

    Parameters
    ----------
    value : int or Fraction
        Any size.

    Returns
    -------
    str
        Decimal digits, or ``"p/q"`` in lowest terms.

    Notes
    -----
    Delegates to :func:`enumerator.core.exact.exact_text` (gmpy2 for large
    values).  Cost: quasi-linear in the number of digits.
    """
    from ..core.exact import exact_text

    return exact_text(value)


class JsonNumber:
    """A JSON number written as its literal text, for an approximation beyond the double range.

    JSON numbers have no range: ``1.2345678901234567e-500`` is a valid
    number, which a reader parsing with ``Decimal`` or mpmath gets right and
    one parsing as a double reads as ``0.0``.  :func:`emit_json` writes the
    text unquoted; :func:`json_float` makes one where a float would lose it.
    """

    __slots__ = ("text",)

    _NUMBER = re.compile(r"-?(?:0|[1-9][0-9]*)(?:\.[0-9]+)?(?:[eE][-+]?[0-9]+)?")

    def __init__(self, text: str):
        if not self._NUMBER.fullmatch(text):
            raise ValueError(f"not a JSON number: {text!r}")
        self.text = text

    def __repr__(self) -> str:
        return f"JsonNumber({self.text!r})"

    def __eq__(self, other) -> bool:
        return isinstance(other, JsonNumber) and other.text == self.text

    def __hash__(self) -> int:
        return hash(self.text)


#: Marks a :class:`JsonNumber` inside the text ``json.dumps`` writes: a lone
#: surrogate, which no payload can hold otherwise (it cannot be written to
#: a UTF-8 stdout), around the number's text.
_MARK = "\ud800"
_MARKED = re.compile('"' + _MARK + "([-+.0-9eE]+)" + _MARK + '"')


def _mark(value):
    if isinstance(value, JsonNumber):
        return _MARK + value.text + _MARK
    raise TypeError(f"Object of type {type(value).__name__} is not JSON serializable")


def json_text(payload) -> str:
    """The JSON text of *payload* on one line: ``json.dumps`` with :class:`JsonNumber` values written unquoted.

    Parameters
    ----------
    payload : dict, list or scalar
        Exact numbers already encoded as strings (:func:`exact`).

    Returns
    -------
    str
        Exactly ``json.dumps(payload, ensure_ascii=False)`` when the payload
        holds no :class:`JsonNumber`.

    Examples
    --------
    >>> json_text({"p_approx": JsonNumber("1.2e-500"), "q_approx": 0.5})
    '{"p_approx": 1.2e-500, "q_approx": 0.5}'
    """
    text = json.dumps(payload, ensure_ascii=False, default=_mark)
    if _MARK in text:
        text = _MARKED.sub(r"\1", text)
    return text


def json_float(x, significant: int = 17):
    """An approximation for a JSON ``_approx`` field: a float, or a :class:`JsonNumber` beyond the double range.

    Parameters
    ----------
    x : float, int, Fraction, mpmath number or None
        ``None`` stays ``None``.
    significant : int
        Significant digits of a value written as text (17: as many as a
        double's shortest round trip can need).

    Returns
    -------
    float, JsonNumber or None
        ``float(x)`` when that is zero or a normal double (the same float as
        before); otherwise, for a nonzero value below ``2.2e-308`` (where a
        double is 0.0 or subnormal, with fewer digits) or above ``1.8e308``,
        its *significant* digits and true exponent as a JSON number
        (``1.2345678901234567e-500``).  Infinities and NaN stay floats.

    Notes
    -----
    One ``float()`` and, beyond the range, one mpmath decimal conversion
    (quasi-linear in *significant*).

    Examples
    --------
    >>> import mpmath
    >>> json_float(mpmath.mpf("0.25")), json_float(mpmath.exp(-10000))
    (0.25, JsonNumber('1.1354838653147362e-4343'))
    """
    if x is None:
        return None
    try:
        f = float(x)
    except OverflowError:  # an int or Fraction beyond the range
        f = math.inf if x > 0 else -math.inf
    if (f == 0 and x == 0) or (math.isfinite(f) and abs(f) >= sys.float_info.min):
        return f
    import mpmath

    with mpmath.workdps(significant + 10):
        value = mpmath.mpf(x.numerator) / x.denominator if isinstance(x, Fraction) else mpmath.mpf(x)
    if not mpmath.isfinite(value):
        return f
    # mpmath writes such a value in exponent form, correctly rounded: '1.2345678901234567e-500'.
    return JsonNumber(mpmath.nstr(value, significant, strip_zeros=False, min_fixed=1, max_fixed=0))


def emit_json(payload: dict) -> None:
    """Print *payload* as one JSON object on one line of stdout.

    Parameters
    ----------
    payload : dict
        Already encoded: exact numbers as strings (:func:`exact`); an
        approximation beyond the double range as a :class:`JsonNumber`
        (:func:`json_float`), written as an unquoted number.

    Notes
    -----
    :func:`json_text`.  Cost: linear in the size of the payload.
    """
    sys.stdout.write(json_text(payload) + "\n")
    sys.stdout.flush()


def approx(value: Fraction) -> float:
    """The nearest float to an exact fraction (for ``approx`` fields and cells only).

    Parameters
    ----------
    value : Fraction or int

    Returns
    -------
    float

    Notes
    -----
    Correctly rounded to the nearest float: ``Fraction.__float__`` for small
    values; past a few thousand bits, an MPFR enclosure of 128 bits rounded
    to 53 at both ends (equal ends are the nearest float: rounding is
    monotone), else MPFR's correctly rounded quotient of the whole fraction.
    Values beyond the float range give ``±inf`` or ``0.0``.  Cost: reading
    the top bits, or quasi-linear in the digits when the ends differ.
    """
    if isinstance(value, int) and value.bit_length() <= 1000:
        return float(value)
    numerator, denominator = value.numerator, value.denominator
    if max(numerator.bit_length(), denominator.bit_length()) <= 4000:
        return float(value)
    import gmpy2

    p, q = gmpy2.mpz(abs(numerator)), gmpy2.mpz(denominator)
    sign = -1.0 if numerator < 0 else 1.0
    # an enclosure from the top bits, rounded to 53 bits at both ends: when they agree that is the
    # nearest float, without a gcd or a division of the whole numbers
    with gmpy2.context(gmpy2.get_context(), precision=53, emax=1 << 30, emin=-(1 << 30)):
        low, high = (float(gmpy2.mpfr(end)) for end in _enclosure(p, q, 128))
    if low == high:
        return sign * low
    with gmpy2.context(gmpy2.get_context(), precision=53, emax=1 << 30, emin=-(1 << 30)):
        x = gmpy2.mpfr(gmpy2.mpq(numerator, denominator))
    return float(x)


def _enclosure(p, q, bits: int):
    """MPFR numbers ``low <= p/q <= high`` of *bits* significant bits each (directed rounding).

    ``p``, ``q`` positive integers of any size; cost independent of their size
    beyond reading their top bits.
    """
    import gmpy2

    ends = []
    for way, back in ((gmpy2.RoundDown, gmpy2.RoundUp), (gmpy2.RoundUp, gmpy2.RoundDown)):
        with gmpy2.context(gmpy2.get_context(), precision=bits, emax=1 << 40, emin=-(1 << 40)) as ctx:
            ctx.round = way
            top = gmpy2.mpfr(p)
            ctx.round = back
            bottom = gmpy2.mpfr(q)
            ctx.round = way
            ends.append(top / bottom)
    return ends[0], ends[1]


def float_cell(x) -> str:
    """A table cell for an approximate value: 6 significant digits, ``-`` for none.

    Parameters
    ----------
    x : float, mpmath number, Fraction or None

    Returns
    -------
    str
        ``format(float(x), ".6g")``, or ``"-"`` when *x* is None; a value
        beyond the double range (an mpmath number of 1e-4343, which
        ``float`` makes 0.0) in the same form from its own digits.

    Examples
    --------
    >>> import mpmath
    >>> float_cell(0.125), float_cell(None), float_cell(mpmath.exp(-10000))
    ('0.125', '-', '1.13548e-4343')
    """
    if x is None:
        return "-"
    cell = json_float(x, 6)
    if isinstance(cell, JsonNumber):  # as .6g writes it: no trailing zeros, no bare point
        return re.sub(r"\.?0*e", "e", cell.text) if "." in cell.text else cell.text
    return f"{cell:.6g}"


#: The message of :func:`pyplot` when matplotlib is missing.
PLOT_EXTRA = "plots need matplotlib: pip install 'enumerator[plot]'"


def pyplot(missing: str = PLOT_EXTRA):
    """matplotlib's pyplot on the non-interactive Agg backend, imported on first use.

    Parameters
    ----------
    missing : str
        The message of the error when matplotlib is not installed.

    Returns
    -------
    module
        ``matplotlib.pyplot``.

    Raises
    ------
    Unsupported
        matplotlib is not installed (the ``plot`` extra).

    Notes
    -----
    The one place the command line loads matplotlib: the plots of ``levels``,
    ``contact`` and ``compare`` draw without a display, into files.
    """
    try:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
    except ImportError:  # pragma: no cover - depends on the installation
        from ..core.errors import Unsupported

        raise Unsupported(missing) from None
    return plt


def scientific(value, significant: int = SIGNIFICANT) -> str:
    """Write an exact number as a correctly rounded decimal ``d.dddde+EXP``, computed exactly.

    Parameters
    ----------
    value : int or Fraction
        Any size, any sign.
    significant : int
        Significant digits of the mantissa (at least 1).

    Returns
    -------
    str
        ``"1.2346e+1000000"`` style text: the mantissa rounded half to even
        from the exact value (never through a float, so exponents far beyond
        the float range are right), the exponent in decimal.

    Examples
    --------
    >>> scientific(123456789), scientific(-10**100), scientific(Fraction(1, 3))
    ('1.2346e+8', '-1.0000e+100', '3.3333e-1')
    >>> scientific(99999999)  # rounding carries into the exponent
    '1.0000e+8'

    Notes
    -----
    Cost: one exact division of the value by a power of ten, quasi-linear in
    its digits with GMP (a million-digit integer in a few milliseconds).  A
    value of moderate size whose numerator or denominator passes 4,000 bits
    (a probability, a mean) is first enclosed
    between two short binary fractions (MPFR, rounding down and up, 64 bits
    more than the mantissa needs); rounding is monotone, so when both ends
    round alike that is the answer, at a cost independent of the digits.
    """
    import gmpy2

    if value == 0:
        return "0." + "0" * (significant - 1) + "e+0"
    sign = "-" if value < 0 else ""
    p = gmpy2.mpz(abs(value.numerator))
    q = gmpy2.mpz(value.denominator)
    if max(p.bit_length(), q.bit_length()) > 4000 and abs(p.bit_length() - q.bit_length()) < 4000:
        low, high = (Fraction(*end.as_integer_ratio()) for end in _enclosure(p, q, 4 * significant + 64))
        text = _rounded(gmpy2.mpz(low.numerator), gmpy2.mpz(low.denominator), significant)
        if text == _rounded(gmpy2.mpz(high.numerator), gmpy2.mpz(high.denominator), significant):
            return sign + text
    return sign + _rounded(p, q, significant)


def _rounded(p, q, significant: int) -> str:
    """``p/q`` (positive ``mpz``) rounded half to even to *significant* digits, exactly: the body of :func:`scientific`."""
    import gmpy2

    from ..core.exact import decimal_digits

    # exponent e with 10^e <= p/q < 10^(e+1); estimated from the digit counts, then corrected
    e = decimal_digits(p) - decimal_digits(q)
    below = p < q * gmpy2.mpz(10) ** e if e >= 0 else p * gmpy2.mpz(10) ** (-e) < q
    if below:
        e -= 1
    shift = significant - 1 - e  # mantissa digits: p/q * 10^shift in [10^(s-1), 10^s)
    if shift >= 0:
        top, bottom = p * gmpy2.mpz(10) ** shift, q
    else:
        top, bottom = p, q * gmpy2.mpz(10) ** (-shift)
    m, rest = gmpy2.f_divmod(top, bottom)
    twice = 2 * rest
    if twice > bottom or (twice == bottom and m % 2 == 1):
        m += 1
    if m == gmpy2.mpz(10) ** significant:  # 9.99995 rounded up to 10.000
        m //= 10
        e += 1
    digits = str(int(m))
    mantissa = digits[0] + ("." + digits[1:] if significant > 1 else "")
    return f"{mantissa}e{'+' if e >= 0 else '-'}{abs(e)}"


def human(value) -> str:
    """An exact number for a table cell: whole when short, rounded with its digit count when long.

    Parameters
    ----------
    value : int or Fraction

    Returns
    -------
    str
        :func:`exact` text up to :data:`LONG_DIGITS` digits; beyond,
        ``"1.2346e+1000000 (1,000,001 digits)"`` (a fraction:
        ``"≈ 3.3333e-1 (p/q: 50/51 digits)"``).

    Notes
    -----
    Cost: quasi-linear in the digits (:func:`scientific`); the exact text is
    never built for a long value.
    """
    from ..core.exact import decimal_digits, is_exact_int

    if is_exact_int(value):
        length = decimal_digits(value)
        if length <= LONG_DIGITS:
            return exact(value)
        return f"{scientific(value)} ({length:,} digits)"
    top, bottom = decimal_digits(value.numerator), decimal_digits(value.denominator)
    if top + bottom <= LONG_DIGITS:
        return exact(value)
    return f"≈ {scientific(value)} (p/q: {top:,}/{bottom:,} digits)"


def _digits(value) -> int:
    """Decimal digits of an exact integer, or of a fraction's numerator and denominator together."""
    from ..core.exact import decimal_digits, is_exact_int

    if is_exact_int(value):
        return decimal_digits(value)
    return decimal_digits(value.numerator) + decimal_digits(value.denominator)


def _is_long(value) -> bool:
    """True for an exact number (not text) whose table cell would be :func:`human`'s rounded form."""
    if isinstance(value, str):
        return False
    return _digits(value) > LONG_DIGITS


def console() -> "Console":
    """A rich console on the current ``sys.stdout``.

    Returns
    -------
    rich.console.Console

    Notes
    -----
    Built per call so that a redirected ``sys.stdout`` (tests, pipes) is
    honoured.  The first call imports rich (tens of milliseconds).  A reader
    that stops early (``enumerator levels ... | head``) raises
    ``BrokenPipeError``, which the command wrapper ends quietly with exit 0
    (rich's own handling would exit 1).
    """
    return _pipe_console_class()(file=sys.stdout, highlight=False, soft_wrap=False)


@functools.lru_cache(maxsize=None)
def _pipe_console_class():
    """rich's ``Console`` raising ``BrokenPipeError`` on a closed pipe (made once, when rich is first needed)."""
    from rich.console import Console

    class PipeConsole(Console):
        def on_broken_pipe(self) -> None:
            self.quiet = True
            raise BrokenPipeError

    return PipeConsole


def plural(count: int, noun: str) -> str:
    """``"1 urn"``, ``"3 urns"``: a count with its noun, singular for exactly one.

    >>> plural(1, "urn"), plural(3, "ball"), plural(0, "entry")
    ('1 urn', '3 balls', '0 entries')
    """
    if count == 1:
        return f"1 {noun}"
    return f"{count} {noun[:-1]}ies" if noun.endswith("y") else f"{count} {noun}s"


def show_table(title: str, columns: Sequence[str], rows: Iterable[Sequence[str]]) -> None:
    """Print a rich table; values too wide for it follow the table in full.

    Parameters
    ----------
    title : str
        Printed in bold above the table.
    columns : sequence of str
        Column names; the first column is the row label.
    rows : iterable of sequence
        The cells: text, already encoded, or exact numbers (``int``,
        ``Fraction``), shown by :func:`human`.

    Notes
    -----
    A rich table folds long cells, which would cut a 100,000-digit count into
    pieces.  An exact number of more than :data:`LONG_DIGITS` digits shows in
    the table as a correctly rounded decimal with its digit count; a text
    cell too wide for the table gives its length instead; either way the
    exact value is then written on a line of its own, unbroken, as
    ``<row> = <value>`` (two columns) or ``<row>, <column> = <value>``,
    up to :data:`SPILL_DIGITS` digits; a larger number keeps its rounded form
    and a line with its digit count (``--json`` writes it exactly).  The width each value column may use is
    what the terminal leaves after the first column, shared equally.  Cost:
    linear in the total length of the cells.
    """
    from rich.table import Table

    rows = [list(row) for row in rows]
    out = console()
    first = max([len(columns[0])] + [len(row[0]) for row in rows])
    share = (out.width - first - 3 * len(columns) - 1) // max(1, len(columns) - 1)
    share = max(share, NARROW)
    table = Table()
    for i, name in enumerate(columns):
        table.add_column(name, justify="left" if i == 0 else "right", overflow="fold")
    spill = []
    for row in rows:
        cells = [row[0]]
        for i, cell in enumerate(row[1:], start=1):
            if not isinstance(cell, str):
                label = row[0] if len(columns) == 2 else f"{row[0]}, {columns[i]}"
                if _is_long(cell):
                    spill.append((label, cell))
                cells.append(human(cell))
                continue
            if len(cell) <= share:
                cells.append(cell)
                continue
            label = row[0] if len(columns) == 2 else f"{row[0]}, {columns[i]}"
            spill.append((label, cell))
            unit = "digits" if cell.isdigit() else "characters"
            note = f"{len(cell):,} {unit}, see below"
            cells.append(note if len(note) <= share else "see below")
        table.add_row(*cells)
    out.print(title, style="bold")
    out.print(table)
    for label, cell in spill:
        if isinstance(cell, str):
            sys.stdout.write(f"{label} = {cell}\n")
        elif _digits(cell) > SPILL_DIGITS:
            sys.stdout.write(f"{label}: {_digits(cell):,} digits in all, too many to write here; "
                             "--json prints the value exactly\n")
        else:
            sys.stdout.write(f"{label} = {exact(cell)}\n")
    sys.stdout.flush()


def abbreviate(text: str, width: int = 10) -> str:
    """A long number as ``head…[digits]``, for previews only (exports are exact).

    Parameters
    ----------
    text : str
        The number's decimal digits (or any text).
    width : int
        Texts up to this length are returned whole.

    Returns
    -------
    str
        *text*, or its first two characters and its length: ``12…[2302]``.

    Notes
    -----
    Cost: constant beyond the length check.
    """
    if len(text) <= width:
        return text
    return f"{text[:2]}…[{len(text)}]"


def describe(model: "Occupancy") -> str:
    """One line naming the model, for the title of a table.

    Parameters
    ----------
    model : Occupancy

    Returns
    -------
    str
        Rule, balls, urns and the bounds in words (uniform bounds) or in the
        canonical ``a:b,...`` form (per-urn bounds).

    Notes
    -----
    Cost: constant for uniform bounds, linear in the groups otherwise
    (the model's canonical bounds).
    """
    text = (f"{model.rule.title} ({model.rule.value}): {plural(model.balls, 'ball')} in "
            f"{plural(model.urns, 'urn')}")
    if not model.is_uniform:
        return text + ", bounds " + model.canonical_bounds()
    if model.weighted:
        text += f", each of weight {exact(model.groups[0].weight)}"
    # The uniform bounds, read from the model's one group: never per urn, so a
    # title costs nothing however many urns there are.
    bounds = model.uniform_bounds_words()
    return text + ", " + bounds if bounds else text


def write_vectors(blocks, urns: int, fmt, json_head: Optional[str], count_field: str) -> None:
    """Stream blocks of occupancy vectors to stdout as csv, jsonl, or one JSON object.

    Parameters
    ----------
    blocks : iterable of numpy.ndarray
        Non-empty blocks of shape ``(rows, urns)``.
    urns : int
        The number of urns (the csv header ``k1,...,kr``).
    fmt : ListFormat
        ``csv`` or ``jsonl`` (ignored with *json_head*).
    json_head : str or None
        The JSON object's leading fields, already encoded; with it the
        vectors go under ``"configurations"`` and their number under
        *count_field*.
    count_field : str
        Name of the field counting the vectors in the JSON object.

    Notes
    -----
    Nothing is held beyond one block.  Cost: linear in the output, through
    :func:`format_rows`.
    """
    out = sys.stdout
    if json_head is not None:
        out.write("{" + json_head + ', "configurations": [')
        written = 0
        for block in blocks:
            # Rows "[k1,...,kr]," with the last comma dropped; one more comma between blocks.
            out.write(("," if written else "") + format_rows(block, "[", "],")[:-1])
            written += len(block)
        out.write('], "%s": "%d"}\n' % (count_field, written))
    elif fmt is ListFormat.csv:
        out.write(",".join(f"k{i}" for i in range(1, urns + 1)) + "\n")
        for block in blocks:
            out.write(format_rows(block))
    else:
        for block in blocks:
            out.write(format_rows(block, "[", "]\n"))
    out.flush()


def write_sparse(rows, fmt, json_head: Optional[str], count_field: str, index_name: str,
                 first_index: int = 0) -> None:
    """Stream sparse occupancy vectors (the occupied urns and their counts) as csv, jsonl or one JSON object.

    Parameters
    ----------
    rows : iterable of tuple of (int, int)
        Per vector, ``((urn, count), ...)``: the urns (1-based) holding at
        least one ball, ascending; the other urns are empty.
    fmt : ListFormat
        ``csv``: a header ``<index_name>,occupied`` then one line per vector,
        ``<index>,urn:count urn:count ...``; ``jsonl``: one JSON array of
        ``[urn, count]`` pairs per line.  Ignored with *json_head*.
    json_head : str or None
        The JSON object's leading fields, already encoded; with it the
        vectors go under ``"configurations"`` (arrays of pairs),
        ``"sparse": true`` is added and their number goes under *count_field*.
    count_field : str
        Name of the field counting the vectors in the JSON object.
    index_name : str
        The csv index column (``rank`` for listings, ``draw`` for samples).
    first_index : int
        The index of the first vector (the start rank, or 1 for draws).

    Notes
    -----
    One line per vector, whatever the number of urns: a vector costs its
    occupied urns, never ``r``.  Cost: linear in the output.
    """
    out = sys.stdout
    if json_head is not None:
        out.write("{" + json_head + ', "sparse": true, "configurations": [')
        written = 0
        for row in rows:
            out.write(("," if written else "") + "[" + ",".join(f"[{u},{k}]" for u, k in row) + "]")
            written += 1
        out.write('], "%s": "%d"}\n' % (count_field, written))
    elif fmt is ListFormat.csv:
        out.write(f"{index_name},occupied\n")
        for index, row in enumerate(rows, start=first_index):
            out.write(f"{index}," + " ".join(f"{u}:{k}" for u, k in row) + "\n")
    else:
        for row in rows:
            out.write("[" + ",".join(f"[{u},{k}]" for u, k in row) + "]\n")
    out.flush()


def format_rows(block, prefix: str = "", suffix: str = "\n") -> str:
    """Write each row of a block of occupancies as ``prefix k1,...,kr suffix``.

    Parameters
    ----------
    block : numpy.ndarray
        Shape ``(rows, urns)``, integer or object dtype.
    prefix, suffix : str
        ASCII text around each row.

    Returns
    -------
    str
        The rows, concatenated.

    Notes
    -----
    Vectorised with numpy: every entry is laid out as ``width`` decimal
    digits plus a comma in one byte array, leading zeros are masked away and
    the kept bytes are joined in one step — about five times faster than
    ``",".join`` over ``block.astype(str)`` (2 M rows of 10 urns in about a
    second).  Entries beyond 64-bit integers (object dtype) fall back to
    plain ``str``.  Cost: ``O(rows * urns * width)`` bytes of work and memory.
    """
    import numpy as np

    rows, urns = block.shape
    if block.dtype == object:
        return "".join(prefix + ",".join(map(str, row)) + suffix for row in block.tolist())
    values = block.astype(np.int64, copy=False)
    width = len(str(int(values.max())))
    digits = np.empty((rows, urns, width + 1), dtype=np.uint8)
    keep = np.ones((rows, urns, width + 1), dtype=bool)
    rest = values.copy()
    for j in range(width - 1, -1, -1):
        digits[:, :, j] = 48 + rest % 10
        rest //= 10
        if j < width - 1:
            keep[:, :, j] = values >= 10 ** (width - 1 - j)
    digits[:, :, width] = ord(",")

    def constant(text):
        raw = np.frombuffer(text.encode("ascii"), dtype=np.uint8)
        return np.broadcast_to(raw, (rows, raw.size)), np.ones((rows, raw.size), dtype=bool)

    body = (digits.reshape(rows, -1)[:, :-1], keep.reshape(rows, -1)[:, :-1])  # drop the last comma
    pieces = [constant(prefix)] * bool(prefix) + [body] + [constant(suffix)] * bool(suffix)
    table = np.concatenate([piece for piece, _ in pieces], axis=1)
    mask = np.concatenate([m for _, m in pieces], axis=1)
    return table[mask].tobytes().decode("ascii")
