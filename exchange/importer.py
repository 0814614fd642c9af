"""Dry run and import of one sheet of one record kind: all rows or none.

Both run every row through its kind's service inside one transaction, each row in its own
savepoint so one bad row does not hide the next one's problems.  A dry run (and an import
that met any row error) then rolls the whole transaction back; an import without errors
commits it.  So a dry run reports exactly what the services would refuse, including a
parent lot that an earlier row of the same file creates, and nothing is ever half saved.

On the bulk path (``bulk=True``) the rows are checked by their services' check parts and
written in batches (``ImportContext``).  A dry run writes only what a later row must meet in
the database (a parent it names); the rest it checks without writing, including the new
codes against the table.  What only an insert could still refuse (a constraint the checks
do not foresee; none is known) would make the import fall back to the per-row path, which
then reports it by row and saves nothing.
"""

from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass
from datetime import date
from decimal import Decimal

from django.core.exceptions import PermissionDenied, ValidationError
from django.db import transaction

from inventory.codes import codes_in_blocks
from inventory.errors import refusal
from inventory.roles import MAKER, require_role
from inventory.services import amendable_fields, record_amend

from .cells import (
    CellError,
    conversion,
    read_choice,
    read_date,
    read_number,
    read_text,
    split_header,
)
from .gc_pause import full_collections_deferred
from .import_context import BulkFallback, ImportContext, ref_texts
from .import_report import ImportReport, RowError, RowOutcome
from .kinds import KINDS, Column, Kind, header_variants, normalise
from .models import ColumnMapping, SheetKey
from .provenance import sheet_source, source_text, with_source
from .sheets import Sheet, read_sheet

MAX_ROWS = 50_000


@dataclass(frozen=True)
class ColumnPlan:
    index: int
    header: str
    column: Column
    factor: float  # from the header's unit to the column's


def plan_columns(kind: Kind, headers: list[str], *, file_name: str,
                 overrides: dict[str, str] | None = None,
                 ) -> tuple[list[ColumnPlan], list[str], list[str]]:
    """Which header fills which column (known variants, then the lab's saved mapping).

    Returns the plans, the headers not recognised, and the required columns no header
    gives; a required column missing with nothing left to map is refused outright.
    """
    variants = {variant: column for column in kind.columns for variant in header_variants(column)}
    saved = dict(ColumnMapping.objects.filter(kind=kind.name).values_list("header", "field"))
    saved.update(overrides or {})
    plans, unmapped, taken = [], [], {}
    for index, header in enumerate(headers):
        if not header:
            continue
        key = normalise(header)
        if key in saved:
            column = kind.column(saved[key]) if saved[key] else None
            if column is None:
                continue  # mapped to "ignore"
        elif key in variants:
            column = variants[key]
        else:
            unmapped.append(header)
            continue
        if column.field in taken:
            raise refusal("file", f"{file_name}: columns '{taken[column.field]}' and "
                                  f"'{header}' both give {column.header}.", "duplicate_column")
        taken[column.field] = header
        plans.append(ColumnPlan(index, header, column, _header_factor(column, header, file_name)))
    missing = [c.header for c in kind.columns if c.required and c.field not in taken]
    if missing and not unmapped:
        raise refusal("file", f"{file_name}: no column for {', '.join(missing)}.",
                      "missing_column")
    return plans, unmapped, missing


def _header_factor(column: Column, header: str, file_name: str) -> float:
    _name, unit = split_header(header)
    if column.type != "number" or column.unit is None or unit is None:
        return 1.0
    try:
        return conversion(unit, column.unit)
    except CellError as error:
        raise refusal("file", f"{file_name}: column '{header}': {error.message}.",
                      error.code) from None


def _read_cell(plan: ColumnPlan, value, ctx: ImportContext):
    column = plan.column
    if value is None or (isinstance(value, str) and not value.strip()):
        return [] if column.type == "refs" else None
    if column.type == "number":
        return read_number(value, unit=column.unit, header_factor=plan.factor)
    if column.type == "integer":
        return read_number(value, unit=None, integer=True)
    if column.type == "date":
        return read_date(value)
    if column.type == "choice":
        return read_choice(value, column.choices)
    if column.type == "ref":
        return ctx.resolve(column.ref, read_text(value))
    if column.type == "refs":
        return [ctx.resolve(column.ref, part) for part in ref_texts(read_text(value))]
    return read_text(value)


def _error_column(kind: Kind, plans: list[ColumnPlan], field_name: str) -> str:
    for plan in plans:
        if plan.column.field == field_name:
            return plan.header
    column = kind.column(field_name)
    return column.header if column else ("" if field_name == "__all__" else field_name)


def _validation_errors(error: ValidationError, row: int, kind: Kind,
                       plans: list[ColumnPlan]) -> list[RowError]:
    if hasattr(error, "error_dict"):
        found = []
        for name, errors in error.error_dict.items():
            for item in errors:
                message = " ".join(item.messages)
                found.append(RowError(row, _error_column(kind, plans, name), message,
                                      item.code or "invalid"))
        return found
    return [RowError(row, "", " ".join(error.messages), error.code or "invalid")]


def _same(old, new) -> bool:
    if old in (None, "") and new in (None, ""):
        return True
    if isinstance(old, Decimal):
        old = float(old)
    if isinstance(old, (int, float)) and isinstance(new, (int, float)) \
            and not isinstance(old, bool):
        return math.isclose(float(old), float(new), rel_tol=1e-9, abs_tol=1e-12)
    return str(old) == str(new) if not isinstance(old, date) else old == new


def _parents_agree(kind: Kind, record, values: dict) -> bool:
    for column in kind.columns:
        given = values.get(column.field)
        if column.type == "ref" and given is not None \
                and getattr(record, f"{column.field}_id", None) != given.pk:
            return False
    return True


def _find_existing(kind: Kind, values: dict, key: str, ctx: ImportContext):
    if kind.find is not None:
        found = kind.find(values, ctx)
        if found is not None:
            return found
    if key:
        try:
            record = ctx.resolve(kind.name, key)
        except CellError:
            record = None
        # A code from another site's export can name a different record here: it matches
        # only if the parent columns the row gives agree with the record's.
        if record is not None and _parents_agree(kind, record, values):
            return record
    if kind.lot_number and values.get(kind.lot_number[-1]):
        code = ctx.lot_numbers().get(tuple(values.get(name) or "" for name in kind.lot_number))
        return None if code is None else kind.model.objects.get(code=code)
    return None


def _update(kind: Kind, record, values: dict, plans: list[ColumnPlan], ctx) -> list[str]:
    """Amend the compared fields that differ (through record_amend); list what changed."""
    changes, labels = {}, []
    for plan in plans:
        column = plan.column
        if not column.compare or column.field not in values:
            continue
        old = getattr(record, column.field, None)
        new = values[column.field]
        if not _same(old, new):
            changes[column.field] = "" if new is None and column.type == "text" else new
            labels.append(f"{column.header}: {old if old not in (None, '') else '—'} → "
                          f"{new if new not in (None, '') else '—'}")
    if changes:
        allowed = amendable_fields(type(record))
        for name in changes:
            if name not in allowed:
                stored = getattr(record, "code", "") or f"A stored {record._meta.verbose_name}"
                raise refusal(name, f"{stored} exists and its {name} cannot be changed "
                                    "by an import.", "not_amendable")
        record_amend(actor=ctx.actor, record=record, changes=changes, reason=ctx.source,
                     expected_version=record.version)
    return labels


def _apply_row(kind: Kind, row, plans: list[ColumnPlan], ctx: ImportContext,
               report: ImportReport) -> None:
    errors = [RowError(row.number, _column_name(row, plans, index), message, code)
              for index, message, code in row.problems]
    values = {}
    for plan in plans:
        value = row.cells[plan.index] if plan.index < len(row.cells) else None
        try:
            values[plan.column.field] = _read_cell(plan, value, ctx)
        except CellError as error:
            errors.append(RowError(row.number, plan.header, error.message, error.code))
    for plan in plans:
        if plan.column.required and values.get(plan.column.field) in (None, "", []) \
                and not any(e.column == plan.header for e in errors):
            errors.append(RowError(row.number, plan.header, "required; the cell is empty",
                                   "required"))
    key = values.get("code") or ""
    if key:
        if key in ctx.rows_by_key:
            errors.append(RowError(row.number, _error_column(kind, plans, "code"),
                                   f"duplicate: row {ctx.rows_by_key[key]} has the same "
                                   f"ID '{key}'", "duplicate"))
        else:
            ctx.rows_by_key[key] = row.number
    lot_number = tuple(values.get(n) or "" for n in kind.lot_number)
    if kind.lot_number and lot_number[-1]:
        first = ctx.rows_by_lot.setdefault(lot_number, row.number)
        if first != row.number:
            errors.append(RowError(row.number, _error_column(kind, plans, kind.lot_number[-1]),
                                   f"duplicate: row {first} has the same lot number "
                                   f"'{lot_number[-1]}'", "duplicate"))
    if errors:
        report.errors.extend(errors)
        return
    ctx.source = source_text(file_name=ctx.file_name, sha256=ctx.sha256, row=row.number)
    try:
        with sheet_source(ctx.source):
            existing = _find_existing(kind, values, key, ctx)
            if existing is None and ctx.bulk:
                outcome, record = _check_new(kind, values, key, row.number, ctx)
            else:
                outcome, record = _write_row(kind, existing, values, key, row.number, plans,
                                             ctx)
    except ValidationError as error:
        report.errors.extend(_validation_errors(error, row.number, kind, plans))
        return
    except CellError as error:
        report.errors.append(RowError(row.number, "", error.message, error.code))
        return
    ctx.remember(key, record, values)
    {"create": report.created, "change": report.changed,
     "unchanged": report.unchanged}[outcome.action].append(outcome)


def _write_row(kind: Kind, existing, values: dict, key: str, number: int,
               plans: list[ColumnPlan], ctx: ImportContext):
    """The per-row path: the row through its kind's service, in its own savepoint."""
    with transaction.atomic():
        if existing is not None:
            changes = _update(kind, existing, values, plans, ctx)
            if kind.extra:
                changes += kind.extra(existing, values, ctx, False)
            ctx.forget(getattr(existing, "code", ""))
            return RowOutcome(number, "change" if changes else "unchanged", key,
                              getattr(existing, "code", ""), changes), existing
        record = kind.create(values, ctx)
        if kind.extra:
            kind.extra(record, values, ctx, True)
        return RowOutcome(number, "create", key, getattr(record, "code", "")), record


def _check_new(kind: Kind, values: dict, key: str, number: int, ctx: ImportContext):
    """The bulk path: the new row checked by the service's check part, written later."""
    new = kind.prepare(values, ctx)
    for item in (new, *new.after):  # the source, as the per-row path's history rows get it
        item.reason = with_source(ctx.source, item.reason)
        item.changed = [(record, with_source(ctx.source, reason))
                        for record, reason in item.changed]
    ctx.add(new)
    return RowOutcome(number, "create", key, getattr(new.record, "code", "")), new.record


def _column_name(row, plans: list[ColumnPlan], index: int | None) -> str:
    if index is None:
        return ""
    for plan in plans:
        if plan.index == index:
            return plan.header
    return f"column {index + 1}"


def import_sheet(*, kind: str, content: bytes, file_name: str, actor, commit: bool,
                 mapping: dict[str, str] | None = None, bulk: bool = True) -> ImportReport:
    """Dry-run (``commit=False``) or import a sheet; refusals raise ValidationError.

    ``mapping`` maps normalised headers to fields for this run only (the page saves the
    lab's mapping with exchange.services.column_mapping_save first).
    """
    spec = KINDS.get(kind)
    if spec is None:
        raise refusal("kind", f"'{kind}' is not one of {', '.join(KINDS)}.", "unknown_kind")
    try:
        require_role(actor, MAKER, action="Importing a sheet")
    except PermissionDenied as error:
        raise refusal("user", str(error), "permission_denied") from None
    with full_collections_deferred():
        return _import(spec, content, file_name=file_name, actor=actor, commit=commit,
                       mapping=mapping, bulk=bulk)


def _import(spec: Kind, content: bytes, *, file_name: str, actor, commit: bool,
            mapping: dict[str, str] | None, bulk: bool) -> ImportReport:
    sheet: Sheet = read_sheet(content, file_name=file_name)
    if len(sheet.rows) > MAX_ROWS:
        raise refusal("file", f"{file_name} has {len(sheet.rows)} rows; import at most "
                              f"{MAX_ROWS} at a time.", "too_many_rows")
    plans, unmapped, missing = plan_columns(spec, sheet.headers, file_name=file_name,
                                            overrides=mapping)
    digest = hashlib.sha256(content).hexdigest()
    report = ImportReport(kind=spec.name, file_name=file_name, sha256=digest, rows=len(sheet.rows),
                          columns={p.header: p.column.field for p in plans},
                          unmapped_headers=unmapped)
    if missing:
        report.errors.append(RowError(1, "", f"no column gives {', '.join(missing)}; say which "
                                             f"of {', '.join(unmapped)} does (map the columns)",
                                      "missing_column"))
        return report
    try:
        return _run(spec, sheet, plans, report, actor=actor, commit=commit, bulk=bulk)
    except BulkFallback:
        report.errors, report.created, report.changed, report.unchanged = [], [], [], []
        return _run(spec, sheet, plans, report, actor=actor, commit=commit, bulk=False)


def _run(spec: Kind, sheet: Sheet, plans: list[ColumnPlan], report: ImportReport, *, actor,
         commit: bool, bulk: bool) -> ImportReport:
    """Every row, then commit (an import without errors) or roll everything back."""
    ctx = ImportContext(spec, actor, file_name=report.file_name, sha256=report.sha256,
                        bulk=bulk)
    with transaction.atomic(), codes_in_blocks():
        if ctx.bulk:
            ctx.preload(sheet.rows, plans)
        for row in sheet.rows:
            _apply_row(spec, row, plans, ctx, report)
        ctx.finish(write=commit and report.ok)
        if commit and report.ok:
            SheetKey.objects.bulk_create(
                [SheetKey(kind=k, key=key, record_code=code)
                 for (k, key), code in ctx.new_keys.items()], ignore_conflicts=True)
            report.committed = True
        else:
            transaction.set_rollback(True)
    return report
