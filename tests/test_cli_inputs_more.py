"""More inputs that hung or printed raw messages: sized numbers in ``levels``, enum choices, --help into a closed pipe,
``compare --step/--geometric`` read as ``--balls`` is, and library messages spelled as flags.

Each refusal follows the error contract of DESIGN.md: exit 2, one ``Error:`` line naming the option the user
typed.  A number given as ``1e99999999`` would be expanded by ``fractions.Fraction`` into a hundred million
digits (Python's documented behaviour), so the refusal must come before it; the values that are accepted are
checked by plain arithmetic (``1e300 = 10^300``) and stars and bars (rung ``m`` of the 3D harmonic trap holds
``(m + 1)(m + 2)/2`` states).  A reader that closes its pipe early (``| head -1``) is success for a filter
(common practice: SIGPIPE/EPIPE).
"""

from __future__ import annotations

import os
import subprocess
import sys
from fractions import Fraction

import pytest
from cli_helpers import one_line_error, run, run_json

from enumerator.algorithms.levels import parse_factor, parse_rational, parse_temperatures
from enumerator.algorithms.levels.spectra import (
    harmonic_trap,
    make_spectrum,
    parse_temperature,
    size_number_text,
)
from enumerator.core.errors import InvalidParameters, TooLarge

TRAP = ["levels", "--preset", "trap", "--particles", 3, "--rule", "BE"]

#: (command line, the flag the one line must name, the text it must quote)
HUGE = [
    ([*TRAP, "--max-energy", "1e99999999"], "--max-energy", "1e99999999"),
    (["levels", "--particles", 3, "--rule", "BE", "--energies", "0,1e99999999"], "--energies", "1e99999999"),
    (["levels", "--particles", 3, "--energies", "0,1", "--max-energy", "1e99999999"], "--max-energy", "1e99999999"),
    ([*TRAP, "--temperatures", "1e99999999"], "--temperatures", "1e99999999"),
    ([*TRAP, "--temperatures", "1..1e-99999999:3"], "--temperatures", "1e-99999999"),
    ([*TRAP, "--factor", "1e-99999999"], "--factor", "1e-99999999"),
    ([*TRAP, "--factor", "1/2,1e-9_999_999"], "--factor", "1e-9_999_999"),
    (["levels", "--preset", "two-level", "--particles", 2, "--gap", "1e99999999"], "--gap", "1e99999999"),
    ([*TRAP, "--temperatures", "1" + "0" * 5000], "--temperatures", "1" + "0" * 39),
    (["levels", "--particles", 3, "--energies", "0,1", "--degeneracies", "1," + "9" * 5000], "--degeneracies", "9" * 40),
]


@pytest.mark.parametrize("args, flag, shown", HUGE, ids=[f"{a[-2]} {a[-1][:12]}" for a, _, _ in HUGE])
def test_a_number_too_long_to_expand_is_refused_naming_the_option(args, flag, shown):
    message = one_line_error(run(*args))
    assert flag in message and repr(shown) in message
    assert "numbers are limited to 4,000 digits" in message
    assert "=" not in message.replace("'", "")  # spelled as the flag, not as the library's name=


def test_temperatures_in_range_stay_accepted():
    # 1e300 = 10^300 and 1e-300 = 10^-300 (arithmetic): the ends of the accepted range
    assert parse_temperature("1e300") == Fraction(10**300)
    assert parse_temperature("1e-300") == Fraction(1, 10**300)
    assert parse_temperatures("1e-300,1e300") == [Fraction(1, 10**300), Fraction(10**300)]
    payload = run_json(*TRAP, "--temperatures", "1e300")
    assert payload  # the command runs at T = 1e300


def test_the_limit_is_4000_digits_as_the_command_line_reads_numbers():
    # 4,000 digits and an exponent of 4,000 are read; one more is refused (core.groups.MAX_DIGITS)
    assert parse_rational("1e4000", "gap") == Fraction(10**4000)
    assert parse_rational("9" * 4000, "gap") == Fraction(10**4000 - 1)
    assert parse_rational("1e-4000", "gap") == Fraction(1, 10**4000)
    for text in ("1e4001", "1e-4001", "9" * 4001, "1e1_000_000", "1e" + "0" * 20 + "1"):
        with pytest.raises(InvalidParameters, match="numbers are limited to 4,000 digits"):
            parse_rational(text, "gap")


@pytest.mark.parametrize(
    "call, parameter",
    [
        (lambda: parse_rational("1e99999999", "max_energy"), "max_energy="),
        (lambda: parse_factor("1e-99999999"), "factor="),
        (lambda: parse_temperature("1e99999999"), "temperatures="),
        (lambda: parse_temperatures("0.5..1e99999999:4"), "temperatures="),
        (lambda: make_spectrum("0,1e99999999"), "energies="),
        (lambda: make_spectrum("0,1", "1," + "9" * 5000), "degeneracies="),
    ],
)
def test_the_library_refuses_before_expanding(call, parameter):
    with pytest.raises(InvalidParameters) as caught:
        call()
    assert parameter in str(caught.value)
    assert parameter.rstrip("=") in caught.value.parameters


def test_size_number_text_passes_what_it_accepts_unchanged():
    assert size_number_text(" 2.5e-3 ", "gap") == " 2.5e-3 "
    assert parse_rational("2.5e-3", "gap") == Fraction(1, 400)  # 2.5 / 1000 (arithmetic)


def test_a_ladder_listed_beyond_the_limits_is_refused_before_listing():
    with pytest.raises(TooLarge, match="levels of the 3D harmonic trap"):
        harmonic_trap().through(10**12)
    with pytest.raises(TooLarge):
        harmonic_trap().through(10**3999)
    with pytest.raises(TooLarge, match="levels="):
        harmonic_trap(10**12)
    message = one_line_error(run(*TRAP, "--levels", "10^12", "--temperatures", 1))
    assert "--levels" in message and "levels=" not in message
    listed = harmonic_trap().through(5)
    # stars and bars: rung m of the 3D trap holds (m + 1)(m + 2)/2 states
    assert listed.degeneracies == tuple((m + 1) * (m + 2) // 2 for m in range(6))


# --------------------------------------------------------------------------
# Enum choices and --help into a closed pipe
# --------------------------------------------------------------------------
@pytest.mark.parametrize(
    "args, flag",
    [
        (["list", "-n", 2, "-r", 2, "--format", "bogus"], "--format"),
        (["threshold", "--vary", "bogus", "-r", 3, "--event", "max >= 2", "--target", "1/2"], "--vary"),
    ],
)
def test_a_bad_choice_reads_like_the_other_errors(args, flag):
    message = one_line_error(run(*args))
    assert "Value error" not in message
    assert f"'{flag}': 'bogus' is not one of" in message


@pytest.mark.parametrize("args", [["count", "--help"], ["--help"], ["levels", "--help"], ["table", "build", "--help"]])
def test_help_into_a_closed_pipe_exits_0_quietly(args):
    read_end, write_end = os.pipe()
    os.close(read_end)  # the reader is gone before the first write: every write meets EPIPE
    try:
        done = subprocess.run([sys.executable, "-m", "enumerator", *args], stdout=write_end, stderr=subprocess.PIPE,
                              timeout=120)
    finally:
        os.close(write_end)
    assert done.returncode == 0, done.stderr
    assert done.stderr == b""


# --------------------------------------------------------------------------
# compare --step / --geometric
# --------------------------------------------------------------------------
SWEEP = ["compare", "birthday", "--vary", "balls=2..10", "--urns", 365, "--no-cache"]


@pytest.mark.parametrize("flag, power, digits", [("--step", "2^2", "4"), ("--geometric", "2^1+1", "3")])
def test_compare_reads_step_and_geometric_as_balls(flag, power, digits):
    by_power = run_json(*SWEEP, flag, power)
    assert by_power == run_json(*SWEEP, flag, digits)
    if flag == "--step":  # START, START+4, ... up to STOP: 2, 6, 10 (arithmetic)
        assert [point["balls"] for point in by_power["rows"]] == [2, 6, 10]


@pytest.mark.parametrize("flag, text, words", [
    ("--step", "0", "step must be at least 1 (got 0)"),
    ("--step", "1e9", "step must be a whole number"),
    ("--geometric", "2^99999999", "numbers are limited to 4,000 digits"),
    ("--factor", "1e-99999999", "numbers are limited to 4,000 digits"),
    ("--factor", "1e-9_999_999", "numbers are limited to 4,000 digits"),
])
def test_compare_refuses_step_and_geometric_in_one_line(flag, text, words):
    message = one_line_error(run(*SWEEP, flag, text))
    assert flag in message and words in message
    assert "Input should be" not in message


# --------------------------------------------------------------------------
# Library messages spelled as flags
# --------------------------------------------------------------------------
@pytest.mark.parametrize("args, flags", [
    (["levels", "--particles", 2, "--energies", "0,1", "--levels", 3], ["--levels", "--preset"]),
    (["levels", "--particles", 2, "--preset", "two-level", "--gap", 0], ["--gap"]),
    (["levels", "--particles", 2, "--preset", "two-level", "--degeneracies", "1,2,3"], ["--degeneracies"]),
    (["levels", "--particles", 2, "--energies", "0,1", "--degeneracies", "1"], ["--degeneracies"]),
    (["levels", "--particles", 2, "--preset", "trap", "--dimension", 65], ["--dimension"]),
    (["count", "-n", 3, "-r", 2, "--bounds", "0:1,0:2", "--capacity", 3], ["--bounds", "--capacity", "--minimum"]),
    (["count", "-n", 3, "-r", 3, "--bounds", "0:1,0:2"], ["--bounds", "--urns"]),
    (["count", "-n", 3], ["--urns", "--bounds"]),
    (["count", "-n", 3, "-r", 2, "--minimum", 3, "--capacity", 2], ["--minimum", "--capacity"]),
    (["count", "-n", 3, "-r", 2, "--rule", "FD", "--capacity", 2], ["--capacity", "--rule"]),
])
def test_library_messages_name_the_flags(args, flags):
    message = one_line_error(run(*args, "--no-cache") if args[0] == "count" else run(*args))
    for flag in flags:
        assert flag in message
    assert not any(f"{flag[2:]}=" in message for flag in flags)
