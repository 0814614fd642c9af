"""One home per rule (issue 19): a violated CHECK constraint is reported under the same field
whichever path finds it — the services (``full_clean`` through
``inventory.integrity.constraints_refusal``), the database (an ``IntegrityError`` through
``integrity_refusal``) and the API (a refusal that reaches ``inventory.api.errors``)."""

from __future__ import annotations

import pytest
from django.apps import apps
from django.core.exceptions import NON_FIELD_ERRORS, ValidationError
from django.db import IntegrityError, models

from inventory.api.errors import exception_handler
from inventory.integrity import constraints_refusal, integrity_refusal

CHECKS = [(model, constraint) for model in apps.get_models()
          for constraint in model._meta.constraints
          if isinstance(constraint, models.CheckConstraint)]


def _field(error: ValidationError) -> str:
    [field] = error.message_dict
    return field


def test_the_project_has_check_constraints_to_compare():
    assert len(CHECKS) > 50  # every range table becomes CHECK constraints (ranges.py)


@pytest.mark.parametrize(("model", "constraint"), CHECKS,
                         ids=[constraint.name for _, constraint in CHECKS])
def test_services_database_and_api_name_the_same_field(model, constraint):
    # Django's own sentence for a violated constraint, as full_clean raises it.
    broken = constraint.get_violation_error_message()
    service = _field(constraints_refusal(model(), ValidationError({NON_FIELD_ERRORS: [broken]})))
    # SQLite's wording of the same violation in the database.
    database = _field(integrity_refusal(
        IntegrityError(f"CHECK constraint failed: {constraint.name}")))
    api = exception_handler(ValidationError(broken), {}).data["errors"]
    assert service != NON_FIELD_ERRORS, "the service refusal names no field"
    assert [error["field"] for error in api] == [service]
    assert database == service
    assert api[0]["code"] == "constraint"
