"""Model CHECK constraints validated before a save, without one query per constraint.

Django validates a ``CheckConstraint`` by sending ``SELECT 1 WHERE <condition>`` with the
record's values for each constraint of each record (``Q.check``), which costs more than the
insert itself.  Here the constraints made from a kind's ``RANGES`` table are skipped (the
caller has just checked that table in Python, and it is stricter), and a condition built
only from plain comparisons of fields with constants or other fields (``isnull``, ``exact``,
``in``, ``gt``/``gte``/``lt``/``lte``, ``F``) is evaluated in Python with SQL's three-valued
logic (a comparison with NULL is unknown, and a CHECK passes unless its condition is false).
Any other condition, or a NaN value, goes to the database as before.  The database itself
still enforces every constraint on insert and update.
"""

from __future__ import annotations

import math
import operator
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


def _value(record: Model, name: str):
    try:
        field = record._meta.get_field(name)
    except FieldDoesNotExist:
        raise _CannotEvaluate(name) from None
    if not getattr(field, "concrete", False):
        raise _CannotEvaluate(name)
    value = getattr(record, field.attname)
    if value is None and field.many_to_one and field.get_cached_value(record, None) is not None:
        return _UNWRITTEN  # a parent checked in the same step, not written yet: not null
    if isinstance(value, float) and math.isnan(value):
        raise _CannotEvaluate(name)  # NaN orders differently on each database
    return value


def _lookup(record: Model, key: str, rhs) -> bool | None:
    name, _, lookup = key.partition("__")
    lookup = lookup or "exact"
    value = _value(record, name)
    if lookup == "exact" and rhs is None:
        lookup, rhs = "isnull", True  # as Django reads field=None
    if lookup == "isnull":
        return (value is None) == bool(rhs)
    if value is _UNWRITTEN:
        raise _CannotEvaluate(key)  # its key is not known yet
    if isinstance(rhs, F):
        rhs = _value(record, rhs.name)
    elif hasattr(rhs, "resolve_expression"):
        raise _CannotEvaluate(key)
    if lookup == "in":
        return None if value is None else value in rhs
    if lookup not in _COMPARE:
        raise _CannotEvaluate(key)
    if value is None or rhs is None:
        return None  # SQL: a comparison with NULL is unknown
    try:
        return bool(_COMPARE[lookup](value, rhs))
    except TypeError:
        raise _CannotEvaluate(key) from None


def _evaluate(record: Model, condition: Q) -> bool | None:
    """True, False or None (unknown), as SQL would answer the condition for this row."""
    results = []
    for child in condition.children:
        if isinstance(child, Q):
            results.append(_evaluate(record, child))
        elif isinstance(child, tuple) and len(child) == 2:
            results.append(_lookup(record, *child))
        else:
            raise _CannotEvaluate(str(child))
    if condition.connector == Q.AND:
        result = False if False in results else (None if None in results else True)
    elif condition.connector == Q.OR:
        result = True if True in results else (None if None in results else False)
    else:
        raise _CannotEvaluate(condition.connector)
    if condition.negated:
        result = None if result is None else not result
    return result


def _validate(constraint, model: type[Model], record: Model, *, exclude: set[str],
              using: str) -> None:
    if isinstance(constraint, CheckConstraint) and isinstance(constraint.condition, Q):
        try:
            passed = _evaluate(record, constraint.condition) is not False
        except _CannotEvaluate:
            pass
        else:
            referenced = {key.split("__")[0] for key in _keys(constraint.condition)}
            if passed or referenced & exclude:
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


def validate_constraints(record: Model, *, exclude: set[str]) -> None:
    """Django's ``Model.validate_constraints``, the same errors, fewer queries (see above)."""
    using = router.db_for_write(type(record), instance=record)
    errors: dict = {}
    for model_class, constraints in record.get_constraints():
        ranged = _range_constraint_names(model_class)
        for constraint in constraints:
            if constraint.name in ranged:
                continue
            try:
                _validate(constraint, model_class, record, exclude=exclude, using=using)
            except ValidationError as error:
                if getattr(error, "code", None) == "unique" and len(constraint.fields) == 1:
                    errors.setdefault(constraint.fields[0], []).append(error)
                else:
                    errors = error.update_error_dict(errors)
    if errors:
        raise ValidationError(errors)
