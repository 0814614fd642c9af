"""Can this substrate be used today?  READY or NOT READY with every reason.

One service answers for the page, the API and the command line.  Inventory reasons are
computed here; other apps add theirs through ``SERSLEDGER_READINESS_PROVIDERS`` (dotted
paths to ``provider(context) -> list[Reason]``), so inventory never imports them.  The
whole check runs in a bounded number of queries: the substrate, one lineage walk, one query
per record kind reached, the open flags, the shelf-life rules, and the providers' own.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date
from functools import lru_cache

from django.conf import settings
from django.utils import timezone
from django.utils.module_loading import import_string

from .codes import record_get
from .flags import flags_open
from .lineage import Lineage, record_get_ancestors
from .models import (
    LifecycleRecord,
    LinkerLayer,
    NanoparticleBatch,
    RecordKind,
    Status,
    Substrate,
)
from .shelf_life import is_expired, rules_by_scope


@dataclass(frozen=True)
class Reason:
    """One reason a substrate is not ready: a stable code, a sentence, the record at fault."""

    code: str
    message: str
    record_code: str


@dataclass(frozen=True)
class Readiness:
    substrate_code: str
    checked_on: date
    reasons: tuple[Reason, ...]

    @property
    def ready(self) -> bool:
        return not self.reasons

    @property
    def verdict(self) -> str:
        return "READY" if self.ready else "NOT READY"


# What the inventory reasons read of each ancestor; the check loads only these columns (a
# provider that reads another field of an ancestor costs a query for it).
ANCESTOR_FIELDS = ("status", "expires_on", "voided_at", "void_reason", "made_on",
                   "stale_reason")


@dataclass
class ReadinessContext:
    """What a reason provider is given: the substrate, the date and its whole ancestry
    (ancestors loaded with ``ANCESTOR_FIELDS``)."""

    substrate: Substrate
    on_date: date
    ancestry: Lineage
    extra: dict = field(default_factory=dict)


def _status_reasons(substrate: Substrate) -> list[Reason]:
    if substrate.status == Status.RELEASED:
        return []
    sentences = {
        Status.QUARANTINE: "is in quarantine: it has not been released after QC",
        Status.REJECTED: "was rejected",
        Status.CONSUMED: "has already been consumed",
        Status.DISPOSED: "was disposed of",
    }
    return [Reason(f"status_{substrate.status}",
                   f"{substrate.code} {sentences[substrate.status]}.", substrate.code)]


def _expiry_reasons(substrate: Substrate, on_date: date) -> list[Reason]:
    if is_expired(substrate, on_date):
        return [Reason("expired", f"{substrate.code} expired on "
                                  f"{substrate.expires_on.isoformat()}.", substrate.code)]
    return []


def _linker_reasons(context: ReadinessContext, rules) -> list[Reason]:
    """The newest linker layer on the substrate must be younger than the lab's age limit."""
    direct_layers = [
        context.ancestry.records[edge.parent_code] for edge in context.ancestry.edges
        if edge.child_code == context.substrate.code
        and isinstance(context.ancestry.records.get(edge.parent_code), LinkerLayer)
    ]
    rule = rules.get((RecordKind.LINKER_LAYER, ""))
    if not direct_layers or rule is None:
        return []
    newest = max(direct_layers, key=lambda layer: layer.made_on)
    age_days = (context.on_date - newest.made_on).days
    if age_days > rule.shelf_life_days:
        return [Reason("linker_layer_too_old",
                       f"Linker layer {newest.code} is {age_days} days old; the limit is "
                       f"{rule.shelf_life_days} days.", newest.code)]
    return []


def _colloid_reasons(context: ReadinessContext) -> list[Reason]:
    reasons = []
    for batch in context.ancestry.of_kind(NanoparticleBatch):
        if batch.status != Status.RELEASED:
            reasons.append(Reason("colloid_not_released",
                                  f"Colloid batch {batch.code} is {batch.status}, not released.",
                                  batch.code))
        if is_expired(batch, context.on_date):
            reasons.append(Reason("colloid_expired",
                                  f"Colloid batch {batch.code} expired on "
                                  f"{batch.expires_on.isoformat()}.", batch.code))
    return reasons


def _upstream_reasons(context: ReadinessContext) -> list[Reason]:
    """Inputs that were expired when used, or rejected since (a recall)."""
    reasons = []
    records = context.ancestry.records
    for edge in context.ancestry.edges:
        parent = records.get(edge.parent_code)
        if not isinstance(parent, LifecycleRecord) or isinstance(parent, NanoparticleBatch):
            continue
        if parent.expires_on is not None and parent.expires_on < edge.used_on:
            reasons.append(Reason("upstream_expired_at_use",
                                  f"{parent.code} had expired on {parent.expires_on.isoformat()} "
                                  f"but was used for {edge.child_code} on "
                                  f"{edge.used_on.isoformat()}.", parent.code))
    for record in records.values():
        if isinstance(record, LifecycleRecord) and record.status == Status.REJECTED \
                and not isinstance(record, NanoparticleBatch):
            reasons.append(Reason("upstream_rejected",
                                  f"Upstream {record._meta.verbose_name} {record.code} has been "
                                  "rejected.", record.code))
    return reasons


def _void_reasons(context: ReadinessContext) -> list[Reason]:
    """A voided substrate, or one made from a voided record, is not ready (nor usable)."""
    reasons = []
    for record in [context.substrate, *context.ancestry.records.values()]:
        if getattr(record, "voided_at", None) is not None:
            where = "" if record.code == context.substrate.code else "Upstream "
            reasons.append(Reason("voided", f"{where}{record._meta.verbose_name} {record.code} "
                                            f"was voided: {record.void_reason}", record.code))
    return reasons


def _stale_reasons(context: ReadinessContext) -> list[Reason]:
    """Figures upstream that no longer follow from their amended inputs are not passed."""
    return [Reason("figures_stale", f"Upstream {record._meta.verbose_name} {record.code} has "
                                    f"stale figures: {record.stale_reason}", record.code)
            for record in context.ancestry.records.values()
            if getattr(record, "stale_reason", "")]


def _flag_reasons(context: ReadinessContext) -> list[Reason]:
    codes = [context.substrate.code, *context.ancestry.depth]
    open_flags = flags_open(target_codes=codes).order_by("target_code", "code")
    reasons = []
    for flag in open_flags:
        where = "this substrate" if flag.target_code == context.substrate.code \
            else f"upstream record {flag.target_code}"
        reasons.append(Reason("open_flag", f"Open flag {flag.code} on {where}: {flag.message}",
                              flag.code))
    return reasons


@lru_cache(maxsize=8)
def _import_providers(paths: tuple[str, ...]):
    return [import_string(path) for path in paths]


def _providers():
    return _import_providers(tuple(getattr(settings, "SERSLEDGER_READINESS_PROVIDERS", ())))


def substrate_check_readiness(code: str, *, on_date: date | None = None) -> Readiness:
    """READY or NOT READY for ``code`` on ``on_date`` (default today), with every reason.

    Raises ``RecordNotFound`` for an unknown code and ``ValueError`` for a code that is not
    a substrate.
    """
    record = record_get(code)
    if not isinstance(record, Substrate):
        raise ValueError(f"{record.code} is a {record._meta.verbose_name}, not a substrate.")
    on_date = on_date or timezone.localdate()
    context = ReadinessContext(substrate=record, on_date=on_date,
                               ancestry=record_get_ancestors(record, fields=ANCESTOR_FIELDS))
    rules = rules_by_scope()
    reasons = [
        *_void_reasons(context),
        *_status_reasons(record),
        *_expiry_reasons(record, on_date),
        *_linker_reasons(context, rules),
        *_colloid_reasons(context),
        *_upstream_reasons(context),
        *_stale_reasons(context),
        *_flag_reasons(context),
    ]
    for provider in _providers():
        reasons.extend(provider(context))
    return Readiness(substrate_code=record.code, checked_on=on_date, reasons=tuple(reasons))
