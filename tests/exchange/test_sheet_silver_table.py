"""A colloid sheet's UV-vis readings are sized with the silver table read once per import.

The table is a lab setting (qc.services.colloid.silver_calibration_active); a 10,000-row
sheet used to read it once per reading.  Read once per import, the sizes must be those a
single reading's service gives, and a table recorded between two imports must size the
second one.  Expected sizes come from qc.analysis.silver_calibration on a table written out
here (PCHIP through its rows), not from the importer.
"""

from __future__ import annotations

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from exchange.importer import import_sheet
from exchange.models import SheetUvVisReading
from exchange.services import sheet_uvvis_reading_check
from qc.analysis import silver_calibration
from qc.services import silver_calibration_record

from .sheets import csv_bytes
from .test_bulk_equivalence import COLLOIDS

pytestmark = pytest.mark.django_db

LAB_ROWS = [(390.0, 30.0, 1.0e10), (400.0, 40.0, 2.0e10), (410.0, 50.0, 3.0e10)]


def _lab_table(rows):
    peak, diameter, extinction = (tuple(column) for column in zip(*rows, strict=True))
    return silver_calibration.CalibrationTable(peak, diameter, extinction, provenance="test")


def _sheet(chain, rows: int, *, readings: int | None = None, first: int = 0) -> bytes:
    """``rows`` silver colloids, the first ``readings`` (default all) with a UV-vis reading."""
    d = chain.day(4).isoformat()
    readings = rows if readings is None else readings
    body = [[f"AG-{n}", "Ag", "citrate", 100, d, *([d, 392 + n % 16, 0.9, "", 1]
                                                  if n - first < readings
                                                  else ["", "", "", "", ""]), ""]
            for n in range(first, first + rows)]
    return csv_bytes([COLLOIDS, *body])


def _dry_run_queries(chain, content: bytes, *, bulk: bool) -> list[str]:
    with CaptureQueriesContext(connection) as queries:
        report = import_sheet(kind="colloid_batches", content=content, file_name="ag.csv",
                              actor=chain.maker, commit=False, bulk=bulk)
    assert report.ok, report.errors
    return [query["sql"] for query in queries.captured_queries]


@pytest.mark.parametrize("bulk", [True, False])
def test_the_silver_table_is_read_once_per_import_not_once_per_reading(chain, bulk):
    silver_calibration_record(actor=None, name="lab TEM", provenance="invented TEM series",
                              rows=LAB_ROWS)
    few = _dry_run_queries(chain, _sheet(chain, 40, readings=4), bulk=bulk)
    many = _dry_run_queries(chain, _sheet(chain, 40), bulk=bulk)
    assert sum("silvercalibration" in sql.lower() for sql in many) == 1
    if bulk:  # forty readings cost what four do: the table read once, one batch inserted
        assert len(many) == len(few)


def test_sizes_read_with_the_table_once_equal_a_single_readings_sizes(chain):
    silver_calibration_record(actor=None, name="lab TEM", provenance="invented TEM series",
                              rows=LAB_ROWS)
    report = import_sheet(kind="colloid_batches", content=_sheet(chain, 12),
                          file_name="ag.csv", actor=chain.maker, commit=True)
    assert report.committed
    table = _lab_table(LAB_ROWS)
    for reading in SheetUvVisReading.objects.select_related("batch"):
        single = sheet_uvvis_reading_check(
            actor=chain.maker, batch=reading.batch, measured_on=reading.measured_on,
            peak_nm=reading.peak_nm, peak_absorbance=reading.peak_absorbance_1cm,
            source="one reading").record
        assert (reading.diameter_nm, reading.number_per_mL, reading.sizing_note) == \
            (single.diameter_nm, single.number_per_mL, single.sizing_note)
        assert reading.diameter_nm == pytest.approx(
            silver_calibration.diameter_from_peak(table, reading.peak_nm).value, rel=1e-12)
        assert "lab TEM" in reading.sizing_note


@pytest.mark.parametrize("bulk", [True, False])
def test_a_table_recorded_between_two_imports_sizes_the_second(chain, bulk):
    silver_calibration_record(actor=None, name="first table", provenance="invented",
                              rows=LAB_ROWS)
    import_sheet(kind="colloid_batches", content=_sheet(chain, 3),
                 file_name="one.csv", actor=chain.maker, commit=True, bulk=bulk)
    wider = [(390.0, 20.0, 1.0e10), (400.0, 45.0, 2.0e10), (410.0, 70.0, 3.0e10)]
    silver_calibration_record(actor=None, name="second table", provenance="invented",
                              rows=wider)
    import_sheet(kind="colloid_batches", content=_sheet(chain, 3, first=10),
                 file_name="two.csv", actor=chain.maker, commit=True, bulk=bulk)
    first, second = _lab_table(LAB_ROWS), _lab_table(wider)
    for reading in SheetUvVisReading.objects.all():
        table, name = (first, "first table") if "one.csv" in reading.source \
            else (second, "second table")
        assert name in reading.sizing_note
        assert reading.diameter_nm == pytest.approx(
            silver_calibration.diameter_from_peak(table, reading.peak_nm).value, rel=1e-12)
    assert SheetUvVisReading.objects.filter(source__contains="two.csv").count() == 3
