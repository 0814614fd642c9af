"""QC reasons for the readiness check: QC missing, failed or stale.

Plugged in through ``settings.SERSLEDGER_READINESS_PROVIDERS`` as
``"qc.readiness.qc_reasons"``.  QC is required for a product kind (substrate stage) when the
lab has a limit set for it; the current QC result (``qc.selectors.qc_measurement_get_latest``)
measured on or before the day checked decides.  Two queries at most.
"""

from __future__ import annotations

from inventory.readiness import ReadinessContext, Reason

from .models.raman import QcLimitSet
from .selectors.current import qc_measurement_get_latest

__all__ = ["qc_reasons"]


def qc_reasons(context: ReadinessContext) -> list[Reason]:
    """``qc_missing``, ``qc_failed`` or ``qc_stale`` for ``context.substrate``, or nothing."""
    substrate = context.substrate
    limits = {limit.analyte_id: limit
              for limit in QcLimitSet.objects.filter(product_kind=substrate.stage)}
    if not limits:
        return []
    latest = qc_measurement_get_latest(
        substrate, on_date=context.on_date, analyte_ids=limits,
        fields=("code", "measured_on", "passed", "failure_reasons", "analyte_id"))
    if latest is None:
        return [Reason("qc_missing", f"{substrate.code} has no QC measurement as a "
                                     f"{substrate.get_stage_display().lower()}.",
                       substrate.code)]
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
