"""The OpenAPI schema: valid OpenAPI 3, every quantity documented with its unit, one error body."""

from __future__ import annotations

import pytest
from drf_spectacular.generators import SchemaGenerator
from drf_spectacular.validation import validate_schema


@pytest.fixture(scope="module")
def schema():
    return SchemaGenerator().get_schema(request=None, public=True)


def _properties(schema):
    for name, component in schema["components"]["schemas"].items():
        for field, spec in component.get("properties", {}).items():
            yield name, field, spec


def test_schema_is_valid_openapi_3(schema):
    validate_schema(schema)  # drf-spectacular's bundled OpenAPI 3 JSON Schema
    assert schema["openapi"].startswith("3.")


def test_every_number_says_its_unit(schema):
    numbers = [(name, field, spec) for name, field, spec in _properties(schema)
               if spec.get("type") in ("number", "integer")
               or spec.get("items", {}).get("type") in ("number", "integer")]
    assert len(numbers) > 150
    missing = [f"{name}.{field}" for name, field, spec in numbers
               if "Unit:" not in spec.get("description", "")]
    assert not missing, missing


def test_every_operation_documents_the_error_body(schema):
    for path, methods in schema["paths"].items():
        for method, operation in methods.items():
            for status in ("400", "401", "403", "404"):
                body = operation["responses"][status]["content"]["application/json"]["schema"]
                assert body == {"$ref": "#/components/schemas/ErrorResponse"}, (path, method)


def test_the_benchmarked_paths_are_kept(schema):
    assert {"/api/v1/substrates/", "/api/v1/substrates/{code}/",
            "/api/v1/substrates/{code}/readiness/", "/api/v1/records/{code}/lineage/",
            "/api/v1/expiring/", "/api/v1/flags/", "/api/v1/token/"} <= set(schema["paths"])


def _write_serializers():
    from inventory.api.serializers import ServiceSerializer

    seen, todo = [], [ServiceSerializer]
    while todo:
        for sub in todo.pop().__subclasses__():
            todo.append(sub)
            if sub.ranges_model is not None:
                seen.append(sub)
    return seen


def test_the_schema_declares_the_ranges_the_database_enforces(schema):
    """Issue 16 item 8: each write body's numeric bounds are the kind's range table's.

    The table (``inventory.models.ranges``, RANGES per kind) also makes the CHECK
    constraints, so equal bounds mean the schema says what the database enforces; an open
    lower end is ``exclusiveMinimum: true`` (OpenAPI 3.0.3, Schema Object).
    """
    from inventory.models.ranges import Span

    components = schema["components"]["schemas"]
    checked = []
    for serializer in _write_serializers():
        name = serializer.__name__ + "Request"
        if name not in components:
            continue  # an abstract base, or a body that is never sent alone
        properties = components[name]["properties"]
        for field, span in serializer.ranges_model.RANGES.items():
            if not isinstance(span, Span) or field not in properties:
                continue
            spec = properties[field]
            bounds = (spec.get("minimum"), spec.get("maximum"),
                      spec.get("exclusiveMinimum", False))
            assert bounds == (span.low, span.high, span.above), (name, field, spec)
            checked.append((name, field))
    assert len(checked) >= 30, checked
    assert ("QcImportRequest", "accumulations") in checked
    assert components["QcImportRequest"]["properties"]["accumulations"]["maximum"] == 10_000
