"""Issue 16 item 2: every number finite and physical, every date real and not in the future.

Three layers: the service refuses by field name with the allowed range (400 in the API's one
error shape, nothing saved), the database's CHECK constraints refuse what a bug might still
send, and afterwards every list and detail still answers.
"""

from __future__ import annotations

import math

import pytest
from django.apps import apps
from django.db import IntegrityError, connection, transaction

from inventory.models import LinkerLayer, ReagentLot, Substrate, TemplateAssembly
from inventory.models.ranges import Span
from inventory.services import record_amend
from tests.api.conftest import UVVIS, client_for, upload

pytestmark = pytest.mark.django_db


def _rows() -> dict[str, int]:
    return {model.__name__: model.objects.count()
            for app in ("inventory", "qc") for model in apps.get_app_config(app).get_models()}


def _errors(response) -> list[dict]:
    assert 400 <= response.status_code < 500, (response.status_code, response.content[:300])
    return response.json()["errors"]


@pytest.fixture
def layer(chain):
    piece = chain.run(pieces=1)[1][0]
    return chain.s.linker_layer_apply(actor=chain.maker, linker_lot=chain.lot("linker_thiol"),
                                      substrates=[piece], concentration_mM=1, immersion_h=12,
                                      made_on=chain.day(2))


@pytest.mark.parametrize("value", ["NaN", "Infinity", "-Infinity", "1e308", 1e300, -5, 0,
                                   9000, "-1e-320"])
def test_an_immersion_time_outside_a_year_is_refused_by_name(layer, maker, value):
    client = client_for(maker)
    response = client.post(f"/api/v1/linker-layers/{layer.code}/amend/",
                           {"changes": {"immersion_h": value}, "expected_version": layer.version},
                           format="json")
    [error] = _errors(response)
    assert error["field"] == "immersion_h"
    assert "8784 h" in error["message"], error  # 366 days × 24 h, the stated upper bound
    assert LinkerLayer.objects.get(pk=layer.pk).immersion_h == 12
    assert client.get("/api/v1/linker-layers/").status_code == 200
    assert client.get(f"/api/v1/linker-layers/{layer.code}/").status_code == 200


def test_a_substrate_area_of_nan_is_refused_not_stored_as_empty(chain, maker):
    piece = chain.run(pieces=1)[1][0]
    for value in ("NaN", "inf", 1e306):
        with pytest.raises(Exception) as refused:
            record_amend(actor=maker, record=piece, changes={"area_cm2": value}, reason="",
                         expected_version=piece.version)
        assert refused.value.error_dict["area_cm2"][0].code == "out_of_range"
    assert Substrate.objects.get(pk=piece.pk).area_cm2 is None


@pytest.mark.parametrize(("field", "value", "code"), [
    ("opened_on", "9999-12-31", "future_date"), ("opened_on", "0001-01-01", "out_of_range"),
    ("opened_on", "yesterday", "invalid"), ("received_on", "2026-02-30", "invalid_date"),
])
def test_a_date_outside_the_calendar_or_in_the_future_is_refused_by_name(chain, maker, field,
                                                                          value, code):
    lot = chain.lot("solvent", release=False)
    response = client_for(maker).post(f"/api/v1/reagent-lots/{lot.code}/amend/",
                                      {"changes": {field: value},
                                       "expected_version": lot.version}, format="json")
    [error] = _errors(response)
    assert (error["field"], error["code"]) == (field, code), error
    assert ReagentLot.objects.get(pk=lot.pk).opened_on is None
    assert client_for(maker).get("/api/v1/reagent-lots/").status_code == 200


def test_a_made_on_of_yesterday_in_words_is_a_400_naming_made_on(chain, maker):
    spheres, slides = chain.spheres(), chain.lot("base_slide")
    response = client_for(maker).post("/api/v1/templates/", {
        "sphere_lot": spheres.code, "base_slide_lot": slides.code,
        "method": "interface_transfer", "slide_area_cm2": 2.0, "made_on": "yesterday"},
        format="json")
    assert [e["field"] for e in _errors(response)] == ["made_on"]


def test_a_template_slide_of_1e306_cm2_is_refused_and_the_list_still_answers(chain, maker):
    spheres, slides = chain.spheres(), chain.lot("base_slide")
    before = _rows()
    client = client_for(maker)
    response = client.post("/api/v1/templates/", {
        "sphere_lot": spheres.code, "base_slide_lot": slides.code,
        "method": "interface_transfer", "slide_area_cm2": 1e306,
        "made_on": chain.day(1).isoformat()}, format="json")
    [error] = _errors(response)
    assert error["field"] == "slide_area_cm2" and "1000 cm²" in error["message"]
    assert _rows() == before
    assert client.get("/api/v1/templates/").status_code == 200


def test_a_computed_figure_out_of_range_is_refused_naming_it(chain, maker):
    """Inputs each within range whose product is not: the computed need is refused."""
    from inventory.services._common import _check_ranges

    template = TemplateAssembly(slide_area_cm2=2.0, made_on=chain.day(1),
                                suspension_volume_computed_uL=float("inf"))
    with pytest.raises(Exception) as refused:
        _check_ranges(template)
    [error] = refused.value.error_dict["suspension_volume_computed_uL"]
    assert error.code == "computed_out_of_range"


@pytest.mark.parametrize(("field", "value"), [("dilution_factor", 1e308),
                                               ("path_length_cm", 1e-300),
                                               ("dilution_factor", 0.5)])
def test_uvvis_dilution_and_path_length_are_refused_by_name(chain, maker, field, value):
    batch = chain.batch(days_ago=10)
    before = _rows()
    response = client_for(maker).post("/api/v1/uvvis-records/", {
        "batch": batch.code, "measured_on": chain.day(1).isoformat(), field: value,
        "raw_file": upload(UVVIS / "ag_stable_day00.csv")}, format="multipart")
    assert [e["field"] for e in _errors(response)] == [field]
    assert _rows() == before


def test_a_surface_density_driving_the_ef_to_infinity_is_refused(qc_lab, maker):
    substrate = qc_lab.chain.decorated_substrate()
    before = _rows()
    fields = qc_lab.upload_fields(substrate, "good_substrate_map.csv")
    for density in (1e-300, 1e300):
        fields["raw_file"].seek(0)
        response = client_for(maker).post("/api/v1/qc-measurements/",
                                          {**fields, "surface_density_per_nm2": density},
                                          format="multipart")
        [error] = _errors(response)
        assert error["field"] in ("surface_density_per_nm2", "enhancement_factor"), error
    assert _rows() == before
    assert client_for(maker).get("/api/v1/qc-measurements/").status_code == 200


def test_span_refuses_every_non_finite_value():
    span = Span(0, 10, "h", above=True)
    assert [span.holds(v) for v in (math.nan, math.inf, -math.inf, 0, 5e-324, 10, 10.0001)] == [
        False, False, False, False, True, True, False]


@pytest.mark.parametrize("bad", [float("inf"), float("-inf"), float("nan"), 1e12, -1])
def test_the_database_refuses_what_the_service_would(layer, bad):
    """A write that skips the service (a bug, a shell) meets the CHECK constraint.

    SQLite stores NaN as NULL, which the NOT NULL column refuses; PostgreSQL orders NaN above
    every number, so ``immersion_h <= 8784`` refuses it.
    """
    with pytest.raises(IntegrityError), transaction.atomic():
        LinkerLayer.objects.filter(pk=layer.pk).update(immersion_h=bad)
    assert LinkerLayer.objects.get(pk=layer.pk).immersion_h == 12


def test_a_nullable_number_cannot_hold_nan_or_infinity_in_the_database(chain):
    piece = chain.run(pieces=1)[1][0]
    with pytest.raises(IntegrityError), transaction.atomic():
        Substrate.objects.filter(pk=piece.pk).update(area_cm2=float("inf"))
    if connection.vendor == "postgresql":
        with pytest.raises(IntegrityError), transaction.atomic():
            Substrate.objects.filter(pk=piece.pk).update(area_cm2=float("nan"))
    else:  # SQLite turns NaN into NULL before any constraint sees it: "no area", not NaN.
        Substrate.objects.filter(pk=piece.pk).update(area_cm2=float("nan"))
    assert Substrate.objects.get(pk=piece.pk).area_cm2 is None
