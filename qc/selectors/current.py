"""The current QC result of a substrate: the one rule pages, API, readiness and review share.

The current result is the newest QC measurement (by date measured, then record order) at the
substrate's current stage that is not voided: QC of a bare film says nothing about the same
piece after particles are bound, and a voided result no longer speaks for anything.  Whether a
flag still counts is ``inventory.flags.flags_open``'s rule.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from datetime import date

from inventory.models import Substrate

from ..models.raman import QcMeasurement

__all__ = ["qc_measurement_get_latest", "qc_measurements_get_latest"]

# Per-point data a list or a verdict never shows; a detail read asks for it with ``fields``.
_HEAVY_FIELDS = ("point_values", "ef_inputs")


def qc_measurements_get_latest(
    substrates: Iterable[Substrate], *, product_kind: str | None = None,
    on_date: date | None = None, analyte_ids: Iterable[int] | None = None,
    fields: Sequence[str] = (), select_related: Sequence[str] = (),
) -> dict[int, QcMeasurement]:
    """The current QC of each substrate, keyed by substrate id (one query for a whole page).

    ``product_kind`` replaces each substrate's own stage; ``on_date`` ignores results measured
    after it; ``analyte_ids`` keeps results with those reference analytes only; ``fields``
    loads only those columns (else everything but the per-point data).
    """
    kind_of = {s.pk: product_kind or s.stage for s in substrates}
    if not kind_of:
        return {}
    rows = QcMeasurement.objects.filter(substrate_id__in=list(kind_of),
                                        product_kind__in=set(kind_of.values()),
                                        voided_at__isnull=True)
    if on_date is not None:
        rows = rows.filter(measured_on__lte=on_date)
    if analyte_ids is not None:
        rows = rows.filter(analyte_id__in=list(analyte_ids))
    if fields:
        rows = rows.only(*fields, "substrate_id", "product_kind")
    else:
        rows = rows.defer(*_HEAVY_FIELDS)
    if select_related:
        rows = rows.select_related(*select_related)
    newest: dict[int, QcMeasurement] = {}
    for measurement in rows.order_by("substrate_id", "-measured_on", "-id"):
        if measurement.product_kind == kind_of[measurement.substrate_id]:
            newest.setdefault(measurement.substrate_id, measurement)
    return newest


def qc_measurement_get_latest(substrate: Substrate, *, product_kind: str | None = None,
                              on_date: date | None = None,
                              analyte_ids: Iterable[int] | None = None,
                              fields: Sequence[str] = ()) -> QcMeasurement | None:
    """The current QC of one substrate (``qc_measurements_get_latest`` for a single record)."""
    return qc_measurements_get_latest(
        [substrate], product_kind=product_kind, on_date=on_date, analyte_ids=analyte_ids,
        fields=fields, select_related=() if fields else ("analyte", "reference", "limit_set"),
    ).get(substrate.pk)
