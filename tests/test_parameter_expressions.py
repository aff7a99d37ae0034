"""Parameter expressions of compare sweeps (``--urns "balls//2"``): bounded before any recursion.

Reference: the project's contract that malformed input is one line and exit
code 2, never a RecursionError (DESIGN.md, "Refused before it breaks");
values checked against Python's own integer arithmetic (common practice).
"""

from __future__ import annotations

import pytest
from cli_helpers import run

from enumerator.algorithms.asymptotics.sweeps import parse_tie
from enumerator.core.errors import InvalidParameters


@pytest.mark.parametrize("text, words", [
    ("(" * 150 + "balls" + ")" * 150, "more than 100 levels deep"),
    ("-" * 2000 + "5", "more than the 400"),
    ("1+" * 300 + "balls", "more than the 400"),
    ("9" * 5000, "more than 4000 digits"),
])
def test_deep_long_or_huge_expressions_are_refused_in_one_line(text, words):
    with pytest.raises(InvalidParameters, match=words):
        parse_tie(text, "balls")
    result = run("compare", "birthday", "--vary", "balls=10..12", "--urns", text)
    assert result.exit_code == 2 and result.stderr.count("\n") == 1 and words in result.stderr
    assert len(result.stderr) < 400


def test_expressions_within_the_bounds_evaluate_as_python_does():
    assert parse_tie("(" * 100 + "balls" + ")" * 100, "balls")(7) == 7
    assert parse_tie("-" * 99 + "5", "balls")() == -5  # 99 minus signs: odd, so negative
    assert parse_tie("1+" * 199 + "balls", "balls")(3) == 202
    assert parse_tie("balls*balls//3 - (balls+1)/2", "balls")(9) == 9 * 9 // 3 - 5


def test_a_negative_parameter_names_the_point_only_in_a_sweep():
    fixed = run("compare", "birthday", "--balls", "-1", "--urns", "3")
    assert fixed.exit_code == 2 and fixed.stderr.strip() == "Error: balls is -1; it must be at least 0"
    swept = run("compare", "birthday", "--vary", "balls=1..3", "--urns", "balls-2")
    assert swept.exit_code == 2 and "urns is -1 at balls=1" in swept.stderr
