"""Build test spreadsheets in memory (openpyxl for xlsx, text for CSV)."""

from __future__ import annotations

import io

import openpyxl


def csv_bytes(rows: list[list]) -> bytes:
    import csv

    out = io.StringIO()
    csv.writer(out).writerows(rows)
    return out.getvalue().encode()


def xlsx_bytes(rows: list[list], edit=None) -> bytes:
    """An xlsx of ``rows``; ``edit(worksheet)`` may merge, hide or add formulas first."""
    book = openpyxl.Workbook()
    sheet = book.active
    for row in rows:
        sheet.append(row)
    if edit is not None:
        edit(sheet)
    out = io.BytesIO()
    book.save(out)
    return out.getvalue()
