"""Bad sheets: a clear row error or a clear refusal, never a crash, and nothing saved.

Each bad file is built here with openpyxl (or as bytes) so the test shows what is wrong.
"""

from __future__ import annotations

from datetime import date

import pytest
from django.core.exceptions import ValidationError

from exchange.importer import import_sheet
from inventory.models import SphereLot

from .sheets import csv_bytes, with_saved_formula_results, with_sheet_xml, xlsx_bytes

pytestmark = pytest.mark.django_db

HEADER = ["Material", "Nominal diameter (nm)", "Solids (%)", "Received on"]
GOOD = ["polystyrene", 600, 10, date(2026, 5, 1)]


def run(content: bytes, name="lots.xlsx", actor=None, commit=True):
    return import_sheet(kind="sphere_lots", content=content, file_name=name, actor=actor,
                        commit=commit)


def refused(content: bytes, name="lots.xlsx", **kwargs) -> dict:
    with pytest.raises(ValidationError) as caught:
        run(content, name, **kwargs)
    assert SphereLot.objects.count() == 0
    return caught.value.message_dict


def errors_of(report) -> set[tuple[int, str, str]]:
    assert not report.committed and SphereLot.objects.count() == 0
    return {(e.row, e.column, e.code) for e in report.errors}


def test_merged_cells_are_a_row_error_on_every_row_they_cover(maker, today):
    content = xlsx_bytes([HEADER, GOOD, GOOD, GOOD],
                         edit=lambda sheet: sheet.merge_cells("B2:B3"))
    assert errors_of(run(content, actor=maker)) >= {(2, "Nominal diameter (nm)", "merged_cells"),
                                                    (3, "Nominal diameter (nm)", "merged_cells")}


def test_merged_header_cells_refuse_the_file(maker, today):
    content = xlsx_bytes([HEADER, GOOD], edit=lambda sheet: sheet.merge_cells("A1:B1"))
    assert "merged" in refused(content, actor=maker)["file"][0]


def test_a_formula_is_read_as_its_saved_result_and_never_calculated(maker, today):
    content = xlsx_bytes([HEADER, ["polystyrene", "=300*2", 10, date(2026, 5, 1)]])
    # 1. Without a saved result it is an error naming the formula; nothing is calculated.
    assert errors_of(run(content, actor=maker)) == {(2, "Nominal diameter (nm)", "formula")}
    # 2. With a saved result (as a spreadsheet program writes it) the result is used: the
    #    saved 590 wins over what the formula would give (600), so nothing was evaluated.
    saved = with_saved_formula_results(content, {"B2": 590})
    report = run(saved, actor=maker)
    assert report.committed, report.errors
    assert SphereLot.objects.get().nominal_diameter_nm == 590


def test_hidden_rows_are_row_errors(maker, today):
    def hide(sheet):
        sheet.row_dimensions[3].hidden = True

    content = xlsx_bytes([HEADER, GOOD, GOOD], edit=hide)
    assert errors_of(run(content, actor=maker)) == {(3, "", "hidden_row")}


def test_text_in_a_number_column_is_a_row_error(maker, today):
    content = xlsx_bytes([HEADER, ["polystyrene", "about 600", 10, date(2026, 5, 1)]])
    assert errors_of(run(content, actor=maker)) == {(2, "Nominal diameter (nm)",
                                                     "not_a_number")}


def test_mixed_units_are_converted_and_an_unknown_or_wrong_unit_is_refused(maker, today):
    rows = [HEADER, ["polystyrene", "0.6 µm", 10, "2026-05-01"],
            ["polystyrene", "600 nm", 10, "2026-05-01"],
            ["polystyrene", "600 parsecs", 10, "2026-05-01"],
            ["polystyrene", "600 mL", 10, "2026-05-01"]]
    assert errors_of(run(csv_bytes(rows), "lots.csv", actor=maker)) == {
        (4, "Nominal diameter (nm)", "unit_unknown"),
        (5, "Nominal diameter (nm)", "unit_mismatch")}
    report = run(csv_bytes(rows[:3]), "lots.csv", actor=maker)
    # 0.6 µm = 600 nm (SI prefixes): both rows give the same diameter.
    assert report.committed
    assert sorted(SphereLot.objects.values_list("nominal_diameter_nm", flat=True)) == \
        pytest.approx([600, 600])


def test_a_date_written_as_text_is_a_row_error_unless_iso_8601(maker, today):
    rows = [HEADER, ["polystyrene", 600, 10, "1st of May 2026"],
            ["polystyrene", 600, 10, "05/01/2026"], ["polystyrene", 600, 10, "2026-05-01"]]
    assert errors_of(run(xlsx_bytes(rows), actor=maker)) == {
        (2, "Received on", "date_as_text"), (3, "Received on", "date_as_text")}


@pytest.mark.parametrize("content, name", [
    (xlsx_bytes([]), "empty.xlsx"),
    (xlsx_bytes([HEADER]), "header-only.xlsx"),
    (b"", "empty.csv"),
    (csv_bytes([HEADER]), "header-only.csv"),
])
def test_an_empty_sheet_is_refused(maker, today, content, name):
    message = refused(content, name, actor=maker)["file"][0]
    assert name in message and ("empty" in message or "no rows" in message)


def test_a_file_over_50_mb_is_refused_before_it_is_read(maker, today, settings):
    content = csv_bytes([HEADER]) + b"x" * (50 * 1024 * 1024)
    assert "limit is 50 MB" in refused(content, "huge.csv", actor=maker)["file"][0]


@pytest.mark.parametrize("content, name", [
    (b"%PDF-1.7\n%\xe2\xe3\xcf\xd3\n1 0 obj\n<<>>\nendobj\n", "report.pdf"),
    (b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR", "lots.csv"),
    (b"PK\x03\x04 this is not really a zip", "lots.xlsx"),
    (b"\xff\xfe\x00\x00garbage", "lots.xlsx"),
])
def test_a_file_that_is_not_a_spreadsheet_is_refused(maker, today, content, name):
    message = refused(content, name, actor=maker)["file"][0]
    assert "not a spreadsheet" in message or "not UTF-8" in message


def test_a_viewer_cannot_import(viewer, today):
    content = xlsx_bytes([HEADER, GOOD])
    assert "maker" in refused(content, actor=viewer)["user"][0]


def test_a_missing_required_column_is_refused_naming_it(maker, today):
    content = csv_bytes([["Material", "Solids (%)", "Received on"],
                         ["polystyrene", 10, "2026-05-01"]])
    assert "Nominal diameter (nm)" in refused(content, "lots.csv", actor=maker)["file"][0]


def test_a_missing_column_with_unknown_headers_asks_for_a_mapping(maker, today):
    content = csv_bytes([["Material", "Solids (%)", "Received on", "Colour"],
                         ["polystyrene", 10, "2026-05-01", "white"]])
    (error,) = run(content, "lots.csv", actor=maker).errors
    assert (error.row, error.code) == (1, "missing_column")
    assert "Nominal diameter (nm)" in error.reason and "Colour" in error.reason


def test_blank_cells_without_formulas_read_the_workbook_once(maker, today, monkeypatch):
    # The formula view of a workbook (a second full read) is only needed when a formula
    # might hide behind an empty cell; a sheet with none is read once.
    from exchange import sheets

    loads = []
    real_load = sheets._load
    monkeypatch.setattr(sheets, "_load", lambda *a, **k: loads.append(k) or real_load(*a, **k))
    blank_cv = [HEADER + ["Size CV (%)"], GOOD + [None], GOOD + [2.0]]
    assert run(xlsx_bytes(blank_cv), actor=maker, commit=False).ok
    assert [k["data_only"] for k in loads] == [True]
    loads.clear()
    # With a formula somewhere (here without a saved result) the formula view is read.
    with_formula = xlsx_bytes([HEADER, ["polystyrene", "=300*2", 10, date(2026, 5, 1)]])
    assert errors_of(run(with_formula, actor=maker)) == {(2, "Nominal diameter (nm)",
                                                          "formula")}
    assert [k["data_only"] for k in loads] == [True, False]


def test_a_plain_sheet_is_read_in_one_streaming_pass(maker, today, monkeypatch):
    # openpyxl's read-only (streaming) mode builds no cell objects; the full read, which
    # knows merged ranges and hidden rows, is needed only when the sheet's XML holds either.
    from exchange import sheets

    loads = []
    real_load = sheets._load
    monkeypatch.setattr(sheets, "_load", lambda *a, **k: loads.append(k) or real_load(*a, **k))
    assert run(xlsx_bytes([HEADER, GOOD, GOOD]), actor=maker, commit=False).ok
    assert [k.get("read_only", False) for k in loads] == [True]
    loads.clear()
    merged = xlsx_bytes([HEADER, GOOD, GOOD], edit=lambda sheet: sheet.merge_cells("B2:B3"))
    assert {e.code for e in run(merged, actor=maker).errors} == {"merged_cells"}
    assert [k.get("read_only", False) for k in loads] == [True, False]


def test_row_numbers_are_the_sheets_own_below_blank_leading_rows(maker, today):
    # A header on row 3 (two blank rows above it): a bad cell is reported on the row the
    # spreadsheet program shows, not counted from the header.
    bad = ["polystyrene", "about 600", 10, date(2026, 5, 1)]
    content = xlsx_bytes([[], [], HEADER, GOOD, bad])
    assert errors_of(run(content, actor=maker)) == {(5, "Nominal diameter (nm)",
                                                     "not_a_number")}


def test_a_wrong_dimension_record_does_not_cut_the_sheet_short(maker, today):
    # The <dimension> element (ECMA-376 Part 1, 18.3.1.35) is advisory; some programs write
    # "A1" whatever the sheet holds.  A streaming read that trusted it would see one cell.
    import re

    def one_cell_dimension(text: str) -> str:
        text, count = re.subn(r'<dimension ref="[^"]*"', '<dimension ref="A1"', text)
        assert count == 1
        return text

    content = with_sheet_xml(xlsx_bytes([HEADER, GOOD, GOOD, GOOD]), one_cell_dimension)
    report = run(content, actor=maker)
    assert report.committed and len(report.created) == 3, report.errors


@pytest.mark.parametrize("xml, found", [
    (b'<sheetData><row r="2" spans="1:4"><c r="A2"/></row></sheetData>', set()),
    (b'<sheetData><row r="3" hidden="1"><c r="A3"/></row></sheetData>', {"layout"}),
    (b'<x:mergeCells count="1"><x:mergeCell ref="B2:B3"/></x:mergeCells>', {"layout"}),
    (b'<c r="B2"><f>300*2</f></c><mergeCells count="1"><mergeCell ref="A1:B1"/></mergeCells>',
     {"formula", "layout"}),
])
def test_the_sheet_scan_finds_merges_hidden_rows_and_formulas(xml, found):
    # ECMA-376 Part 1: merged ranges are <mergeCell> (18.3.1.55), a hidden row is the row's
    # hidden attribute (18.3.1.73), a formula is <f> (18.3.1.40).
    from exchange.sheets import _xml_features

    head = b'<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
    whole = head + xml + b"</worksheet>"
    assert _xml_features(whole[i:i + 5] for i in range(0, len(whole), 5)) == found


@pytest.mark.parametrize("xml, found", [
    (b'<c r="B2"><f>300*2</f><v></v></c>', True),
    (b'<x:c r="B2"><x:f t="shared" ref="B2:B9" si="0">A2*2</x:f></x:c>', True),
    (b'<c r="B2"><f/></c>', True),
    (b'<autoFilter ref="A1:D9"><filterColumn colId="0"/></autoFilter>'
     b'<headerFooter><firstFooter>x</firstFooter></headerFooter>', False),
])
def test_the_formula_scan_finds_the_formula_element_and_nothing_else(xml, found):
    # ECMA-376 Part 1, 18.3.1.40: a cell's formula is the <f> element (any namespace prefix);
    # other sheet elements that begin with f (filterColumn, firstFooter) are not formulas.
    from exchange.sheets import _xml_features

    head = b'<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
    whole = head + xml + b"</worksheet>"
    # read in chunks of 3 bytes: a tag split between two chunks is still seen
    features = _xml_features(whole[i:i + 3] for i in range(0, len(whole), 3))
    assert ("formula" in features) is found
