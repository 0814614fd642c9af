"""What the rows of one sheet import share: the actor, the source, the keys seen so far, and,
on the bulk path, what is read once for all rows and the checked records not yet written.

The bulk path (``import_sheet(bulk=True)``, for kinds with a ``prepare``) checks each new
row through its service's check part and keeps the approved records here; they are written
all at once at the end (``flush``), or earlier when a later row names one of them as its
parent or names a stored record that a checked row changes (a template it consumes, a
substrate whose stage it moves), so that row meets it in the database exactly as on the
per-row path.
"""

from __future__ import annotations

from collections.abc import Callable

from django.db import IntegrityError

from inventory.codes import RecordNotFound, model_for_code, record_get
from inventory.services import CheckingMany, NewRecord, codes_taken, new_records_insert
from inventory.shelf_life import rules_by_scope

from .cells import CellError
from .kinds import KINDS, Kind
from .models import SheetKey

REF_SEPARATORS = (";", ",", "\n")


class BulkFallback(Exception):
    """The bulk path met what only the per-row path reports row by row (a code a stored
    record holds, a constraint the checks did not foresee): run the sheet per row instead."""


def ref_texts(value) -> list[str]:
    """The keys or codes in one cell of a ``refs`` column ("A; B", "A, B", one per line)."""
    text = str(value).strip()
    for separator in REF_SEPARATORS[1:]:
        text = text.replace(separator, REF_SEPARATORS[0])
    return [part.strip() for part in text.split(REF_SEPARATORS[0]) if part.strip()]


class ImportContext:
    """What rows share during one run: the actor, the source, and the keys already seen."""

    def __init__(self, kind: Kind, actor, *, file_name: str, sha256: str, bulk: bool = False):
        self.kind, self.actor = kind, actor
        self.file_name, self.sha256 = file_name, sha256
        self.source = ""
        self.new_keys: dict[tuple[str, str], str] = {}  # (kind, key) -> code, this file
        self.rows_by_key: dict[str, int] = {}
        self.rows_by_lot: dict[tuple, int] = {}
        self._saved_keys: dict[str, dict[str, str]] = {}
        self._read_once: dict[str, object] = {}
        self._lot_numbers: dict[tuple, str] | None = None
        # The bulk path: rules and named records read once; records checked, not yet written.
        self.bulk = bulk and kind.prepare is not None
        self.many = CheckingMany(rules=rules_by_scope()) if self.bulk else None
        self._records: dict[str, object] = {}  # code -> record (None: no such record)
        self.pending: list[NewRecord] = []
        self._pending_codes: set[str] = set()  # new records checked, not written
        self._changed_codes: set[str] = set()  # stored records they change

    def lot_numbers(self) -> dict[tuple, str]:
        """(supplier, supplier lot) -> code of the kind's lots, read once per run."""
        if self._lot_numbers is None:
            fields = self.kind.lot_number
            self._lot_numbers = {tuple(row[:-1]): row[-1] for row in
                                 self.kind.model.objects.values_list(*fields, "code")}
        return self._lot_numbers

    def read_once(self, name: str, read: Callable[[], object]):
        """What ``read()`` returns, read at the first row that asks and kept for this run
        (a lab setting every row applies); the next import reads it afresh."""
        if name not in self._read_once:
            self._read_once[name] = read()
        return self._read_once[name]

    def remember(self, key: str, record, values: dict) -> None:
        code = getattr(record, "code", None)
        if key and code:
            self.new_keys[(self.kind.name, key)] = code
        if code and self.kind.lot_number and self._lot_numbers is not None:
            self._lot_numbers[tuple(values.get(n) or "" for n in self.kind.lot_number)] = code

    def code_for(self, kind_name: str, key: str) -> str | None:
        """The record a lab's key or code stands for: this file, earlier imports, our codes."""
        key = key.strip()
        if (kind_name, key) in self.new_keys:
            return self.new_keys[(kind_name, key)]
        if kind_name not in self._saved_keys:
            self._saved_keys[kind_name] = dict(
                SheetKey.objects.filter(kind=kind_name).values_list("key", "record_code"))
        return self._saved_keys[kind_name].get(key)

    def resolve(self, kind_name: str, key: str):
        model = KINDS[kind_name].model
        code = (self.code_for(kind_name, key) or key.strip()).upper()
        if code in self._pending_codes or code in self._changed_codes:
            self.flush()  # a row names a record checked (or changed) above it: write it first
        record = self._records[code] if code in self._records else _record_or_none(code)
        if not isinstance(record, model):
            raise CellError(f"no {model._meta.verbose_name} '{key}' in this file "
                            "(above this row) or in the database", "parent_missing")
        return record

    def forget(self, code: str) -> None:
        """A record a row changed: read it afresh if another row names it."""
        self._records.pop(code, None)

    def preload(self, rows, plans) -> None:
        """Read every record the sheet names (parents, and codes in the ID column) in one
        query per kind, under a row lock, as ``check_usable`` reads each input."""
        codes: set[str] = set()
        for plan in plans:
            column = plan.column
            if column.type not in ("ref", "refs") and column.field != "code":
                continue
            kind_name = column.ref or self.kind.name
            for row in rows:
                value = row.cells[plan.index] if plan.index < len(row.cells) else None
                if value is None or not str(value).strip():
                    continue
                keys = ref_texts(value) if column.type == "refs" else [str(value)]
                codes.update((self.code_for(kind_name, key) or key.strip()).upper()
                             for key in keys)
        by_model: dict[type, list[str]] = {}
        for code in codes:
            try:
                by_model.setdefault(model_for_code(code), []).append(code)
            except RecordNotFound:
                self._records[code] = None
        for model, group in by_model.items():
            found = {record.code: record for record in
                     model.objects.select_for_update().filter(code__in=group)}
            self._records.update({code: found.get(code) for code in group})

    def add(self, new: NewRecord) -> None:
        self.pending.append(new)
        code = getattr(new.record, "code", None)  # a record without a code is named by none
        if code:
            self._pending_codes.add(code)
        self._changed_codes.update(_changed_codes(new))

    def finish(self, *, write: bool) -> None:
        """At the end of the rows: write what is checked (``write``: an import in which no
        row failed; a dry run checks without writing); either way a new code a stored record
        holds sends the sheet down the per-row path."""
        if not write and codes_taken(self.pending):
            raise BulkFallback("a new code is taken")
        if write:
            self.flush()

    def flush(self) -> None:
        """Write the checked records (with history, links, lineage); a clash means the
        per-row path must answer (BulkFallback)."""
        if not self.pending:
            return
        if codes_taken(self.pending):
            raise BulkFallback("a new code is taken")
        try:
            new_records_insert(self.pending, actor=self.actor)
        except IntegrityError as error:
            raise BulkFallback(str(error)) from error
        for code in self._pending_codes | self._changed_codes:
            self._records.pop(code, None)  # read afresh (as written) if a later row names it
        self.pending, self._pending_codes, self._changed_codes = [], set(), set()


def _changed_codes(new: NewRecord) -> set[str]:
    codes = {getattr(record, "code", "") for record, _reason in new.changed}
    for follower in new.after:
        codes |= _changed_codes(follower)
    return codes - {""}


def _record_or_none(code: str):
    try:
        return record_get(code)
    except RecordNotFound:
        return None
