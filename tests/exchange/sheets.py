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


def with_sheet_xml(content: bytes, edit) -> bytes:
    """The workbook with its first worksheet's XML text replaced by ``edit(text)``."""
    import zipfile

    source = zipfile.ZipFile(io.BytesIO(content))
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as target:
        for item in source.infolist():
            data = source.read(item.filename)
            if item.filename == "xl/worksheets/sheet1.xml":
                data = edit(data.decode()).encode()
            target.writestr(item, data)
    return out.getvalue()


def with_saved_formula_results(content: bytes, results: dict[str, object]) -> bytes:
    """Write the result a spreadsheet program would have saved beside each formula.

    openpyxl writes formulas without results (an empty ``<v>``); a workbook saved by a spreadsheet
    program carries them (ECMA-376 Part 1, §18.3.1.96: ``<v>`` holds the cell's value).
    """
    import re

    def save_results(text: str) -> str:
        for cell, value in results.items():
            # openpyxl writes an empty <v /> or <v></v> (with lxml installed).
            text = re.sub(rf'(<c r="{cell}"[^>]*><f>[^<]*</f>)(<v ?/>|<v></v>)',
                          rf"\g<1><v>{value}</v>", text)
        return text

    return with_sheet_xml(content, save_results)
