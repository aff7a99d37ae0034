"""The model's validation contract (DESIGN.md): malformed input raises the
project's error with a message that says what to change; well-formed but
impossible input answers 0."""

from __future__ import annotations

import pickle
from fractions import Fraction

import pytest

from enumerator import (
    EnumeratorError,
    InvalidConfiguration,
    InvalidParameters,
    Occupancy,
    Rule,
)
from enumerator.core.model import parse_bounds, parse_canonical_bounds


@pytest.mark.parametrize(
    "kwargs,fragment",
    [
        (dict(balls=-1, urns=3), "balls must be at least 0 (got -1)"),
        (dict(balls=2.5, urns=3), "balls must be a whole number"),
        (dict(balls=2.0, urns=3), "balls must be a whole number"),
        (dict(balls="4", urns=3), "balls must be a whole number"),
        (dict(balls=True, urns=3), "balls must be an integer, not a boolean"),
        (dict(balls=3, urns=0), "urns must be at least 1 (got 0)"),
        (dict(balls=3, urns=-2), "urns must be at least 1 (got -2)"),
        (dict(balls=3, urns=1.5), "urns must be a whole number"),
        (dict(balls=3), "urns is required"),
        (dict(balls=3, urns=2, capacity=-1), "capacity must be at least 0 (got -1)"),
        (dict(balls=3, urns=2, minimum=-1), "minimum must be at least 0 (got -1)"),
        (dict(balls=3, urns=2, minimum=3, capacity=2), "minimum 3 is above capacity 2"),
        (dict(balls=3, urns=2, rule="XY"), "rule must be one of MB, BE, FD"),
        (dict(balls=3, urns=2, rule="FD", capacity=2), "FD allows at most one ball per urn"),
        (dict(balls=3, bounds=[(2, 1), (0, None)]), "urn 1 has lower bound 2 above its upper bound 1"),
        (dict(balls=3, bounds=[(0, 1), (-1, None)]), "lower bound of urn 2 must be at least 0"),
        (dict(balls=3, bounds=[]), "bounds must list at least one urn"),
        (dict(balls=3, bounds=[(0, 1)], urns=2), "urns is 2 but bounds lists 1 urns"),
        (dict(balls=3, bounds=[(0, 1)], capacity=2), "either per-urn bounds or a uniform capacity"),
        (dict(balls=3, bounds=[(0, 1, 2)]), "bound of urn 1 must be a pair"),
        (dict(balls=3, bounds=[(0, 2), (0, 1)], rule="FD"), "urn 1 has capacity 2"),
    ],
)
def test_malformed_parameters_raise_with_a_fix(kwargs, fragment):
    with pytest.raises(InvalidParameters) as info:
        Occupancy(**kwargs)
    assert fragment in str(info.value)
    assert isinstance(info.value, EnumeratorError) and isinstance(info.value, ValueError)


@pytest.mark.parametrize(
    "config,fragment",
    [
        ((1, 2), "configuration has 2 entries but the model has 3 urns"),
        ((1, 1, 1, 0), "configuration has 4 entries but the model has 3 urns"),
        ((1, 1, 2), "configuration sums to 4 but the model has 3 balls"),
        ((4, -1, 0), "configuration entry 2 is -1; occupancies cannot be negative"),
        ((1.0, 1, 1), "must be a sequence of 3 whole numbers"),
        ((True, 1, 1), "not booleans"),
        ("111", "not the string"),
        (5, "must be a sequence of 3 whole numbers"),
    ],
)
@pytest.mark.parametrize("rule", ["MB", "BE", "FD"])
def test_malformed_configurations_raise(config, fragment, rule):
    model = Occupancy(balls=3, urns=3, rule=rule)
    with pytest.raises(InvalidConfiguration) as info:
        model.probability(config)
    assert fragment in str(info.value)


def test_configuration_breaking_a_bound_has_probability_zero():
    assert Occupancy(balls=3, urns=3, rule="MB", capacity=2).probability((3, 0, 0)) == 0
    assert Occupancy(balls=3, urns=3, rule="BE", minimum=1).probability((2, 1, 0)) == 0
    assert Occupancy(balls=2, urns=3, rule="FD").probability((2, 0, 0)) == 0
    assert Occupancy(balls=2, bounds=[(1, 1), (0, None)], rule="BE").probability((0, 2)) == Fraction(0)


@pytest.mark.parametrize(
    "kwargs",
    [
        dict(balls=10, urns=3, capacity=3),  # 3 urns of 3 hold at most 9
        dict(balls=2, urns=3, minimum=1),  # 3 urns need at least 3
        dict(balls=4, urns=3, rule="FD"),
        dict(balls=5, bounds=[(0, 1), (0, 2), (0, 1)]),
        dict(balls=1, bounds=[(1, 1), (1, None)]),
    ],
)
@pytest.mark.parametrize("rule", ["MB", "BE"])
def test_impossible_models_answer_zero(kwargs, rule):
    kwargs = dict(kwargs)
    kwargs.setdefault("rule", rule)
    m = Occupancy(**kwargs)
    assert m.configurations() == 0
    assert m.microstates() == 0
    assert m.profiles() == 0


def test_zero_balls_has_one_empty_configuration():
    for rule in ("MB", "BE", "FD"):
        m = Occupancy(balls=0, urns=4, rule=rule)
        assert (m.configurations(), m.microstates(), m.profiles()) == (1, 1, 1)
        assert m.probability((0, 0, 0, 0)) == 1


def test_rule_parsing_and_names():
    assert Rule.parse("mb") is Rule.MB and Rule.parse(" be ") is Rule.BE
    assert Occupancy(balls=1, urns=1, rule=Rule.FD).rule is Rule.FD
    assert Rule.FD.title == "Fermi–Dirac"


def test_fd_defaults_to_capacity_one():
    m = Occupancy(balls=2, urns=4, rule="FD")
    assert m.capacity == 1 and m.bounds == ((0, 1),) * 4


def test_model_is_immutable_hashable_and_picklable():
    m = Occupancy(balls=5, urns=3, rule="BE", capacity=2)
    with pytest.raises(AttributeError):
        m.balls = 6
    same = Occupancy(balls=5, bounds=[(0, 2)] * 3, rule="be")
    assert m == same and hash(m) == hash(same)
    assert pickle.loads(pickle.dumps(m)) == m
    assert m.canonical_bounds() == "3*0:2"
    assert Occupancy(balls=1, bounds=[(0, 2), (1, None)]).canonical_bounds() == "1x0:2,1x1:"


def test_parse_bounds():
    assert parse_bounds("0:2,1:,3") == ((0, 2), (1, None), (0, 3))
    assert parse_bounds(":4") == ((0, 4),)
    with pytest.raises(InvalidParameters, match="bounds item 2"):
        parse_bounds("0:2,x:3")
    with pytest.raises(InvalidParameters):
        parse_bounds("")
    with pytest.raises(InvalidParameters, match="above its upper bound"):
        Occupancy(balls=1, bounds="3:1")


def test_rule_descriptions():
    # Feller, vol. 1, ch. II.5 (from memory): MB balls are distinguishable and a vector
    # k has n!/(k_1!...k_r!) equally likely assignments; BE and FD count each vector once.
    assert [rule.distinguishable for rule in Rule] == [True, False, False]
    assert [rule.generating for rule in Rule] == ["exponential", "ordinary", "ordinary"]
    assert [rule.description.outcomes for rule in Rule] == ["microstates", "configurations", "configurations"]
    assert Rule.FD.description.per_urn == 1 and Rule.BE.description.per_urn is None
    assert Rule.MB.weight((2, 0, 1)) == 3 and Rule.BE.weight((2, 0, 1)) == 1
    assert [rule.title for rule in Rule] == ["Maxwell–Boltzmann", "Bose–Einstein", "Fermi–Dirac"]


@pytest.mark.parametrize("model", [
    Occupancy(balls=5, urns=3, rule="BE", capacity=2),
    Occupancy(balls=4, urns=6, rule="FD"),
    Occupancy(balls=7, urns=2, rule="MB", minimum=1),
    Occupancy(balls=3, bounds=[(0, 2), (1, None), (0, 0)], rule="MB"),
])
def test_canonical_bounds_read_back(model):
    text = model.canonical_bounds()
    assert Occupancy.from_canonical(model.rule, model.balls, text) == model
    assert parse_canonical_bounds(text) == model.bounds


def test_parse_canonical_bounds_rejects_other_text():
    assert parse_canonical_bounds("2*1:") == ((1, None), (1, None))
    with pytest.raises(InvalidParameters, match="canonical bounds must look like"):
        parse_canonical_bounds("x*0:2")
