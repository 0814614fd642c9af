"""Schema hook: every operation documents the one error body for each error it can return."""

from __future__ import annotations

ERROR_REF = {"$ref": "#/components/schemas/ErrorResponse"}
ERROR_STATUSES = {
    "400": "Refused input: each error names the field, a sentence and a stable code.",
    "401": "No valid credentials (token or session).",
    "403": "The user's role does not allow this action.",
    "404": "No such record, or a query value that names nothing.",
}
# Errors only some operations return, by operationId.
ERROR_STATUSES_OF = {
    "token_create": {"429": "Locked out: too many wrong passwords for this user name from "
                            "this address; the message says for how long."},
}
ERROR_SCHEMA = {
    "type": "object",
    "required": ["errors"],
    "properties": {"errors": {"type": "array", "items": {
        "type": "object", "required": ["field", "message", "code"],
        "properties": {
            "field": {"type": "string", "nullable": True,
                      "description": "The request field at fault (dotted path for nested "
                                     "input), or null for the request as a whole."},
            "message": {"type": "string", "description": "A sentence for a person."},
            "code": {"type": "string", "description": "A stable code for a program."},
        }}}},
}


def add_error_responses(result, generator, request, public):
    """Add 400/401/403/404 with ``ErrorResponse`` to every operation that lacks them."""
    result.setdefault("components", {}).setdefault("schemas", {})["ErrorResponse"] = ERROR_SCHEMA
    for path in result.get("paths", {}).values():
        for operation in path.values():
            if not isinstance(operation, dict) or "responses" not in operation:
                continue
            statuses = ERROR_STATUSES | ERROR_STATUSES_OF.get(operation.get("operationId"), {})
            for status, text in statuses.items():
                operation["responses"].setdefault(status, {
                    "description": text, "content": {"application/json": {"schema": ERROR_REF}}})
    return result
