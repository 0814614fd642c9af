"""Tables out as CSV or xlsx: the one writer for page exports, API exports and sheets.

openpyxl's write-only workbook for xlsx (date cells shown YYYY-MM-DD), the ``csv`` module
for CSV (UTF-8 with a byte-order mark so spreadsheet programs read it as UTF-8; dates in
ISO 8601).  Text that a spreadsheet program would run as a formula gets a leading
apostrophe (OWASP, "CSV Injection").  ``record_table`` turns a queryset into columns named
by field with the unit the API documents (inventory.api.units), relations shown by code.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable, Sequence
from datetime import date, datetime

from django.conf import settings
from django.db import models

XLSX_CONTENT_TYPE = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet"
CSV_CONTENT_TYPE = "text/csv; charset=utf-8"
CONTENT_TYPES = {"csv": CSV_CONTENT_TYPE, "xlsx": XLSX_CONTENT_TYPE}
DEFAULT_EXPORT_MAX_ROWS = 50_000
_FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def export_row_cap() -> int:
    return getattr(settings, "SERSLEDGER_EXPORT_MAX_ROWS", DEFAULT_EXPORT_MAX_ROWS)


def _csv_cell(value) -> object:
    if value is None:
        return ""
    if isinstance(value, (datetime, date)):
        return value.isoformat()
    if isinstance(value, str) and value.startswith(_FORMULA_STARTS):
        return "'" + value
    return value


def _xlsx_cell(value) -> object:
    if isinstance(value, datetime) and value.tzinfo is not None:
        return value.isoformat()  # xlsx has no time zones: keep the ISO 8601 text
    if isinstance(value, str) and value.startswith(_FORMULA_STARTS):
        return "'" + value
    return value


def table_bytes(headers: Sequence[str], rows: Iterable[Sequence], *, file_format: str,
                title: str = "records") -> bytes:
    """``headers`` and ``rows`` as CSV or xlsx bytes."""
    if file_format == "csv":
        out = io.StringIO()
        writer = csv.writer(out)
        writer.writerow(headers)
        for row in rows:
            writer.writerow([_csv_cell(value) for value in row])
        return ("\ufeff" + out.getvalue()).encode()
    if file_format != "xlsx":
        raise ValueError(f"unknown table format {file_format}")
    from openpyxl import Workbook
    from openpyxl.cell import WriteOnlyCell
    from openpyxl.styles import Font

    book = Workbook(write_only=True)
    sheet = book.create_sheet(title[:31])
    bold = Font(bold=True)
    header_cells = []
    for header in headers:
        cell = WriteOnlyCell(sheet, value=header)
        cell.font = bold
        header_cells.append(cell)
    sheet.append(header_cells)
    for row in rows:
        cells = []
        for value in row:
            cell = WriteOnlyCell(sheet, value=_xlsx_cell(value))
            if isinstance(value, date) and not isinstance(value, datetime):
                cell.number_format = "yyyy-mm-dd"
            cells.append(cell)
        sheet.append(cells)
    out = io.BytesIO()
    book.save(out)
    return out.getvalue()


def column_name(key: str) -> str:
    """``film_height_nm`` -> ``film_height_nm (nm)``; the leaf name decides the unit."""
    from .api.units import unit_of

    unit = unit_of(key.rsplit(".", 1)[-1])
    short = None if unit is None else unit.split(" (", 1)[0]
    return key if short in (None, "none") else f"{key} ({short})"


_SKIPPED = ("id", "created_by", "updated_by", "voided_by", "version")


def record_table(queryset: models.QuerySet) -> tuple[list[str], list[list]]:
    """Every stored field of the records (relations by code), at most the export cap."""
    model = queryset.model
    fields = [f for f in model._meta.concrete_fields
              if f.name not in _SKIPPED and not isinstance(f, models.FileField)]
    relations = [f.name for f in fields if f.is_relation]
    rows = []
    for record in queryset.select_related(*relations)[:export_row_cap()]:
        row = []
        for field in fields:
            value = getattr(record, field.name)
            if field.is_relation and value is not None:
                value = getattr(value, "code", None) or str(value)
            row.append(value)
        rows.append(row)
    return [column_name(f.name) for f in fields], rows
