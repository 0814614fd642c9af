"""Writing new records that their service's check part approved: one, or many at once.

A create service is split in two: ``<kind>_check`` applies every rule and returns a
:class:`NewRecord` (the unsaved record with its code, its lineage inputs and links), and
:func:`new_record_save` writes it.  A sheet import checks thousands of rows through the same
check functions and writes them with :func:`new_records_insert`: per model one INSERT per
batch for the records and one for their history rows (django-simple-history's
``bulk_create_with_history``), then their many-to-many rows and lineage edges, then the
stored records the new ones changed (a template consumed, a substrate's stage), one UPDATE
run with many parameter sets, with their history rows in bulk, and the rows that record
those changes.  The database's CHECK and unique constraints still hold on every row written.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import date

from django.db import connections, router
from django.db.models import Model
from django.utils import timezone
from simple_history.utils import bulk_create_with_history, get_history_manager_for_model

from ..models import CodedRecord, LineageEdge, StampedRecord
from ._common import User, _lineage_edges, _link, _stamp_history

BATCH_ROWS = 500  # rows per INSERT (SQLite's bound-parameter limit leaves room for ~30 columns)


@dataclass
class NewRecord:
    """A checked, unsaved record and what is written with it."""

    record: StampedRecord
    inputs: Sequence[tuple[CodedRecord, str]] = ()  # lineage parents and their roles
    used_on: date | None = None  # the day of the lineage edges
    links: dict[str, Sequence[Model]] = field(default_factory=dict)  # many-to-many field
    reason: str = ""  # of its history row
    after: list[NewRecord] = field(default_factory=list)  # records that point at this one
    # Stored records this one changes, each a checked copy (``_prepare_changed``: new
    # version, stamped) with the reason of its history row; written after the new records.
    # A copy of this record itself (no key yet) is its second save in the same step.
    changed: list[tuple[StampedRecord, str]] = field(default_factory=list)
    # Further rows that record the step (status changes, lineage edges from this record to
    # stored ones), written last; they may name this record's code, not its key.
    rows: list[Model] = field(default_factory=list)


def new_record_save(new: NewRecord, *, actor: User | None) -> StampedRecord:
    """Write one checked record: its row and history row, its links, its lineage edges."""
    _stamp_history(new.record, actor=actor, reason=new.reason)
    new.record.save()
    for name, records in new.links.items():
        getattr(new.record, name).set(records)
    if new.inputs:
        _link(new.inputs, new.record, used_on=new.used_on, actor=actor)
    for follower in new.after:
        new_record_save(follower, actor=actor)
    for record, reason in new.changed:
        _stamp_history(record, actor=actor, reason=reason)
        _saved_again(record, new.record).save()
    for row in new.rows:
        row.save()
    return new.record


def new_records_insert(news: Sequence[NewRecord], *, actor: User | None,
                       batch_rows: int = BATCH_ROWS) -> None:
    """Write many checked records, batch by batch, with what :func:`new_record_save` writes.

    Records of each model are inserted in the given order, so their keys follow it.
    """
    by_model: dict[type[Model], list[Model]] = defaultdict(list)
    for new in news:
        _stamp_history(new.record, actor=actor, reason=new.reason)
        by_model[type(new.record)].append(new.record)
    for model, records in by_model.items():
        bulk_create_with_history(records, model, batch_size=batch_rows, default_user=actor)
    through_rows: dict[type[Model], list[Model]] = defaultdict(list)
    edges = []
    for new in news:
        for name, targets in new.links.items():
            relation = type(new.record)._meta.get_field(name)
            through = relation.remote_field.through
            source, target = relation.m2m_field_name(), relation.m2m_reverse_field_name()
            through_rows[through] += [through(**{f"{source}_id": new.record.pk,
                                                 f"{target}_id": linked.pk})
                                      for linked in targets]
        edges += _lineage_edges(new.inputs, new.record, used_on=new.used_on, actor=actor)
    for through, rows in through_rows.items():
        through.objects.bulk_create(rows, batch_size=batch_rows)
    LineageEdge.objects.bulk_create(edges, batch_size=batch_rows)
    followers = [follower for new in news for follower in new.after]
    if followers:
        new_records_insert(followers, actor=actor, batch_rows=batch_rows)
    _changes_write(news, actor=actor, batch_rows=batch_rows)


def _changes_write(news: Sequence[NewRecord], *, actor: User | None, batch_rows: int) -> None:
    """The stored records the new ones changed, then the rows recording the steps.

    A record changed by two new records of one batch would get two history rows with its
    final state (the importer writes the first before it lets a second row change it).
    """
    changed: dict[type[Model], list[Model]] = defaultdict(list)
    rows: dict[type[Model], list[Model]] = defaultdict(list)
    now = timezone.now()
    for new in news:
        for record, reason in new.changed:
            _stamp_history(record, actor=actor, reason=reason)
            record.updated_at = now  # bulk_update does not run auto_now's pre_save
            changed[type(record)].append(_saved_again(record, new.record))
        for row in new.rows:
            rows[type(row)].append(row)
    for model, records in changed.items():
        _rows_update(model, records)
        get_history_manager_for_model(model).bulk_history_create(
            records, batch_size=batch_rows, update=True, default_user=actor)
    for model, group in rows.items():
        model.objects.bulk_create(group, batch_size=batch_rows)


def _saved_again(changed: StampedRecord, inserted: StampedRecord) -> StampedRecord:
    """A changed copy of the new record itself (saved twice in one step, as a run and then
    its entered charge) takes the key and creation time its insert has just given it."""
    if changed.pk is None and getattr(changed, "code", None) == inserted.code:
        changed.pk, changed.created_at = inserted.pk, inserted.created_at
        changed._state.adding = False
    return changed


def _rows_update(model: type[Model], records: Sequence[Model]) -> None:
    """Every column but the key of each record's row: one UPDATE statement run with many
    parameter sets.  In place of ``bulk_update``, whose CASE WHEN for each column and row
    cost ~7 ms a row to build (70 of the 75 s of a 10,000-row linker sheet)."""
    connection = connections[router.db_for_write(model)]
    quote = connection.ops.quote_name
    fields = [f for f in model._meta.concrete_fields if not f.primary_key]
    key = model._meta.pk
    sql = (f"UPDATE {quote(model._meta.db_table)} SET "
           f"{', '.join(f'{quote(f.column)} = %s' for f in fields)} "
           f"WHERE {quote(key.column)} = %s")
    params = [[f.get_db_prep_save(getattr(record, f.attname), connection) for f in fields]
              + [key.get_db_prep_save(record.pk, connection)] for record in records]
    with connection.cursor() as cursor:
        cursor.executemany(sql, params)


def codes_taken(news: Sequence[NewRecord]) -> list[NewRecord]:
    """The new records whose code a stored record already holds (a counter set back).

    One query per model and batch, in place of each record's own unique check.
    """
    by_model: dict[type[Model], dict[str, NewRecord]] = defaultdict(dict)
    for new in news:
        if isinstance(new.record, CodedRecord):
            by_model[type(new.record)][new.record.code] = new
    taken = []
    for model, by_code in by_model.items():
        codes = list(by_code)
        for start in range(0, len(codes), BATCH_ROWS):
            found = model.objects.filter(code__in=codes[start:start + BATCH_ROWS])
            taken += [by_code[code] for code in found.values_list("code", flat=True)]
    return taken
