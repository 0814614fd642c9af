"""Read an uploaded spreadsheet (xlsx or CSV) into a header and numbered rows.

openpyxl reads xlsx with ``data_only=True``: a formula gives the value the spreadsheet
program saved with it and is never evaluated here; a formula without a saved value is a
row error, not a guess.  CSV goes through the standard library's ``csv`` (dialect sniffed
among comma, semicolon and tab).  What openpyxl reports but does not refuse (merged cells,
hidden rows) is turned into row errors, because both hide what a row really says.

A file that is too large, is not a spreadsheet, or has no rows is refused as a whole with
``inventory.errors.refusal("file", ...)``, the project's one error shape.
"""

from __future__ import annotations

import csv
import io
import re
import zipfile
from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import PurePosixPath

from django.conf import settings

from inventory.errors import refusal

XLSX_SUFFIXES = (".xlsx", ".xlsm")
CSV_SUFFIXES = (".csv", ".tsv", ".txt")
# An xlsx is a zip; refuse one that would inflate beyond this (a "zip bomb").
MAX_UNZIPPED_BYTES = 400 * 1024 * 1024


@dataclass
class SheetRow:
    """One data row: its number as the spreadsheet shows it, the cells, and what is wrong."""

    number: int
    cells: list
    problems: list[tuple[int | None, str, str]] = field(default_factory=list)  # col, msg, code


@dataclass
class Sheet:
    headers: list[str]
    rows: list[SheetRow]
    file_format: str  # "xlsx" or "csv"


def max_bytes() -> int:
    return settings.SERSLEDGER_MAX_SHEET_BYTES


def read_sheet(content: bytes, *, file_name: str, sheet_name: str | None = None) -> Sheet:
    """The first visible worksheet (or ``sheet_name``) of an xlsx, or a CSV, as rows."""
    if len(content) > max_bytes():
        raise refusal("file", f"{file_name} is {len(content) / 2**20:.1f} MB; the limit is "
                              f"{max_bytes() / 2**20:.0f} MB. Split the sheet into parts.",
                      "file_too_large")
    if not content.strip():
        raise refusal("file", f"{file_name} is empty.", "empty_sheet")
    suffix = PurePosixPath(file_name.replace("\\", "/")).suffix.lower()
    if content[:4] == b"PK\x03\x04" or suffix in XLSX_SUFFIXES:
        sheet = _read_xlsx(content, file_name=file_name, sheet_name=sheet_name)
    elif suffix in CSV_SUFFIXES or suffix == "":
        sheet = _read_csv(content, file_name=file_name)
    else:
        raise _not_a_sheet(file_name)
    if not any(h.strip() for h in sheet.headers):
        raise refusal("file", f"{file_name}: the first row holds no column names.",
                      "empty_sheet")
    if not sheet.rows:
        raise refusal("file", f"{file_name}: the sheet has no rows below its header.",
                      "empty_sheet")
    return sheet


def _not_a_sheet(file_name: str):
    return refusal("file", f"{file_name} is not a spreadsheet this page reads: send an .xlsx "
                           "workbook or a .csv file (UTF-8).", "not_a_spreadsheet")


# ---------------------------------------------------------------------------------------
# xlsx
# ---------------------------------------------------------------------------------------

def _check_zip(content: bytes, file_name: str) -> None:
    try:
        with zipfile.ZipFile(io.BytesIO(content)) as archive:
            inflated = sum(info.file_size for info in archive.infolist())
    except (zipfile.BadZipFile, ValueError):
        raise _not_a_sheet(file_name) from None
    if inflated > MAX_UNZIPPED_BYTES:
        raise refusal("file", f"{file_name} unpacks to {inflated / 1e6:.0f} MB; the limit is "
                              f"{MAX_UNZIPPED_BYTES / 1e6:.0f} MB.", "file_too_large")


def _load(content: bytes, file_name: str, *, data_only: bool, read_only: bool = False):
    import openpyxl

    try:
        return openpyxl.load_workbook(io.BytesIO(content), data_only=data_only,
                                      read_only=read_only)
    except Exception:  # openpyxl raises many kinds on a damaged or foreign zip
        raise _not_a_sheet(file_name) from None


def _pick_sheet(workbook, sheet_name: str | None, file_name: str):
    if sheet_name:
        if sheet_name not in workbook.sheetnames:
            raise refusal("sheet", f"{file_name} has no sheet '{sheet_name}' (it has "
                                   f"{', '.join(workbook.sheetnames)}).", "no_such_sheet")
        return workbook[sheet_name]
    visible = [ws for ws in workbook.worksheets if ws.sheet_state == "visible"]
    if not visible:
        raise refusal("file", f"{file_name} has no visible worksheet.", "empty_sheet")
    return visible[0]


def _read_grid(content: bytes, file_name: str, sheet_name: str | None) -> tuple[str, list]:
    """The sheet's title and its saved values, row 1 first, in openpyxl's read-only
    (streaming) mode, which makes no cell objects (half the time of a full read)."""
    book = _load(content, file_name, data_only=True, read_only=True)
    try:
        worksheet = _pick_sheet(book, sheet_name, file_name)
        # The <dimension> record is advisory (some programs write "A1" whatever the sheet
        # holds); read every row there is instead of trusting it.
        worksheet.reset_dimensions()
        try:
            grid = [list(row) for row in worksheet.iter_rows(min_row=1, min_col=1,
                                                              values_only=True)]
        except Exception:  # a damaged worksheet part is found only while streaming it
            raise _not_a_sheet(file_name) from None
        return worksheet.title, grid
    finally:
        book.close()


def _read_xlsx(content: bytes, *, file_name: str, sheet_name: str | None) -> Sheet:
    _check_zip(content, file_name)
    features = _sheet_features(content)
    title, grid = _read_grid(content, file_name, sheet_name)
    while grid and all(_blank(v) for v in grid[-1]):
        grid.pop()
    header_index = next((i for i, cells in enumerate(grid)
                         if not all(_blank(v) for v in cells)), None)
    if header_index is None:
        raise refusal("file", f"{file_name}: the sheet '{title}' is empty.", "empty_sheet")
    headers = ["" if v is None else str(v).strip() for v in grid[header_index]]
    merged, hidden = _layout(content, file_name, title) if "layout" in features else ({}, set())
    rows = []
    # Rows keep the numbers the spreadsheet program shows, blank leading rows included.
    for number, cells in enumerate(grid[header_index + 1:], start=header_index + 2):
        if all(_blank(v) for v in cells):
            continue
        row = SheetRow(number, cells + [None] * (len(headers) - len(cells)))
        if number in hidden:
            row.problems.append((None, "the row is hidden in the sheet; unhide it (or delete "
                                       "it) so what is imported is what you see.", "hidden_row"))
        for column, where in merged.get(number, ()):
            row.problems.append((column, f"cells {where} are merged; unmerge them and write the "
                                         "value in every row.", "merged_cells"))
        rows.append(row)
    for _column, where in merged.get(header_index + 1, ()):
        raise refusal("file", f"{file_name}: header cells {where} are merged; give each "
                              "column its own name.", "merged_cells")
    if "formula" in features:
        _mark_formulas_without_values(content, file_name, title, rows)
    return Sheet(headers, rows, "xlsx")


def _layout(content: bytes, file_name: str, title: str
            ) -> tuple[dict[int, list[tuple[int, str]]], set[int]]:
    """Merged ranges by row and the hidden rows of sheet ``title``, from openpyxl's full
    read (the streaming mode reports neither); asked only when the XML holds either."""
    worksheet = _load(content, file_name, data_only=True)[title]
    hidden = {number for number, dimension in worksheet.row_dimensions.items()
              if dimension.hidden}
    return _merged_cells(worksheet), hidden


def _merged_cells(worksheet) -> dict[int, list[tuple[int, str]]]:
    """Row number -> (first column index, range) of each merged range covering it."""
    found: dict[int, list[tuple[int, str]]] = {}
    for cell_range in worksheet.merged_cells.ranges:
        for row in range(cell_range.min_row, cell_range.max_row + 1):
            found.setdefault(row, []).append((cell_range.min_col - 1, str(cell_range)))
    return found


def _mark_formulas_without_values(content: bytes, file_name: str, title: str,
                                  rows: list[SheetRow]) -> None:
    """A formula saved without its result reads as empty: say so instead of importing a gap.

    Only empty cells are looked up in the formula view of the workbook, so a sheet without
    gaps costs nothing extra.
    """
    gaps = [(row, index) for row in rows for index, value in enumerate(row.cells) if value is None]
    if not gaps:
        return
    formulas = _load(content, file_name, data_only=False)[title]
    for row, index in gaps:
        text = formulas.cell(row=row.number, column=index + 1).value
        if isinstance(text, str) and text.startswith("="):
            row.problems.append((index, f"the formula {text} has no saved result (it is never "
                                        "calculated here); open and save the file in a "
                                        "spreadsheet program, or paste values.", "formula"))


# What the worksheet XML is scanned for (ECMA-376 Part 1), any namespace prefix: a cell's
# formula is its <f> element (18.3.1.40; other elements beginning with f, filterColumn or
# firstFooter, are not); a merged range is <mergeCell> (18.3.1.55); a hidden row carries the
# hidden attribute (18.3.1.73; a hidden column's too, which only costs the full read).
_FEATURE_TAGS = re.compile(rb"<(?:[A-Za-z_][\w.-]*:)?(?:(f)[\s>/]|(mergeCell)[\s>/])"
                           rb"|\s(hidden)\s*=\s*[\"'](?:1|true)[\"']")
_SCAN_CHUNK_BYTES = 1 << 20


def _xml_features(chunks: Iterable[bytes]) -> set[str]:
    """Which of "formula" and "layout" (merged cells, hidden rows) worksheet XML, read in
    ``chunks``, holds anywhere."""
    found: set[str] = set()
    tail = b""
    for chunk in chunks:
        seen = tail + chunk
        for match in _FEATURE_TAGS.finditer(seen):
            found.add("formula" if match.group(1) else "layout")
        if found == {"formula", "layout"}:
            break
        tail = seen[-32:]  # a tag split across chunks
    return found


def _sheet_features(content: bytes) -> set[str]:
    """``_xml_features`` of every worksheet of the workbook, from the XML alone: a full read
    of the workbook (cell objects, merged ranges, row heights) is needed only for what it
    finds, and the formula view only for a formula that might hide behind an empty cell."""
    found: set[str] = set()
    with zipfile.ZipFile(io.BytesIO(content)) as archive:
        for name in archive.namelist():
            if name.startswith("xl/worksheets/") and name.endswith(".xml"):
                with archive.open(name) as part:
                    found |= _xml_features(iter(lambda p=part: p.read(_SCAN_CHUNK_BYTES), b""))
    return found


def _blank(value) -> bool:
    return value is None or (isinstance(value, str) and not value.strip())


# ---------------------------------------------------------------------------------------
# CSV
# ---------------------------------------------------------------------------------------

def _read_csv(content: bytes, *, file_name: str) -> Sheet:
    if b"\x00" in content[:4096]:
        raise _not_a_sheet(file_name)
    try:
        text = content.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise refusal("file", f"{file_name} is not UTF-8 text; save it as 'CSV UTF-8'.",
                      "not_a_spreadsheet") from None
    try:
        dialect = csv.Sniffer().sniff(text[:8192], delimiters=",;\t")
    except csv.Error:
        dialect = csv.excel
    try:
        grid = list(csv.reader(io.StringIO(text), dialect))
    except csv.Error as error:
        raise refusal("file", f"{file_name}: {error}", "not_a_spreadsheet") from None
    grid = [row for row in grid]
    while grid and all(_blank(v) for v in grid[-1]):
        grid.pop()
    if not grid:
        raise refusal("file", f"{file_name} is empty.", "empty_sheet")
    headers = [h.strip() for h in grid[0]]
    rows = [SheetRow(number, cells + [None] * (len(headers) - len(cells)))
            for number, cells in enumerate(grid[1:], start=2) if not all(_blank(v) for v in cells)]
    return Sheet(headers, rows, "csv")
