"""Put a spreadsheet row's source (file, SHA-256, row) into the history rows it writes.

Services take no history reason from their callers, so while an import applies a row the
reason of every history row written (the record made, a consumed template, a piece whose
stage changed) is prefixed with the source.  A context variable scopes it to that row;
outside an import the receiver does nothing.  django-simple-history sends
``pre_create_historical_record`` before it saves each history row; its bulk insert sends
none, so the bulk path of an import puts ``with_source`` into each record's reason itself.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar

from django.dispatch import receiver
from simple_history.signals import pre_create_historical_record

_current_source: ContextVar[str | None] = ContextVar("exchange_sheet_source", default=None)


def source_text(*, file_name: str, sha256: str, row: int) -> str:
    return f"imported from {file_name} (SHA-256 {sha256}), row {row}"


def with_source(text: str, reason: str | None) -> str:
    """A history reason with the row's source in front (the reason the service gave, if any)."""
    return f"{text}: {reason}" if reason else text


@contextmanager
def sheet_source(text: str) -> Iterator[None]:
    token = _current_source.set(text)
    try:
        yield
    finally:
        _current_source.reset(token)


@receiver(pre_create_historical_record, dispatch_uid="exchange-sheet-source")
def _stamp_source(sender, history_instance, **kwargs) -> None:
    text = _current_source.get()
    if text is None:
        return
    history_instance.history_change_reason = with_source(
        text, history_instance.history_change_reason)
