"""Tables out: a kind's sheet (import format), a kind's template, and any list as CSV/xlsx.

One writer for every table (``table_bytes``): openpyxl's write-only workbook for xlsx (dates
as date cells shown YYYY-MM-DD), the ``csv`` module for CSV (dates in ISO 8601).
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable, Sequence
from datetime import date, datetime

from .kinds import Kind, example_row, export_rows

XLSX_CONTENT_TYPE = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet"
CSV_CONTENT_TYPE = "text/csv; charset=utf-8"
# A spreadsheet cell that starts with one of these is run as a formula by the program that
# opens the file; a leading apostrophe keeps it text (OWASP, "CSV Injection").
_FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


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
    """``headers`` and ``rows`` as a CSV (UTF-8 with BOM, for spreadsheet programs) or xlsx."""
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


def kind_sheet(kind: Kind, *, file_format: str) -> bytes:
    """Every record of ``kind`` in the import format (re-importable as it is)."""
    return table_bytes([c.header for c in kind.columns], export_rows(kind),
                       file_format=file_format, title=kind.label)


def kind_template(kind: Kind, *, file_format: str) -> bytes:
    """The header (units in it) and one example row from the demo scenario."""
    return table_bytes([c.header for c in kind.columns], [example_row(kind)],
                       file_format=file_format, title=kind.label)
