"""Many rows of one model written at once: new rows (their keys read back), their history
rows, and changed rows; one statement per batch (SQLite), or the one-row statement in
psycopg's pipeline (PostgreSQL, ``_insert_each``), or one UPDATE with many parameter sets.

Hand-written because Django's ``bulk_create`` runs its SQL compiler over every value (an
expression check, ``pre_save`` and the field's preparation, each a few method calls), and
django-simple-history's ``bulk_history_create`` first builds a model instance for every
history row: in a profile of a 10,000-row sheet of deposition runs (about 17 rows written
per sheet row) that was over half the import's time.  Here each model's columns are worked
out once, and a value is prepared by its field only when the database driver would not take
it as it is: ``None``, and a ``str``, ``int``, ``float`` or ``bool`` in a field of the
matching plain type (``_PLAIN_TYPES``: exact Django classes whose preparation of such a value
returns it unchanged).  Every other value goes through ``field.get_db_prep_save``, exactly
as Django prepares it.  The database's CHECK, unique and foreign-key constraints hold on
every row as ever; ``tests/inventory/test_rows_write.py`` compares what is stored with
Django's own writes.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from datetime import date, datetime
from typing import Any

from django.db import connections, models, router
from django.db.models import Model
from django.utils import timezone
from simple_history.utils import get_change_reason_from_object, get_history_model_for_model

# Exact field classes whose preparation leaves a value of these types unchanged, and which
# every supported driver (sqlite3, psycopg) takes as it is.
_PLAIN_TYPES: dict[type[models.Field], tuple[type, ...]] = {
    models.CharField: (str,),
    models.TextField: (str,),
    models.SlugField: (str,),
    models.IntegerField: (int,),
    models.PositiveIntegerField: (int,),
    models.PositiveSmallIntegerField: (int,),
    models.SmallIntegerField: (int,),
    models.BigIntegerField: (int,),
    models.FloatField: (float,),
    models.BooleanField: (bool,),
}
# A foreign key prepares a value as the key it points at does.
_KEY_TYPES: dict[type[models.Field], tuple[type, ...]] = {
    models.AutoField: (int,), models.BigAutoField: (int,), models.SmallAutoField: (int,),
    **_PLAIN_TYPES,
}

BATCH_ROWS = 500
MAX_PARAMETERS = 65_535  # bound parameters in one statement (PostgreSQL's wire protocol)

Column = tuple[str, tuple[type, ...], Callable[[Any], Any], models.Field]


def _plain_types(field: models.Field) -> tuple[type, ...]:
    if type(field) is models.ForeignKey:
        return _KEY_TYPES.get(type(field.target_field), ())
    return _PLAIN_TYPES.get(type(field), ())


def _preparation(field: models.Field, connection) -> Callable[[Any], Any]:
    """How the field prepares any other value: ``get_db_prep_save``, except a date in a date
    field and an aware datetime in a datetime field, which it would only hand to the
    backend's adapter (``DateField.get_db_prep_value``), so that is called directly."""
    ops = connection.ops

    def prepare(value):
        return field.get_db_prep_save(value, connection)

    if type(field) is models.DateTimeField:
        adapted: dict[datetime, Any] = {}  # the rows of one call share their time stamps

        def prepare_datetime(value):
            if type(value) is not datetime or value.tzinfo is None:
                return prepare(value)
            if value not in adapted:
                adapted[value] = ops.adapt_datetimefield_value(value)
            return adapted[value]
        return prepare_datetime
    if type(field) is models.DateField:
        def prepare_date(value):
            return ops.adapt_datefield_value(value) if type(value) is date else prepare(value)
        return prepare_date
    return prepare


def _columns(model: type[Model], connection) -> list[Column]:
    """Every column but an automatic key: (attname, types taken as they are, how any other
    value is prepared, field)."""
    return [(field.attname, _plain_types(field), _preparation(field, connection), field)
            for field in model._meta.concrete_fields
            if not (field.primary_key and isinstance(field, models.AutoField))]


def _prepared(values: Sequence[Any], columns: Sequence[Column]) -> list[Any]:
    row = []
    for value, (_name, plain, prepare, _field) in zip(values, columns, strict=True):
        if value is not None and type(value) not in plain:
            value = prepare(value)
        row.append(value)
    return row


def _insert(model: type[Model], rows: list[list[Any]], columns: Sequence[Column],
            connection, *, returning: bool) -> list[Any]:
    """Insert prepared ``rows`` batch by batch; the new keys in order if ``returning``."""
    quote = connection.ops.quote_name
    fields = [column[3] for column in columns]
    # The backend's bound (SQLite: 999 parameters), and never more than BATCH_ROWS rows or
    # PostgreSQL's 65,535 parameters in one statement.
    batch = max(1, min(connection.ops.bulk_batch_size(fields, rows), BATCH_ROWS,
                       MAX_PARAMETERS // len(fields)))
    head = (f"INSERT INTO {quote(model._meta.db_table)} "
            f"({', '.join(quote(field.column) for field in fields)}) VALUES ")
    one = f"({', '.join(['%s'] * len(fields))})"
    tail = f" RETURNING {quote(model._meta.pk.column)}" if returning else ""
    if connection.vendor == "postgresql":
        return _insert_each(connection, head + one + tail, rows, returning=returning)
    keys: list[Any] = []
    with connection.cursor() as cursor:
        for start in range(0, len(rows), batch):
            part = rows[start:start + batch]
            cursor.execute(head + ", ".join([one] * len(part)) + tail,
                           [value for row in part for value in row])
            if returning:
                keys += [found[0] for found in cursor.fetchall()]
    return keys


def _insert_each(connection, sql: str, rows: list[list[Any]], *,
                 returning: bool) -> list[Any]:
    """PostgreSQL: the one-row statement run once per row in psycopg's pipeline
    (``executemany``), whose parsed form psycopg keeps; a statement of many rows it parses
    afresh each time, placeholder by placeholder (that was 9 of 24 s of a 2,000-run
    import).  Errors are Django's, as through any Django cursor."""
    with connection.cursor() as cursor, connection.wrap_database_errors:
        raw = cursor.cursor
        raw.executemany(sql, rows, returning=returning)
        if not returning:
            return []
        keys = []
        while True:
            keys.append(raw.fetchone()[0])
            if not raw.nextset():
                return keys


def _connection(model: type[Model]):
    return connections[router.db_for_write(model)]


def rows_insert(model: type[Model], records: Sequence[Model]) -> None:
    """Insert new ``records`` (no key yet) in their order and give each its key, as
    ``bulk_create`` does: foreign keys taken from related records saved just before,
    ``auto_now`` times set (one time for the rows of one call, as one statement writes
    them), each record marked as saved."""
    if not records:
        return
    connection = _connection(model)
    if not (connection.features.can_return_rows_from_bulk_insert
            and isinstance(model._meta.pk, models.AutoField)):
        model._default_manager.bulk_create(records)
        return
    columns = _columns(model, connection)
    stamped = [field for *_rest, field in columns
               if getattr(field, "auto_now", False) or getattr(field, "auto_now_add", False)]
    now = timezone.now()
    rows = []
    for record in records:
        record._prepare_related_fields_for_save(operation_name="bulk_create")
        for field in stamped:
            if type(field) is models.DateTimeField:
                setattr(record, field.attname, now)
            else:
                field.pre_save(record, add=True)
        rows.append(_prepared([getattr(record, column[0]) for column in columns], columns))
    keys = _insert(model, rows, columns, connection, returning=True)
    for record, key in zip(records, keys, strict=True):
        record.pk = key
        record._state.adding, record._state.db = False, connection.alias


def history_rows_insert(model: type[Model], records: Sequence[Model], *, update: bool,
                        actor) -> None:
    """The history rows django-simple-history writes for ``records`` just inserted (``+``)
    or changed (``~``): each record's values, its ``_history_user`` (else ``actor``) and its
    change reason, at one time for the batch."""
    if not records:
        return
    history = get_history_model_for_model(model)
    connection = _connection(history)
    columns = _columns(history, connection)
    tracked = {field.attname for field in history.tracked_fields}
    now = timezone.now()
    rows = []
    for record in records:
        user = getattr(record, "_history_user", actor)
        values = {"history_date": getattr(record, "_history_date", now),
                  "history_user_id": None if user is None else user.pk,
                  "history_change_reason": get_change_reason_from_object(record),
                  "history_type": "~" if update else "+"}
        if hasattr(history, "history_relation"):
            values["history_relation_id"] = record.pk
        rows.append(_prepared([getattr(record, column[0]) if column[0] in tracked
                               else values[column[0]] for column in columns], columns))
    _insert(history, rows, columns, connection, returning=False)


def rows_update(model: type[Model], records: Sequence[Model]) -> None:
    """Every column but the key of each record's row: one UPDATE statement run with many
    parameter sets.  In place of ``bulk_update``, whose CASE WHEN for each column and row
    cost ~7 ms a row to build (70 of the 75 s of a 10,000-row linker sheet)."""
    if not records:
        return
    connection = _connection(model)
    quote = connection.ops.quote_name
    columns = [column for column in _columns(model, connection) if not column[3].primary_key]
    key = model._meta.pk
    sql = (f"UPDATE {quote(model._meta.db_table)} SET "
           f"{', '.join(f'{quote(column[3].column)} = %s' for column in columns)} "
           f"WHERE {quote(key.column)} = %s")
    params = [_prepared([getattr(record, column[0]) for column in columns], columns)
              + [key.get_db_prep_save(record.pk, connection)] for record in records]
    with connection.cursor() as cursor:
        cursor.executemany(sql, params)
