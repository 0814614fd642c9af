"""The insight page, its exports and API: words first, links from points, fixed query count,
clear refusals of bad filters, and too few data said in words."""

import csv
import io
import re

from django.db import connection
from django.test.utils import CaptureQueriesContext
from django.urls import reverse
from openpyxl import load_workbook

from insight.demo import BAD_SPHERE_LOT
from insight.services import DRIFT_FLAG_CATEGORY
from inventory.models import Flag, SphereLot
from tests.insight.test_demo_recovery import demo  # noqa: F401  (the planted demo fixture)


def _login(client, user, role):
    client.force_login(user)  # sign-in itself is tested elsewhere (and in the browser test)


def test_page_api_and_exports_on_the_planted_demo(client, demo, viewer):  # noqa: F811
    _login(client, viewer, "viewer")
    page = client.get(reverse("insight"))
    html = page.content.decode()
    assert page.status_code == 200
    # The verdict in words comes before any table or plot.
    assert html.index('id="insight-verdict"') < html.index('id="yield-table"') < html.index("<img")
    assert "The strongest lever is film height / sphere diameter h/D" in html
    # Every point of a plot is an area linking to its substrate's page.
    areas = re.findall(r'<area shape="circle" coords="\d+,\d+,\d+" href="(/r/SUB-\d+/)"', html)
    assert len(areas) >= 100
    assert client.get(areas[0]).status_code == 200
    # The bad lot shows in the drift list; the effects table names settings that never vary.
    bad_code = SphereLot.objects.get(supplier_lot=BAD_SPHERE_LOT).code
    assert f'data-key="{bad_code}"' in html
    assert "not enough data: the setting never varies" in html

    rows = list(csv.DictReader(io.StringIO(client.get(reverse("insight_export_csv"))
                                           .content.decode())))
    assert len(rows) >= 120
    assert {"height_over_diameter", "colloid_age_at_use_d", "log10_ef", "rsd_percent",
            "charge_density_mC_per_cm2", "film_height_nm"} <= set(rows[0])
    book = load_workbook(io.BytesIO(client.get(reverse("insight_export_xlsx")).content))
    assert book["substrates"].max_row == len(rows) + 1

    table = client.get(reverse("api:insight-table")).json()
    assert table["count"] == len(rows)
    summary = client.get(reverse("api:insight-summary")).json()
    window = summary["operating_windows"][0]
    assert window["setting"] == "height_over_diameter" and window["low"] <= 0.55 <= window["high"]
    trend = client.get(reverse("api:insight-trend", args=["colloid_age_at_use_d"])).json()
    assert len(trend["trend"]["grid"]) == len(trend["trend"]["ci_low"]) > 10
    assert trend["points"][0]["url"].startswith("/r/SUB-")


def test_bad_filters_are_refused_naming_the_field(client, viewer):
    _login(client, viewer, "viewer")
    page = client.get(reverse("insight"), {"made_from": "2026-05-01", "made_to": "2026-04-01"})
    assert page.status_code == 400
    assert "Must not be before" in page.content.decode()
    api = client.get(reverse("api:insight-summary"), {"target_percent": "120"})
    assert api.status_code == 400
    assert api.json()["errors"][0]["field"] == "target_percent"
    assert client.get(reverse("api:insight-trend", args=["colour"])).status_code == 404
    assert client.get(reverse("insight_export_csv"), {"stage": "raw"}).status_code == 400


def test_too_few_data_are_said_in_words_never_as_numbers(client, chain, viewer):
    chain.run(pieces=3)
    _login(client, viewer, "viewer")
    html = client.get(reverse("insight")).content.decode()
    assert "none has been QC-tested yet" in html
    assert "not enough data" in html
    summary = client.get(reverse("api:insight-summary")).json()
    assert summary["effects"] == {} and summary["operating_windows"] == []
    assert all(v.startswith("not enough data") for v in summary["not_enough_data"].values())


def _queries(client) -> int:
    with CaptureQueriesContext(connection) as queries:
        assert client.get(reverse("insight")).status_code == 200
    return len(queries)


def test_page_query_count_does_not_grow_with_substrates(client, chain, viewer):
    _login(client, viewer, "viewer")
    chain.run(pieces=2)
    few = _queries(client)
    for _ in range(3):
        chain.run(pieces=20)
    assert _queries(client) == few


def test_drift_flags_only_on_a_post_by_a_maker(client, demo, viewer, maker):  # noqa: F811
    _login(client, viewer, "viewer")
    client.get(reverse("insight"))
    assert not Flag.objects.filter(category=DRIFT_FLAG_CATEGORY).exists()  # a read raises none
    client.post(reverse("insight_drift_flags"))
    assert not Flag.objects.filter(category=DRIFT_FLAG_CATEGORY).exists()  # a viewer cannot
    _login(client, maker, "maker")
    answer = client.post(reverse("insight_drift_flags"), follow=True)
    assert "Raised 1 drift flag" in answer.content.decode()
    assert Flag.objects.filter(category=DRIFT_FLAG_CATEGORY).count() == 1
