"""Electronic signatures for release and reject (DESIGN §7, in the spirit of 21 CFR Part 11).

The contract shared by pages, API and services: a caller that releases or rejects a record
passes a ``SignatureIntent`` — the password the signer re-entered and the meaning chosen.
The service verifies the password, refuses self-release unless the lab allows it, and stores
an immutable signature (name, time, meaning, record code and content digest).
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass
from datetime import date, datetime
from decimal import Decimal
from typing import Any
from uuid import UUID

REVIEWED = "reviewed"
APPROVED = "approved"
REJECTED = "rejected"
MEANINGS: tuple[str, ...] = (REVIEWED, APPROVED, REJECTED)


@dataclass(frozen=True)
class SignatureIntent:
    """What the signer typed: their password again, and what the signature means."""

    password: str
    meaning: str

    def __repr__(self) -> str:  # never echo a password into a log or traceback
        return f"SignatureIntent(meaning={self.meaning!r})"


# Which meanings each signed action accepts (the signer chooses one).
RELEASE_MEANINGS: tuple[str, ...] = (APPROVED, REVIEWED)
REJECT_MEANINGS: tuple[str, ...] = (REJECTED,)

# Bookkeeping that changes with every save or is derived elsewhere: not part of what a
# signer vouches for.  Status is excluded because the signature itself changes it.
NOT_SIGNED_FIELDS = frozenset({"id", "updated_at", "updated_by", "version", "status",
                               "expires_on"})


def _plain(value: Any) -> Any:
    """A JSON-ready, stable form of a field value."""
    if isinstance(value, (datetime, date)):
        return value.isoformat()
    if isinstance(value, (Decimal, UUID)):
        return str(value)
    if hasattr(value, "name") and hasattr(value, "storage"):  # a stored file
        return value.name or ""
    return value


def _related_label(obj) -> Any:
    if obj is None:
        return None
    code = getattr(obj, "code", None)
    if code:
        return code
    username = getattr(obj, "get_username", None)
    return username() if username else obj.pk


def record_content(record) -> dict[str, Any]:
    """The record's fields as signed: related records by code, people by username."""
    content: dict[str, Any] = {"model": record._meta.label}
    for field in record._meta.concrete_fields:
        if field.name in NOT_SIGNED_FIELDS:
            continue
        if field.is_relation:
            content[field.name] = _related_label(getattr(record, field.name))
        else:
            content[field.name] = _plain(field.value_from_object(record))
    for field in record._meta.many_to_many:
        content[field.name] = sorted(str(_related_label(obj))
                                     for obj in getattr(record, field.name).all())
    return content


def canonical_json(content: dict[str, Any]) -> str:
    """Sorted keys, no whitespace, UTF-8 kept: the same content always gives the same text."""
    return json.dumps(content, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      default=str)


def record_content_digest(record) -> tuple[str, str]:
    """``(canonical JSON, SHA-256 hex digest)`` of what a signature on ``record`` covers."""
    text = canonical_json(record_content(record))
    return text, hashlib.sha256(text.encode("utf-8")).hexdigest()


def signature_matches_record(signature, record) -> bool:
    """True while ``record`` still holds exactly the content ``signature`` was made over."""
    return record_content_digest(record)[1] == signature.content_sha256
