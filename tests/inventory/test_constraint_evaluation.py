"""The Python evaluation of CHECK constraints answers as the database does.

``inventory.services._constraints`` evaluates simple constraint conditions in Python instead
of asking the database one ``SELECT`` per constraint.  For every CHECK constraint of every
installed model, sampled values (NULL, negatives, zero, boundaries, equal and unequal pairs
of fields) are judged both ways: Django's own ``Q.check`` (the database, the reference) and
the evaluator must agree whenever the evaluator answers at all.
"""

from __future__ import annotations

import itertools
import random
from datetime import date

import pytest
from django.apps import apps
from django.db import models
from django.db.models import CheckConstraint, Q

from inventory.services import _constraints

SAMPLES = {
    models.FloatField: [None, -1.0, 0.0, 0.5, 100.0, 1e9],
    models.IntegerField: [None, -1, 0, 1, 100],
    models.DateField: [None, date(1899, 12, 31), date(1900, 1, 1), date(2026, 1, 1),
                       date(2026, 2, 1)],
    models.CharField: [None, "", "open", "done", "reviewed", "reagentlot", "passed"],
    models.TextField: [None, "", "why"],
    models.BooleanField: [None, True, False],
    models.DateTimeField: [None],
}


def _samples(field):
    if field.is_relation:
        return [None, 1]
    for kind, values in SAMPLES.items():
        if isinstance(field, kind):
            return values
    return [None]


def _check_constraints():
    for model in apps.get_models():
        if model._meta.app_label not in ("inventory", "qc", "exchange"):
            continue
        for constraint in model._meta.constraints:
            if isinstance(constraint, CheckConstraint) and isinstance(constraint.condition, Q):
                yield pytest.param(model, constraint, id=constraint.name)


@pytest.mark.django_db
@pytest.mark.parametrize(("model", "constraint"), list(_check_constraints()))
def test_python_evaluation_agrees_with_the_database(model, constraint):
    fields = [model._meta.get_field(name) for name in dict.fromkeys(
        key.split("__")[0] for key in _constraints._keys(constraint.condition))]
    combinations = list(itertools.product(*(_samples(field) for field in fields)))
    random.Random(constraint.name).shuffle(combinations)
    evaluate = _constraints._compile(model, constraint.condition)
    answered = 0
    for values in combinations[:40]:
        record = model()
        for field, value in zip(fields, values, strict=True):
            setattr(record, field.attname, value)
        try:
            ours = evaluate(record) is not False
        except _constraints._CannotEvaluate:
            continue
        against = record._get_field_expression_map(meta=model._meta)
        assert ours == Q(constraint.condition).check(against), (constraint.name, values)
        answered += 1
    assert answered  # the project's own constraints are all plain comparisons
