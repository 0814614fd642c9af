"""What a record kind declares for sheets: its columns (units, header variants) and its writer.

Each kind lists its columns once; the template, the header recognition, the reading of a
row and the sheet export all come from that list.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from dataclasses import dataclass, field

from django.db.models import Model

from ..cells import split_header


@dataclass(frozen=True)
class Column:
    """One column: the field it fills, its label, type, unit and the header variants known."""

    field: str
    label: str
    type: str = "text"  # text | number | integer | date | choice | ref | refs
    unit: str | None = None
    required: bool = False
    aliases: tuple[str, ...] = ()
    choices: tuple = ()
    ref: str | None = None  # the kind a ref/refs column points at
    example: object = None
    # Compared with an existing record's field when a row matches it (None: not compared).
    compare: bool = True

    @property
    def header(self) -> str:
        return f"{self.label} ({self.unit})" if self.unit else self.label


def normalise(header: str) -> str:
    """'Nominal diameter (nm)' and 'nominal_diameter' both -> 'nominal diameter'."""
    name, _unit = split_header(str(header))
    return re.sub(r"[^a-z0-9%]+", " ", name.lower()).strip()


_UNIT_SUFFIX = re.compile(r"_(nm|um|mL|uL|cm2|mM|h|min|s|V|mA|percent|percent_w_v|C)$")


def header_variants(column: Column) -> set[str]:
    names = {column.label, column.field, _UNIT_SUFFIX.sub("", column.field), *column.aliases}
    return {normalise(name) for name in names}


CODE = Column("code", "Code or your ID", aliases=("code", "id", "your id", "record code",
                                                  "sample id"), compare=False,
              example="HL-2026-001")
NOTES = Column("notes", "Notes", aliases=("comment", "comments", "remarks"), example="")


@dataclass
class Kind:
    name: str
    label: str
    model: type[Model]
    columns: tuple[Column, ...]
    create: Callable  # (values: dict, ctx) -> the record made
    # Fields that identify an existing lot besides its code ("lot number").
    lot_number: tuple[str, ...] = ()
    find: Callable | None = None  # (values, ctx) -> existing record or None
    extra: Callable | None = None  # (record, values, ctx, created: bool) -> list of changes
    export_value: dict[str, Callable] = field(default_factory=dict)  # field -> (record) -> value
    export_queryset: Callable | None = None
    # What ``export_value`` reads besides the ref columns, prefetched once for all records.
    export_prefetch: tuple = ()
    # The bulk path (exchange.import_context): (values, ctx) -> inventory.services.NewRecord,
    # checked by the same rules as ``create`` and ``extra`` on a new record, nothing written.
    prepare: Callable | None = None

    def column(self, name: str) -> Column | None:
        return next((c for c in self.columns if c.field == name), None)


def pick(values: dict, *names: str) -> dict:
    return {name: values[name] for name in names if values.get(name) is not None}


def text_of(values: dict, name: str) -> str:
    return values.get(name) or ""
