"""Read-only queries shaped for the pages: capped, paginated, a fixed number of statements.

No rule lives here: which records count as active comes from ``inventory.selectors``, what
counts as expired from ``inventory.shelf_life``.  These helpers only slice, count and order,
so a page costs the same number of queries with ten records or a hundred thousand.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import date, timedelta

from django.apps import apps
from django.db import models
from django.db.models import Count, Q

from bench.field_labels import FIELD_LABELS, FRACTION_LABELS, UNIT_OVERRIDES
from inventory import selectors
from inventory.flags import flags_open
from inventory.models import LifecycleRecord, Status
from inventory.selectors import ACTIVE_STATUSES, ExpiringItem
from inventory.shelf_life import LIFECYCLE_KINDS

# Unit shown beside a field, from the unit its name ends with (DESIGN: units in names).
UNIT_SUFFIXES = (
    ("_counts_cm1_per_mW_s", "counts·cm⁻¹/(mW·s)"), ("_counts_per_mW_s", "counts/(mW·s)"),
    ("_per_nm2", "nm⁻²"), ("_per_cm2", "cm⁻²"), ("_per_mL", "mL⁻¹"), ("_mol_L", "mol/L"),
    ("_g_cm3", "g/cm³"), ("_percent_w_v", "% w/v"), ("_percent", "%"), ("_nm", "nm"),
    ("_um2", "µm²"), ("_um", "µm"), ("_cm2", "cm²"), ("_cm3", "cm³"), ("_cm1", "cm⁻¹"),
    ("_cm", "cm"), ("_mL", "mL"), ("_uL", "µL"), ("_mM", "mM"), ("_M", "M"), ("_mA", "mA"),
    ("_mW", "mW"), ("_V", "V"), ("_C", "C"), ("_min", "min"), ("_h", "h"), ("_s", "s"),
    ("_days", "days"),
)
# Fields shown elsewhere on the page (files, lineage) or too bulky for a table.
HIDDEN_FIELDS = {"id", "code", "version", "notes", "point_values", "ef_inputs", "limits_used",
                 "failure_reasons", "breaches", "created_by", "updated_by", "created_at",
                 "updated_at", "stale_reason"}


VOID_FIELDS = {"voided_at", "voided_by", "void_reason"}


def unit_of(field_name: str) -> tuple[str, str]:
    """(unit, name without its unit suffix); ("", name) when the name carries no unit."""
    for suffix, unit in UNIT_SUFFIXES:
        if field_name.endswith(suffix) and len(field_name) > len(suffix):
            return unit, field_name[: -len(suffix)]
    return "", field_name


INVALID_NUMBER = "invalid value"


def _shown(value):
    """Floats to six significant figures: stored results carry float noise, not precision.

    A number that is not finite (which the services and the database refuse, so only a
    fault could put one there) shows as ``invalid value`` rather than breaking the page.
    """
    if not isinstance(value, float):
        return value
    return format(value, ".6g") if math.isfinite(value) else INVALID_NUMBER


def _stale(field, record) -> bool:
    """A computed figure of a record whose figures are marked stale (its inputs changed)."""
    return bool(getattr(record, "stale_reason", "")) and not field.editable


# Labels a person reads, for fields whose own name is an abbreviation or a flag.
HUMAN_LABELS = {"passed": "QC result", "snr": "signal-to-noise ratio",
                "rsd_percent": "uniformity RSD", "ef": "enhancement factor", **FIELD_LABELS}
# Stored as a fraction (0–1) though the name ends in "_percent" ("within 20 percent").
FRACTIONS_SHOWN_AS_PERCENT = {"fraction_within_20_percent": "points within ±20 % of the median",
                              **FRACTION_LABELS}


@dataclass(frozen=True)
class FieldRow:
    label: str
    value: object
    unit: str
    link_code: str = ""  # when the value is another coded record


def field_rows(record) -> list[FieldRow]:
    """The record's own fields as (label, display value, unit), files and JSON left out.

    The void fields appear only on a voided record (the page shows a banner then too).
    """
    hidden = HIDDEN_FIELDS | (VOID_FIELDS if getattr(record, "voided_at", None) is None
                              else set())
    rows = []
    for field in record._meta.concrete_fields:
        if field.name in hidden or isinstance(field, models.FileField):
            continue
        if field.is_relation:
            related = getattr(record, field.name)
            code = getattr(related, "code", "")
            rows.append(FieldRow(HUMAN_LABELS.get(field.name, str(field.verbose_name)), related,
                                 "", code))
            continue
        if field.name in FRACTIONS_SHOWN_AS_PERCENT:
            fraction = getattr(record, field.name)
            rows.append(FieldRow(FRACTIONS_SHOWN_AS_PERCENT[field.name],
                                 None if fraction is None else format(100 * fraction, ".0f"),
                                 "%"))
            continue
        if isinstance(field, models.BooleanField) and field.name == "passed":
            rows.append(FieldRow(HUMAN_LABELS["passed"],
                                 "passed" if record.passed else "failed", ""))
            continue
        if isinstance(field, models.BooleanField):  # words, never "True"/"False"
            flag = getattr(record, field.name)
            rows.append(FieldRow(HUMAN_LABELS.get(field.name, str(field.verbose_name)),
                                 None if flag is None else "yes" if flag else "no", ""))
            continue
        unit, bare_name = unit_of(field.name)
        unit = UNIT_OVERRIDES.get(field.name, unit)
        label = HUMAN_LABELS.get(field.name, str(field.verbose_name))
        if unit and label == field.name.replace("_", " "):  # not named by hand: drop the unit
            label = bare_name.replace("_", " ")
        value = getattr(record, f"get_{field.name}_display")() if field.choices \
            else _shown(getattr(record, field.name))
        if _stale(field, record) and value not in (None, ""):
            value, unit = f"stale (last worked out as {value} {unit}".rstrip() + ")", ""
        rows.append(FieldRow(label, value, unit))
    return rows


@dataclass(frozen=True)
class StoredFile:
    name: str
    sha256: str
    size_bytes: int | None


def stored_files(record) -> list[StoredFile]:
    """Raw files kept with ``record`` and their SHA-256 digests (datasets: every file)."""
    files = []
    if hasattr(record, "files") and hasattr(record.files, "all"):
        files += [StoredFile(f.original_name, f.sha256, f.size_bytes) for f in record.files.all()]
    for name_field, digest_field, file_field in (
            ("chronoamperogram_name", "chronoamperogram_sha256", "chronoamperogram"),
            ("raw_filename", "raw_sha256", "raw_file"),
            ("raw_file_name", "raw_sha256", "raw_file")):
        name, digest = getattr(record, name_field, ""), getattr(record, digest_field, "")
        if name and digest:
            files.append(StoredFile(name, digest, _size(getattr(record, file_field, None))))
    if getattr(record, "blank_sha256", ""):
        files.append(StoredFile(record.blank_file.name, record.blank_sha256,
                                _size(record.blank_file)))
    return files


def _size(stored) -> int | None:
    """Bytes of a stored file; None when no file is kept or the storage cannot say."""
    if not stored:
        return None
    try:
        return stored.size
    except OSError:
        return None


# --------------------------------------------------------------------------------------
# History and signatures (the audit selectors)
# --------------------------------------------------------------------------------------


def record_history(record) -> list:
    """Newest first: every create and change with who, when, what and why."""
    return list(selectors.record_get_history(record))


def record_signatures(record) -> list:
    """The electronic signatures on ``record``, oldest first."""
    return list(selectors.record_get_signatures(record))


# --------------------------------------------------------------------------------------
# Expiry and shelf
# --------------------------------------------------------------------------------------


def _lifecycle_models() -> list[type[LifecycleRecord]]:
    return [apps.get_model("inventory", kind) for kind in LIFECYCLE_KINDS]


EXPIRING_COUNT_CAP = 1000  # the page says "1000+" beyond this, so counting stays flat


def expiring_page(days: int, *, after=None, limit: int = 25,
                  on_date: date) -> tuple[list[ExpiringItem], tuple | None, int]:
    """One page of active records expiring within ``days`` (soonest first), the position
    after it (None on the last page) and how many there are, counted up to
    ``EXPIRING_COUNT_CAP`` + 1: a keyset page and a capped count cost the same in any lab.
    """
    page = selectors.records_expiring_page(days, after=after, limit=limit, on_date=on_date)
    horizon = on_date + timedelta(days=days)
    total = sum(selectors.expiring_rows(model, horizon=horizon, on_date=on_date,
                                        include_expired=True)[:EXPIRING_COUNT_CAP + 1].count()
                for model in _lifecycle_models())
    return page.items, page.next_after, min(total, EXPIRING_COUNT_CAP + 1)


@dataclass(frozen=True)
class BeyondWindow:
    later: int  # active records expiring after the window
    no_rule: int  # active records no shelf-life rule gives an expiry


def expiring_beyond(days: int, *, on_date: date) -> BeyondWindow:
    """What the "expiring within N days" list leaves out: two counts per record kind."""
    horizon = on_date + timedelta(days=days)
    later = no_rule = 0
    for model in _lifecycle_models():
        active = model.objects.filter(status__in=ACTIVE_STATUSES)
        later += active.filter(expires_on__gt=horizon).count()
        no_rule += active.filter(expires_on__isnull=True).count()
    return BeyondWindow(later, no_rule)


def _on_shelf(model, on_date: date):
    """Released and not expired (a record is usable on its expiry day)."""
    return model.objects.filter(Q(expires_on__isnull=True) | Q(expires_on__gte=on_date),
                                status=Status.RELEASED)


@dataclass(frozen=True)
class ShelfCount:
    kind: str  # model name, e.g. "substrate"
    kind_label: str
    location: str
    count: int


def shelf_summary(on_date: date) -> list[ShelfCount]:
    """How many usable records of each kind sit in each location (one query per kind)."""
    counts = []
    for model in _lifecycle_models():
        grouped = (_on_shelf(model, on_date).values("storage__code", "storage__name")
                   .annotate(n=Count("id")).order_by("storage__name"))
        for row in grouped:
            where = f"{row['storage__code']} {row['storage__name']}" if row["storage__code"] \
                else "no location recorded"
            counts.append(ShelfCount(model._meta.model_name, str(model._meta.verbose_name),
                                     where, row["n"]))
    return counts


def shelf_kinds() -> list[tuple[str, str]]:
    """(model name, label) of every kind that has a shelf life."""
    return [(m._meta.model_name, str(m._meta.verbose_name)) for m in _lifecycle_models()]


def shelf_records(kind: str, on_date: date, *, location_code: str = ""):
    """Usable records of one kind (a queryset to paginate), soonest expiry first."""
    models_by_name = {m._meta.model_name: m for m in _lifecycle_models()}
    if kind not in models_by_name:
        raise ValueError(f"Unknown kind '{kind}'; choose one of {', '.join(models_by_name)}.")
    rows = _on_shelf(models_by_name[kind], on_date).select_related("storage")
    if location_code:
        rows = rows.filter(storage__code=location_code.strip().upper())
    return rows.order_by(models.F("expires_on").asc(nulls_last=True), "code")


# --------------------------------------------------------------------------------------
# Quarantine and flags
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class KindCount:
    kind: str
    kind_label: str
    count: int


def quarantine_counts() -> list[KindCount]:
    """Records awaiting QC or release, per kind (one query per kind)."""
    return [KindCount(m._meta.model_name, str(m._meta.verbose_name),
                      m.objects.filter(status=Status.QUARANTINE).count())
            for m in _lifecycle_models()]


def quarantine_records(kind: str):
    """Quarantined records of one kind (a queryset to paginate), oldest first."""
    models_by_name = {m._meta.model_name: m for m in _lifecycle_models()}
    if kind not in models_by_name:
        raise ValueError(f"Unknown kind '{kind}'.")
    return (models_by_name[kind].objects.filter(status=Status.QUARANTINE)
            .select_related("storage").order_by("created_at", "code"))


def open_flags():
    """Open flags, newest first (a queryset to slice or paginate)."""
    return flags_open().order_by("-created_at", "-id")
