"""CSV and xlsx for every API list and record, by DRF content negotiation.

Registered in ``REST_FRAMEWORK["DEFAULT_RENDERER_CLASSES"]``, so ``?format=csv``,
``?format=xlsx`` or an ``Accept: text/csv`` header work on every endpoint.  A list becomes
one row per record (nested objects flattened to ``parent.field``); column names carry the
unit the API documents for the field (inventory.api.units), dates stay ISO 8601.

Keyset-paginated lists: a renderer with ``export_row_cap`` asks the paginator for up to
that many rows in one response (inventory.api.pagination reads it), the filters of the
request still applying; when more rows match, ``X-Export-Truncated`` says so.

Hand-written rather than a package: drf-excel and djangorestframework-csv would need their
own pagination handling and know nothing of the project's units.
"""

from __future__ import annotations

from rest_framework.renderers import BaseRenderer, JSONRenderer

from inventory.tables import XLSX_CONTENT_TYPE, column_name, export_row_cap, table_bytes


def _flatten(value, prefix: str, out: dict) -> None:
    if isinstance(value, dict):
        for key, item in value.items():
            _flatten(item, f"{prefix}.{key}" if prefix else str(key), out)
    elif isinstance(value, list):
        out[prefix] = "; ".join(_cell_text(item) for item in value)
    else:
        out[prefix] = value


def _cell_text(item) -> str:
    if isinstance(item, dict):
        return str(item.get("code") or item.get("id") or item)
    return "" if item is None else str(item)


def as_table(data) -> tuple[list[str], list[list]]:
    """API data (a page, a list or one record) as headers and rows."""
    if isinstance(data, dict) and "results" in data and isinstance(data["results"], list):
        records = data["results"]
    elif isinstance(data, list):
        records = data
    else:
        records = [data]
    flat = []
    for record in records:
        row: dict = {}
        _flatten(record if isinstance(record, dict) else {"value": record}, "", row)
        flat.append(row)
    keys: list[str] = []
    for row in flat:
        keys.extend(key for key in row if key not in keys)
    return [column_name(key) for key in keys], [[row.get(key) for key in keys] for row in flat]


class _TableRenderer(BaseRenderer):
    file_format = ""
    export_row_cap = property(lambda self: export_row_cap())

    def render(self, data, accepted_media_type=None, renderer_context=None):
        if data is None:
            return b""
        context = renderer_context or {}
        response, view = context.get("response"), context.get("view")
        if response is not None and response.status_code >= 400:
            # A refusal keeps the one error shape, as JSON, whatever table was asked for.
            response["Content-Type"] = "application/json"
            return JSONRenderer().render(data)
        if response is not None:
            name = getattr(view, "basename", None) or "records"
            response["Content-Disposition"] = f'attachment; filename="{name}.{self.format}"'
            if isinstance(data, dict) and data.get("next"):
                response["X-Export-Truncated"] = (f"only the first {self.export_row_cap} rows; "
                                                  "narrow the filters to export the rest")
        headers, rows = as_table(data)
        return table_bytes(headers, rows, file_format=self.file_format)


class CSVRenderer(_TableRenderer):
    media_type = "text/csv"
    format = "csv"
    charset = "utf-8"
    file_format = "csv"


class XLSXRenderer(_TableRenderer):
    media_type = XLSX_CONTENT_TYPE
    format = "xlsx"
    charset = None
    render_style = "binary"
    file_format = "xlsx"


__all__ = ["CSVRenderer", "XLSXRenderer", "as_table"]
