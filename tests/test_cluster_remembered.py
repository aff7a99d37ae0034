"""Answers listed on a cluster are remembered in the store like any other.

References: the same commands in one process with no store (the exact
single-process routes, themselves checked against brute force in
``test_cluster.py``); whether an answer is served from the store is read off
the note, and the store's own entry count.
"""

from __future__ import annotations

import pytest

pytest.importorskip("distributed")

from cli_helpers import run_json  # noqa: E402

MIXED = "count(== 1) >= 2 and empty <= 1"


@pytest.fixture(scope="module")
def address():
    from enumerator.store.cluster import local_cluster

    with local_cluster(2) as client:
        yield client.scheduler.address


def test_listed_event_is_stored_then_answered_from_the_store(tmp_path, address):
    store = str(tmp_path / "s.sqlite")
    base = ("prob", "-n", "7", "-r", "5", "--event", MIXED)
    alone = run_json(*base, "--no-cache")
    first = run_json(*base, "--store", store, "--cluster", address)
    assert first.pop("note").startswith("listed all 330 configurations")
    again = run_json(*base, "--store", store, "--cluster", address)
    assert "remembered in the store" in again.pop("note")
    assert alone == first == again
    # the plain command reads the same entry (no listing, no cluster)
    assert run_json(*base, "--store", store) == alone


def test_listed_law_is_stored_then_answered_from_the_store(tmp_path, address):
    store = str(tmp_path / "s.sqlite")
    law = ("dist", "-n", "6", "--weights", "1,2,2,5", "--stat", "profile")
    alone = run_json(*law, "--no-cache")
    first = run_json(*law, "--store", store, "--cluster", address)
    assert first.pop("note").startswith("listed all 84 configurations")
    again = run_json(*law, "--store", store, "--cluster", address)
    assert "remembered in the store" in again.pop("note")
    assert alone == first == again
    assert run_json(*law, "--store", store) == alone


def test_no_cache_lists_every_time(address):
    base = ("prob", "-n", "7", "-r", "5", "--event", MIXED, "--no-cache", "--cluster", address)
    for _ in range(2):
        assert run_json(*base)["note"].startswith("listed all 330 configurations")
