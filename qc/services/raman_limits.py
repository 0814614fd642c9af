"""Reference-analyte Raman QC definitions: analytes, the lab's limits, and the verdict.

An administrator keeps the analytes and limit sets; ``qc_judge`` is the one place that
compares a measurement's figures with them.
"""

from __future__ import annotations

from collections.abc import Sequence

from django.db import transaction

from inventory.errors import refusal
from inventory.models import ReagentKind, ReagentLot, Substrate
from inventory.roles import ADMINISTRATOR, require_role
from inventory.services.toolkit import User, save_setting
from inventory.services.toolkit import require_kind as _require_kind
from inventory.services.toolkit import stamp_history as _stamp_history
from inventory.services.toolkit import validate as _validate

from ..limit_defaults import COMMON_SOURCES, QC_DEFAULTS
from ..models.raman import QcLimitSet, ReferenceAnalyte

__all__ = ["qc_judge", "qc_limit_defaults_fill", "qc_limit_set_define",
           "reference_analyte_define"]


@transaction.atomic
def reference_analyte_define(
    *, actor: User | None, name: str, band_positions_cm1: Sequence[float],
    band_positions_source: str, qc_band_cm1: float, surface_density_per_nm2: float,
    surface_density_source: str, qc_band_window_cm1: float = 40.0,
    reference_band_cm1: float | None = None, lots: Sequence[ReagentLot] = (),
) -> ReferenceAnalyte:
    """Record a reference analyte, the band used for QC and its monolayer density."""
    require_role(actor, ADMINISTRATOR, action="Defining a reference analyte")
    for lot in lots:
        _require_kind(lot, [ReagentKind.REFERENCE_ANALYTE], field="lots")
    if not band_positions_source.strip() or not surface_density_source.strip():
        field = "band_positions_source" if not band_positions_source.strip() \
            else "surface_density_source"
        raise refusal(field, "Say where the value comes from (or write 'from memory').",
                      "source_required")
    analyte = ReferenceAnalyte(
        name=name, band_positions_cm1=[float(v) for v in band_positions_cm1],
        band_positions_source=band_positions_source, qc_band_cm1=qc_band_cm1,
        qc_band_window_cm1=qc_band_window_cm1, reference_band_cm1=reference_band_cm1,
        surface_density_per_nm2=surface_density_per_nm2,
        surface_density_source=surface_density_source, created_by=actor, updated_by=actor)
    _validate(analyte)
    _stamp_history(analyte, actor=actor, reason="")
    analyte.save()
    analyte.lots.set(lots)
    qc_limit_defaults_fill(actor=actor, analyte=analyte)
    return analyte


@transaction.atomic
def qc_limit_defaults_fill(*, actor: User | None, analyte: ReferenceAnalyte) -> list[QcLimitSet]:
    """Give every substrate stage without limits for ``analyte`` the defaults, to review.

    A new analyte (and so a fresh install's first one) is judged at every stage from the
    start; the defaults (``qc.limit_defaults``) are marked ``is_example`` until an
    administrator saves the lab's own values.  Stages that have limits keep them.
    """
    require_role(actor, ADMINISTRATOR, action="Setting QC limits")
    have = set(QcLimitSet.objects.filter(analyte=analyte).values_list("product_kind", flat=True))
    return [
        qc_limit_set_define(actor=actor, product_kind=stage, analyte=analyte, is_example=True,
                            rationale=f"Default to review: {default.why} {COMMON_SOURCES}",
                            **default.as_values())
        for stage, default in QC_DEFAULTS.items() if stage not in have]


@transaction.atomic
def qc_limit_set_define(
    *, actor: User | None, product_kind: str, analyte: ReferenceAnalyte,
    band_position_tolerance_cm1: float, valid_days: int,
    min_enhancement_factor: float | None = None, max_rsd_percent: float | None = None,
    min_snr: float | None = None, is_example: bool = False, rationale: str = "",
    intensity_measure: str = "height",
    min_map_points: int = 25,
) -> QcLimitSet:
    """Create or replace the limits for one product kind tested with one analyte.

    ``intensity_measure`` ("height" or "area", common practice either way) says which band
    figure enhancement factors and map uniformity of this kind are computed from.
    """
    require_role(actor, ADMINISTRATOR, action="Setting QC limits")
    return save_setting(
        QcLimitSet, actor=actor, scope={"product_kind": product_kind, "analyte": analyte},
        reason=rationale,
        values={"band_position_tolerance_cm1": band_position_tolerance_cm1,
                "valid_days": valid_days, "min_enhancement_factor": min_enhancement_factor,
                "max_rsd_percent": max_rsd_percent, "min_snr": min_snr,
                "is_example": is_example, "rationale": rationale,
                "intensity_measure": intensity_measure,
                "min_map_points": min_map_points})


def qc_judge(*, limits: QcLimitSet, band_center_cm1: float, band_position_cm1: float,
             snr: float, rsd_percent: float | None,
             enhancement_factor: float | None, n_points: int = 1) -> list[str]:
    """Every reason the figures fail the limits; empty when they pass.

    Limits are inclusive: a value exactly at a limit passes.  A map (``rsd_percent`` given)
    with fewer than the lab's ``min_map_points`` says nothing about uniformity, so it fails
    the uniformity limit whatever its RSD.
    """
    reasons = []
    offset = abs(band_position_cm1 - band_center_cm1)
    if offset > limits.band_position_tolerance_cm1:
        reasons.append(f"Band at {band_position_cm1:.1f} cm⁻¹ is {offset:.1f} cm⁻¹ from "
                       f"{band_center_cm1:g} cm⁻¹ (tolerance ±"
                       f"{limits.band_position_tolerance_cm1:g} cm⁻¹).")
    if limits.min_snr is not None and not snr >= limits.min_snr:
        reasons.append(f"S/N {snr:.1f} is below the minimum {limits.min_snr:g}.")
    if limits.max_rsd_percent is not None and rsd_percent is not None \
            and n_points < limits.min_map_points:
        reasons.append(f"A map of {n_points} points cannot show uniformity; the lab's "
                       f"minimum is {limits.min_map_points} points.")
    elif limits.max_rsd_percent is not None and rsd_percent is not None \
            and not rsd_percent <= limits.max_rsd_percent:
        reasons.append(f"Uniformity RSD {rsd_percent:.1f} % exceeds the maximum "
                       f"{limits.max_rsd_percent:g} %.")
    if limits.min_enhancement_factor is not None:
        if enhancement_factor is None:
            reasons.append("No enhancement factor: give a reference measurement.")
        elif not enhancement_factor >= limits.min_enhancement_factor:
            reasons.append(f"Enhancement factor {enhancement_factor:.2e} is below the minimum "
                           f"{limits.min_enhancement_factor:.2e}.")
    return reasons


def limit_set_for(substrate: Substrate, analyte: ReferenceAnalyte) -> QcLimitSet:
    """The limit set judging a substrate at its current stage with an analyte."""
    limits = QcLimitSet.objects.select_related("analyte").filter(
        product_kind=substrate.stage, analyte=analyte).first()
    if limits is None:
        raise refusal("substrate", f"No QC limits are set for {substrate.get_stage_display()} "
                                   f"substrates tested with {analyte.name}; an administrator "
                                   "must set them first.", "no_limits")
    return limits
