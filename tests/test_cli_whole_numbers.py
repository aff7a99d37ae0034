"""Every whole-number option of the CLI reads numbers as --balls does, and refuses them in one line.

A power ``B^E[+-K]`` must mean the same as its digits (plain arithmetic:
2^3 = 8, 2^3+2 = 10), so each check runs a command twice, once with the
power and once with the digits, and compares the outputs.  Refusals follow
the error contract of DESIGN.md: exit 2, one ``Error:`` line naming the
option the user typed.  Counts come from stars and bars (``math.comb``) and
MB's r^n (common practice).
"""

from __future__ import annotations

import math
import re

import pytest
from cli_helpers import one_line_error, run, run_json

pytestmark = pytest.mark.usefixtures("private_store")  # table/cache commands write a fresh store (conftest.py)

MODEL = ["-n", 5, "-r", 3]
EINSTEIN = ["--oscillators-a", 3, "--oscillators-b", 3]

#: (command line, option, power, the same number in digits): 2^1 = 2, 2^0 = 1, 2^2 = 4, 2^3 = 8 (arithmetic)
SAME = [
    (["count", *MODEL, "--no-cache", "--json"], "--capacity", "2^1", "2"),
    (["count", *MODEL, "--no-cache", "--json"], "--minimum", "2^0", "1"),
    (["gf", *MODEL, "--no-cache", "--json", "--capacity", 2], "--minimum", "2^0", "1"),
    (["list", *MODEL, "--json"], "--start", "2^2", "4"),
    (["list", *MODEL, "--json"], "--stop", "2^2", "4"),
    (["list", *MODEL, "--json"], "--limit", "2^2-1", "3"),
    (["dist", *MODEL, "--stat", "max", "--no-cache", "--json"], "--limit", "10^3", "1000"),
    (["sample", *MODEL, "--seed", 5, "--format", "jsonl"], "--size", "2^3", "8"),
    (["sample", *MODEL, "--size", 4, "--format", "jsonl"], "--seed", "2^64", "18446744073709551616"),
    (["threshold", "--vary", "balls", "-r", 10, "--event", "max >= 2", "--target", "1/2", "--json"],
     "--capacity", "2^1", "2"),
    (["coeff", "1/(1-x)", "--json"], "--upto", "2^2", "4"),
    (["contact", "--oscillators-b", 3, "--quanta", 4, "--json"], "--oscillators-a", "2^2", "4"),
    (["contact", *EINSTEIN, "--json"], "--quanta", "2^3", "8"),
    (["contact", "--preset-a", "trap", "--particles-a", 3, "--rule-a", "BE", *EINSTEIN[2:], "--quanta", 4,
      "--json"], "--capacity-a", "2^1", "2"),
    (["contact", "--preset-a", "trap", "--rule-a", "BE", *EINSTEIN[2:], "--quanta", 4, "--json"],
     "--particles-a", "2^1+1", "3"),
    (["contact", "--preset-a", "harmonic", "--particles-a", 2, *EINSTEIN[2:], "--quanta", 6, "--json"],
     "--levels-a", "2^1", "2"),
    (["contact", "--preset-a", "trap", "--particles-a", 2, *EINSTEIN[2:], "--quanta", 4, "--json"],
     "--dimension-a", "2^1", "2"),
]


@pytest.mark.parametrize("args, option, power, digits", SAME, ids=[f"{a[0]} {o}" for a, o, _, _ in SAME])
def test_a_power_means_its_digits(args, option, power, digits):
    by_power = run(*args, option, power)
    by_digits = run(*args, option, digits)
    assert by_power.exit_code == 0, by_power.output
    assert by_power.stdout == by_digits.stdout
    assert by_power.stdout.strip()


def test_the_options_change_the_answer():
    # So that the comparisons above cannot pass by ignoring the option: stars and bars counts
    # C(5 + 2, 2) = 21 vectors of 5 balls in 3 urns, 6 of them with at most 2 in each (by hand:
    # the permutations of (2,2,1)); MB: 3^5 = 243 outcomes.
    free = run_json("count", *MODEL, "--no-cache")
    capped = run_json("count", *MODEL, "--no-cache", "--capacity", "2^1")
    assert free["configurations"] == str(math.comb(7, 2)) and free["microstates"] == str(3 ** 5)
    assert capped["configurations"] == "3"  # (2,2,1), (2,1,2), (1,2,2)
    listed = run_json("list", *MODEL, "--start", "2^2", "--limit", "2^1")
    assert listed["start"] == "4" and listed["listed"] == "2"
    drawn = run("sample", *MODEL, "--size", "2^3", "--seed", 1, "--format", "jsonl")
    assert len(drawn.stdout.splitlines()) == 8
    # the limit is echoed by the refusal of a profile law listed past it
    line = one_line_error(run("dist", "-n", 12, "-r", 4, "--rule", "BE", "--stat", "profile", "--limit", "2^3+2",
                              "--no-cache"))
    assert "above the limit 10" in line


def test_table_ranges_read_powers(tmp_path):
    # MB: r^n outcomes (common practice), so the cell (n=4, r=3) is 81
    payload = run_json("table", "build", "--balls", "0..2^2", "--urns", "1..3")
    assert payload["balls"] == "0..4" and payload["cells"] == str(5 * 3)
    shown = run_json("table", "show", payload["name"], "--balls", "2^2", "--urns", "3")
    assert shown["cells"] == [{"balls": "4", "urns": "3", "value": str(3 ** 4), "digits": "2"}]
    checked = run_json("cache", "verify", "--sample", "2^1", "--seed", "2^2")
    assert checked["checked"] == run_json("cache", "verify", "--sample", 2, "--seed", 4)["checked"] == "2"


#: (command line, option): each option read as a whole number
REFUSED = [
    (["count", *MODEL, "--no-cache"], "--capacity"),
    (["count", *MODEL, "--no-cache"], "--minimum"),
    (["list", *MODEL], "--start"),
    (["list", *MODEL], "--stop"),
    (["list", *MODEL], "--limit"),
    (["list", *MODEL, "--output-dir", "."], "--shards"),
    (["list", *MODEL, "--output-dir", "."], "--workers"),
    (["dist", *MODEL, "--stat", "max", "--no-cache"], "--limit"),
    (["prob", *MODEL, "--event", "max >= 2", "--no-cache"], "--limit"),
    (["sample", *MODEL], "--size"),
    (["sample", *MODEL], "--seed"),
    (["threshold", "--vary", "balls", "-r", 10, "--event", "max >= 2", "--target", "1/2"], "--capacity"),
    (["threshold", "--vary", "balls", "-r", 10, "--event", "max >= 2", "--target", "1/2"], "--limit"),
    (["cache", "verify"], "--sample"),
    (["cache", "verify"], "--seed"),
    (["contact", "--oscillators-b", 3, "--quanta", 4], "--oscillators-a"),
    (["contact", *EINSTEIN], "--quanta"),
    (["contact", "--preset-a", "trap", *EINSTEIN[2:], "--quanta", 4], "--particles-a"),
    (["contact", "--preset-a", "trap", "--particles-a", 2, "--rule-a", "BE", *EINSTEIN[2:], "--quanta", 4],
     "--capacity-a"),
    (["contact", "--preset-a", "trap", "--particles-a", 2, *EINSTEIN[2:], "--quanta", 4], "--levels-a"),
    (["contact", "--preset-a", "trap", "--particles-a", 2, *EINSTEIN[2:], "--quanta", 4], "--dimension-a"),
    (["contact", "--oscillators-a", 3, "--preset-b", "trap", "--particles-b", 2, "--quanta", 4], "--dimension-b"),
]


@pytest.mark.parametrize("value", ["-1", "x", "1.5", "1e999999999", "2^99999999", "9" * 5000])
@pytest.mark.parametrize("args, option", REFUSED, ids=[f"{a[0]} {o}" for a, o in REFUSED])
def test_a_bad_number_is_one_line_naming_the_option(args, option, value):
    line = one_line_error(run(*args, option, value))
    assert f"'{option}'" in line
    if value == "-1":
        assert "must be at least" in line and "(got -1)" in line
    if value == "2^99999999":
        assert "limited to 4,000 digits" in line  # sized before it is expanded


@pytest.mark.parametrize("args", [["--balls", "0..2^64", "--urns", "1..3"], ["--balls", "0..3", "--urns", "1..10^10"]])
def test_a_table_range_too_long_is_refused_in_one_line(args):
    line = one_line_error(run("table", "build", *args))
    assert "more than the 5,000,000 cells a table holds" in line


@pytest.mark.parametrize("args, option", [(["--balls", "0..x", "--urns", "1..2"], "--balls"),
                                          (["--balls", "3..1", "--urns", "1..2"], "--balls"),
                                          (["--balls", "0..1..2", "--urns", "1..2"], "--balls"),
                                          (["--balls", "0..2", "--urns", "0..2"], "--urns"),
                                          (["--balls", "0..2", "--urns", "1..2^99999999"], "--urns")])
def test_a_bad_table_range_names_its_option(args, option):
    assert option in one_line_error(run("table", "build", *args))


def test_a_window_beyond_the_table_is_clipped_to_it():
    # MB: r^n (common practice); a window of 2^64 rows reads only the table's rows
    name = run_json("table", "build", "--balls", "0..3", "--urns", "1..2")["name"]
    shown = run_json("table", "show", name, "--balls", "2..2^64", "--urns", "1..2^64")
    assert {(c["balls"], c["urns"]): c["value"] for c in shown["cells"]} == {
        (str(n), str(r)): str(r ** n) for n in (2, 3) for r in (1, 2)}
    people = run("table", "show", name, "--balls", "2..2^64")
    assert people.exit_code == 0 and "not built yet" not in people.stdout
    assert "--balls" in one_line_error(run("table", "show", name, "--balls", "4..2^64"))


# --------------------------------------------------------------------------
# Ranges and sizes that cannot be meant
# --------------------------------------------------------------------------
def test_list_stop_before_start_is_refused():
    line = one_line_error(run("list", *MODEL, "--start", 5, "--stop", 2))
    assert "--stop 2 is before --start 5" in line
    # stop == start is the empty range, not an error
    assert run_json("list", *MODEL, "--start", 5, "--stop", 5)["listed"] == "0"


def test_list_start_past_the_end_is_refused_with_the_count():
    # MB with 5 balls in 3 urns: C(7, 2) = 21 vectors (stars and bars), ranks 0..20
    total = math.comb(7, 2)
    assert run_json("list", *MODEL, "--start", total)["listed"] == "0"  # the end itself: empty
    assert run_json("list", *MODEL, "--start", total - 1)["listed"] == "1"
    for extra in ([], ["--sparse"], ["--json"]):
        line = one_line_error(run("list", *MODEL, "--start", total + 1, *extra))
        assert f"--start {total + 1} is past the end" in line and f"at most {total}" in line
    # FD: 5 balls cannot fit in 2 urns, so any start past 0 is past the end
    assert "admits no configuration" in one_line_error(run("list", "-n", 5, "-r", 2, "--rule", "FD", "--start", 1))


def test_contact_negative_quanta_or_energy_is_refused():
    line = one_line_error(run("contact", *EINSTEIN, "--quanta", -1))
    assert "'--quanta'" in line and "at least 0" in line
    line = one_line_error(run("contact", *EINSTEIN, "--energy", -1))
    assert line.startswith("Error: --energy must be at least 0")
    assert "--energy" in one_line_error(run("contact", *EINSTEIN, "--energy", "1e999999999"))
    assert "--energy" in one_line_error(run("contact", *EINSTEIN, "--energy", "x"))
    assert "not both" in one_line_error(run("contact", *EINSTEIN, "--energy", 2, "--quanta", 2))
    assert "--energy" in one_line_error(run("contact", *EINSTEIN))


def test_contact_negative_energy_of_a_negative_spectrum_is_counted():
    # Brute force: one particle on levels -1, 0 and one on 0, 1 share -1 only as (-1, 0)
    payload = run_json("contact", "--energies-a", "-1,0", "--particles-a", 1, "--energies-b", "0,1",
                       "--particles-b", 1, "--energy", -1)
    assert payload["split"] == {"-1": "1"}


def test_contact_splits_outside_the_range_say_the_range():
    line = one_line_error(run("contact", *EINSTEIN, "--quanta", 6, "--splits", "100..200"))
    assert "--splits 100..200" in line and "from 0 to 6" in line and "--splits 0..6" in line


#: A flag of 'levels' spelled without contact's side suffix.
_LEVELS_FLAG = re.compile(r"--(oscillators|particles|energies|degeneracies|capacity|preset|levels|dimension|gap|"
                          r"max-energy)(?![\w-])")


@pytest.mark.parametrize(
    "args, flags",
    [
        (["--energies-a", "0,1", "--oscillators-b", 3, "--quanta", 4], ["--particles-a"]),
        (["--oscillators-a", 3, "--quanta", 4], ["--energies-b", "--preset-b"]),
        (["--oscillators-a", 3, "--particles-a", 4, "--oscillators-b", 3, "--quanta", 4],
         ["--oscillators-a", "--particles-a"]),
        (["--oscillators-a", 3, "--preset-b", "trap", "--oscillators-b", 3, "--quanta", 4],
         ["--oscillators-b", "--particles-b"]),
        (["--preset-a", "trap", "--particles-a", 2, "--capacity-a", 2, *EINSTEIN[2:], "--quanta", 4],
         ["--capacity-a", "--rule-a"]),
        (["--preset-a", "trap", "--particles-a", 2, "--capacity-a", 2, "--rule", "MB", *EINSTEIN[2:],
          "--quanta", 4], ["--capacity-a", "--rule"]),
        (["--preset-a", "trap", "--particles-a", 2, "--energies-a", "0,1", *EINSTEIN[2:], "--quanta", 4],
         ["--energies-a", "--preset-a"]),
        (["--oscillators-a", 3, "--gap-a", 2, *EINSTEIN[2:], "--quanta", 4], ["--gap-a"]),
        (["--preset-a", "moon", "--particles-a", 2, *EINSTEIN[2:], "--quanta", 4], ["system A"]),
    ],
)
def test_contact_errors_name_contacts_own_options(args, flags):
    line = one_line_error(run("contact", *args))
    for flag in flags:
        assert flag in line, line
    assert not _LEVELS_FLAG.search(line), line


def test_json_of_contact_by_quanta_and_by_energy_agree():
    # Two Einstein solids of 3 oscillators sharing 6 quanta: C(6 + 5, 6) = 462 (stars and bars)
    by_quanta = run_json("contact", *EINSTEIN, "--quanta", 6)
    assert by_quanta == run_json("contact", *EINSTEIN, "--energy", 6)
    assert by_quanta["total"] == str(math.comb(11, 6))


# --------------------------------------------------------------------------
# Names checked when the options are read, so the error names the option
# --------------------------------------------------------------------------
@pytest.mark.parametrize(
    "args, option",
    [
        (["count", *MODEL, "--no-cache", "--rule", "XY"], "--rule"),
        (["table", "build", "--balls", "0..2", "--urns", "1..2", "--rule", "XY"], "--rule"),
        (["contact", *EINSTEIN, "--quanta", 3, "--rule-b", "XY"], "--rule-b"),
        (["contact", *EINSTEIN, "--quanta", 3, "--rule", "XY"], "--rule"),
        (["sample", *MODEL, "--method", "bogus"], "--method"),
        (["gf", *MODEL, "--no-cache", "--var", "1x"], "--var"),
        (["coeff", "1/(1-x)", "--var", "x y"], "--var"),
        (["count", *MODEL, "--no-cache", "--max-memory", "2^0-1"], "--max-memory"),
        (["count", *MODEL, "--no-cache", "--max-memory", "2^1000"], "--max-memory"),
        (["count", *MODEL, "--no-cache", "--max-memory", "2^99999999"], "--max-memory"),
    ],
)
def test_a_bad_name_or_size_is_one_line_naming_the_option(args, option):
    assert re.search(rf"(?<![\w-]){re.escape(option)}(?![\w-])", one_line_error(run(*args)))


def test_max_memory_reads_a_power_of_bytes():
    # 2^10 bytes is 1K (arithmetic): the same refusal, naming the same limit
    args = ["count", "-n", 100_000, "-r", 100_000, "--capacity", 3, "--rule", "BE", "--no-cache", "--max-memory"]
    assert one_line_error(run(*args, "2^10")) == one_line_error(run(*args, "1K"))
    assert run_json("count", *MODEL, "--no-cache", "--max-memory", "2^30")["microstates"] == str(3 ** 5)


@pytest.mark.parametrize(
    "args, option",
    [
        (["--energies-a", "0,1e99999999", "--particles-a", 1], "--energies-a"),
        (["--energies-a", "0,1", "--degeneracies-a", "1,1e99999999999999999999", "--particles-a", 1],
         "--degeneracies-a"),
        (["--preset-a", "two-level", "--gap-a", "1e-99999999", "--particles-a", 1], "--gap-a"),
    ],
)
def test_contact_refuses_numbers_too_long_to_read_before_reading_them(args, option):
    # 1e99999999 would be expanded by Fraction into 10^8 digits (minutes); refused at once
    line = one_line_error(run("contact", *args, "--oscillators-b", 2, "--quanta", 3))
    assert option in line and "limited to 4,000 digits" in line


def test_contact_reads_a_decimal_exponent_exactly():
    # Brute force: one particle on levels 0 and 15 (1.5e1) beside 2 oscillators sharing 16 quanta:
    # E_A = 0 leaves 16 quanta, C(17, 1) = 17 ways; E_A = 15 leaves 1 quantum, 2 ways (stars and bars)
    payload = run_json("contact", "--energies-a", "0,1.5e1", "--particles-a", 1, "--oscillators-b", 2,
                       "--energy", 16)
    assert {e: v for e, v in payload["split"].items() if v != "0"} == {"0": "17", "15": "2"}


def test_contact_splits_k_reads_a_power_and_a_window_is_sized():
    # 2^1+1 = 3 (arithmetic): the three splits around the peak, the same as --splits 3
    args = ("contact", "--oscillators-a", 30, "--oscillators-b", 30, "--quanta", 60)
    assert run_json(*args, "--splits", "2^1+1") == run_json(*args, "--splits", 3)
    assert list(run_json(*args, "--splits", 3)["split"]) == ["29", "30", "31"]  # symmetric solids peak at 30
    assert "--splits" in one_line_error(run(*args, "--splits", "1e99999999..2"))  # not expanded by Fraction
