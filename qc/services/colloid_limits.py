"""Colloid UV-vis QC settings (services): the lab's colloid limits and its silver table.

Both are versioned by the administrator; records keep the verdicts they were given.
"""

from __future__ import annotations

from django.db import transaction

from inventory.errors import refusal
from inventory.roles import ADMINISTRATOR, require_role
from inventory.services.toolkit import User, save_setting
from inventory.services.toolkit import save_changed as _save_changed
from inventory.services.toolkit import stamp_history as _stamp_history
from inventory.services.toolkit import validate as _validate
from qc.analysis import silver_calibration
from qc.analysis.errors import AnalysisInputError

from ..models.colloid import ColloidLimitSet, SilverCalibration

__all__ = ["colloid_limit_set_set", "silver_calibration_active", "silver_calibration_record"]


@transaction.atomic
def colloid_limit_set_set(
    *, actor: User | None, metal: str, peak_min_nm: float, peak_max_nm: float,
    fwhm_max_nm: float, peak_shift_max_nm: float, absorbance_loss_max_fraction: float,
    aggregation_index_max: float, size_tolerance_percent: float = 15.0,
    flag_size_disagreement: bool = False, is_example: bool = False, rationale: str = "",
) -> ColloidLimitSet:
    """Create or change the lab's colloid limits for ``metal``; records keep their verdicts."""
    require_role(actor, ADMINISTRATOR, action="Setting colloid limits")
    return save_setting(ColloidLimitSet, actor=actor, scope={"metal": metal}, reason=rationale,
                        values={
                            "peak_min_nm": peak_min_nm, "peak_max_nm": peak_max_nm,
                            "fwhm_max_nm": fwhm_max_nm, "peak_shift_max_nm": peak_shift_max_nm,
                            "absorbance_loss_max_fraction": absorbance_loss_max_fraction,
                            "aggregation_index_max": aggregation_index_max,
                            "size_tolerance_percent": size_tolerance_percent,
                            "flag_size_disagreement": flag_size_disagreement,
                            "is_example": is_example, "rationale": rationale})


@transaction.atomic
def silver_calibration_record(
    *, actor: User | None, name: str, provenance: str,
    rows: list[tuple[float, float, float]],
) -> SilverCalibration:
    """Store the lab's silver table (peak_nm, diameter_nm, extinction_M1cm1 rows) and use it.

    The previously active table is kept but no longer used.  A bad table is refused with
    the row at fault (qc.analysis.silver_calibration.CalibrationTable checks it).
    """
    require_role(actor, ADMINISTRATOR, action="Recording a silver calibration")
    try:
        if len(rows) < 3 or any(len(row) != 3 for row in rows):
            raise AnalysisInputError("give at least 3 rows of peak_nm, diameter_nm, "
                                     "extinction_M1cm1", field="rows")
        rows = [[float(value) for value in row] for row in rows]
        silver_calibration.CalibrationTable(*(tuple(column) for column in zip(*rows, strict=True)),
                                            provenance=provenance)
    except AnalysisInputError as error:
        field = "provenance" if error.field == "provenance" else "rows"
        raise refusal(field, str(error), "bad_calibration") from None
    except (TypeError, ValueError):
        raise refusal("rows", "every cell must be a number", "bad_calibration") from None
    for previous in SilverCalibration.objects.select_for_update().filter(is_active=True):
        previous.is_active = False
        _save_changed(previous, actor=actor, reason=f"replaced by {name}")
    table = SilverCalibration(name=name, provenance=provenance,
                              rows=rows,
                              created_by=actor, updated_by=actor)
    _validate(table)
    _stamp_history(table, actor=actor, reason=provenance)
    table.save()
    return table


def silver_calibration_active() -> tuple[
    silver_calibration.CalibrationTable, SilverCalibration | None
]:
    """The table silver imports use: the lab's active one, else the built-in Mie table."""
    stored = SilverCalibration.objects.filter(is_active=True).first()
    if stored is None:
        return silver_calibration.silver_table_from_mie(), None
    peak, diameter, extinction = (tuple(column) for column in zip(*stored.rows, strict=True))
    return silver_calibration.CalibrationTable(peak, diameter, extinction,
                                               provenance=stored.provenance), stored
