"""Writing new records that their service's check part approved: one, or many at once.

A create service is split in two: ``<kind>_check`` applies every rule and returns a
:class:`NewRecord` (the unsaved record with its code, its lineage inputs and links), and
:func:`new_record_save` writes it.  A sheet import checks thousands of rows through the same
check functions and writes them with :func:`new_records_insert` (by ``_rows``: one INSERT
per batch, on PostgreSQL one pipelined INSERT per row): the records and their history rows,
then their many-to-many rows and lineage edges, then the stored records the new ones
changed (a template consumed, a substrate's stage), one UPDATE run with many parameter
sets, with their history rows, and the rows that record those changes.  The database's
CHECK and unique constraints still hold on every row written.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import date

from django.db.models import Model
from django.utils import timezone

from ..models import CodedRecord, LineageEdge, StampedRecord
from ._common import User, _lineage_edges, _link, _stamp_history
from ._rows import history_rows_insert, rows_insert, rows_update

BATCH_ROWS = 500  # codes per query of codes_taken


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


def new_records_insert(news: Sequence[NewRecord], *, actor: User | None) -> None:
    """Write many checked records, batch by batch, with what :func:`new_record_save` writes.

    Records of each model are inserted in the given order, so their keys follow it.
    """
    by_model: dict[type[Model], list[Model]] = defaultdict(list)
    for new in news:
        _stamp_history(new.record, actor=actor, reason=new.reason)
        by_model[type(new.record)].append(new.record)
    for model, records in by_model.items():
        rows_insert(model, records)
        history_rows_insert(model, records, update=False, actor=actor)
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
        rows_insert(through, rows)
    rows_insert(LineageEdge, edges)
    followers = [follower for new in news for follower in new.after]
    if followers:
        new_records_insert(followers, actor=actor)
    _changes_write(news, actor=actor)


def _changes_write(news: Sequence[NewRecord], *, actor: User | None) -> None:
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
            record.updated_at = now  # as auto_now's pre_save does on a save
            changed[type(record)].append(_saved_again(record, new.record))
        for row in new.rows:
            rows[type(row)].append(row)
    for model, records in changed.items():
        rows_update(model, records)
        history_rows_insert(model, records, update=True, actor=actor)
    for model, group in rows.items():
        rows_insert(model, group)


def _saved_again(changed: StampedRecord, inserted: StampedRecord) -> StampedRecord:
    """A changed copy of the new record itself (saved twice in one step, as a run and then
    its entered charge) takes the key and creation time its insert has just given it."""
    if changed.pk is None and getattr(changed, "code", None) == inserted.code:
        changed.pk, changed.created_at = inserted.pk, inserted.created_at
        changed._state.adding = False
    return changed


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
