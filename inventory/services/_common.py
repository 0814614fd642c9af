"""Helpers every inventory service uses: codes, validation, saving and lineage edges."""

from __future__ import annotations

import copy
import dataclasses
import math
from collections.abc import Callable, Iterable, Sequence
from datetime import date
from functools import cache

from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import NON_FIELD_ERRORS, ValidationError
from django.db.models import IntegerField, Model
from django.utils import timezone

from ..codes import code_next
from ..errors import refusal
from ..integrity import constraints_refusal
from ..lifecycle import check_usable
from ..models import (
    CodedRecord,
    LifecycleRecord,
    LineageEdge,
    ReagentKind,
    ReagentLot,
    StampedRecord,
    Substrate,
)
from ..models.ranges import PastDate
from ..roles import require_role
from ..shelf_life import refresh_expiry
from ._constraints import validate_constraints, validate_unique

User = AbstractBaseUser


def _today() -> date:
    return timezone.localdate()


def _stamp_history(record: StampedRecord, *, actor: User | None, reason: str) -> None:
    """Who and why for the history row this save writes (django-simple-history).

    Set on the instance so pages, API, commands and the demo all record the actor, not
    only requests that pass through the history middleware.
    """
    record._history_user = actor
    record._change_reason = reason or None


def _check_values(model: type[Model], values: dict) -> None:
    """Refuse a number or date outside ``model.RANGES``, naming the field and the range.

    NaN and infinities are outside every range.  A computed figure out of range is refused
    too (its message points at the inputs), so nothing non-finite is ever saved.  Services
    call this on their parameters before any computation, and ``_check_fields`` on every
    record before it is saved.
    """
    ranges = getattr(model, "RANGES", {})
    today = None  # asked only for a date (the time zone's date costs more than the check)
    for name, value in values.items():
        span = ranges.get(name)
        if value is None or span is None:
            continue
        if isinstance(span, PastDate):
            today = today or _today()
            if not span.holds(value, today):
                label = model._meta.get_field(name).verbose_name
                code = "future_date" if value > today else "out_of_range"
                raise refusal(name, f"The {label} {value.isoformat()} is outside the allowed "
                                    f"range: {span.describe(today)}.", code)
        elif not span.holds(value):
            label = model._meta.get_field(name).verbose_name
            if span.computed:
                raise refusal(name, f"The {label} computed from the inputs came out "
                                    f"{float(value):g}, outside {span.describe()}; check the "
                                    "numbers it is computed from.", "computed_out_of_range")
            raise refusal(name, f"The {label} {float(value):g} is outside the allowed range: "
                                f"{span.describe()}.", "out_of_range")


def _check_ranges(record: Model, *, skip: Iterable[str] = ()) -> None:
    """``_check_values`` for every ranged field of ``record`` but those in ``skip``."""
    model = type(record)
    _check_values(model, {name: getattr(record, name) for name in getattr(model, "RANGES", {})
                          if name not in skip})


def _refuse_fractional_integers(record: Model) -> None:
    """A whole-number field given 2.5 (or an infinite number) is refused under its name.

    Django's ``IntegerField.to_python`` is ``int(value)``: it would store 2.5 as 2 without a
    word, and raise OverflowError (a 500) on infinity.  3.0 is a whole number and passes.
    """
    for field in _integer_fields(type(record)):
        value = getattr(record, field.attname, None)
        if isinstance(value, float) and not (math.isfinite(value) and value.is_integer()):
            raise refusal(field.name, f"The {field.verbose_name} must be a whole number "
                                      f"(got {value:g}).", "not_whole_number")


@cache
def _integer_fields(model: type[Model]) -> tuple[IntegerField, ...]:
    return tuple(field for field in model._meta.concrete_fields
                 if isinstance(field, IntegerField))


def _check_fields(record: Model, *, exclude: Sequence[str] = ()) -> None:
    """Every field's own cleaning (text to numbers and dates), then its range; the fields in
    ``exclude`` are checked otherwise (see ``_checked_apart``, ``_unchanged_fields``).

    Before expiry is derived (a date in the year 9999 would overflow it) and before the
    constraints are checked (a constraint checked with NaN on SQLite reads it as NULL).
    """
    _refuse_fractional_integers(record)
    record.clean_fields(exclude=exclude or None)
    _check_ranges(record, skip=exclude)


def _full_clean(record: Model, *, fields_cleaned: bool = False,
                unique_exclude: frozenset[str] = frozenset(),
                unchanged: frozenset[str] = frozenset()) -> None:
    """``full_clean``, with a violated constraint reported under the field it guards.

    The CHECK constraints made from the kind's ``RANGES`` table are checked here in Python
    (``_check_ranges``: the same table, stricter) and simple ones evaluated in Python
    (``_constraints``) instead of by one ``SELECT`` each; the database still enforces all of
    them on insert.  ``fields_cleaned``: the caller ran ``clean_fields`` already
    (``_check_fields``), so it is not run twice; ``unique_exclude``: unique fields the caller
    checks for many records at once (a new code, against the table, by ``codes_taken``);
    ``unchanged``: fields of a changed record that hold their stored or checked values, so
    no unique check or constraint reading only those is asked again.
    """
    if not fields_cleaned:  # else ``_check_fields`` has checked the ranges (expiry has none)
        _refuse_fractional_integers(record)
        _check_ranges(record)
    errors: dict = {}
    steps = [record.clean] if fields_cleaned else [record.clean_fields, record.clean]
    for step in steps:  # Model.full_clean's order, its errors merged the same way
        try:
            step()
        except ValidationError as error:
            errors = error.update_error_dict(errors)
    exclude = {name for name in errors if name != NON_FIELD_ERRORS}
    try:
        validate_unique(record, exclude=frozenset(exclude | unique_exclude | unchanged))
    except ValidationError as error:
        errors = error.update_error_dict(errors)
    try:
        validate_constraints(record, exclude=exclude, unchanged=unchanged)
    except ValidationError as error:
        errors = error.update_error_dict(errors)
    if errors:
        raise constraints_refusal(record, ValidationError(errors)) from None


def _validate(record: Model) -> None:
    """``_check_fields``, then every constraint (``full_clean``): for rows without expiry."""
    _check_fields(record)
    _full_clean(record)


@dataclasses.dataclass(frozen=True)
class CheckingMany:
    """What a caller checking many new records (a sheet import) has read once for all.

    ``rules``: the shelf-life rules (``rules_by_scope``); the inputs' status, expiry and void
    were read under a row lock by the caller; the new codes are checked against the table all
    at once (``codes_taken``) instead of one query per record; the actor's role is asked once
    (``roles_granted``), and the actor, stamped on every record, is not looked up again for
    each (it is the signed-in user; the foreign key still holds it on insert).
    """

    rules: dict = dataclasses.field(default_factory=dict)
    roles_granted: set[str] = dataclasses.field(default_factory=set)
    # What a check reads that no row of the import changes (a lab setting, an input's own
    # parent), read once (``_read_once``).
    read: dict = dataclasses.field(default_factory=dict)


def _read_once(many: CheckingMany | None, key, read: Callable[[], object]):
    """``read()``; for a caller checking many, only the first time ``key`` is asked for."""
    if many is None:
        return read()
    if key not in many.read:
        many.read[key] = read()
    return many.read[key]


STAMP_FIELDS = ("created_by", "updated_by")


def _checked_apart(record: Model, many: CheckingMany | None, *,
                   stored: bool = False) -> tuple[str, ...]:
    """Fields a caller checking many has checked otherwise, which Django's ``clean_fields``
    would look up once per field and record: the stamps, and the foreign keys whose record
    is in hand (read under a lock in this transaction, or checked in the same step and not
    yet written); for a ``stored`` record (read under a lock, being changed, its keys not
    moved), all of them.  The database's foreign keys still hold on every row written.
    """
    if many is None:
        return ()
    return (*STAMP_FIELDS, *(field.name for field in _parent_fields(type(record))
                             if stored or field.get_cached_value(record, None) is not None))


@cache
def _parent_fields(model: type[Model]) -> tuple:  # its foreign keys but the stamps
    return tuple(field for field in model._meta.concrete_fields
                 if field.many_to_one and field.name not in STAMP_FIELDS)


def _require_role(actor: User | None, role: str, *, action: str,
                  many: CheckingMany | None = None) -> None:
    """``require_role``, asked once per role by a caller checking many records."""
    if many is not None and role in many.roles_granted:
        return
    require_role(actor, role, action=action)
    if many is not None:
        many.roles_granted.add(role)


def _unchanged_fields(record: Model, before: Model | None) -> frozenset[str]:
    """The fields of ``record`` that hold ``before``'s value: ``before`` is the same record
    as stored (under its CHECK constraints) or as checked earlier in the same step, so those
    fields need no cleaning again; any other value is checked as ever."""
    if before is None:
        return frozenset()
    now, then = vars(record), vars(before)  # stored values (a file field's name, say)
    return frozenset(field.name for field in record._meta.concrete_fields
                     if field.attname in now and field.attname in then
                     and now[field.attname] == then[field.attname])


def _prepare_new(record: CodedRecord, *, actor: User | None,
                 many: CheckingMany | None = None) -> CodedRecord:
    """Give ``record`` its code and check every field, range and constraint; write nothing.

    The check part of every create: ``_save_new`` saves what it approves, and a sheet import
    checks many records through it and writes them at once (``creation.new_records_insert``).
    """
    record.code = code_next(record.CODE_PREFIX)
    record.created_by = actor
    record.updated_by = actor
    _check_fields(record, exclude=_checked_apart(record, many))
    _expiry_and_constraints(record, many)
    return record


def _prepare_sibling(first: CodedRecord, *, many: CheckingMany | None = None,
                     **changes) -> CodedRecord:
    """A copy of ``first`` with its own code and ``changes``; write nothing.

    ``first`` was checked by ``_prepare_new`` in the same step and is not written yet (the
    first piece cut from a run; the others differ in code and label only).  So only what the
    changed fields can break is checked again: their cleaning and ranges, and the
    constraints and unique checks that read them; the copy's expiry is derived afresh.
    """
    record = copy.copy(first)
    record.code = code_next(record.CODE_PREFIX)
    for name, value in changes.items():
        setattr(record, name, value)
    unchanged = _field_names(type(record)) - {"code", *changes}
    _check_fields(record, exclude=tuple(unchanged))
    _expiry_and_constraints(record, many, unchanged=unchanged)
    return record


def _expiry_and_constraints(record: Model, many: CheckingMany | None, *,
                            unchanged: frozenset[str] = frozenset()) -> None:
    """The rest of every check after the fields: the expiry derived, then ``_full_clean``.

    A caller checking many checks the codes against the table at once (``codes_taken``);
    a change keeps its code."""
    if isinstance(record, LifecycleRecord):
        refresh_expiry(record, None if many is None else many.rules)
    _full_clean(record, fields_cleaned=True,
                unique_exclude=frozenset() if many is None else frozenset({"code"}),
                unchanged=unchanged)


@cache
def _field_names(model: type[Model]) -> frozenset[str]:
    return frozenset(field.name for field in model._meta.concrete_fields)


def _save_new(record: CodedRecord, *, actor: User | None, reason: str = "") -> CodedRecord:
    """Give ``record`` its code, check every field, range and constraint, and insert it."""
    _prepare_new(record, actor=actor)
    _stamp_history(record, actor=actor, reason=reason)
    record.save()
    return record


def _prepare_changed(record: StampedRecord, *, actor: User | None,
                     many: CheckingMany | None = None, before: Model | None = None,
                     changed: Iterable[str] | None = None) -> None:
    """Stamp a changed record with a new version and check it; write nothing.

    The check part of every change: ``_save_changed`` saves what it approves, and a sheet
    import keeps a checked copy in ``NewRecord.changed`` and writes many at once (a change
    written that way moves no foreign key: they are not checked again).  ``before``: the
    record as stored or as last checked, whose unchanged fields are not cleaned again;
    ``changed``: instead, the fields the caller set on a record as stored (a transition
    sets the status alone), so no copy is kept to compare with.
    """
    record.updated_by = actor
    record.version += 1
    unchanged = _unchanged_fields(record, before) if changed is None else (
        _field_names(type(record)) - {*changed, "version", "updated_by"})
    _check_fields(record, exclude=tuple({*_checked_apart(record, many, stored=True),
                                         *unchanged}))
    _expiry_and_constraints(record, many, unchanged=unchanged)


def _save_changed(record: StampedRecord, *, actor: User | None, reason: str = "") -> None:
    """Save a change with a new version; the history row keeps who, when and ``reason``."""
    _prepare_changed(record, actor=actor)
    _stamp_history(record, actor=actor, reason=reason)
    record.save()


def _save_setting(model: type[StampedRecord], *, actor: User | None, scope: dict,
                  values: dict, reason: str) -> StampedRecord:
    """Create or change the one row of a versioned lab setting (a limit, tolerance or rule).

    The row for ``scope`` (the fields naming which setting it is) is read under a lock, so two
    administrators saving at once get versions n+1 and n+2; a change bumps ``version`` and the
    history row keeps who, when, the old values and ``reason``.
    """
    setting = model.objects.select_for_update().filter(**scope).first()
    if setting is None:
        setting = model(**scope, created_by=actor)
    else:
        setting.version += 1
    for name, value in values.items():
        setattr(setting, name, value)
    setting.updated_by = actor
    _validate(setting)
    _stamp_history(setting, actor=actor, reason=reason)
    setting.save()
    return setting


def _lineage_edges(parents: Iterable[tuple[CodedRecord, str]], child: CodedRecord, *,
                   used_on: date | None, actor: User | None) -> list[LineageEdge]:
    """The unsaved edges from each ``(parent, role)`` to ``child`` (one record or many)."""
    return [LineageEdge(parent_code=parent.code, child_code=child.code, role=role,
                        used_on=used_on, created_by=actor) for parent, role in parents]


def _link(parents: Iterable[tuple[CodedRecord, str]], child: CodedRecord, *, used_on: date,
          actor: User | None) -> None:
    LineageEdge.objects.bulk_create(_lineage_edges(parents, child, used_on=used_on,
                                                   actor=actor))


def _require_kind(lot: ReagentLot, kinds: Sequence[str], *, field: str) -> None:
    if lot.kind not in kinds:
        wanted = " or ".join(ReagentKind(k).label.lower() for k in kinds)
        raise refusal(field, f"{lot.code} is a {lot.get_kind_display().lower()} lot, "
                                      f"not {wanted}.", "wrong_reagent_kind")


def _require_not_future(day: date, *, field: str) -> None:
    if day > _today():
        raise refusal(field, f"{day.isoformat()} is in the future.", "future_date")


def _check_substrates_usable(substrates: Sequence[Substrate], *, role: str, on_date: date,
                             field: str = "substrates", date_field: str = "made_on",
                             state_read: bool = False) -> None:
    """Each substrate named once, usable on ``on_date`` and made by then; ``date_field`` is
    the name of the caller's date parameter (``measured_on``, ``acquired_on``), which a
    refusal names; ``state_read`` as for ``check_usable`` (a sheet import read them)."""
    if not substrates:
        raise refusal(field, "Choose at least one substrate.", "required")
    seen: set[str] = set()
    for substrate in substrates:
        if substrate.code in seen:  # a second lineage edge would break its unique constraint
            raise refusal(field, f"{substrate.code} is named twice.", "duplicate")
        seen.add(substrate.code)
        check_usable(substrate, role=role, on_date=on_date, field=field,
                     state_read=state_read)
        if on_date < substrate.made_on:
            raise refusal(date_field, f"{substrate.code} was made on "
                                      f"{substrate.made_on.isoformat()}, after this step.",
                          "date_order")
