"""A kind's sheet (the import format, re-importable as it is) and its empty template.

Written by the project's one table writer, inventory.tables.
"""

from __future__ import annotations

from inventory.tables import CSV_CONTENT_TYPE, XLSX_CONTENT_TYPE, table_bytes

from .kinds import Kind, example_row, export_rows

__all__ = ["CSV_CONTENT_TYPE", "XLSX_CONTENT_TYPE", "kind_sheet", "kind_template"]

def kind_sheet(kind: Kind, *, file_format: str) -> bytes:
    """Every record of ``kind`` in the import format (re-importable as it is)."""
    return table_bytes([c.header for c in kind.columns], export_rows(kind),
                       file_format=file_format, title=kind.label)


def kind_template(kind: Kind, *, file_format: str) -> bytes:
    """The header (units in it) and one example row from the demo scenario."""
    return table_bytes([c.header for c in kind.columns], [example_row(kind)],
                       file_format=file_format, title=kind.label)
