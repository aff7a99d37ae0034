"""Urn groups and their text forms (enumerator.core.groups).

The expected values are small cases checked by hand against the grammar the
module documents (common practice); the size cases check that nothing is
expanded per urn.
"""

from __future__ import annotations

from fractions import Fraction

import pytest

from enumerator.core.errors import InvalidParameters
from enumerator.core.groups import (
    MAX_DIGITS,
    UrnGroup,
    canonical_groups_text,
    make_groups,
    merge_groups,
    parse_bounds_runs,
    parse_count,
    parse_weight,
    parse_weight_runs,
    total_urns,
)


def test_run_length_bounds_and_weights_align_into_merged_groups():
    groups = make_groups(parse_bounds_runs("1000x0:3,2x1:"), parse_weight_runs("500x2,502x2"))
    assert groups == (UrnGroup(1000, 0, 3, Fraction(2)), UrnGroup(2, 1, None, Fraction(2)))
    assert total_urns(groups) == 1002


def test_per_urn_and_grouped_descriptions_are_the_same_problem():
    per_urn = make_groups(parse_bounds_runs("0:2,0:2,0:2,1:"), None)
    grouped = make_groups(parse_bounds_runs("3x0:2,1x1:"), None)
    assert per_urn == grouped
    assert canonical_groups_text(per_urn) == canonical_groups_text(grouped) == "3x0:2@1,1x1:@1"


def test_counts_of_any_size_cost_nothing_per_urn():
    groups = make_groups(parse_bounds_runs(f"{2**128}x0:3"), parse_weight_runs(f"{2**127}x1,{2**127}x1/2"))
    assert [g.count for g in groups] == [2**127, 2**127]
    assert total_urns(groups) == 2**128


def test_weights_are_exact_rationals():
    assert parse_weight("0.125") == Fraction(1, 8)
    assert parse_weight("10/4") == Fraction(5, 2)
    assert parse_weight("7") == Fraction(7)


@pytest.mark.parametrize("text", ["1e999999999", "1E5", "-3", "0", "0/1", "1/0", "abc", "2.5.1", "", " / "])
def test_malformed_weights_are_refused_before_expansion(text):
    with pytest.raises(InvalidParameters):
        parse_weight(text)


@pytest.mark.parametrize("text", ["1e999999999", "1_000", "-1", "0x10", "", "3.0"])
def test_counts_are_plain_digits(text):
    with pytest.raises(InvalidParameters):
        parse_count(text, "urns", 1)


def test_overlong_numbers_are_refused_with_their_length():
    with pytest.raises(InvalidParameters, match="limited to"):
        parse_count("9" * (MAX_DIGITS + 1), "balls")


@pytest.mark.parametrize("text, message", [
    ("3:1", "above its upper bound"),
    ("0x0:1", "at least 1"),
    ("2x", "empty"),
    ("1:2,,3", "empty"),
    ("a:b", "whole number"),
])
def test_malformed_bounds_say_what_to_change(text, message):
    with pytest.raises(InvalidParameters, match=message):
        parse_bounds_runs(text)


def test_totals_must_agree():
    with pytest.raises(InvalidParameters, match="describe 3 urns but the model has 4"):
        make_groups(parse_bounds_runs("3x0:1"), urns=4)
    with pytest.raises(InvalidParameters, match="weights describe 2 urns"):
        make_groups(parse_bounds_runs("3x0:1"), parse_weight_runs("2x1"))


def test_groups_validate_their_fields():
    with pytest.raises(InvalidParameters):
        UrnGroup(0)
    with pytest.raises(InvalidParameters):
        UrnGroup(2, 3, 1)
    with pytest.raises(InvalidParameters):
        UrnGroup(2, weight=0.5)
    with pytest.raises(InvalidParameters):
        UrnGroup(2, weight=Fraction(-1))
    assert merge_groups([UrnGroup(1, 0, 1), UrnGroup(2, 0, 1), UrnGroup(1)]) == (UrnGroup(3, 0, 1), UrnGroup(1))
