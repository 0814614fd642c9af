"""API reads load only the columns they show: every record kind's detail must equal its serializer
over the whole record, and a list page of 50 must cost the queries of a page of 1."""

from __future__ import annotations

import json
from datetime import timedelta

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext
from rest_framework.renderers import JSONRenderer

from inventory.api.serializers import read_plan
from qc.services import colloid_limit_set_set, uvvis_record_import
from sersledger.api_urls import ROUTES

from .conftest import UVVIS


@pytest.fixture
def lab(qc_lab):
    """Every kind, two of most: decorated substrates with QC maps, datasets, flags, rules,
    colloid limits and UV-vis records."""
    chain = qc_lab.chain
    administrator = qc_lab.analyte.created_by
    chain.s.storage_location_create(actor=chain.maker, name="Desiccator 2", kind="desiccator")
    chain.s.shelf_life_rule_set(actor=administrator, record_kind="substrate",
                                shelf_life_days=30, counted_from="made")
    chain.s.deposition_tolerance_set(actor=administrator, metal="Au",
                                     max_abs_deviation_height_over_diameter=0.05)
    # Generous silver limits (those of tests/qc/test_colloid_flags.py) and two UV-vis records
    # of one invented batch (fixtures/uvvis, measured at a 10-fold dilution).
    colloid_limit_set_set(actor=administrator, metal="Ag", peak_min_nm=380.0, peak_max_nm=430.0,
                          fwhm_max_nm=60.0, peak_shift_max_nm=20.0,
                          absorbance_loss_max_fraction=0.9, aggregation_index_max=0.5)
    batch = chain.batch(days_ago=10)
    for day in (0, 7):
        name = f"ag_stable_day{day:02d}.csv"
        uvvis_record_import(actor=chain.maker, batch=batch, filename=name,
                            content=(UVVIS / name).read_bytes(),
                            measured_on=batch.made_on + timedelta(days=day), dilution_factor=10)
    for name in ("good_substrate_map.csv", "nonuniform_substrate_map.csv"):
        substrate = chain.decorated_substrate()
        qc_lab.measure(substrate, name)
        chain.s.flag_raise(actor=chain.maker, target=substrate, category="handling",
                           message="Corner chipped.")
        chain.s.dataset_register(actor=chain.maker, title=f"Map of {substrate.code}",
                                 substrates=[substrate], acquired_on=chain.day(0),
                                 files=[("map.txt", f"invented counts {name}".encode())])
    return qc_lab


def _whole(viewset, record) -> dict:
    """The detail body from the full record (no column trimming), as JSON."""
    data = viewset.serializer_class(record).data
    return json.loads(JSONRenderer().render(data))


@pytest.mark.parametrize(("prefix", "viewset"), ROUTES, ids=[prefix for prefix, _ in ROUTES])
def test_a_trimmed_read_shows_what_the_whole_record_shows(lab, clients, prefix, viewset):
    model = viewset.queryset.model
    records = list(model.objects.order_by("pk"))
    assert records, f"the lab fixture holds no {model.__name__}"
    viewer = clients["viewer"]
    key = viewset.lookup_field
    for record in records:
        body = viewer.get(f"/api/v1/{prefix}/{getattr(record, key)}/")
        assert body.status_code == 200
        assert body.json() == _whole(viewset, model.objects.get(pk=record.pk))
    if len(records) > 1:
        counts = []
        for size in (1, 50):
            with CaptureQueriesContext(connection) as captured:
                assert viewer.get(f"/api/v1/{prefix}/", {"page_size": size}).status_code == 200
            counts.append(len(captured))
        assert counts[0] == counts[1]


def test_most_kinds_are_covered_and_trimmed(lab):
    kinds = [viewset for _, viewset in ROUTES if viewset.queryset.model.objects.exists()]
    trimmed = [v for v in kinds if read_plan(v.serializer_class).columns is not None]
    assert len(kinds) == len(ROUTES) and len(trimmed) >= 15
