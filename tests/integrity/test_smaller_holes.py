"""Issue 16 item 9 (this branch's part): unknown filters, the field an error names, one map
file passed off as QC of several substrates, too-small maps, and absurd file sizes/values."""

from __future__ import annotations

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile

from qc.analysis.errors import AnalysisInputError
from qc.analysis.readers import MAX_ABS_VALUE, MAX_COLUMNS, read_map_wide, read_spectrum
from qc.models import QcMeasurement
from qc.services import qc_limit_set_define
from tests.api.conftest import client_for
from tests.qc_lab import RAMAN

pytestmark = pytest.mark.django_db


def test_an_unknown_list_filter_is_refused_by_name(chain, viewer):
    chain.run(pieces=1)
    client = client_for(viewer)
    response = client.get("/api/v1/substrates/?colour=red&stage=film")
    assert response.status_code == 400
    [error] = response.json()["errors"]
    assert (error["field"], error["code"]) == ("colour", "unknown_filter")
    assert "stage" in error["message"]  # says what the list does take
    bad_choice = client.get("/api/v1/substrates/?stage=liquid")
    assert bad_choice.status_code == 400
    assert [e["field"] for e in bad_choice.json()["errors"]] == ["stage"]
    good = client.get("/api/v1/substrates/?stage=film&ordering=-made_on&page_size=5")
    assert good.status_code == 200 and len(good.json()["results"]) == 1


def test_a_qc_date_before_the_substrate_was_made_names_measured_on(qc_lab, maker):
    substrate = qc_lab.chain.decorated_substrate()
    fields = qc_lab.upload_fields(substrate, "good_substrate_map.csv")
    fields["measured_on"] = qc_lab.chain.day(60).isoformat()
    response = client_for(maker).post("/api/v1/qc-measurements/", fields, format="multipart")
    assert response.status_code == 400
    assert [e["field"] for e in response.json()["errors"]] == ["measured_on"]


def test_one_map_file_is_not_the_qc_of_two_substrates_unless_shared(qc_lab, maker):
    first, second = qc_lab.chain.decorated_substrate(), qc_lab.chain.decorated_substrate()
    qc_lab.measure(first, "good_substrate_map.csv")
    client = client_for(maker)
    reused = client.post("/api/v1/qc-measurements/",
                         qc_lab.upload_fields(second, "good_substrate_map.csv"),
                         format="multipart")
    assert reused.status_code == 400
    [error] = reused.json()["errors"]
    assert (error["field"], error["code"]) == ("raw_file", "file_reused")
    assert first.code in error["message"]
    assert not QcMeasurement.objects.filter(substrate=second).exists()
    shared = client.post("/api/v1/qc-measurements/",
                         {**qc_lab.upload_fields(second, "good_substrate_map.csv"),
                          "shared_measurement": True}, format="multipart")
    assert shared.status_code == 201, shared.json()


def _first_points(count: int) -> bytes:
    """The good fixture map cut to its header and first ``count`` points."""
    lines = (RAMAN / "good_substrate_map.csv").read_text().splitlines()
    return ("\n".join(lines[:count + 1]) + "\n").encode()


def test_a_map_below_the_labs_minimum_points_fails_uniformity(qc_lab, maker, administrator):
    substrate = qc_lab.chain.decorated_substrate()
    fields = qc_lab.upload_fields(substrate, "good_substrate_map.csv")
    fields["raw_file"] = SimpleUploadedFile("two_points.csv", _first_points(2))
    body = client_for(maker).post("/api/v1/qc-measurements/", fields,
                                  format="multipart").json()
    assert body["n_points"] == 2 and body["passed"] is False
    assert any("minimum is 25 points" in reason for reason in body["failure_reasons"])
    # The minimum is the lab's setting: at 2 points required, the RSD limit judges again.
    qc_limit_set_define(actor=administrator, product_kind="particles",
                        analyte=qc_lab.analyte, min_enhancement_factor=1e6,
                        max_rsd_percent=20.0, min_snr=20.0, band_position_tolerance_cm1=3.0,
                        valid_days=14, min_map_points=2)
    other = qc_lab.chain.decorated_substrate()
    fields = qc_lab.upload_fields(other, "good_substrate_map.csv")
    fields["raw_file"] = SimpleUploadedFile("two_points.csv", _first_points(2))
    fields["shared_measurement"] = True
    again = client_for(maker).post("/api/v1/qc-measurements/", fields,
                                   format="multipart").json()
    assert not any("points" in reason for reason in again["failure_reasons"]), again


def test_a_row_of_two_million_columns_is_refused_with_the_stated_limit():
    header = "x_um,y_um," + ",".join(str(400 + i) for i in range(2_000_000))
    with pytest.raises(AnalysisInputError) as refused:
        read_map_wide(header + "\n0,0," + "1," * 10 + "1\n")
    assert refused.value.line == 1 and str(MAX_COLUMNS) in str(refused.value)


def test_a_count_of_1e308_is_refused_naming_its_line():
    with pytest.raises(AnalysisInputError) as refused:
        read_spectrum("shift,counts\n400,10\n401,1e308\n402,12\n", "s.csv")
    assert refused.value.line == 3 and f"{MAX_ABS_VALUE:g}" in str(refused.value)


def test_a_count_of_1e308_in_an_upload_is_a_400_naming_the_file(qc_lab, maker):
    substrate = qc_lab.chain.decorated_substrate()
    fields = qc_lab.upload_fields(substrate, "good_substrate_map.csv")
    lines = (RAMAN / "good_substrate_map.csv").read_text().splitlines()
    cells = lines[5].split(",")
    cells[40] = "1e308"
    lines[5] = ",".join(cells)
    fields["raw_file"] = SimpleUploadedFile("huge.csv", ("\n".join(lines) + "\n").encode())
    response = client_for(maker).post("/api/v1/qc-measurements/", fields, format="multipart")
    assert response.status_code == 400
    [error] = response.json()["errors"]
    assert error["field"] == "raw_file" and "line 6" in error["message"]
