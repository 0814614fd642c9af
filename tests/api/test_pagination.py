"""Keyset pages: following ``next`` visits every record once, in the order asked, whatever ties
or empty values the ordering field holds; cursors that are not ours are refused by name.

The expected order is computed here in Python from all rows at once (empty values last in
either direction, the primary key breaking ties in the direction of the first term), so the
walk through the database is checked against an independent sort, not against itself.
"""

from __future__ import annotations

import base64
import json

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from inventory.models import ReagentLot

KINDS = ("solvent", "linker_thiol", "plating_bath")


@pytest.fixture
def lots(chain):
    """Nine lots: three kinds, repeated dates, three prepared lots with no received_on,
    four released (so status ties too)."""
    made = []
    for n in range(9):
        if n % 4 == 3:
            lot = chain.s.reagent_lot_receive(actor=chain.maker, name=f"Dilution {n}",
                                              kind=KINDS[n % 3], prepared_on=chain.day(n % 2 + 1))
        else:
            lot = chain.s.reagent_lot_receive(actor=chain.maker, name=f"Lot {n}",
                                              kind=KINDS[n % 3], received_on=chain.day(n % 3 + 1))
        made.append(chain.release(lot) if n % 2 == 0 else lot)
    return made


def expected_codes(terms: list[str]) -> list[str]:
    rows = list(ReagentLot.objects.all())
    pk_descending = terms[0].startswith("-")
    ordered = sorted(rows, key=lambda row: row.pk, reverse=pk_descending)
    for term in reversed(terms):  # stable sorts, last term first
        name, descending = term.lstrip("-"), term.startswith("-")
        present = [row for row in ordered if getattr(row, name) is not None]
        empty = [row for row in ordered if getattr(row, name) is None]
        ordered = sorted(present, key=lambda row: getattr(row, name), reverse=descending) + empty
    return [row.code for row in ordered]


def walk(client, params) -> tuple[list[str], int]:
    """Every code of a list, following ``next``; and the number of pages."""
    page = client.get("/api/v1/reagent-lots/", params)
    assert page.status_code == 200, page.json()
    codes, pages = [], 1
    while True:
        body = page.json()
        codes += [row["code"] for row in body["results"]]
        if body["next"] is None:
            return codes, pages
        page = client.get(body["next"])
        assert page.status_code == 200, page.json()
        pages += 1


@pytest.mark.parametrize("ordering", [None, "kind", "-kind", "received_on", "-received_on",
                                      "status", "-status", "status,-received_on", "code"])
def test_following_next_visits_every_record_once_in_order(lots, clients, ordering):
    params = {"page_size": 2} | ({"ordering": ordering} if ordering else {})
    codes, pages = walk(clients["viewer"], params)
    terms = ordering.split(",") if ordering else ["-id"]
    assert codes == expected_codes(terms)
    assert len(codes) == len(set(codes)) == 9 and pages == 5


def test_a_page_of_exactly_the_rest_has_no_next(lots, clients):
    body = clients["viewer"].get("/api/v1/reagent-lots/", {"page_size": 9}).json()
    assert len(body["results"]) == 9 and body["next"] is None


def test_a_deep_page_costs_the_same_queries_as_the_first(lots, clients):
    viewer = clients["viewer"]
    first = viewer.get("/api/v1/reagent-lots/", {"page_size": 1})
    link = first.json()["next"]
    for _ in range(6):
        link = viewer.get(link).json()["next"]
    counts = []
    for path in ("/api/v1/reagent-lots/?page_size=1", link):
        with CaptureQueriesContext(connection) as captured:
            assert viewer.get(path).status_code == 200
        counts.append(len(captured))
    assert counts[0] == counts[1]


def test_a_cursor_from_another_ordering_is_refused_by_name(lots, clients):
    viewer = clients["viewer"]
    by_kind = viewer.get("/api/v1/reagent-lots/", {"page_size": 2, "ordering": "kind"}).json()
    cursor = by_kind["next"].split("cursor=")[1].split("&")[0]
    answer = viewer.get("/api/v1/reagent-lots/", {"cursor": cursor, "ordering": "-received_on"})
    assert answer.status_code == 400
    error = answer.json()["errors"][0]
    assert error["field"] == "cursor" and "ordering" in error["message"]


@pytest.mark.parametrize("cursor", [
    "not-base64!",
    base64.urlsafe_b64encode(b"[1, 2]").decode(),
    base64.urlsafe_b64encode(json.dumps({"o": ["-id"], "v": ["many"]}).encode()).decode(),
    base64.urlsafe_b64encode(json.dumps({"o": ["-id"], "v": [1, 2]}).encode()).decode(),
])
def test_a_cursor_that_is_not_ours_is_a_400_naming_cursor(lots, clients, cursor):
    answer = clients["viewer"].get("/api/v1/reagent-lots/", {"cursor": cursor})
    assert answer.status_code == 400
    assert answer.json()["errors"][0]["field"] == "cursor"


@pytest.mark.parametrize("size", ["0", "-3", "many"])
def test_a_page_size_that_is_not_a_count_is_refused(lots, clients, size):
    answer = clients["viewer"].get("/api/v1/reagent-lots/", {"page_size": size})
    assert answer.status_code == 400
    assert answer.json()["errors"][0]["field"] == "page_size"


def test_page_size_is_capped_at_500(chain, clients):
    for n in range(3):
        chain.lot("solvent", days_ago=n + 1)
    body = clients["viewer"].get("/api/v1/reagent-lots/", {"page_size": 100000}).json()
    assert len(body["results"]) == 3 and body["next"] is None


def test_the_schema_documents_cursor_and_next_not_page_numbers(clients):
    schema = clients["viewer"].get("/api/v1/schema/", HTTP_ACCEPT="application/json").json()
    parameters = {p["name"] for p in schema["paths"]["/api/v1/reagent-lots/"]["get"]["parameters"]}
    assert {"cursor", "page_size"} <= parameters and "page" not in parameters
    page = schema["components"]["schemas"]["PaginatedReagentLotList"]
    assert set(page["properties"]) == {"next", "results"}
