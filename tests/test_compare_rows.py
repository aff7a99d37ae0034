"""compare --json rows name the parameters their approximation uses, so a sweep over one of them can be read.

Reference: the same points asked one at a time (a fixed --at), and the exact
law of the number of empty urns by inclusion-exclusion (Feller, vol. 1,
ch. IV: P(E = e) = C(r, e) sum_i (-1)^i C(r - e, i) (1 - (e + i)/r)^n).
"""

from __future__ import annotations

from fractions import Fraction
from math import comb

from cli_helpers import run_json


def at_most_empty(n, r, j):
    def exactly(e):
        return comb(r, e) * sum((-1) ** i * comb(r - e, i) * Fraction(r - e - i, r) ** n for i in range(r - e + 1))
    return sum(exactly(e) for e in range(j + 1))


def test_a_sweep_over_at_names_at_in_every_row():
    rows = run_json("compare", "poisson", "--vary", "at=0..2", "--step", "1", "--balls", "30", "--urns", "12")["rows"]
    assert [row["at"] for row in rows] == [0, 1, 2]
    for row in rows:
        assert Fraction(row["exact"]) == at_most_empty(30, 12, row["at"])
        alone = run_json("compare", "poisson", "--balls", "30", "--urns", "12", "--at", str(row["at"]))["rows"][0]
        assert alone == row


def test_a_factor_is_written_exactly_and_birthday_rows_keep_their_keys():
    rows = run_json("compare", "grand-canonical", "--vary", "balls=10..11", "--urns", "balls", "--factor", "1/2")["rows"]
    assert all(row["factor"] == "1/2" and row["at"] == 0 for row in rows)
    (row,) = run_json("compare", "birthday", "--balls", "23", "--urns", "365")["rows"]
    assert set(row) == {"balls", "urns", "exact", "approx", "relative_error_approx"}
