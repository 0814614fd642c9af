"""Lab-readable codes stay unique when requests create records at the same moment."""

import threading

import pytest
from django.db import connection, connections

from inventory.codes import RecordNotFound, code_next, record_get, records_by_code


def test_codes_have_the_kind_prefix_and_count_up(chain):
    a, b = chain.lot(), chain.lot()
    assert a.code.startswith("RGT-") and b.code.startswith("RGT-")
    assert int(b.code.split("-")[1]) == int(a.code.split("-")[1]) + 1
    run, pieces = chain.run(pieces=2)
    assert run.code.startswith("DEP-") and all(p.code.startswith("SUB-") for p in pieces)


def test_record_get_is_case_insensitive_and_refuses_unknown(chain):
    lot = chain.lot()
    assert record_get(lot.code.lower()) == lot
    with pytest.raises(RecordNotFound):
        record_get("RGT-99999")
    with pytest.raises(RecordNotFound):
        record_get("NOPE-1")


def test_records_by_code_uses_one_query_per_kind(chain, django_assert_num_queries):
    lots = [chain.lot() for _ in range(5)]
    _run, pieces = chain.run(pieces=4)
    codes = [lot.code for lot in lots] + [p.code for p in pieces]
    with django_assert_num_queries(2):
        found = records_by_code(codes)
    assert set(found) == set(codes)


@pytest.mark.postgres_only
@pytest.mark.django_db(transaction=True)
def test_concurrent_code_allocation_never_repeats():
    if connection.vendor != "postgresql":
        pytest.skip("needs PostgreSQL row locks; SQLite serialises all writers anyway")
    results: list[str] = []
    errors: list[BaseException] = []
    barrier = threading.Barrier(8)

    def worker():
        try:
            barrier.wait()
            for _ in range(10):
                from django.db import transaction

                with transaction.atomic():
                    results.append(code_next("TST"))
        except BaseException as error:  # collected and re-raised below
            errors.append(error)
        finally:
            connections.close_all()

    threads = [threading.Thread(target=worker) for _ in range(8)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert not errors
    assert len(results) == 80 and len(set(results)) == 80
    assert sorted(int(c.split("-")[1]) for c in results) == list(range(1, 81))


@pytest.mark.postgres_only
@pytest.mark.django_db(transaction=True)
def test_concurrent_record_creation_gives_distinct_codes(django_user_model):
    if connection.vendor != "postgresql":
        pytest.skip("needs PostgreSQL row locks; SQLite serialises all writers anyway")
    from datetime import date

    from inventory import services

    codes: list[str] = []
    errors: list[BaseException] = []
    barrier = threading.Barrier(6)

    def worker(n):
        try:
            barrier.wait()
            lot = services.reagent_lot_receive(actor=None, name=f"lot {n}", kind="solvent",
                                               received_on=date(2026, 1, 1))
            codes.append(lot.code)
        except BaseException as error:
            errors.append(error)
        finally:
            connections.close_all()

    threads = [threading.Thread(target=worker, args=(n,)) for n in range(6)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert not errors and len(set(codes)) == 6


def test_codes_past_99999_keep_numeric_order(chain):
    """Zero-padding to five digits stops working at 100,000: text order would put
    RGT-100000 before RGT-99999; the sort key and the query order must not."""
    from inventory.codes import code_sort_key
    from inventory.models import CodeCounter
    from inventory.selectors import records_expiring_within

    chain.s.shelf_life_rule_set(actor=None, record_kind="reagentlot", shelf_life_days=20,
                                counted_from="received")
    CodeCounter.objects.update_or_create(prefix="RGT", defaults={"last_value": 99_998})
    lots = [chain.lot("solvent", days_ago=10) for _ in range(3)]  # same expiry day
    codes = [lot.code for lot in lots]
    assert codes == ["RGT-99999", "RGT-100000", "RGT-100001"]
    assert sorted(codes) != codes  # plain text order is wrong here
    assert sorted(codes[::-1], key=code_sort_key) == codes
    assert [item.record.code for item in records_expiring_within(30)] == codes
    assert [item.record.code for item in records_expiring_within(30, limit=2)] == codes[:2]


def test_expiring_limit_must_be_positive(db):
    from inventory.selectors import records_expiring_within

    with pytest.raises(ValueError, match="limit"):
        records_expiring_within(7, limit=0)
