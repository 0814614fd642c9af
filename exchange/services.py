"""Writes of the exchange app: figures from sheets, column mappings, digest and calendar.

Same rules as every service: keyword-only, atomic, role-checked, ``full_clean`` before a
save (so the database CHECK constraints are met first), refusals in the one error shape.
"""

from __future__ import annotations

import hashlib
import math
import secrets
from datetime import date

from django.core.exceptions import NON_FIELD_ERRORS, ValidationError
from django.db import transaction
from django.utils import timezone

from inventory.errors import refusal
from inventory.models import NanoparticleBatch, Substrate
from inventory.roles import MAKER, VIEWER, require_role
from inventory.services import CheckingMany, NewRecord
from inventory.services.lifecycle import check_not_voided
from inventory.services.toolkit import (
    User,
    require_not_future,
    require_role_once,
    stamp_history,
    validate_constraints,
)
from qc.analysis.uvvis import PlasmonBand
from qc.services.colloid import SilverTable, uvvis_sizes_from_band

from .models import (
    CalendarSecret,
    ColumnMapping,
    DigestPreference,
    ImportedQcResult,
    SheetUvVisReading,
)

# field -> (lowest, highest, unit): the ranges the models' CHECK constraints hold, said here
# first so a refusal names the field (a constraint error names none).
RANGES = {
    "enhancement_factor": (1.0, 1e15, ""), "rsd_percent": (0.0, 1000.0, " %"),
    "laser_nm": (200.0, 2000.0, " nm"), "uvvis_peak_nm": (300.0, 1100.0, " nm"),
    "uvvis_path_length_cm": (1e-3, 10.0, " cm"), "uvvis_dilution_factor": (1.0, 1e6, ""),
}


def _check_figures(figures: dict[str, float | None], *, parent, day: date,
                   date_field: str) -> None:
    """Finite numbers in range, a day not in the future nor before the parent was made."""
    for field, value in figures.items():
        if value is not None and not math.isfinite(value):
            raise refusal(field, f"{value} is not a finite number.", "not_finite")
        if value is not None and field in RANGES:
            low, high, unit = RANGES[field]
            if not low <= value <= high:
                raise refusal(field, f"{value:g}{unit} is outside {low:g}–{high:g}{unit}.",
                              "out_of_range")
    require_not_future(day, field=date_field)
    check_not_voided(parent)
    if day < parent.made_on:
        raise refusal(date_field, f"{parent.code} was made on {parent.made_on.isoformat()}, "
                                  "after this figure was measured.", "date_order")


def _clean(record, *, exclude: set[str]) -> None:
    """``full_clean`` with the same errors, its CHECK constraints evaluated in Python
    (inventory's evaluator) instead of one ``SELECT`` each."""
    errors: dict = {}
    try:
        record.full_clean(exclude=exclude, validate_constraints=False)
    except ValidationError as error:
        errors = error.update_error_dict(errors)
    try:
        validate_constraints(record, exclude=exclude | {n for n in errors
                                                         if n != NON_FIELD_ERRORS})
    except ValidationError as error:
        errors = error.update_error_dict(errors)
    if errors:
        raise ValidationError(errors)


def _save(record, *, actor: User | None, reason: str) -> None:
    record.created_by = record.created_by or actor
    record.updated_by = actor
    _clean(record, exclude=set())
    stamp_history(record, actor=actor, reason=reason)
    record.save()


def sheet_uvvis_reading_check(
    *, actor: User | None, batch: NanoparticleBatch, measured_on: date, peak_nm: float,
    peak_absorbance: float, absorbance_450: float | None = None, dilution_factor: float = 1.0,
    path_length_cm: float = 1.0, source: str, silver_table: SilverTable | None = None,
    many: CheckingMany | None = None,
) -> NewRecord:
    """Every rule of a UV-vis reading from a sheet, and its sizes; writes nothing.

    Absorbances (as measured, i.e. diluted, in the cell used) are scaled to the undiluted
    colloid in 1 cm (Beer–Lambert: A ∝ c·l), then sized by the calibration the spectrum
    import uses.  ``batch`` may be a batch checked in the same import and not yet written.
    ``silver_table``: the active silver table, read once by an import of many readings
    (``silver_calibration_active()``); None reads it here.  ``many``: the import's shared
    state (the actor's role asked once).
    """
    require_role_once(actor, MAKER, action="Recording a UV-vis reading", many=many)
    _check_figures({"uvvis_peak_nm": peak_nm, "uvvis_peak_absorbance": peak_absorbance,
                    "uvvis_absorbance_450": absorbance_450,
                    "uvvis_dilution_factor": dilution_factor,
                    "uvvis_path_length_cm": path_length_cm},
                   parent=batch, day=measured_on, date_field="uvvis_measured_on")
    if peak_absorbance <= 0 or (absorbance_450 is not None and absorbance_450 <= 0):
        field = "uvvis_peak_absorbance" if peak_absorbance <= 0 else "uvvis_absorbance_450"
        raise refusal(field, "An absorbance of a colloid is above zero.", "out_of_range")
    scale = dilution_factor / path_length_cm
    a_peak = peak_absorbance * scale
    a_450 = None if absorbance_450 is None else absorbance_450 * scale
    if batch.metal == "Au" and a_450 is None:
        raise refusal("uvvis_absorbance_450", "Gold is sized from A(peak)/A(450 nm) (Haiss "
                                              "et al., Anal. Chem. 79, 4215 (2007)): give the "
                                              "absorbance at 450 nm.", "required")
    band = PlasmonBand(peak_nm, a_peak, None, None, None, "not in the sheet",
                       float("nan") if a_450 is None else a_450,
                       float("nan") if a_450 is None else a_peak / a_450)
    reading = SheetUvVisReading(batch=batch, measured_on=measured_on, peak_nm=peak_nm,
                                peak_absorbance_1cm=a_peak, absorbance_450_1cm=a_450,
                                dilution_factor=dilution_factor, path_length_cm=path_length_cm,
                                source=source, created_by=actor, updated_by=actor)
    # Range first (a peak outside 300-1100 nm is no plasmon band); then size it.  The batch
    # is the object in hand (perhaps not written yet): its key is not looked up here.
    _clean(reading, exclude={"created_by", "updated_by", "batch"})
    sizes = uvvis_sizes_from_band(metal=batch.metal, band=band, silver_table=silver_table)
    reading.diameter_nm = sizes["diameter_nm"]
    reading.diameter_method = sizes["diameter_method"] or ""
    reading.number_per_mL = sizes["number_per_mL"]
    reading.molar_concentration_M = sizes["molar_concentration_M"]
    reading.sizing_note = "; ".join(filter(None, [sizes["concentration_note"],
                                                  sizes["calibration_source"]]))
    return NewRecord(reading, reason=source)


@transaction.atomic
def sheet_uvvis_reading_record(*, actor: User | None, **values) -> SheetUvVisReading:
    """A UV-vis reading from a sheet; ``values`` are those of
    :func:`sheet_uvvis_reading_check`."""
    new = sheet_uvvis_reading_check(actor=actor, **values)
    _save(new.record, actor=actor, reason=new.reason)
    return new.record


def imported_qc_result_check(
    *, actor: User | None, substrate: Substrate, measured_on: date, verdict: str,
    enhancement_factor: float | None = None, rsd_percent: float | None = None,
    analyte: str = "", laser_nm: float | None = None, notes: str = "", source: str,
    many: CheckingMany | None = None,
) -> NewRecord:
    """Every rule of a historical QC result from a sheet, on the unsaved result; no write.

    ``many``: the import's shared state (the actor's role asked once; the substrate was
    read by the import, so its key is not looked up again).
    """
    require_role_once(actor, MAKER, action="Importing a QC result", many=many)
    _check_figures({"enhancement_factor": enhancement_factor, "rsd_percent": rsd_percent,
                    "laser_nm": laser_nm}, parent=substrate, day=measured_on,
                   date_field="measured_on")
    if enhancement_factor is None and rsd_percent is None:
        raise refusal("enhancement_factor", "Give an enhancement factor, an RSD, or both.",
                      "required")
    result = ImportedQcResult(substrate=substrate, measured_on=measured_on, verdict=verdict,
                              enhancement_factor=enhancement_factor, rsd_percent=rsd_percent,
                              analyte=analyte, laser_nm=laser_nm, notes=notes, source=source,
                              created_by=actor, updated_by=actor)
    _clean(result, exclude={"created_by", "updated_by", "substrate"})
    return NewRecord(result, reason=source)


@transaction.atomic
def imported_qc_result_record(*, actor: User | None, **values) -> ImportedQcResult:
    """A historical QC result from a sheet, kept as an imported figure beside the substrate;
    ``values`` are those of :func:`imported_qc_result_check`."""
    new = imported_qc_result_check(actor=actor, **values)
    _save(new.record, actor=actor, reason=new.reason)
    return new.record


@transaction.atomic
def column_mapping_save(*, actor: User | None, kind: str, mapping: dict[str, str]) -> int:
    """Remember, for this lab, which field each of these (normalised) headers means."""
    require_role(actor, MAKER, action="Saving a column mapping")
    from .kinds import KINDS

    spec = KINDS.get(kind)
    if spec is None:
        raise refusal("kind", f"'{kind}' is not a kind of record this importer knows.",
                      "unknown_kind")
    known = {column.field for column in spec.columns}
    for header, field in mapping.items():
        if field and field not in known:
            raise refusal("mapping", f"'{field}' is not a column of {spec.label}.",
                          "unknown_field")
        ColumnMapping.objects.update_or_create(kind=kind, header=header,
                                               defaults={"field": field, "created_by": actor})
    return len(mapping)


@transaction.atomic
def digest_preference_set(*, actor: User, daily_digest: bool, email: str = "") -> DigestPreference:
    require_role(actor, VIEWER, action="Choosing the daily digest")
    preference, _ = DigestPreference.objects.get_or_create(user=actor)
    preference.daily_digest = daily_digest
    preference.email = email
    preference.full_clean()
    preference.save()
    return preference


def _digest(secret: str) -> str:
    return hashlib.sha256(secret.encode()).hexdigest()


@transaction.atomic
def calendar_secret_issue(*, actor: User) -> str:
    """A new calendar secret for ``actor`` (returned once; only its hash is stored)."""
    require_role(actor, VIEWER, action="Making a calendar link")
    secret = secrets.token_urlsafe(32)
    CalendarSecret.objects.create(user=actor, secret_sha256=_digest(secret))
    return secret


@transaction.atomic
def calendar_secret_revoke_all(*, actor: User) -> int:
    """Revoke every calendar link of ``actor``: the old URLs then answer 404."""
    require_role(actor, VIEWER, action="Revoking calendar links")
    return CalendarSecret.objects.filter(user=actor, revoked_at__isnull=True) \
        .update(revoked_at=timezone.now())


def calendar_secret_owner(secret: str):
    """The user a live secret belongs to, or None (unknown or revoked)."""
    found = CalendarSecret.objects.select_related("user").filter(
        secret_sha256=_digest(secret), revoked_at__isnull=True).first()
    return None if found is None or not found.user.is_active else found.user
