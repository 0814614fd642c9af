"""Model CHECK constraints validated before a save, without one query per constraint.

Django validates a ``CheckConstraint`` by sending ``SELECT 1 WHERE <condition>`` with the
record's values for each constraint of each record (``Q.check``), which costs more than the
insert itself.  Here the constraints made from a kind's ``RANGES`` table are skipped (the
caller has just checked that table in Python, and it is stricter), and a condition built
only from plain comparisons of fields with constants or other fields (``isnull``, ``exact``,
``in``, ``gt``/``gte``/``lt``/``lte``, ``F``) is evaluated in Python with SQL's three-valued
logic (a comparison with NULL is unknown, and a CHECK passes unless its condition is false),
compiled once per constraint into a function of the record.
Any other condition, or a NaN value, goes to the database as before.  The database itself
still enforces every constraint on insert and update.  ``validate_unique`` is Django's, with
the list of unique checks (which depends on the model only) worked out once per model.
"""

from __future__ import annotations

import math
import operator
from collections.abc import Callable
from dataclasses import dataclass
from functools import cache

from django.core.exceptions import FieldDoesNotExist, ValidationError
from django.db import router
from django.db.models import CheckConstraint, F, Model, Q

_COMPARE = {"exact": operator.eq, "gt": operator.gt, "gte": operator.ge, "lt": operator.lt,
            "lte": operator.le}


class _CannotEvaluate(Exception):
    """The condition uses something this evaluator does not know: ask the database."""


_UNWRITTEN = object()  # the value of a foreign key to a parent in hand but not yet written


@cache
def _range_constraint_names(model: type[Model]) -> frozenset[str]:
    """The model's CHECK constraints that say exactly what its ``RANGES`` table says."""
    conditions = [Q(**{f"{name}__isnull": True}) | span.condition(name)
                  for name, span in getattr(model, "RANGES", {}).items()]
    return frozenset(constraint.name for constraint in model._meta.constraints
                     if isinstance(constraint, CheckConstraint)
                     and constraint.condition in conditions)


Reader = Callable[[Model], object]
Evaluator = Callable[[Model], "bool | None"]


def _reader(model: type[Model], name: str) -> Reader:
    """How to read field ``name`` of a record for a condition (worked out once)."""
    try:
        field = model._meta.get_field(name)
    except FieldDoesNotExist:
        raise _CannotEvaluate(name) from None
    if not getattr(field, "concrete", False):
        raise _CannotEvaluate(name)
    attname, parent = field.attname, field.many_to_one

    def read(record: Model):
        value = getattr(record, attname)
        if value is None and parent and field.get_cached_value(record, None) is not None:
            return _UNWRITTEN  # a parent checked in the same step, not written yet: not null
        if isinstance(value, float) and math.isnan(value):
            raise _CannotEvaluate(name)  # NaN orders differently on each database
        return value
    return read


def _compile_lookup(model: type[Model], key: str, rhs) -> Evaluator:
    name, _, lookup = key.partition("__")
    lookup = lookup or "exact"
    read = _reader(model, name)
    if lookup == "exact" and rhs is None:
        lookup, rhs = "isnull", True  # as Django reads field=None
    if lookup == "isnull":
        wanted = bool(rhs)
        return lambda record: (read(record) is None) == wanted
    if isinstance(rhs, F):
        read_other = _reader(model, rhs.name)
    elif hasattr(rhs, "resolve_expression"):
        raise _CannotEvaluate(key)
    else:
        read_other = (lambda constant: lambda _record: constant)(rhs)
    if lookup == "in":
        def within(record: Model) -> bool | None:
            value = read(record)
            if value is _UNWRITTEN:
                raise _CannotEvaluate(key)  # its key is not known yet
            return None if value is None else value in read_other(record)
        return within
    if lookup not in _COMPARE:
        raise _CannotEvaluate(key)
    compare = _COMPARE[lookup]

    def compared(record: Model) -> bool | None:
        value, other = read(record), read_other(record)
        if value is _UNWRITTEN or other is _UNWRITTEN:
            raise _CannotEvaluate(key)  # its key is not known yet
        if value is None or other is None:
            return None  # SQL: a comparison with NULL is unknown
        try:
            return bool(compare(value, other))
        except TypeError:
            raise _CannotEvaluate(key) from None
    return compared


def _compile(model: type[Model], condition: Q) -> Evaluator:
    """The condition as a function giving True, False or None (unknown), as SQL would
    answer it for a row; raises _CannotEvaluate for anything but plain comparisons."""
    parts: list[Evaluator] = []
    for child in condition.children:
        if isinstance(child, Q):
            parts.append(_compile(model, child))
        elif isinstance(child, tuple) and len(child) == 2:
            parts.append(_compile_lookup(model, *child))
        else:
            raise _CannotEvaluate(str(child))
    if condition.connector not in (Q.AND, Q.OR):
        raise _CannotEvaluate(condition.connector)
    decisive = condition.connector == Q.OR  # the answer that settles it: AND False, OR True
    negated = condition.negated

    def evaluate(record: Model) -> bool | None:
        results = [part(record) for part in parts]
        result = decisive if decisive in results else (None if None in results
                                                       else not decisive)
        return result if result is None or not negated else not result
    return evaluate


@dataclass(frozen=True)
class _Plan:
    """What checking one constraint needs, worked out once per constraint."""

    fields: frozenset[str]  # the fields it reads (empty: unknown)
    evaluate: Evaluator | None  # None: the database answers


def _plan(model: type[Model], constraint) -> _Plan:
    evaluate, fields = None, frozenset(getattr(constraint, "fields", ()) or ())
    if isinstance(constraint, CheckConstraint) and isinstance(constraint.condition, Q):
        fields = frozenset(key.split("__")[0] for key in _keys(constraint.condition))
        try:
            evaluate = _compile(model, constraint.condition)
        except _CannotEvaluate:
            evaluate = None
    return _Plan(fields, evaluate)


@cache
def _checks(model: type[Model]) -> tuple[tuple[type[Model], object, _Plan], ...]:
    """Each constraint of the model and its parents (as ``Model.get_constraints``) that is
    checked here (not a ``RANGES`` one): (the model that declares it, the constraint, its
    plan)."""
    declared = [(model, model._meta.constraints)] + [
        (parent, parent._meta.constraints) for parent in model._meta.all_parents]
    return tuple((model_class, constraint, _plan(model_class, constraint))
                 for model_class, constraints in declared for constraint in constraints
                 if constraint.name not in _range_constraint_names(model_class))


def _validate(constraint, plan: _Plan, model: type[Model], record: Model, *,
              exclude: set[str], using: str) -> None:
    if plan.evaluate is not None:
        try:
            passed = plan.evaluate(record) is not False
        except _CannotEvaluate:
            pass
        else:
            if passed or plan.fields & exclude:
                return
            raise ValidationError(constraint.get_violation_error_message(),
                                  code=constraint.violation_error_code)
    constraint.validate(model, record, exclude=exclude, using=using)


def _keys(condition: Q):
    for child in condition.children:
        if isinstance(child, Q):
            yield from _keys(child)
        else:
            yield child[0]
            if isinstance(child[1], F):
                yield child[1].name


def validate_constraints(record: Model, *, exclude: set[str],
                         unchanged: frozenset[str] = frozenset()) -> None:
    """Django's ``Model.validate_constraints``, the same errors, fewer queries (see above).

    ``unchanged``: fields of a changed record that still hold their stored (or just
    checked) values; a constraint that reads only those cannot have become false.
    """
    using = router.db_for_write(type(record), instance=record)
    errors: dict = {}
    for model_class, constraint, plan in _checks(type(record)):
        if plan.fields and plan.fields <= unchanged:
            continue
        try:
            _validate(constraint, plan, model_class, record, exclude=exclude, using=using)
        except ValidationError as error:
            if getattr(error, "code", None) == "unique" and len(constraint.fields) == 1:
                errors.setdefault(constraint.fields[0], []).append(error)
            else:
                errors = error.update_error_dict(errors)
    if errors:
        raise ValidationError(errors)


@cache
def _unique_checks(model: type[Model], exclude: frozenset[str]) -> tuple[list, list]:
    """What ``Model.validate_unique`` checks, which depends on the model and ``exclude``
    only: worked out once, where Django works it out for every record."""
    return model._get_unique_checks(model(), exclude=exclude)


def validate_unique(record: Model, *, exclude: frozenset[str]) -> None:
    """``Model.validate_unique`` with the checks worked out once per model (above)."""
    unique_checks, date_checks = _unique_checks(type(record), exclude)
    errors = record._perform_unique_checks(unique_checks)
    for name, found in record._perform_date_checks(date_checks).items():
        errors.setdefault(name, []).extend(found)
    if errors:
        raise ValidationError(errors)
