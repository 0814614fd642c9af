"""The API's JSON parser: DRF's, refusing in the one error shape what would otherwise fail
deep inside (a server error) or be stored and break later.

- Nesting deeper than MAX_DEPTH: no endpoint takes more than a few levels, and Python's
  decoder raises RecursionError (a 500) at about a thousand.
- A NUL character in any string: PostgreSQL cannot store it in text, so the save would fail
  with a server error (and SQLite would keep it); refused naming the field's dotted path.
"""

from __future__ import annotations

from rest_framework import exceptions, parsers
from rest_framework.exceptions import ErrorDetail

MAX_DEPTH = 32


def _nul_fields(data) -> list[str | None]:
    """Dotted paths of strings (values or keys) holding NUL; refuses nesting past MAX_DEPTH.
    Iterative, so the walk itself cannot hit the recursion limit."""
    found: list[str | None] = []
    stack: list[tuple[str | None, object, int]] = [(None, data, 0)]
    while stack:
        path, value, depth = stack.pop()
        if depth > MAX_DEPTH:
            raise exceptions.ParseError(f"JSON nested deeper than {MAX_DEPTH} levels.")
        if isinstance(value, str) and "\x00" in value:
            found.append(path)
        elif isinstance(value, (dict, list)):
            items = value.items() if isinstance(value, dict) else enumerate(value)
            for key, item in items:
                child = str(key).replace("\x00", "") if path is None else f"{path}.{key}"
                if "\x00" in str(key):
                    found.append(path or child)
                stack.append((child, item, depth + 1))
    return found


class JsonParser(parsers.JSONParser):
    def parse(self, stream, media_type=None, parser_context=None):
        try:
            data = super().parse(stream, media_type, parser_context)
        except RecursionError:
            raise exceptions.ParseError(f"JSON nested deeper than {MAX_DEPTH} levels.") \
                from None
        fields = _nul_fields(data)
        if fields:
            raise exceptions.ValidationError({
                field: [ErrorDetail("Contains a NUL character (\\u0000), which text cannot "
                                    "hold; remove it.", code="null_character")]
                for field in sorted(set(fields), key=str)})
        return data
