"""Tables and enumeration sums on a Dask cluster (enumerator.store.cluster).

References: the single-process build (``build_table``) cell by cell, the
event planner (``event_count``, exact shortcuts, no listing), the
single-process listing sum, and closed forms (binomial ``C(n + r - 1, r - 1)``
configurations, ``r^n`` MB outcomes; Feller, *An Introduction to Probability
Theory*, vol. 1, 3rd ed., 1968, §II.5).
"""

from __future__ import annotations

import math
import os
import signal
import sys
import time

import pytest

distributed = pytest.importorskip("distributed")
cloudpickle = pytest.importorskip("cloudpickle")

from enumerator.algorithms.events import event_count  # noqa: E402
from enumerator.algorithms.listing import iter_blocks  # noqa: E402
from enumerator.core.errors import InvalidParameters  # noqa: E402
from enumerator.core.model import UrnModel  # noqa: E402
from enumerator.store.cluster import (  # noqa: E402
    EventWeight,
    build_table_distributed,
    enumeration_sum_distributed,
    event_count_distributed,
    plan_row_batches,
)
from enumerator.store.database import Store  # noqa: E402
from enumerator.store.tables import TableSpec, build_table, load_table  # noqa: E402

# the workers cannot import this test module: send its helpers by value
cloudpickle.register_pickle_by_value(sys.modules[__name__])


@pytest.fixture(scope="module")
def client():
    from enumerator.store.cluster import local_cluster

    with local_cluster(2) as cluster:
        with distributed.Client(cluster, set_as_default=False) as c:
            yield c


def _cells(store, spec):
    return load_table(spec.default_name(), store).cells


def rows_count(block):
    return len(block)


class SlowWeight:
    """EventWeight that sleeps per block, so shards are in flight when a worker dies."""

    def __init__(self, model, event, pause):
        self.inner = EventWeight(model, event)
        self.pause = pause

    def __call__(self, block):
        time.sleep(self.pause)
        return self.inner(block)


@pytest.mark.parametrize("rule, capacity, minimum", [("MB", 4, 0), ("BE", None, 1), ("FD", None, 0)])
def test_table_equals_single_process_build(tmp_path, client, rule, capacity, minimum):
    # reference: the single-process build, cell by cell
    spec = TableSpec.make(rule, "0..40", "1..25", capacity=capacity, minimum=minimum)
    one, many = Store(str(tmp_path / "one.sqlite")), Store(str(tmp_path / "many.sqlite"))
    build_table(spec, store=one)
    seen = []
    report = build_table_distributed(spec, store=many, client=client, task_seconds=0.01,
                                     progress=lambda r, c, u: seen.append((r, c, u)))
    assert _cells(many, spec) == _cells(one, spec)
    assert report.computed == report.stored == spec.cells and report.reused == 0
    assert sorted(r for r, _, _ in seen) == list(spec.urns)
    assert sum(c + u for _, c, u in seen) == spec.cells


def test_table_skips_stored_rows_and_matches_closed_form(tmp_path, client):
    spec = TableSpec.make("BE", "0..30", "1..20")
    store = Store(str(tmp_path / "s.sqlite"))
    # rows 1..6 stored beforehand by a smaller single-process build
    build_table(TableSpec.make("BE", "0..30", "1..6"), store=store)
    report = build_table_distributed(spec, store=store, client=client)
    assert report.reused == 31 * 6 and report.computed == 31 * 14
    cells = _cells(store, spec)
    # closed form: C(n + r - 1, r - 1) configurations
    assert all(int(cells[(n, r)][0]) == math.comb(n + r - 1, r - 1) for n in spec.balls for r in spec.urns)
    again = build_table_distributed(spec, store=store, client=client)
    assert again.computed == 0 and again.reused == spec.cells


def test_batches_cover_every_row_once():
    spec = TableSpec.make("MB", "0..100", "1..50", capacity=6)
    from enumerator.store.cluster import RowTask

    tasks = [RowTask(r, tuple(spec.balls)) for r in spec.urns]
    batches = plan_row_batches(spec, tasks, seconds_per_weight=1e-5, workers=2)
    assert [t for b in batches for t in b] == tasks
    assert len(batches) >= 2


def test_needs_exactly_one_cluster(tmp_path):
    spec = TableSpec.make("BE", "0..3", "1..3")
    with pytest.raises(InvalidParameters):
        enumeration_sum_distributed(UrnModel(balls=3, urns=3), rows_count)
    with pytest.raises(InvalidParameters):
        build_table_distributed(spec, store=Store(str(tmp_path / "x.sqlite")), workers=2, cluster="tcp://nowhere:1")


def test_sum_equals_planner_and_single_process(client):
    # an event the planner answers by exact shortcuts, summed here by listing
    model = UrnModel(balls=9, urns=6, rule="MB", capacity=4)
    event = "max <= 3 and min >= 1"
    assert event_count_distributed(model, event, client=client, shards=7, block=50) == event_count(model, event)
    weight = EventWeight(model, event)
    single = sum(weight(b) for b in iter_blocks(model, 64))
    assert enumeration_sum_distributed(model, weight, client=client, shards=5) == single
    # closed forms: C(n + r - 1, r - 1) configurations, r^n MB outcomes
    free = UrnModel(balls=10, urns=5, rule="MB")
    assert enumeration_sum_distributed(free, rows_count, client=client, block=37) == math.comb(14, 4)
    assert event_count_distributed(free, "max <= 10", client=client)[0] == 5 ** 10
    # a sub-range [start, stop)
    assert enumeration_sum_distributed(free, rows_count, client=client, start=17, stop=905, shards=6) == 888


def _kill_busy_worker(client):
    """SIGKILL the process of a worker that is running tasks; return how many it was running."""
    busy = {w: keys for w, keys in client.processing().items() if keys}
    if not busy:
        return 0
    address, keys = next(iter(busy.items()))
    pid = client.run(os.getpid, workers=[address])[address]
    os.kill(pid, signal.SIGKILL)
    return len(keys)


def _wait_for_workers(client, count=2, seconds=60):
    client.wait_for_workers(count, timeout=seconds)


# the two tests below kill a worker of the shared cluster; its nanny starts a new one


def test_killed_worker_loses_nothing_sum(client):
    # reference: the planner's exact count; the killed worker's shards are rerun once
    model = UrnModel(balls=8, urns=6, rule="MB")
    event = "max <= 2"
    _wait_for_workers(client)
    killed = []

    def progress(done, total):
        if not killed:
            killed.append(_kill_busy_worker(client))

    weight = SlowWeight(model, event, 0.1)
    got = enumeration_sum_distributed(model, weight, client=client, shards=8, block=80, progress=progress)
    assert killed and killed[0] >= 1
    assert (got, event_count(model, event)[1]) == event_count(model, event)


def test_killed_worker_loses_nothing_table(tmp_path, client):
    # reference: the single-process build, cell by cell
    spec = TableSpec.make("MB", "0..120", "1..40", capacity=6)
    one, many = Store(str(tmp_path / "one.sqlite")), Store(str(tmp_path / "many.sqlite"))
    build_table(spec, store=one)
    _wait_for_workers(client)
    calls = []

    def progress(r, computed, reused):
        calls.append(r)
        if len(calls) == 2:  # the first row back from the cluster (the pilot is local)
            _kill_busy_worker(client)

    report = build_table_distributed(spec, store=many, client=client, task_seconds=0.02, progress=progress)
    assert _cells(many, spec) == _cells(one, spec)
    assert report.stored == spec.cells and sorted(calls) == list(spec.urns)


def test_table_build_command_on_two_workers_equals_the_single_process_build(tmp_path):
    # Reference: the single-process build of the same table (and C(n+r-1, r-1) for BE, Feller II.5).
    from math import comb

    from cli_helpers import run_json

    one = str(tmp_path / "one.sqlite")
    two = str(tmp_path / "two.sqlite")
    args = ("table", "build", "--rule", "BE", "--balls", "0..30", "--urns", "1..12")
    assert run_json(*args, "--store", one)["stored"] == "372"
    assert run_json(*args, "--store", two, "--workers", "2")["stored"] == "372"
    a = run_json("table", "show", "BE-configurations-n0..30-r1..12", "--store", one)
    b = run_json("table", "show", "BE-configurations-n0..30-r1..12", "--store", two)
    assert a == b
    cells = [cell for cell in b.values() if isinstance(cell, list)][0]
    assert cells and all(int(c["value"]) == comb(int(c["balls"]) + int(c["urns"]) - 1, int(c["urns"]) - 1)
                         for c in cells)


# ---------------------------------------------------------------------------
# what the planner answers by listing, on the cluster (prob --event, dist)
# ---------------------------------------------------------------------------

from collections import Counter  # noqa: E402
from fractions import Fraction  # noqa: E402
from itertools import combinations_with_replacement, product  # noqa: E402

from enumerator.algorithms import events as event_module  # noqa: E402
from enumerator.algorithms import laws  # noqa: E402
from enumerator.algorithms.statistics import distribution  # noqa: E402
from enumerator.core.errors import TooLarge  # noqa: E402
from enumerator.store.cluster import (  # noqa: E402
    distribution_distributed,
    distribution_needs_listing,
    event_needs_listing,
)

#: An event mixing two counting statistics: the planner has no shortcut and lists.
MIXED = "empty == 2 and count(== 1) == 1"


def _occupancy(urns_of_balls, r):
    counts = Counter(urns_of_balls)
    return tuple(counts.get(i, 0) for i in range(r))


def _brute_mb(n, r, weights=None):
    """{occupancy: probability} by brute force over the r^n assignments of labelled balls."""
    w = weights or [1] * r
    total = sum(w)
    law = {}
    for urns in product(range(r), repeat=n):
        p = Fraction(math.prod(w[u] for u in urns), total ** n)
        k = _occupancy(urns, r)
        law[k] = law.get(k, 0) + p
    return law


def _brute_be(n, r):
    """{occupancy: probability} by brute force over the multisets of urns (BE: every vector equally likely)."""
    vectors = [_occupancy(c, r) for c in combinations_with_replacement(range(r), n)]
    return {k: Fraction(1, len(vectors)) for k in vectors}


def _mixed_holds(k):
    return sum(1 for v in k if v == 0) == 2 and sum(1 for v in k if v == 1) == 1


@pytest.mark.parametrize("rule, weights", [("MB", None), ("BE", None), ("MB", "1,2,3,1,2")])
def test_listed_event_on_cluster_equals_single_process_and_brute_force(client, rule, weights):
    # references: the single-process listing (event_count) and brute force over
    # every assignment (MB: r^n labelled balls, weighted by prod w_u / W^n) or vector (BE)
    model = UrnModel(balls=7, urns=5, rule=rule, weights=weights)
    assert event_needs_listing(model, MIXED)
    count, total = event_count_distributed(model, MIXED, client=client, shards=6, block=97)
    single = event_count(model, MIXED)
    assert (count, total) == single
    law = _brute_mb(7, 5, [int(x) for x in weights.split(",")] if weights else None) if rule == "MB" \
        else _brute_be(7, 5)
    assert Fraction(count, total) == sum(p for k, p in law.items() if _mixed_holds(k))


def test_closed_events_need_no_listing():
    # the planner's documented shortcuts: per-urn bounds, one statistic's law (events module docstring)
    model = UrnModel(balls=7, urns=5, rule="MB")
    for event in ("max <= 2", "empty >= 1 and max == 3", "k1 >= 2 or min >= 1", "empty == 2"):
        assert not event_needs_listing(model, event), event
    assert event_needs_listing(model, MIXED)


def test_listing_refused_above_limit_before_any_work(client):
    model = UrnModel(balls=7, urns=5, rule="MB")  # C(11, 4) = 330 configurations
    with pytest.raises(TooLarge):
        event_count_distributed(model, MIXED, client=client, limit=329)
    assert event_count_distributed(model, MIXED, client=client, limit=330) == event_count(model, MIXED)


def test_weighted_profile_law_on_cluster_equals_single_process_and_brute_force(client):
    # references: the single-process law (laws.profile_counts lists a weighted model)
    # and brute force over the 4^6 weighted assignments
    model = UrnModel(balls=6, urns=4, rule="MB", weights="1,2,2,5")
    assert distribution_needs_listing(model, "profile")
    law = distribution_distributed(model, "profile", client=client, shards=5, block=11)
    assert law == distribution(model, "profile")
    brute = {}
    for k, p in _brute_mb(6, 4, [1, 2, 2, 5]).items():
        key = tuple(sorted(k, reverse=True))
        brute[key] = brute.get(key, 0) + p
    assert law.pmf == dict(sorted(brute.items()))


def test_route_probe_agrees_with_the_routes_taken(monkeypatch, client):
    # the probe must name exactly the laws that laws.enumerated_counts computes; a small
    # GROUP_TUPLE_LIMIT makes per-urn bounds list at a size a test can run
    monkeypatch.setattr(laws, "GROUP_TUPLE_LIMIT", 8)
    listed = []
    real = laws.enumerated_counts
    monkeypatch.setattr(laws, "enumerated_counts", lambda *a, **k: listed.append(1) or real(*a, **k))
    models = [
        UrnModel(balls=6, bounds="0:1,0:2,0:3,0:4", rule="BE"),
        UrnModel(balls=6, bounds="0:1,0:2,0:3,0:4", rule="MB"),
        UrnModel(balls=5, bounds="1:2,0:2,0:3", rule="MB"),
        UrnModel(balls=6, urns=4, rule="MB", capacity=3),
        UrnModel(balls=3, urns=4, rule="FD"),
        UrnModel(balls=6, urns=4, rule="BE"),
        UrnModel(balls=6, urns=3, rule="MB", weights="1,2,3"),
    ]
    seen = set()
    for model in models:
        for stat in ("empty", "occupied", "exactly:1", "atleast:2", "max", "urn:2", "profile"):
            listed.clear()
            single = distribution(model, stat)
            assert distribution_needs_listing(model, stat) == bool(listed), (model, stat)
            seen.add(bool(listed))
            if listed:
                assert distribution_distributed(model, stat, client=client, shards=3) == single
    assert seen == {True, False}


def test_listed_events_probe_agrees_with_the_planner(monkeypatch):
    # the event probe must name exactly the events event_count decides by listing
    listed = []
    real = event_module._enumerate
    monkeypatch.setattr(event_module, "_enumerate", lambda *a, **k: listed.append(1) or real(*a, **k))
    model = UrnModel(balls=6, urns=4, rule="BE", capacity=4)
    for event in (MIXED, "max <= 2", "empty == 1 or k2 == 3", "count(== 2) == 1 and occupied == 3",
                  "not (min >= 1) and k1 != 2", "count(>= 2) == 2 and count(== 0) == 1"):
        listed.clear()
        event_count(model, event)
        assert event_needs_listing(model, event) == bool(listed), event


def test_prob_and_dist_commands_on_the_cluster(client):
    # reference: the same commands without the cluster (single process)
    from cli_helpers import run, run_json

    address = client.scheduler.address
    base = ("prob", "-n", "7", "-r", "5", "--event", MIXED, "--no-cache")
    one, many = run_json(*base), run_json(*base, "--cluster", address)
    assert many.pop("note").startswith("listed all 330 configurations")
    assert one == many
    closed = run(*base[:5], "--event", "max <= 2", "--no-cache", "--cluster", address)
    assert closed.exit_code == 0 and closed.stderr.count("\n") == 1 and "no cluster" in closed.stderr
    law = ("dist", "-n", "6", "--weights", "1,2,2,5", "--stat", "profile", "--no-cache")
    one, many = run_json(*law), run_json(*law, "--cluster", address)
    assert many.pop("note").startswith("listed all 84 configurations")
    assert one == many
    plain = run_json("dist", "-n", "6", "-r", "4", "--stat", "max", "--no-cache", "--cluster", address)
    assert "no cluster" in plain["note"]
    both = run(*base, "--cluster", address, "--workers", "2")
    assert both.exit_code == 2 and "--workers" in both.stderr and "Traceback" not in both.output


def test_table_on_postgres_workers_skip_cells_stored_meanwhile(tmp_path, client, postgres_url):
    # reference: the single-process build into SQLite, cell by cell; a second builder
    # stores rows 13..24 into the PostgreSQL store after the client planned the build
    spec = TableSpec.make("MB", "0..40", "1..24", capacity=5)
    one = Store(str(tmp_path / "one.sqlite"))
    build_table(spec, store=one)
    server = Store(postgres_url)
    calls = []

    def progress(r, computed, reused):
        calls.append((r, computed, reused))
        if len(calls) == 1:  # the pilot row, computed by the client before any task is sent
            build_table(TableSpec.make("MB", "0..40", "13..24", capacity=5), store=server)

    report = build_table_distributed(spec, store=server, client=client, task_seconds=0.01, progress=progress)
    assert _cells(server, spec) == _cells(one, spec)
    assert report.computed == 41 * 12 and report.reused == 41 * 12 and report.stored == 41 * 12
    assert sorted(r for r, _, _ in calls) == list(spec.urns)
    assert sum(c + u for _, c, u in calls) == spec.cells
    again = build_table_distributed(spec, store=server, client=client)
    assert again.computed == 0 and again.reused == spec.cells


def test_list_to_files_one_per_shard_equals_the_stdout_listing(tmp_path, client):
    # references: the same listing printed to stdout by one process, and C(n + r - 1, r - 1)
    # configurations (Feller II.5)
    from cli_helpers import run, run_json

    whole = run("list", "-n", "9", "-r", "5", "--format", "jsonl")
    assert whole.exit_code == 0
    for extra, fmt in ((("--shards", "3"), "jsonl"), (("--cluster", client.scheduler.address, "--shards", "7"), "csv")):
        out = tmp_path / fmt
        summary = run_json("list", "-n", "9", "-r", "5", "--format", fmt, "--output-dir", str(out), *extra)
        files = summary["files"]
        assert [f["file"] for f in files] == sorted(p.name for p in out.iterdir())
        assert int(summary["listed"]) == math.comb(13, 4) == sum(int(f["listed"]) for f in files)
        assert [f["start"] for f in files[1:]] == [f["stop"] for f in files[:-1]]
        lines = []
        for f in files:
            text = (out / f["file"]).read_text().splitlines()
            if fmt == "csv":
                assert text[0] == "k1,k2,k3,k4,k5"
                text = ["[" + line + "]" for line in text[1:]]
            lines += text
        assert lines == whole.stdout.splitlines()
    refused = run("list", "-n", "3", "-r", "2", "--cluster", client.scheduler.address)
    assert refused.exit_code == 2 and "--output-dir" in refused.stderr


class SlowRows:
    """A formatter that sleeps per block, so shards are in flight when a worker dies."""

    def __call__(self, block):
        time.sleep(0.05)
        return "".join(",".join(map(str, row)) + "\n" for row in block.tolist())


def test_killed_worker_rewrites_only_its_files(tmp_path, client):
    # reference: the single-process listing (iter_blocks) of the same ranks
    from enumerator.store.cluster import listing_to_files

    model = UrnModel(balls=8, urns=5, rule="BE")
    _wait_for_workers(client)
    killed = []

    def progress(done, total):
        if not killed:
            killed.append(_kill_busy_worker(client))

    files = listing_to_files(model, tmp_path, SlowRows(), extension="csv", shards=8, block=20,
                             client=client, progress=progress)
    assert killed and killed[0] >= 1
    assert sorted(p.name for p in tmp_path.iterdir()) == [f["file"] for f in files]  # no partial file left
    written = [line for f in files for line in (tmp_path / f["file"]).read_text().splitlines()]
    expected = [",".join(map(str, row)) for b in iter_blocks(model, 64) for row in b.tolist()]
    assert written == expected and len(written) == math.comb(12, 4)


def test_unreachable_scheduler_is_one_line_error():
    # a free loopback port (bound, then closed): nothing accepts there; common practice
    import socket

    from cli_helpers import one_line_error, run

    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        port = probe.getsockname()[1]
    for address in (f"tcp://127.0.0.1:{port}", "no-port-here"):
        result = run("prob", "-n", "7", "-r", "5", "--event", MIXED, "--no-cache", "--cluster", address)
        line = one_line_error(result)
        assert "Dask scheduler" in line and "--cluster" in line and "--workers" in line


def test_listing_beyond_the_time_limit_is_refused_before_a_cluster_starts(monkeypatch):
    # the listing's estimated time, divided by the workers, is checked before any
    # cluster is started: no LocalCluster may be built here
    from enumerator.core.limits import limited
    from enumerator.store import cluster as cluster_module

    def no_cluster(*args, **kwargs):
        raise AssertionError("a cluster was started for refused work")

    monkeypatch.setattr(cluster_module, "local_cluster", no_cluster)
    model = UrnModel(balls=7, urns=5, rule="MB")
    with limited(seconds=1e-6):
        with pytest.raises(TooLarge, match="2 workers"):
            event_count_distributed(model, MIXED, workers=2)
        with pytest.raises(TooLarge, match="2 workers"):
            distribution_distributed(UrnModel(balls=6, urns=4, weights="1,2,2,5"), "profile", workers=2)


def test_worker_that_cannot_reach_the_server_computes_every_cell():
    # a free loopback port (bound, then closed) stands for a server only the client can reach;
    # reference: C(n + r - 1, r - 1) configurations, here r = 2: n + 1 (Feller II.5)
    import socket

    from enumerator.store.cluster import RowTask, _compute_rows
    from enumerator.store.keys import ALGORITHM_VERSIONS

    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        port = probe.getsockname()[1]
    spec = TableSpec.make("BE", "0..5", "2..2")
    shared = (f"postgresql+psycopg://nobody@127.0.0.1:{port}/none", (spec.bounds_text(2),),
              ALGORITHM_VERSIONS[spec.quantity])
    ((urns, cells, _, _),) = _compute_rows(spec.rule, spec.quantity, spec.minimum, spec.capacity,
                                           [RowTask(2, tuple(spec.balls))], shared)
    assert urns == 2 and cells == [(n, n + 1) for n in range(6)]


def test_a_build_refused_for_its_cluster_leaves_the_store_as_it_was(tmp_path):
    # a free loopback port (bound, then closed): nothing accepts there; common practice
    import socket
    import sqlite3

    from cli_helpers import one_line_error, run

    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        port = probe.getsockname()[1]
    address = f"tcp://127.0.0.1:{port}"
    path = tmp_path / "kept.sqlite"
    store = Store(str(path))
    spec = TableSpec.make("BE", "0..6", "1..4")
    with pytest.raises(InvalidParameters, match="Dask scheduler"):
        build_table_distributed(spec, store=store, cluster=address)
    with pytest.raises(InvalidParameters, match="exactly one"):
        build_table_distributed(spec, store=store, workers=2, cluster=address)
    assert store.tables() == [] and store.stats()["entries"] == 0  # no definition, no pilot row
    store.close()
    line = one_line_error(run("table", "build", "--rule", "BE", "--balls", "0..6", "--urns", "1..4",
                              "--cluster", address, "--store", path))
    assert "Dask scheduler" in line and "--cluster" in line
    with sqlite3.connect(path) as conn:
        assert conn.execute("SELECT count(*) FROM enumerator_tables").fetchone() == (0,)
        assert conn.execute("SELECT count(*) FROM enumerator_results").fetchone() == (0,)
    fresh = tmp_path / "never" / "made.sqlite"  # nothing is created for a refused build
    one_line_error(run("table", "build", "--rule", "BE", "--balls", "0..6", "--urns", "1..4",
                       "--cluster", address, "--store", fresh))
    assert not fresh.parent.exists()
