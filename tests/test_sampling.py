"""Exact samplers against the exact law.

Goodness of fit: ``scipy.stats.chisquare`` at a fixed seed, with the expected
frequencies from brute-force enumeration (tests/reference.py) or from exact
counts; a test fails when p < 0.001.  Marginal laws of one urn: binomial for
MB (SciPy ``binom``), ``C(n - j + r - 2, r - 2) / C(n + r - 1, r - 1)`` for BE
(Feller, vol. 1, §II.5, from memory; checked here against exact counts).
"""

from __future__ import annotations

from collections import Counter
from fractions import Fraction
from math import comb

import numpy as np
import pytest
import reference
from scipy.stats import binom, chisquare

from enumerator import InvalidParameters, Occupancy, TooLarge
from enumerator.algorithms.exact_samplers import SequentialSampler
from enumerator.algorithms.sampling import (
    METHODS,
    iter_sample_blocks,
    sample,
    sample_array,
    sampling_method,
)

P_MIN = 0.001

MODELS = [
    Occupancy(balls=5, urns=3, rule="BE"),
    Occupancy(balls=2, urns=4, rule="BE"),
    Occupancy(balls=9, urns=3, rule="BE", minimum=2),
    Occupancy(balls=6, urns=3, rule="BE", capacity=3),
    Occupancy(balls=7, urns=4, rule="BE", capacity=2),
    Occupancy(balls=6, bounds=[(0, 2), (1, None), (0, 3), (2, 2)], rule="BE"),
    Occupancy(balls=3, urns=5, rule="FD"),
    Occupancy(balls=2, bounds=[(0, 1), (1, 1), (0, 1), (0, 0), (0, 1)], rule="FD"),
    Occupancy(balls=5, urns=3, rule="MB"),
    Occupancy(balls=6, urns=3, rule="MB", capacity=3),
    Occupancy(balls=7, urns=3, rule="MB", minimum=2),
    Occupancy(balls=6, bounds=[(0, 2), (1, None), (0, 3), (1, 2)], rule="MB"),
    Occupancy(balls=8, urns=4, rule="MB", minimum=1, capacity=3),
]


def chi_square_p(model, rows):
    """p-value of the observed configurations against the exact law (brute force)."""
    law = reference.probabilities(model)
    counts = Counter(rows)
    assert set(counts) <= set(law), "a sampled vector is not admissible"
    keys = sorted(law)
    if len(keys) == 1:
        return 1.0
    observed = [counts[k] for k in keys]
    expected = [float(law[k] * len(rows)) for k in keys]
    return chisquare(observed, expected).pvalue


@pytest.mark.parametrize("model", MODELS, ids=repr)
def test_default_sampler_matches_exact_law(model):
    rows = sample(model, 6000, seed=20240601)
    assert len(rows) == 6000
    assert chi_square_p(model, rows) > P_MIN


@pytest.mark.parametrize("model", MODELS, ids=repr)
@pytest.mark.parametrize("method", ["sequential", "rejection"])
def test_general_methods_match_exact_law(model, method):
    # Every model through the urn-by-urn and the rejection sampler as well.
    rows = sample(model, 4000, seed=7, method=method)
    assert chi_square_p(model, rows) > P_MIN


def test_specialised_methods_match_exact_law():
    cases = [
        (Occupancy(balls=4, urns=4, rule="BE"), "stars-and-bars"),  # bars chosen
        (Occupancy(balls=2, urns=6, rule="BE"), "stars-and-bars"),  # stars chosen
        (Occupancy(balls=4, urns=6, rule="FD"), "subset"),  # complement chosen
        (Occupancy(balls=4, urns=3, rule="MB"), "uniform-balls"),
    ]
    for model, method in cases:
        assert sampling_method(model) == method
        assert chi_square_p(model, sample(model, 6000, seed=11)) > P_MIN


def _pooled_chi_square(observed_values, pmf, support):
    """Chi-square over ``support`` with the tails pooled so every bin expects >= 5."""
    total = len(observed_values)
    counts = Counter(int(v) for v in observed_values)
    bins_obs, bins_exp = [], []
    acc_obs = acc_exp = 0.0
    for j in support:
        acc_obs += counts.get(j, 0)
        acc_exp += float(pmf(j)) * total
        if acc_exp >= 5:
            bins_obs.append(acc_obs)
            bins_exp.append(acc_exp)
            acc_obs = acc_exp = 0.0
    bins_obs[-1] += acc_obs
    bins_exp[-1] += acc_exp
    scale = sum(bins_obs) / sum(bins_exp)
    return chisquare(bins_obs, [e * scale for e in bins_exp]).pvalue


def test_large_mb_marginal_is_binomial():
    # k_1 ~ Binomial(n, 1/r) under MB (reference: scipy.stats.binom).
    n, r = 1000, 100
    rows = sample_array(Occupancy(balls=n, urns=r, rule="MB"), 20000, seed=5)
    assert (rows.sum(axis=1) == n).all()
    p = _pooled_chi_square(rows[:, 0], lambda j: binom.pmf(j, n, 1 / r), range(n + 1))
    assert p > P_MIN
    # every urn is exchangeable: the column sums are close to each other
    assert chisquare(rows.sum(axis=0)).pvalue > P_MIN


def test_large_be_marginal():
    # P(k_1 = j) = C(n - j + r - 2, r - 2) / C(n + r - 1, r - 1) (stars and bars).
    n, r = 1000, 100
    model = Occupancy(balls=n, urns=r, rule="BE")
    total = comb(n + r - 1, r - 1)
    assert total == model.configurations()
    rows = sample_array(model, 20000, seed=6)
    pmf = lambda j: Fraction(comb(n - j + r - 2, r - 2), total)  # noqa: E731
    assert _pooled_chi_square(rows[:, 0], pmf, range(n + 1)) > P_MIN
    assert _pooled_chi_square(rows[:, -1], pmf, range(n + 1)) > P_MIN


@pytest.mark.parametrize("rule", ["BE", "MB"])
@pytest.mark.parametrize("method", [None, "sequential"])
def test_large_bounded_marginal_from_exact_counts(rule, method):
    # P(k_1 = j) = weight(j) * count(n - j balls in r - 1 urns) / count(n, r), exact counts.
    n, r, c = 300, 30, 16
    model = Occupancy(balls=n, urns=r, rule=rule, capacity=c)
    rest = Occupancy(balls=0, urns=r - 1, rule=rule, capacity=c)
    total = model.microstates()

    def pmf(j):
        ways = rest.with_balls(n - j).microstates()
        return Fraction(comb(n, j) * ways if rule == "MB" else ways, total)

    rows = sample_array(model, 6000, seed=8, method=method)
    assert (rows <= c).all() and (rows.sum(axis=1) == n).all()
    assert _pooled_chi_square(rows[:, 0], pmf, range(c + 1)) > P_MIN
    assert _pooled_chi_square(rows[:, r // 2], pmf, range(c + 1)) > P_MIN


# ---------------------------------------------------------------------------
# reproducibility and the block interface
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("model", MODELS[::3], ids=repr)
def test_reproducible_by_seed_and_prefix_stable(model):
    a = sample(model, 300, seed=42)
    assert a == sample(model, 300, seed=42)
    assert a[:37] == sample(model, 37, seed=42)
    assert a != sample(model, 300, seed=43)
    blocks = list(iter_sample_blocks(model, 300, seed=42))
    assert sum(len(b) for b in blocks) == 300
    assert np.concatenate(blocks).tolist() == [list(k) for k in a]
    assert sample_array(model, 300, seed=42).dtype == np.int64


def test_unseeded_draws_are_valid():
    model = Occupancy(balls=4, urns=3, rule="BE", capacity=2)
    rows = sample(model, 50)
    assert all(model.admits(k) for k in rows)


def test_sizes_and_errors():
    model = Occupancy(balls=3, urns=2, rule="MB")
    assert sample(model, 0, seed=1) == []
    assert sample_array(model, 0, seed=1).shape == (0, 2)
    with pytest.raises(InvalidParameters, match="size must be at least 0"):
        sample(model, -1)
    with pytest.raises(InvalidParameters, match="seed must be a whole number"):
        sample(model, 3, seed=1.5)
    with pytest.raises(InvalidParameters, match="admits no configuration"):
        sample(Occupancy(balls=7, urns=2, rule="BE", capacity=3), 1, seed=1)
    with pytest.raises(InvalidParameters, match="method must be one of"):
        sample(model, 1, seed=1, method="magic")
    with pytest.raises(InvalidParameters, match="does not apply"):
        sample(Occupancy(balls=3, urns=2, rule="BE", capacity=2), 1, seed=1, method="stars-and-bars")
    with pytest.raises(TooLarge, match="would keep only about 1 in"):
        sample(Occupancy(balls=60, urns=60, rule="MB", capacity=1), 1, seed=1, method="rejection")


def test_methods_listed():
    assert set(METHODS) == {"stars-and-bars", "subset", "uniform-balls", "rejection", "sequential", "groups"}


# ---------------------------------------------------------------------------
# the exact refinement when 64 random bits hit a threshold
# ---------------------------------------------------------------------------

class _ScriptedGenerator:
    """Stands in for numpy's Generator: returns scripted 64-bit words (uint64 draws only)."""

    def __init__(self, first, extra):
        self.first = list(first)
        self.extra = list(extra)

    def integers(self, low, high, size=None, dtype=None, endpoint=False):
        assert dtype == np.uint64 and endpoint
        if size is None:
            return np.uint64(self.extra.pop(0))
        words, self.first = self.first[:size], self.first[size:]
        return np.array(words, dtype=np.uint64)


def test_threshold_ties_are_resolved_exactly():
    # A word within one unit of a threshold is ambiguous; the refinement must give the
    # share of the exact real U = (word * 2^64 + extra) / 2^128 (definition of the method).
    model = Occupancy(balls=5, bounds=[(0, None), (1, 4)], rule="MB")
    plan = SequentialSampler(model)
    root = plan.root
    j_lo, j_hi, weight, total = plan._split(root, 5)
    weights = [weight(j) for j in range(j_lo, j_hi + 1)]
    assert (j_lo, weights, total) == (1, [5, 10, 10, 5], 30)  # C(5, j), j = 1..4
    first, thresholds = plan._row(root, 5)
    cumulative = np.cumsum([0] + weights).tolist()
    words = [0, 1, 2**64 - 1] + [t + d for t in thresholds.tolist() for d in (0, 1)]
    for word in words:
        for extra in (0, 2**63, 2**64 - 1):
            u = Fraction(word * 2**64 + extra, 2**128)
            expected = j_lo + next(b for b in range(len(weights)) if u * total < cumulative[b + 1])
            got = plan.draw(_ScriptedGenerator([word], [extra, 0, 0]), 1)
            assert got.tolist() == [[expected, 5 - expected]], (word, extra)


@pytest.mark.parametrize(
    "model",
    [
        Occupancy(balls=400, urns=40, rule="MB", minimum=3),
        Occupancy(balls=400, urns=40, rule="BE", capacity=25),
        Occupancy(balls=300, bounds=[(0, 5), (2, None), (0, 40), (1, 9)] * 10, rule="MB"),
    ],
    ids=["MB-minimum", "BE-capacity", "MB-per-urn"],
)
def test_bulk_thresholds_are_exact_to_one_unit(model):
    # The omitted tails are below total / 2^66, so each stored threshold t' satisfies
    # t' <= floor(2^64 F_j / F) <= t' + 1 against the full exact row (definition).
    plan = SequentialSampler(model)
    checked = 0
    for node in plan.preorder:
        if node.left is None:
            continue
        table = plan._table(node)
        for m in range(table["m_lo"], table["m_lo"] + len(table["done"]), 7):
            j_lo, j_hi, weight, total = plan._split(node, m)
            first, thresholds = plan._row(node, m)
            exact = []
            cumulative = 0
            for j in range(j_lo, j_hi):
                cumulative += weight(j)
                exact.append((cumulative << 64) // total)
            for index, t in enumerate(thresholds.tolist()):
                true = exact[first - j_lo + index]
                assert t <= true <= t + 1
            # everything before `first` is below one unit, everything after the row saturates
            assert all(v <= 1 for v in exact[: first - j_lo])
            assert all(v >= 2**64 - 1 for v in exact[first - j_lo + len(thresholds) :])
            checked += 1
    assert checked > 20


# ---------------------------------------------------------------------------
# the command line: enumerator sample
# ---------------------------------------------------------------------------

import csv  # noqa: E402
import io  # noqa: E402
import json  # noqa: E402

from typer.testing import CliRunner  # noqa: E402

from enumerator.cli import app  # noqa: E402

runner = CliRunner()


def test_cli_sample_csv_matches_library():
    model = Occupancy(balls=10, urns=4, rule="BE", capacity=5)
    result = runner.invoke(app, ["sample", "-n", "10", "-r", "4", "--rule", "BE", "--capacity", "5",
                                 "--size", "200", "--seed", "3"])
    assert result.exit_code == 0, result.output
    rows = list(csv.reader(io.StringIO(result.stdout)))
    assert rows[0] == ["k1", "k2", "k3", "k4"]
    assert [tuple(map(int, r)) for r in rows[1:]] == sample(model, 200, seed=3)


def test_cli_sample_jsonl_and_json():
    args = ["sample", "-n", "6", "-r", "3", "--capacity", "3", "--size", "5", "--seed", "2"]
    lines = runner.invoke(app, args + ["--format", "jsonl"]).stdout.splitlines()
    expected = sample(Occupancy(balls=6, urns=3, rule="MB", capacity=3), 5, seed=2)
    assert [tuple(json.loads(line)) for line in lines] == expected
    payload = json.loads(runner.invoke(app, args + ["--json"]).stdout)
    assert payload["seed"] == "2" and payload["size"] == "5" and payload["rule"] == "MB"
    assert [tuple(k) for k in payload["configurations"]] == expected
    assert payload["method"] == sampling_method(Occupancy(balls=6, urns=3, rule="MB", capacity=3))
    unseeded = json.loads(runner.invoke(app, ["sample", "-n", "4", "-r", "2", "--size", "3", "--json"]).stdout)
    again = json.loads(runner.invoke(app, ["sample", "-n", "4", "-r", "2", "--size", "3", "--json",
                                           "--seed", unseeded["seed"]]).stdout)
    assert again["configurations"] == unseeded["configurations"]


def test_cli_sample_errors_come_before_output():
    result = runner.invoke(app, ["sample", "-n", "7", "-r", "2", "--capacity", "3", "--size", "3"])
    assert result.exit_code == 2
    assert result.stdout == ""
    assert "admits no configuration" in result.stderr
    result = runner.invoke(app, ["sample", "-n", "7", "-r", "2", "--method", "subset"])
    assert result.exit_code == 2 and "does not apply" in result.stderr


# ---------------------------------------------------------------------------
# groups and weights: exact laws with weights, sparse draws at any number of urns
# ---------------------------------------------------------------------------

from enumerator.algorithms.sampling import dense_sample_cost, iter_sample_sparse  # noqa: E402
from enumerator.algorithms.sampling_groups import GroupSampler, RandomWords  # noqa: E402
from enumerator.core.limits import limited  # noqa: E402
from enumerator.core.model import UrnModel  # noqa: E402


def weighted_law(model):
    """{k: exact probability} by brute force over the box, with weights (slow reference).

    MB: ``n!/prod k_i! prod w_i^{k_i}`` (each ball in urn i with probability
    w_i/W, conditioned on the bounds); BE/FD: ``prod w_i^{k_i}``.
    """
    ws = model.weights
    law = {}
    for k in reference.box(model):
        w = Fraction(reference.multinomial(k) if model.rule.value == "MB" else 1)
        for v, wi in zip(k, ws):
            w *= wi**v
        law[k] = w
    total = sum(law.values())
    return {k: v / total for k, v in law.items()}


def weighted_p(model, rows):
    law = weighted_law(model)
    counts = Counter(rows)
    assert set(counts) <= set(law), "a sampled vector is not admissible"
    keys = sorted(law)
    return chisquare([counts[k] for k in keys], [float(law[k] * len(rows)) for k in keys]).pvalue


def dense(draw, r):
    row = [0] * r
    for urn, k in draw:
        row[urn - 1] = k
    return tuple(row)


WEIGHTED = [
    Occupancy(balls=4, weights=[1, 2, 3], rule="MB"),
    Occupancy(balls=5, groups=[(2, 0, None, Fraction(1, 2)), (1, 0, 2, 3)], rule="MB"),
    Occupancy(balls=5, groups=[(2, 1, 3, 1), (2, 0, 2, Fraction(5, 2))], rule="MB"),
    Occupancy(balls=4, weights=[1, 2, 3], rule="BE"),
    Occupancy(balls=5, groups=[(2, 0, None, Fraction(1, 2)), (2, 0, 2, 3)], rule="BE"),
    Occupancy(balls=2, groups=[(2, 0, 1, Fraction(1, 3)), (2, 0, 1, 2)], rule="FD"),
]


@pytest.mark.parametrize("model", WEIGHTED, ids=repr)
def test_weighted_samples_follow_the_exact_law(model):
    assert sampling_method(model) == "groups"
    rows = sample(model, 6000, seed=11)
    assert weighted_p(model, rows) > P_MIN


@pytest.mark.parametrize("model", [
    Occupancy(balls=6, urns=4, rule="BE", capacity=2),  # halving inside the group (capacity bites)
    Occupancy(balls=7, urns=3, rule="MB", minimum=1, capacity=4),  # halving with a lower bound
    Occupancy(balls=5, urns=5, rule="MB", capacity=2),
    Occupancy(balls=3, urns=6, rule="FD"),  # Floyd subsets
    Occupancy(balls=4, urns=3, rule="BE"),  # Floyd stars and bars
], ids=repr)
def test_the_group_method_follows_the_unweighted_law_too(model):
    rows = sample(model, 6000, seed=5, method="groups")
    assert chi_square_p(model, rows) > P_MIN


def test_sparse_draws_are_the_dense_rows_of_the_group_method():
    model = Occupancy(balls=5, groups=[(2, 0, None, Fraction(1, 2)), (2, 0, 2, 3)], rule="BE")
    sparse = list(iter_sample_sparse(model, 300, seed=3))
    rows = sample(model, 300, seed=3)
    assert [dense(d, model.urns) for d in sparse] == rows
    assert sample(model, 300, seed=3, sparse=True) == sparse
    for d in sparse:
        urns = [u for u, _ in d]
        assert urns == sorted(set(urns)) and all(k > 0 for _, k in d)


def test_a_model_given_per_urn_and_in_groups_samples_alike():
    per_urn = Occupancy(balls=4, weights=[1, 1, 3, 3, 3], bounds=[(0, 2)] * 5, rule="MB")
    grouped = Occupancy(balls=4, groups=[(2, 0, 2, 1), (3, 0, 2, 3)], rule="MB")
    assert sample(per_urn, 200, seed=9) == sample(grouped, 200, seed=9)
    assert weighted_p(grouped, sample(grouped, 4000, seed=2)) > P_MIN


def test_mb_weights_are_urn_probabilities_at_any_number_of_urns():
    # One urn of weight 2^64 beside 2^64 urns of weight 1: each ball lands in it
    # with probability exactly 1/2, so its count is Binomial(n, 1/2) (SciPy binom).
    r = 2**64
    n = 6
    model = UrnModel(balls=n, groups=[(1, 0, None, r), (r, 0, None, 1)], rule="MB")
    draws = list(iter_sample_sparse(model, 4000, seed=1))
    first = Counter(dict(d).get(1, 0) for d in draws)
    observed = [first[j] for j in range(n + 1)]
    expected = [binom.pmf(j, n, 0.5) * len(draws) for j in range(n + 1)]
    assert chisquare(observed, expected).pvalue > P_MIN
    for d in draws:
        assert sum(k for _, k in d) == n and all(1 <= u <= r + 1 for u, _ in d)


def test_be_at_2_to_the_64_urns_marginal_of_one_urn():
    # BE, one urn of weight 1 followed by a group of 2^64 - 1 urns of capacity 1
    # and weight 1: P(urn 1 holds j) = C(r - 1, n - j) / sum_i C(r - 1, n - i)
    # (counting vectors; exact, math.comb).
    r1 = 2**64 - 1
    n = 3
    model = UrnModel(balls=n, groups=[(1, 0, None, 1), (r1, 0, 1, 1)], rule="BE")
    weights = [comb(r1, n - j) for j in range(n + 1)]
    # the law is all but concentrated on j = 0: check support and the exact draws
    draws = list(iter_sample_sparse(model, 200, seed=4))
    assert all(max(k for u, k in d if u > 1) <= 1 for d in draws if any(u > 1 for u, _ in d))
    assert Fraction(weights[0], sum(weights)) > 1 - Fraction(1, 2**60)
    assert all(dict(d).get(1, 0) == 0 for d in draws)
    # a weight that makes urn 1 likely: weight 2^64 for it, 1 for the others
    heavy = UrnModel(balls=n, groups=[(1, 0, None, 2**64), (r1, 0, 1, 1)], rule="BE")
    law = [Fraction(2**64) ** j * comb(r1, n - j) for j in range(n + 1)]
    total = sum(law)
    draws = list(iter_sample_sparse(heavy, 4000, seed=8))
    seen = Counter(dict(d).get(1, 0) for d in draws)
    observed = [seen[j] for j in range(n + 1)]
    expected = [float(w / total) * len(draws) for w in law]
    keep = [i for i, e in enumerate(expected) if e > 1e-9]
    assert sum(observed[i] for i in keep) == len(draws)
    assert chisquare([observed[i] for i in keep], [expected[i] for i in keep]).pvalue > P_MIN


def test_sparse_draws_with_a_capacity_at_huge_r_halve_exactly():
    # 2^64 urns of capacity 2 holding 5 balls, BE: the profile law (how many urns
    # hold 2) is exact counting: P(t doubles) ∝ C(r, t) C(r - t, 5 - 2t).
    r = 2**64
    n = 5
    model = UrnModel(balls=n, urns=r, rule="BE", capacity=2)
    draws = list(iter_sample_sparse(model, 300, seed=6))
    for d in draws:
        assert sum(k for _, k in d) == n and all(1 <= k <= 2 for _, k in d) and all(1 <= u <= r for u, _ in d)
    law = {t: comb(r, t) * comb(r - t, n - 2 * t) for t in range(n // 2 + 1)}
    total = sum(law.values())
    assert Fraction(law[0], total) > 1 - Fraction(1, 2**55)
    assert all(sum(1 for _, k in d if k == 2) == 0 for d in draws)


def test_random_words_give_exact_uniform_integers():
    words = RandomWords(np.random.default_rng(12))
    bound = 3 * 2**70
    values = [words.below(bound) for _ in range(6000)]
    assert all(0 <= v < bound for v in values)
    # residues mod 3 and the top two bits (each third of [0, bound) is 2^70 wide)
    assert chisquare(list(Counter(v % 3 for v in values).values())).pvalue > P_MIN
    assert chisquare([sum(1 for v in values if v >> 70 == t) for t in range(3)]).pvalue > P_MIN
    # below 2^64: a bound just above 2^63 (where modulo reduction alone would be biased 2:1)
    small = 2**63 + 2**62
    values = [words.below(small) for _ in range(6000)]
    assert chisquare([sum(1 for v in values if v * 3 // small == t) for t in range(3)]).pvalue > P_MIN
    assert words.below(1) == 0
    with pytest.raises(ValueError):
        words.below(0)


def test_dense_samples_are_refused_before_allocating():
    model = UrnModel(balls=3, urns=10**7, rule="BE")
    assert dense_sample_cost(model).memory >= 64 * 10**7 * 8
    with pytest.raises(TooLarge, match="sparse") as caught:
        next(iter_sample_blocks(model, 2, seed=1))
    assert "sparse" in caught.value.parameters
    with limited(memory=10**6):
        with pytest.raises(TooLarge, match=r"iter_sample_sparse"):
            sample(Occupancy(balls=3, urns=10**4, rule="MB"), 2, seed=1)
    # the sparse form of the same draws is cheap
    draws = sample(model, 3, seed=1, sparse=True)
    assert all(sum(k for _, k in d) == 3 for d in draws)


def test_weighted_models_refuse_methods_that_ignore_weights():
    model = Occupancy(balls=3, weights=[1, 2], rule="MB")
    with pytest.raises(InvalidParameters, match="groups"):
        sample(model, 2, seed=1, method="uniform-balls")
    with pytest.raises(InvalidParameters, match="sparse draws use method 'groups'"):
        sample(model, 2, seed=1, method="sequential", sparse=True)


def test_empty_weighted_models_refuse_to_sample():
    model = Occupancy(balls=5, groups=[(2, 0, 1, 2)], rule="BE")
    with pytest.raises(InvalidParameters, match="admits no configuration"):
        next(iter_sample_sparse(model, 1))
    with pytest.raises(InvalidParameters, match="admits no configuration"):
        GroupSampler(model)


def test_the_method_of_huge_and_weighted_models_is_groups():
    assert sampling_method(UrnModel(balls=1, urns=2**70, rule="MB")) == "groups"
    assert sampling_method(Occupancy(balls=1, weights=[1, 2], rule="BE")) == "groups"
    assert sampling_method(Occupancy(balls=1, urns=7, rule="MB")) == "uniform-balls"
    # n = 0: the one empty configuration, drawn sparsely as no occupied urn
    assert sample(UrnModel(balls=0, urns=2**70, rule="MB"), 2, seed=1, sparse=True) == [(), ()]
