"""Human-readable record codes (``SUB-00042``) and finding a record from its code.

Codes are handed out from a counter row that is incremented with an UPDATE inside the
caller's transaction: PostgreSQL holds that row lock until commit and SQLite serialises
writers, so two requests creating records at the same moment never get the same number.
The unique constraint on ``code`` is the backstop.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass
from functools import lru_cache

from django.apps import apps
from django.db import transaction
from django.db.models import F
from django.db.models.functions import Length

from .models import CodeCounter, CodedRecord


class RecordNotFound(LookupError):
    """No record has this code."""

    def __init__(self, code: str):
        self.code = code
        super().__init__(f"No record has the ID '{code}'.")


@dataclass
class _Block:
    next_value: int  # the next number to hand out
    last_reserved: int  # the counter's value after the reservation


_blocks: ContextVar[dict[str, _Block] | None] = ContextVar("code_blocks", default=None)


def _reserve(prefix: str, count: int) -> int:
    """Move the counter on by ``count`` and return its new value (the last number reserved)."""
    with transaction.atomic():
        CodeCounter.objects.get_or_create(prefix=prefix)
        CodeCounter.objects.filter(prefix=prefix).update(last_value=F("last_value") + count)
        return CodeCounter.objects.filter(prefix=prefix).values_list("last_value",
                                                                      flat=True).get()


def code_next(prefix: str) -> str:
    """Reserve and return the next code for ``prefix`` (call inside the creating transaction)."""
    blocks = _blocks.get()
    if blocks is None:
        value = _reserve(prefix, 1)
    else:
        block = blocks.get(prefix)
        if block is None or block.next_value > block.last_reserved:
            last = _reserve(prefix, CODE_BLOCK_SIZE)
            block = blocks[prefix] = _Block(last - CODE_BLOCK_SIZE + 1, last)
        value = block.next_value
        block.next_value += 1
    return f"{prefix}-{value:05d}"


CODE_BLOCK_SIZE = 500


@contextmanager
def codes_in_blocks() -> Iterator[None]:
    """Within this block ``code_next`` reserves numbers 500 at a time (one counter update).

    For writes of many records in one transaction (a sheet import).  The counter row stays
    locked by that transaction as before; on leaving, each counter is set back to the last
    number handed out, so the codes have no gap.  Enter it inside the transaction.
    """
    if _blocks.get() is not None:
        yield
        return
    token = _blocks.set({})
    try:
        yield
        if transaction.get_rollback():
            return  # the numbers go back with the transaction
        for prefix, block in (_blocks.get() or {}).items():
            CodeCounter.objects.filter(prefix=prefix).update(last_value=block.next_value - 1)
    finally:
        _blocks.reset(token)


@lru_cache(maxsize=1)
def coded_models() -> dict[str, type[CodedRecord]]:
    """Every concrete model with a ``CODE_PREFIX``, by prefix (any installed app)."""
    found: dict[str, type[CodedRecord]] = {}
    for model in apps.get_models():
        prefix = getattr(model, "CODE_PREFIX", "")
        if prefix and issubclass(model, CodedRecord):
            if prefix in found:
                raise RuntimeError(f"Code prefix {prefix} is used by two models.")
            found[prefix] = model
    return found


def code_sort_key(code: str) -> tuple[str, int, str]:
    """Sort codes by prefix, then by number: SUB-99999 before SUB-100000.

    Codes are zero-padded to five digits, so text order breaks once a counter passes
    99,999; this key (and ``CODE_ORDER`` in queries) keeps the numeric order.
    """
    prefix, _, number = code.partition("-")
    return (prefix, int(number) if number.isdigit() else -1, code)


# ORDER BY for one record kind: a longer number is a larger one, then text order.
CODE_ORDER = (Length("code"), "code")


def prefix_of(code: str) -> str:
    return code.split("-", 1)[0].upper()


def model_for_code(code: str) -> type[CodedRecord]:
    model = coded_models().get(prefix_of(code))
    if model is None:
        raise RecordNotFound(code)
    return model


def record_get(code: str) -> CodedRecord:
    """The record with ``code`` (case-insensitive), or :class:`RecordNotFound`."""
    normalised = code.strip().upper()
    model = model_for_code(normalised)
    try:
        return model.objects.get(code=normalised)
    except model.DoesNotExist:
        raise RecordNotFound(normalised) from None


def records_by_code(codes: Iterable[str], *,
                    fields: Iterable[str] | None = None) -> dict[str, CodedRecord]:
    """Fetch many records with one query per record kind, however many codes.

    ``fields`` limits the columns loaded to those of each kind that has them (plus the code
    and primary key); another field read later costs a query of its own.
    """
    by_prefix: dict[str, list[str]] = defaultdict(list)
    for code in set(codes):
        by_prefix[prefix_of(code)].append(code)
    found: dict[str, CodedRecord] = {}
    models = coded_models()
    for prefix, group in by_prefix.items():
        model = models.get(prefix)
        if model is None:
            continue
        rows = model.objects.filter(code__in=group)
        if fields is not None:
            present = {f.name for f in model._meta.concrete_fields}
            rows = rows.only("code", *(name for name in fields if name in present))
        for record in rows:
            found[record.code] = record
    return found
