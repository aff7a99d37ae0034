"""Approximations beyond the double range in the levels JSON (enumerator.cli.render.json_float/json_text).

JSON numbers have no range limit, so a probability of 1e-4343 is written as
the number literal ``1.1354838653147362e-4343``: read with ``Decimal`` it is
right, read as a double it is 0.0.  References beside each check: mpmath at
60 digits of the closed form of the 1D-trap boson law (below), Python's own
``json`` module (its text for every payload without such a number).
"""

from __future__ import annotations

import decimal
import json
import sys

import mpmath
import pytest
from cli_helpers import run
from hypothesis import given
from hypothesis import strategies as st

from enumerator.cli.render import JsonNumber, json_float, json_text

# JSON values as the CLI builds them: strings, ints, finite floats, None, bools, lists and dicts.
json_values = st.recursive(
    st.none() | st.booleans() | st.integers() | st.floats(allow_nan=False, allow_infinity=False) | st.text(),
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.text(), inner, max_size=4),
    max_leaves=20,
)


@given(json_values)
def test_text_without_out_of_range_numbers_is_pythons_json(payload):
    """Reference: json.dumps(payload, ensure_ascii=False), what emit_json wrote before."""
    assert json_text(payload) == json.dumps(payload, ensure_ascii=False)


def test_out_of_range_numbers_are_unquoted_literals_that_json_parses():
    payload = {"p_approx": JsonNumber("1.2345678901234567e-500"), "q": ["1e-500", JsonNumber("-3e+400")], "r": 0.5}
    text = json_text(payload)
    assert text == '{"p_approx": 1.2345678901234567e-500, "q": ["1e-500", -3e+400], "r": 0.5}'
    as_double = json.loads(text)  # Python's json: below the range 0.0, above it inf
    assert as_double["p_approx"] == 0.0 and as_double["q"] == ["1e-500", -float("inf")]
    exact = json.loads(text, parse_float=decimal.Decimal)
    assert exact["p_approx"] == decimal.Decimal("1.2345678901234567e-500")
    with pytest.raises(ValueError):
        JsonNumber("1e-500; rm")
    with pytest.raises(TypeError):
        json_text({"x": object()})  # anything else is still refused as json.dumps refuses it


@pytest.mark.parametrize("text", ["1e-500", "-2.5e-4000", "3e-310", "4.9e-324", "1.5e400", "-7e100000"])
def test_json_float_keeps_17_digits_and_the_true_exponent(text):
    """Reference: mpmath at 60 digits (the value itself) read back from the literal."""
    with mpmath.workdps(60):
        x = mpmath.mpf(text)
        out = json_float(x)
        assert isinstance(out, JsonNumber)
        back = mpmath.mpf(out.text)
        assert abs(back - x) <= abs(x) * mpmath.mpf("5e-17")
        digits = out.text.lstrip("-").split("e")[0].replace(".", "")
        assert len(digits) == 17


def test_json_float_inside_the_range_is_the_float():
    """Reference: float() itself (the encoding before this change)."""
    with mpmath.workdps(40):
        for text in ["0.25", "-1e-300", "2.2250738585072014e-308", "1.7e308", "123456.789"]:
            x = mpmath.mpf(text)
            assert json_float(x) == float(x) and isinstance(json_float(x), float)
    assert json_float(None) is None and json_float(0) == 0.0 and json_float(2.5) == 2.5
    assert json_float(mpmath.inf) == float("inf")
    # a subnormal double has fewer than 17 digits: written as text, with its exact value
    sub = json_float(sys.float_info.min / 2**20)
    assert isinstance(sub, JsonNumber) and decimal.Decimal(sub.text) > 0


def test_occupation_law_far_below_the_double_range():
    """1000 bosons in the 1D trap (levels 0, 1, 2, ...) at k_B T = 1/10: P(n_0 = k) from 1e-4343 up.

    Reference: Z_N = prod_{j<=N} (1 - x^j)^-1 (partitions into parts <= N; from memory, the closed
    form the issue names) and P(n_0 >= k) = Z_{N-k}/Z_N (ground energy 0; Weiss and Wilkens,
    from memory), so P(n_0 = k) = x^(N-k) prod_{N-k < j <= N} (1 - x^j), evaluated in mpmath at 60
    digits; mean and variance from those.
    """
    n = 1000
    result = run("levels", "--preset", "harmonic", "--particles", n, "--rule", "BE", "--temperatures", "0.1",
                 "--occupation-law", 0, "--report-levels", 3, "--json")
    assert result.exit_code == 0, result.output
    (line,) = result.stdout.splitlines()
    entry = json.loads(line, parse_float=decimal.Decimal)["canonical"][0]
    law = entry["occupation_law_approx"]
    assert list(law) == [str(k) for k in range(n + 1)]
    with mpmath.workdps(60):
        x = mpmath.exp(-10)
        ref, tail = [], mpmath.mpf(1)
        for k in range(n + 1):  # tail = prod_{N-k < j <= N} (1 - x^j)
            ref.append(x ** (n - k) * tail if k < n else tail)
            tail *= 1 - x ** (n - k)
        assert mpmath.fsum(ref) == pytest.approx(1, abs=1e-50)
        for k in range(n + 1):
            got = mpmath.mpf(str(law[str(k)]))
            assert abs(got - ref[k]) <= 1e-12 * ref[k], k
        assert ref[0] < mpmath.mpf("1e-4000")  # far below the double range, and written with its exponent
        mean = mpmath.fsum(k * p for k, p in enumerate(ref))
        var = mpmath.fsum((k - mean) ** 2 * p for k, p in enumerate(ref))
        assert abs(mpmath.mpf(str(entry["occupation_mean_approx"])) - mean) <= 1e-12 * mean
        assert abs(mpmath.mpf(str(entry["occupation_variance_approx"])) - var) <= 1e-12 * var
    # A reader parsing doubles gets 0.0 there, as before, and the rest as the same floats.
    doubles = json.loads(line)["canonical"][0]["occupation_law_approx"]
    assert doubles["0"] == 0.0 and doubles[str(n)] == float(law[str(n)])
    assert '"0": 1.13548386531473' in line


def test_table_cells_beyond_the_double_range_keep_their_digits():
    """Reference: mpmath's own decimal form at 6 digits; inside the range format(float(x), ".6g") as before."""
    from fractions import Fraction

    from enumerator.cli.render import float_cell

    with mpmath.workdps(30):
        tiny = mpmath.exp(-10000)
        assert float_cell(tiny) == mpmath.nstr(tiny, 6) == "1.13548e-4343"
    assert float_cell(Fraction(1, 10**500)) == "1e-500"  # float() made it 0.0
    assert float_cell(Fraction(10**400)) == "1e+400" and float_cell(-(10**400)) == "-1e+400"  # float() raised
    for x in (0.125, 1e-300, 123456789.0, 0, Fraction(1, 3)):
        assert float_cell(x) == format(float(x), ".6g")
    assert float_cell(None) == "-"
    big = json_float(Fraction(10**400, 3))
    assert isinstance(big, JsonNumber)
    with mpmath.workdps(30):  # an explicit tolerance: pytest.approx falls back to == for mpf
        assert abs(mpmath.mpf(big.text) / (mpmath.mpf(10) ** 400 / 3) - 1) < 1e-16
