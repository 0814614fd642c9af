"""QC reasons for the readiness check: QC missing, failed or stale.

Plugged in through ``settings.SERSLEDGER_READINESS_PROVIDERS`` as
``"qc.readiness.qc_reasons"``.  QC is required for a product kind (substrate stage) when the
lab has a limit set for it; the current QC result (``qc.selectors.qc_measurement_get_latest``)
measured on or before the day checked decides; a QC import still being analysed blocks
readiness until it is judged; a latest measurement whose EF went stale (the film geometry
it was derived from was amended) counts as not passed; a colloid upstream whose UV-vis
figures are stale (its metal was amended) is reported too.  Four queries at most.
"""

from __future__ import annotations

from inventory.models import NanoparticleBatch
from inventory.readiness import ReadinessContext, Reason

from .models.colloid import UvVisRecord
from .models.imports import QcImport
from .models.raman import QcLimitSet
from .selectors.current import qc_measurement_get_latest

__all__ = ["qc_reasons"]


def qc_reasons(context: ReadinessContext) -> list[Reason]:
    """Stale colloid figures upstream, then ``qc_pending``, ``qc_missing``, ``qc_failed``
    or ``qc_stale``."""
    return [*_stale_colloid_reasons(context), *_qc_measurement_reasons(context)]


def _qc_measurement_reasons(context: ReadinessContext) -> list[Reason]:
    substrate = context.substrate
    limits = {limit.analyte_id: limit
              for limit in QcLimitSet.objects.filter(product_kind=substrate.stage)}
    if not limits:
        return []
    pending = (QcImport.objects.filter(substrate_id=substrate.pk, state__in=QcImport.PENDING)
               .only("upload_filename", "state").first())
    if pending is not None:
        return [Reason("qc_pending", f"The QC file {pending.upload_filename} of "
                                     f"{substrate.code} is still being analysed "
                                     f"({pending.get_state_display().lower()}).",
                       substrate.code)]
    latest = qc_measurement_get_latest(
        substrate, on_date=context.on_date, analyte_ids=limits,
        fields=("code", "measured_on", "passed", "failure_reasons", "analyte_id",
                "stale_reason"))
    if latest is None:
        return [Reason("qc_missing", f"{substrate.code} has no QC measurement as a "
                                     f"{substrate.get_stage_display().lower()}.",
                       substrate.code)]
    if latest.stale_reason:  # its verdict rests on figures that are no longer current
        return [Reason("figures_stale", f"The latest QC {latest.code} has stale figures: "
                                        f"{latest.stale_reason}", latest.code)]
    if not latest.passed:
        return [Reason("qc_failed", f"The latest QC {latest.code} "
                                    f"({latest.measured_on.isoformat()}) failed: "
                                    f"{' '.join(latest.failure_reasons)}", latest.code)]
    valid_days = limits[latest.analyte_id].valid_days
    age_days = (context.on_date - latest.measured_on).days
    if age_days > valid_days:
        return [Reason("qc_stale", f"The latest QC {latest.code} is {age_days} days old; QC "
                                   f"stays valid for {valid_days} days.", latest.code)]
    return []


def _stale_colloid_reasons(context: ReadinessContext) -> list[Reason]:
    """A colloid upstream whose UV-vis figures went stale (its metal was amended)."""
    batches = [batch.pk for batch in context.ancestry.of_kind(NanoparticleBatch)]
    if not batches:
        return []
    stale = (UvVisRecord.objects.filter(batch_id__in=batches, voided_at__isnull=True)
             .exclude(stale_reason="").only("code", "stale_reason").order_by("code"))
    return [Reason("figures_stale", f"UV-vis record {record.code} has stale figures: "
                                    f"{record.stale_reason}", record.code) for record in stale]
