"""The joined table as CSV and as a spreadsheet (openpyxl), one row per substrate.

Column names are those of ``insight.selectors`` (units in the names); dates as ISO 8601.
"""

from __future__ import annotations

import io

import pandas as pd
from openpyxl import Workbook
from openpyxl.utils import get_column_letter

from .columns import CATEGORICAL_SETTINGS, NUMERIC_SETTINGS, OUTCOMES

NOTE = ("sersledger process insight: one row per substrate; units are in the column names "
        "(nm, mM, h, d = days, percent, cm1 = cm⁻¹, mC_per_cm2); log10_ef is dimensionless.")


def _plain(table: pd.DataFrame) -> pd.DataFrame:
    """Dates as ISO text, missing values as empty cells, booleans as true/false."""
    out = table.copy()
    for column in out.columns:
        out[column] = out[column].map(lambda v: v.isoformat() if hasattr(v, "isoformat") else v)
    return out.astype(object).where(out.notna(), None)


def table_csv(table: pd.DataFrame) -> bytes:
    return _plain(table).to_csv(index=False, lineterminator="\n").encode("utf-8")


def table_records(table: pd.DataFrame) -> list[dict]:
    """JSON-ready rows (the API's export)."""
    return _plain(table).to_dict(orient="records")


def table_xlsx(table: pd.DataFrame) -> bytes:
    book = Workbook()
    sheet = book.active
    sheet.title = "substrates"
    plain = _plain(table)
    sheet.append(list(plain.columns))
    for row in plain.itertuples(index=False):
        sheet.append(list(row))
    sheet.freeze_panes = "B2"
    for index, column in enumerate(plain.columns, start=1):
        sheet.column_dimensions[get_column_letter(index)].width = max(12, len(column) + 2)
    about = book.create_sheet("columns")
    about.append(["column", "meaning"])
    labels = {**NUMERIC_SETTINGS, **CATEGORICAL_SETTINGS, **OUTCOMES}
    for column in plain.columns:
        about.append([column, labels.get(column, column.replace("_", " "))])
    about.append([])
    about.append([NOTE])
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()
