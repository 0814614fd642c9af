"""List pages cost a fixed number of queries however many records there are.

Each page is measured on a small lab and again after ~2,000 more records (made through the
services in bulk-sized steps); the counts must be equal, and under a stated ceiling.
"""

from __future__ import annotations

import time

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext
from django.urls import reverse

from inventory.models import Status, Substrate

# Ceilings measured when the pages were written (SQLite and PostgreSQL give the same counts).
MAX_QUERIES = {"home": 23, "stock": 30, "review": 16, "trace": 10, "trace_graph": 9}


def _grow(chain, bath, *, pieces: int, released: int, flagged: int, runs: int = 1):
    """Add ``runs`` deposition runs of ``pieces`` substrates from one bath lot, release and
    flag some, all through the services."""
    made = []
    for _ in range(runs):
        _run, new = chain.run(pieces=pieces, bath=bath)
        made.extend(new)
    for piece in made[:released]:
        chain.release(piece)
    for piece in made[released:released + flagged]:
        chain.s.flag_raise(actor=chain.maker, target=piece, category="handling",
                           message="Dropped on the bench; inspect before use")
    return made


def _pages(bath_code: str) -> dict[str, str]:
    return {"home": reverse("home"), "stock": reverse("stock"), "review": reverse("review"),
            "trace": reverse("trace") + f"?code={bath_code}",
            "trace_graph": reverse("trace_graph", args=[bath_code])}


def _measure(client, pages) -> tuple[dict[str, int], dict[str, float]]:
    counts, seconds = {}, {}
    for name, url in pages.items():
        start = time.perf_counter()
        with CaptureQueriesContext(connection) as queries:
            assert client.get(url).status_code == 200, url
        seconds[name] = time.perf_counter() - start
        counts[name] = len(queries)
    return counts, seconds


@pytest.fixture
def world(chain, reviewer):
    chain.s.shelf_life_rule_set(actor=None, record_kind="substrate", shelf_life_days=20,
                                counted_from="made")
    bath = chain.lot("plating_bath", ghs_hazard_codes="H300 H310")
    _grow(chain, bath, pieces=6, released=2, flagged=2)
    return bath


def test_list_pages_keep_a_fixed_query_count_with_thousands_of_records(
        world, chain, client, reviewer, django_assert_max_num_queries, capsys):
    client.force_login(reviewer)
    pages = _pages(world.code)
    small, _ = _measure(client, pages)
    _grow(chain, world, pieces=200, released=150, flagged=120, runs=10)
    assert Substrate.objects.count() > 2000
    assert Substrate.objects.filter(status=Status.QUARANTINE).count() > 1500
    large, seconds = _measure(client, pages)
    assert large == small, (small, large)
    trace = client.get(pages["trace"]).content.decode()
    assert 'id="descendants-more"' in trace  # thousands reached, the nearest listed
    for name, url in pages.items():
        with django_assert_max_num_queries(MAX_QUERIES[name]):
            client.get(url)
    with capsys.disabled():
        print("\npage queries at 2,000+ records:", large,
              {name: f"{s * 1000:.0f} ms" for name, s in seconds.items()})
