"""Expiry derived from a record's dates and the lab's shelf-life rules.

A rule names the date it counts from.  When a record lacks that date (a bottle not yet
opened under a "from opening" rule) the rule gives no expiry yet; the expiry appears when
the date is recorded.
"""

from __future__ import annotations

from collections.abc import Iterable
from datetime import date, timedelta

from .errors import refusal
from .models import LifecycleRecord, ReagentLot, RecordKind, ShelfLifeRule

DATE_FIELD_FOR = {
    ShelfLifeRule.CountedFrom.MADE: "made_on",
    ShelfLifeRule.CountedFrom.RECEIVED: "received_on",
    ShelfLifeRule.CountedFrom.OPENED: "opened_on",
    ShelfLifeRule.CountedFrom.PREPARED: "prepared_on",
}


def record_kind_of(record_or_model) -> str:
    """The RecordKind value of a record or model class (its lower-case model name)."""
    return record_or_model._meta.model_name


def rules_by_scope(
    rules: Iterable[ShelfLifeRule] | None = None,
) -> dict[tuple[str, str], ShelfLifeRule]:
    """All rules keyed by (record_kind, reagent_kind); one query when not given."""
    rules = ShelfLifeRule.objects.all() if rules is None else rules
    return {(rule.record_kind, rule.reagent_kind): rule for rule in rules}


def rule_for(record, rules: dict[tuple[str, str], ShelfLifeRule]) -> ShelfLifeRule | None:
    """The most specific rule for ``record``: per reagent kind first, then per record kind."""
    kind = record_kind_of(record)
    if isinstance(record, ReagentLot):
        specific = rules.get((kind, record.kind))
        if specific is not None:
            return specific
    return rules.get((kind, ""))


def expiry_from_rule(record, rule: ShelfLifeRule | None) -> date | None:
    """Start date named by the rule plus its shelf life, or None without rule or date."""
    if rule is None:
        return None
    start = getattr(record, DATE_FIELD_FOR[rule.counted_from], None)
    if start is None:
        return None
    return start + timedelta(days=rule.shelf_life_days)


def validate_rule_date(record_kind: str, counted_from: str) -> None:
    """Refuse a rule that counts from a date this kind of record does not have."""
    from django.apps import apps

    model = apps.get_model("inventory", record_kind)
    field_name = DATE_FIELD_FOR.get(counted_from)
    field_names = {field.name for field in model._meta.get_fields()}
    if field_name not in field_names:
        raise refusal(
            "counted_from",
            f"A {model._meta.verbose_name} has no '{counted_from}' date.",
            "no_such_date",
        )


def refresh_expiry(record: LifecycleRecord, rules: dict | None = None) -> date | None:
    """Set ``record.expires_on`` from the rules (not saved; the caller saves)."""
    rules = rules_by_scope() if rules is None else rules
    record.expires_on = expiry_from_rule(record, rule_for(record, rules))
    return record.expires_on


def is_expired(record, on_date: date) -> bool:
    """Expired means the expiry date has passed; a record is usable on its expiry day."""
    expires_on = getattr(record, "expires_on", None)
    return expires_on is not None and expires_on < on_date


LIFECYCLE_KINDS = [
    RecordKind.REAGENT_LOT, RecordKind.SPHERE_LOT, RecordKind.TEMPLATE_ASSEMBLY,
    RecordKind.SUBSTRATE, RecordKind.NANOPARTICLE_BATCH,
]
